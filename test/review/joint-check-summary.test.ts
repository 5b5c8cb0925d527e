/**
 * Review finding: replay's summary reports `joint_velocity_check` from the LAST JointState only
 * (replay.ts: run.step.out.jointVelocityAvailable at the end). A bag whose JointState carried
 * no velocities for most of the run, and velocities only at the end, is summarised `active`,
 * though the joint-speed check could not run for most of it. Invented data: the kinematic
 * demo cell written as a bag (our own scenario).
 */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { expect, it } from 'vitest';
import { openBag } from '../../src/bag/index.js';
import { loadCell } from '../../src/params/config.js';
import { replayBag } from '../../src/replay/replay.js';
import { summarize } from '../../src/replay/summary.js';
import { InputBagWriter } from '../../src/sim/input-bag.js';
import { runKinematicCell } from '../../src/sim/kinematic-cell.js';

it('a bag without joint velocities for 90 % of its length is not summarised as `active`', async () => {
  const cell = loadCell('config/demo_cell.yaml');
  const dir = join(mkdtempSync(join(tmpdir(), 'review8-bag-')), 'bag');
  const w = await InputBagWriter.create(dir, cell.left.config.task.zones.map((z) => z.name));
  const T0 = 1_796_000_000_000_000_000n;
  const ns = (t: number) => T0 + BigInt(Math.round(t * 1000)) * 1_000_000n;
  const pose = Float64Array.of(0, 0, 0, 0, 0, 0, 1);
  const none = new Float64Array(0);
  runKinematicCell(cell.left.config, cell.right.config, [false, false], {
    seed: 1, duration_s: 3,
    recorder: {
      wrench: (arm, t, v) => w.wrench(arm, ns(t), v),
      toolPose(arm, t, x, y, z) { pose[0] = x; pose[1] = y; pose[2] = z; w.toolPose(arm, ns(t), pose); },
      // No velocities until 2.7 s, then velocities.
      jointState: (arm, t, position, velocity) => w.jointState(arm, ns(t), ['a', 'b', 'c'], position, t < 2.7 ? none : velocity),
      zoneView: (arm, t, states) => w.zoneView(arm, ns(t), states),
    },
  });
  await w.close();
  const bag = await openBag(dir);
  const rec = await replayBag(bag, { arms: ['left', 'right'], configs: { left: cell.left.config, right: cell.right.config } });
  const s = summarize(rec, null) as { arms: { arm: string; joint_velocity_check: string }[] };
  const left = s.arms.find((a) => a.arm === 'left')!;
  expect(left.joint_velocity_check).toBeDefined();
  expect(left.joint_velocity_check).not.toBe('active');
}, 60_000);
