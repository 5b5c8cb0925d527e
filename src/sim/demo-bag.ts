/**
 * Demo bags of our scenario: both arms' inputs (wrench 1 kHz, tool pose 1 kHz, joint states
 * 500 Hz, area sensor 10 Hz) recorded from the kinematic two-arm cell, as an arm driver would
 * publish them, in a rosbag2 MCAP directory (zstd chunks). Invented data, deterministic.
 */
import type { WrittenBag } from '../bag/writer.js';
import type { ArmConfig } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import { InputBagWriter } from './input-bag.js';
import { runKinematicCell, type CellRun, type InputRecorder } from './kinematic-cell.js';

/** Bag time of t = 0: a fixed instant, so demo bags are byte-identical run to run. */
export const DEMO_EPOCH_NS = 1_796_000_000_000_000_000n;

export interface DemoBagOptions {
  readonly left: ArmConfig;
  readonly right: ArmConfig;
  readonly occupied: readonly boolean[];
  readonly seed: number;
  readonly duration_s: number;
  readonly disturbance_n?: number;
  /** Keep the closed-loop recommended speeds in the returned run (for comparison with replay). */
  readonly keepSpeeds?: boolean;
  /** Tool poses every this many wrench samples (default 1). */
  readonly poseEvery?: number;
  /** Run on after reaching the goal until duration_s (default true: a bag of exactly that length). */
  readonly fullDuration?: boolean;
  /** Extra force (sensor frame, N) added to one arm's wrench at one time: a knock for tests. */
  readonly knock?: { readonly arm: ArmName; readonly t_s: number; readonly force_n: number; readonly duration_s: number };
  /** Also record the task's nominal path (a task with waypoints) on this nav_msgs/msg/Path topic, once at the start. */
  readonly pathTopic?: string;
}

export async function writeDemoBag(dir: string, opts: DemoBagOptions): Promise<{ bag: WrittenBag; run: CellRun }> {
  const w = await InputBagWriter.create(dir, opts.left.task.zones.map((z) => z.name), opts.pathTopic !== undefined ? { pathTopic: opts.pathTopic } : {});
  const p = opts.left.task.path;
  if (opts.pathTopic !== undefined && p && p.waypoints_m.length > 0) w.path(DEMO_EPOCH_NS, p.waypoints_m, p.orientations_xyzw);
  // The cell runs on bag time (t0 = the demo epoch): recover the sample's offset exactly.
  const t0s = Number(DEMO_EPOCH_NS) / 1e9;
  const fs = opts.left.wrench_filter.sample_rate_hz;
  const ns = (t: number) => DEMO_EPOCH_NS + BigInt(Math.round((t - t0s) * fs)) * BigInt(Math.round(1e9 / fs));
  const pose = Float64Array.of(0, 0, 0, 0, 0, 0, 1);
  const recorder: InputRecorder = {
    wrench: (arm, t, v) => w.wrench(arm, ns(t), v),
    toolPose(arm, t, x, y, z) {
      pose[0] = x;
      pose[1] = y;
      pose[2] = z;
      w.toolPose(arm, ns(t), pose);
    },
    jointState: (arm, t, position, velocity) => w.jointState(arm, ns(t), JOINT_NAMES[arm], position, velocity),
    zoneView: (arm, t, states) => w.zoneView(arm, ns(t), states),
  };
  const run = runKinematicCell(opts.left, opts.right, opts.occupied, {
    seed: opts.seed,
    duration_s: opts.duration_s,
    t0_s: Number(DEMO_EPOCH_NS) / 1e9,
    keepSpeeds: opts.keepSpeeds === true,
    recorder,
    stopAtGoal: opts.fullDuration === false,
    ...(opts.knock ? { knock: opts.knock } : {}),
    ...(opts.poseEvery !== undefined ? { poseEvery: opts.poseEvery } : {}),
    ...(opts.disturbance_n !== undefined ? { disturbance_n: opts.disturbance_n } : {}),
  });
  const bag = await w.close();
  return { bag, run };
}

const JOINT_NAMES = {
  left: ['left_slide_x', 'left_slide_y', 'left_slide_z'],
  right: ['right_slide_x', 'right_slide_y', 'right_slide_z'],
} as const;
