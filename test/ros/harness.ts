/**
 * One arm's nodes on the test stand-in, with a driver node publishing the arm's inputs the way
 * a force-torque driver and our bags offer them (best effort), and a consumer subscribing to
 * the recommended twist with default (reliable) QoS, as a velocity interface on the arm does.
 */
import { MessageReader, MessageWriter } from '@foxglove/rosmsg2-serialization';
import { builtinDefinition, parseDefinition } from '../../src/bag/definitions.js';
import { decodeTwistStamped, decodeWrenchStamped, encodeJointState, encodePoseStamped, encodeWrenchStamped } from '../../src/bag/fast.js';
import { loadCell } from '../../src/params/config.js';
import type { ArmName, ResolvedValue } from '../../src/params/spec.js';
import { ArmNodes } from '../../src/ros/arm-nodes.js';
import { qos, RMW, type QosProfile } from '../../src/ros/qos.js';
import type { RclPublisher } from '../../src/ros/rcl.js';
import { FakeRcl } from './fake-rcl.js';

export const cell = loadCell('config/demo_cell.yaml');
export const T0_NS = 1_800_000_000_000_000_000n;
export const reader = (type: string) => new MessageReader(parseDefinition(type, builtinDefinition(type)!));
const zoneWriter = new MessageWriter(parseDefinition('antiphon/msg/ZoneView', builtinDefinition('antiphon/msg/ZoneView')!));

/** Resolved values of an arm with some keys replaced (as a file would give them). */
export function withValues(arm: ArmName, patch: Record<string, unknown>): Map<string, ResolvedValue> {
  const v = new Map(cell[arm].values);
  for (const [key, value] of Object.entries(patch)) {
    const prev = v.get(key);
    if (!prev) throw new Error(`no key ${key}`);
    v.set(key, { ...prev, value: value as never });
  }
  return v;
}

export interface Setup {
  rcl: FakeRcl;
  nodes: ArmNodes;
  steady: { s: number };
  pubs: { wrench: RclPublisher; joints: RclPublisher; pose: RclPublisher; zones: RclPublisher };
  /** Twists received by a reliable (default QoS) subscriber. */
  twists: Buffer[];
  feed(k0: number, n: number, opts?: FeedOptions): void;
  lastTwist(): number[];
}

export interface FeedOptions {
  force?: (k: number) => number[];
  wrenchFrame?: string;
  /** Stamp of sample k (ns); default T0 + k ms. */
  stampNs?: (k: number) => bigint;
  /** ROS clock at sample k (ns); default the stamp. */
  clockNs?: (k: number) => bigint;
  joints?: (k: number) => { names: string[]; velocity: number[] }[];
  skip?: (k: number) => boolean;
  /** Fire the 100 Hz timers every 10 samples (default true). */
  ticks?: boolean;
  /** Another arm's feed advances the shared steady clock. */
  shareSteady?: boolean;
}

export function setup(opts: { arm?: ArmName; values?: Map<string, ResolvedValue>; configure?: boolean; overrides?: { name: string; type: number; value: unknown }[]; inputQos?: QosProfile; rcl?: FakeRcl; steady?: { s: number }; pathTopic?: string } = {}): Setup {
  const arm = opts.arm ?? 'left';
  const rcl = opts.rcl ?? new FakeRcl();
  if (opts.overrides) rcl.overrides = opts.overrides;
  const steady = opts.steady ?? { s: 1000 };
  const values = opts.values ?? new Map(cell[arm].values);
  const nodes = new ArmNodes(rcl, { arm, config: cell[arm].config, values, steadyS: () => steady.s, ...(opts.pathTopic !== undefined ? { pathTopic: opts.pathTopic } : {}) });
  if (opts.configure !== false) nodes.inference.configure();
  const driver = new rcl.Node('driver', `/${arm}`);
  const q = opts.inputQos ?? qos('best_effort', 10);
  const Q = new rcl.QoS(1, q.depth, RMW.reliability[q.reliability], RMW.durability[q.durability]);
  const pubs = {
    wrench: driver.createPublisher('geometry_msgs/msg/WrenchStamped', 'wrench', { qos: Q }),
    joints: driver.createPublisher('sensor_msgs/msg/JointState', 'joint_states', { qos: Q }),
    pose: driver.createPublisher('geometry_msgs/msg/PoseStamped', 'tool_pose', { qos: Q }),
    zones: driver.createPublisher('antiphon/msg/ZoneView', 'zone_view', { qos: Q }),
  };
  const twists: Buffer[] = [];
  const consumer = new rcl.Node('velocity_interface', `/${arm}`);
  consumer.createSubscription('geometry_msgs/msg/TwistStamped', 'antiphon/recommended_twist', { qos: rcl.QoS.profileDefault, isRaw: true }, (m) => void twists.push(m));
  const row = new Float64Array(9);
  const feed = (k0: number, n: number, f: FeedOptions = {}) => {
    const force = f.force ?? (() => [0.1, -0.2, -11.8, 0, 0, 0]);
    for (let k = k0; k < k0 + n; k++) {
      if (f.skip?.(k)) continue;
      const stamp = f.stampNs ? f.stampNs(k) : T0_NS + BigInt(k) * 1_000_000n;
      rcl.setClock(f.clockNs ? f.clockNs(k) : stamp);
      if (!f.shareSteady) steady.s += 0.001;
      const sec = Number(stamp / 1_000_000_000n);
      const nanosec = Number(stamp % 1_000_000_000n);
      row[0] = sec; row[1] = nanosec;
      row[2] = 0.1; row[3] = 0.55; row[4] = 0.9; row[5] = 0; row[6] = 0; row[7] = 0; row[8] = 1;
      pubs.pose.publish(Buffer.from(encodePoseStamped(row, 0, 'cell')));
      const js = f.joints ? f.joints(k) : [{ names: ['j1', 'j2', 'j3'], velocity: [0.01, 0, 0] }];
      for (const j of js) pubs.joints.publish(Buffer.from(encodeJointState(sec, nanosec, 'base', j.names, j.names.map(() => 0), j.velocity, [])));
      if (k % 100 === 0) pubs.zones.publish(Buffer.from(zoneWriter.writeMessage({ header: { stamp: { sec, nanosec }, frame_id: 'area' }, zones: ['clamp_post', 'tray_drop'], state: Uint8Array.of(0, 2) })));
      const w = force(k);
      for (let a = 0; a < 6; a++) row[2 + a] = w[a]!;
      pubs.wrench.publish(Buffer.from(encodeWrenchStamped(row, 0, f.wrenchFrame ?? `${arm}_ft_sensor`)));
      if (f.ticks !== false && k % 10 === 9) rcl.tickPeriod(10_000_000n);
    }
  };
  const lastTwist = () => decodeVec(twists.at(-1)!);
  return { rcl, nodes, steady, pubs, twists, feed, lastTwist };
}

/** [sec, nanosec, 6 values] of a WrenchStamped or TwistStamped buffer. */
export function decodeVec(b: Buffer): number[] {
  const row = new Float64Array(8);
  decodeTwistStamped(new DataView(b.buffer, b.byteOffset, b.byteLength), 0, b.byteLength, row, 0);
  return Array.from(row);
}
export function decodeWrench(b: Buffer): number[] {
  const row = new Float64Array(8);
  decodeWrenchStamped(new DataView(b.buffer, b.byteOffset, b.byteLength), 0, b.byteLength, row, 0);
  return Array.from(row);
}

/** The diagnostics key/value pairs of the last DiagnosticArray. */
export function diag(rcl: FakeRcl): Record<string, string> {
  const d = rcl.sent('/diagnostics').at(-1) as { status: { values: { key: string; value: string }[] }[] };
  return Object.fromEntries(d.status[0]!.values.map((x) => [x.key, x.value]));
}

/** Tare, then activate: the arm moves. */
export function activateAfterTare(s: Setup): void {
  s.feed(0, 1000);
  const st = s.nodes.inference.activate();
  if (st.label !== 'active') throw new Error(`activate: ${st.label}`);
}
