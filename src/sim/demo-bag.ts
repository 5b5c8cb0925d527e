/**
 * Demo bags of our scenario: both arms' inputs (wrench 1 kHz, tool pose 1 kHz, joint states
 * 500 Hz, area sensor 10 Hz) recorded from the kinematic two-arm cell, as an arm driver would
 * publish them, in a rosbag2 MCAP directory (zstd chunks). Invented data, deterministic.
 */
import { MessageWriter } from '@foxglove/rosmsg2-serialization';
import { builtinDefinition, parseDefinition } from '../bag/definitions.js';
import { encodeJointState, encodePoseStamped, encodeWrenchStamped } from '../bag/fast.js';
import { BagWriter, type WrittenBag } from '../bag/writer.js';
import type { ArmConfig } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import { INPUT_KINDS, INPUT_TYPES, inputTopic, sensorFrame, CELL_FRAME, type InputKind } from '../ros/topics.js';
import { runKinematicCell, type CellRun, type InputRecorder } from './kinematic-cell.js';

/** Bag time of t = 0: a fixed instant, so demo bags are byte-identical run to run. */
export const DEMO_EPOCH_NS = 1_796_000_000_000_000_000n;

const SENSOR_QOS = [{ history: 1, depth: 5, reliability: 2, durability: 2, deadline: { sec: 0, nsec: 0 }, lifespan: { sec: 0, nsec: 0 }, liveliness: 1, liveliness_lease_duration: { sec: 0, nsec: 0 }, avoid_ros_namespace_conventions: false }];

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
}

export async function writeDemoBag(dir: string, opts: DemoBagOptions): Promise<{ bag: WrittenBag; run: CellRun }> {
  const w = await BagWriter.create(dir, { compression: 'zstd', overwrite: true });
  const ids = new Map<string, number>();
  for (const arm of ['left', 'right'] as const) {
    for (const kind of INPUT_KINDS) {
      ids.set(`${arm}/${kind}`, await w.addTopic({ name: inputTopic(arm, kind), type: INPUT_TYPES[kind], offeredQos: SENSOR_QOS }));
    }
  }
  const zoneWriter = new MessageWriter(parseDefinition('antiphon/msg/ZoneView', builtinDefinition('antiphon/msg/ZoneView')!));
  const zoneNames = opts.left.task.zones.map((z) => z.name);
  const row = new Float64Array(9);
  const buf = new Uint8Array(256);
  const id = (arm: ArmName, kind: InputKind) => ids.get(`${arm}/${kind}`)!;
  // The cell runs on bag time (t0 = the demo epoch): recover the sample's offset exactly.
  const t0s = Number(DEMO_EPOCH_NS) / 1e9;
  const fs = opts.left.wrench_filter.sample_rate_hz;
  const ns = (t: number) => DEMO_EPOCH_NS + BigInt(Math.round((t - t0s) * fs)) * BigInt(Math.round(1e9 / fs));
  const stampRow = (t: number) => {
    const n = ns(t);
    row[0] = Number(n / 1_000_000_000n);
    row[1] = Number(n % 1_000_000_000n);
    return n;
  };
  const recorder: InputRecorder = {
    wrench(arm, t, v) {
      const n = stampRow(t);
      for (let k = 0; k < 6; k++) row[2 + k] = v[k]!;
      void w.write(id(arm, 'wrench'), n, encodeWrenchStamped(row, 0, sensorFrame(arm), buf));
    },
    toolPose(arm, t, x, y, z) {
      const n = stampRow(t);
      row[2] = x; row[3] = y; row[4] = z; row[5] = 0; row[6] = 0; row[7] = 0; row[8] = 1;
      void w.write(id(arm, 'tool_pose'), n, encodePoseStamped(row, 0, CELL_FRAME, buf));
    },
    jointState(arm, t, position, velocity) {
      const n = ns(t);
      const sec = Number(n / 1_000_000_000n);
      const nanosec = Number(n % 1_000_000_000n);
      void w.write(id(arm, 'joint_states'), n, encodeJointState(sec, nanosec, `${arm}_base`, JOINT_NAMES[arm], position, velocity, EMPTY));
    },
    zoneView(arm, t, states) {
      const n = ns(t);
      const sec = Number(n / 1_000_000_000n);
      const nanosec = Number(n % 1_000_000_000n);
      void w.write(id(arm, 'zone_view'), n, zoneWriter.writeMessage({ header: { stamp: { sec, nanosec }, frame_id: `${arm}_area_sensor` }, zones: zoneNames, state: Uint8Array.from(states) }));
    },
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
const EMPTY = new Float64Array(0);
