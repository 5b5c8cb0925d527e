/**
 * Replay with the nominal path from a topic in the bag (`replay --path-topic`): a bag of the
 * kinematic cell on examples/path_cell.yaml (our own invented layout) that carries the path on a
 * nav_msgs/msg/Path topic, written with our bag writer. Replayed with a parameters file that
 * lacks the path plus the topic, it gives what the parameters with the path give, sample for
 * sample; an absent topic, a topic of another type and an invalid path are refused (exit 2)
 * with the bag, the topic and the reason. Our own behaviour, no outside reference.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openBag } from '../../src/bag/index.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';
import { pathFromBag } from '../../src/replay/path-topic.js';
import { replayBag } from '../../src/replay/replay.js';
import { writeDemoBag } from '../../src/sim/demo-bag.js';
import { InputBagWriter } from '../../src/sim/input-bag.js';
import { InputError } from '../../src/util/errors.js';
import { ROOT } from '../support/files.js';

const TOPIC = '/planner/path';
const cell = loadCell('examples/path_cell.yaml');
const withPath = { left: cell.left.config, right: cell.right.config };
/** The same cell with a different (straight, two-point) path in its parameters. */
const other = (c: ArmConfig): ArmConfig => ({ ...c, task: { ...c.task, path: { waypoints_m: [0, 0, 0.9, 2.6, 0.6, 0.85], orientations_xyzw: [] } } });
const withoutPath = { left: other(cell.left.config), right: other(cell.right.config) };

let dir: string;
let bagDir: string;
beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-path-topic-'));
  bagDir = join(dir, 'bag');
  await writeDemoBag(bagDir, { ...withPath, occupied: [false, true, true], seed: 2, duration_s: 4, pathTopic: TOPIC });
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('replay --path-topic', () => {
  it('the path from the bag\'s topic gives the replay the parameters\' path gives, sample for sample', async () => {
    const bag = await openBag(bagDir);
    try {
      const bp = pathFromBag(bag, TOPIC, withoutPath, 'cell');
      expect(bp.warnings).toEqual([]);
      expect(bp.configs.left!.task.path!.waypoints_m).toEqual(cell.left.config.task.path!.waypoints_m);
      const a = await replayBag(bag, { arms: ['left', 'right'], configs: withPath });
      const b = await replayBag(bag, { arms: ['left', 'right'], configs: bp.configs });
      const c = await replayBag(bag, { arms: ['left', 'right'], configs: withoutPath });
      for (let k = 0; k < 2; k++) {
        expect(b.arms[k]!.samples).toBe(4000);
        expect(Array.from(b.arms[k]!.recommendedSpeed)).toEqual(Array.from(a.arms[k]!.recommendedSpeed));
        expect(Array.from(b.arms[k]!.role)).toEqual(Array.from(a.arms[k]!.role));
      }
      // The parameters' other path alone gives another replay (the path matters).
      expect(Array.from(c.arms[0]!.recommendedSpeed)).not.toEqual(Array.from(a.arms[0]!.recommendedSpeed));
    } finally {
      bag.close();
    }
  });

  it('refuses an absent topic, naming the bag\'s path topics', async () => {
    const bag = await openBag(bagDir);
    try {
      let err: unknown;
      try {
        pathFromBag(bag, '/nope', withoutPath, 'cell');
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(InputError);
      expect((err as InputError).problems[0]).toMatchObject({ code: 'replay.no_path_topic', where: { option: '--path-topic', topic: '/nope' }, hint: expect.stringContaining(TOPIC) });
      expect(() => pathFromBag(bag, '/left/wrench', withoutPath, 'cell')).toThrow(/type geometry_msgs\/msg\/WrenchStamped/);
    } finally {
      bag.close();
    }
  });

  it('refuses an invalid path with the bag, the topic and the reason, and warns about later different paths', async () => {
    const bad = join(dir, 'bad');
    const w = await InputBagWriter.create(bad, cell.left.config.task.zones.map((z) => z.name), { pathTopic: TOPIC });
    w.path(1_000_000_000n, [0, 0, 0.9, 0, 0, 0.9, 2.6, 0.6, 0.85]);
    await w.close();
    const bag = await openBag(bad);
    try {
      let err: unknown;
      try {
        pathFromBag(bag, TOPIC, withoutPath, 'cell');
      } catch (e) {
        err = e;
      }
      const p = (err as InputError).problems;
      expect(p.map((x) => x.code)).toEqual(['param.path_repeated_point', 'param.path_repeated_point']); // both arms
      expect(p[0]!.where).toMatchObject({ topic: TOPIC, file: bag.path });
      expect(p[0]!.message).toMatch(/^\[left\] \/planner\/path \(message at 1000000000 ns\): the poses: waypoint 1/);
    } finally {
      bag.close();
    }
    const two = join(dir, 'two');
    const w2 = await InputBagWriter.create(two, [], { pathTopic: TOPIC });
    const W = cell.left.config.task.path!.waypoints_m;
    w2.path(1_000_000_000n, W, cell.left.config.task.path!.orientations_xyzw);
    w2.path(2_000_000_000n, [0, 0, 0.9, 2.6, 0.6, 0.85]);
    await w2.close();
    const bag2 = await openBag(two);
    try {
      const bp = pathFromBag(bag2, TOPIC, withoutPath, 'cell');
      expect(bp.path.waypoints_m).toEqual(W);
      expect(bp.warnings).toMatchObject([{ code: 'replay.path_topic_changed', message: expect.stringMatching(/^1 later message/) }]);
    } finally {
      bag2.close();
    }
  });

  it('the command exits 2 with the topic when the path topic is absent', () => {
    const r = spawnSync(process.execPath, [join(ROOT, 'dist/src/cli/main.js'), 'replay', bagDir, '--path-topic', '/nope'], { encoding: 'utf8', env: { ...process.env, FORCE_COLOR: '0', ANTIPHON_LOG_FORMAT: 'json' } });
    expect(r.status).toBe(2);
    expect(r.stderr + r.stdout).toMatch(/\/nope/);
  });
});
