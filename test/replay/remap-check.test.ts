/**
 * `replay --remap from:=to`: a remap that matches nothing is bad input (exit 2) naming what
 * exists, never ignored with exit 0. `from` must be an input topic of an arm, `to` a topic of
 * the bag. The bag is a short demo recording of our own scenario (invented data).
 */
import { join } from 'node:path';
import { beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { openBag } from '../../src/bag/index.js';
import { register as registerReplay } from '../../src/cli/replay.js';
import { loadCell } from '../../src/params/config.js';
import { checkRemaps } from '../../src/replay/replay.js';
import { writeDemoBag } from '../../src/sim/demo-bag.js';
import { InputError } from '../../src/util/errors.js';
import { resetLogging } from '../../src/util/log.js';
import { tempDir } from '../bag/helpers.js';
import { runRegistered } from '../support/run-command.js';

const root = join(__dirname, '../..');
let bagDir: string;
const replay = (args: string[]) => runRegistered(registerReplay, 'replay', [bagDir, ...args]);

beforeEach(() => resetLogging());

beforeAll(async () => {
  const cell = loadCell(join(root, 'config/demo_cell.yaml'));
  bagDir = join(tempDir(), 'demo');
  await writeDemoBag(bagDir, { left: cell.left.config, right: cell.right.config, occupied: [true, false], seed: 5, duration_s: 2 });
}, 120_000);

describe('replay --remap that matches nothing', () => {
  it('a target the bag does not have (an optional input, once only a warning and exit 0): exit 2 naming the bag topics', async () => {
    const r = await replay(['--remap', '/left/zone_view:=/left/zone_veiw']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/the bag has no topic \/left\/zone_veiw/);
    expect(r.stderr).toMatch(/the bag has .*\/left\/wrench.*\/right\/wrench|the bag has .*\/right\/wrench.*\/left\/wrench/);
    expect(r.stdout).not.toMatch(/replayed/);
  });

  it('a source that is no input topic (once ignored silently): exit 2 naming the inputs', async () => {
    const r = await replay(['--remap', '/left/wrnch:=/left/wrench']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/\/left\/wrnch is no input topic/);
    expect(r.stderr).toMatch(/\/left\/joint_states/);
  });

  it('every such remap is reported at once; a remap that matches works as before', async () => {
    const bag = await openBag(bagDir);
    try {
      let caught: unknown;
      try {
        checkRemaps(bag, new Map([['/left/wrnch', '/left/wrench'], ['/right/tool_pose', '/nowhere']]));
      } catch (err) {
        caught = err;
      }
      expect(caught).toBeInstanceOf(InputError);
      expect((caught as InputError).problems.map((p) => p.code)).toEqual(['replay.remap_unknown_input', 'replay.remap_no_such_topic']);
      expect(() => checkRemaps(bag, new Map([['/right/zone_view', '/left/zone_view']]))).not.toThrow();
    } finally {
      bag.close();
    }
    const ok = await replay(['--arm', 'left', '--remap', '/left/wrench:=/left/wrench', '--json']);
    expect(ok.code, ok.stderr).toBe(0);
  });
});
