/**
 * A rosbag2 (MCAP, zstd) of both arms' inputs as their drivers publish them, under the live
 * topic names: wrench, joint states, tool pose and zone view per arm. Shared by the demo bags of
 * the kinematic cell and the bags of simulated episodes. Times are integer nanoseconds.
 */
import { MessageWriter } from '@foxglove/rosmsg2-serialization';
import { builtinDefinition, parseDefinition } from '../bag/definitions.js';
import { encodeJointState, encodePoseStamped, encodeWrenchStamped } from '../bag/fast.js';
import { BagWriter, type WrittenBag } from '../bag/writer.js';
import type { ArmName } from '../params/spec.js';
import { CELL_FRAME, INPUT_KINDS, INPUT_TYPES, inputTopic, sensorFrame, type InputKind } from '../ros/topics.js';
import { encodePath, PATH_DEFINITION, PATH_TYPE } from '../ros/path-msg.js';

/** A planner's latched path as rosbag2 records it: reliable, transient local, depth 1. */
const PATH_BAG_QOS = [{ history: 1, depth: 1, reliability: 1, durability: 1, deadline: { sec: 0, nsec: 0 }, lifespan: { sec: 0, nsec: 0 }, liveliness: 1, liveliness_lease_duration: { sec: 0, nsec: 0 }, avoid_ros_namespace_conventions: false }];

/** The sensor-data QoS profile (best effort, volatile, depth 5) as rosbag2 records it. */
const SENSOR_QOS = [{ history: 1, depth: 5, reliability: 2, durability: 2, deadline: { sec: 0, nsec: 0 }, lifespan: { sec: 0, nsec: 0 }, liveliness: 1, liveliness_lease_duration: { sec: 0, nsec: 0 }, avoid_ros_namespace_conventions: false }];
const EMPTY = new Float64Array(0);

export class InputBagWriter {
  private readonly row = new Float64Array(9);
  private readonly buf = new Uint8Array(256);
  private readonly zoneWriter = new MessageWriter(parseDefinition('antiphon/msg/ZoneView', builtinDefinition('antiphon/msg/ZoneView')!));

  private constructor(
    private readonly w: BagWriter,
    private readonly ids: ReadonlyMap<string, number>,
    private readonly zoneNames: readonly string[],
  ) {}

  /** `pathTopic`: also a nav_msgs/msg/Path topic of that name (written with `path`). */
  static async create(dir: string, zoneNames: readonly string[], opts: { pathTopic?: string } = {}): Promise<InputBagWriter> {
    const w = await BagWriter.create(dir, { compression: 'zstd', overwrite: true });
    const ids = new Map<string, number>();
    for (const arm of ['left', 'right'] as const) {
      for (const kind of INPUT_KINDS) ids.set(`${arm}/${kind}`, await w.addTopic({ name: inputTopic(arm, kind), type: INPUT_TYPES[kind], offeredQos: SENSOR_QOS }));
    }
    if (opts.pathTopic !== undefined) ids.set('path', await w.addTopic({ name: opts.pathTopic, type: PATH_TYPE, definition: PATH_DEFINITION, offeredQos: PATH_BAG_QOS }));
    return new InputBagWriter(w, ids, zoneNames);
  }

  /** The object's nominal path (x y z per pose, x y z w per orientation, cell frame) on the path topic. */
  path(ns: bigint, waypoints: ArrayLike<number>, orientations?: ArrayLike<number>): void {
    const id = this.ids.get('path');
    if (id === undefined) throw new Error('InputBagWriter: no path topic (create it with pathTopic)');
    void this.w.write(id, ns, encodePath(CELL_FRAME, Number(ns / 1_000_000n) / 1000, waypoints, orientations));
  }

  private id(arm: ArmName, kind: InputKind): number {
    return this.ids.get(`${arm}/${kind}`)!;
  }

  private stamp(ns: bigint): { sec: number; nanosec: number } {
    const sec = Number(ns / 1_000_000_000n);
    const nanosec = Number(ns % 1_000_000_000n);
    this.row[0] = sec;
    this.row[1] = nanosec;
    return { sec, nanosec };
  }

  /** A wrench (fx fy fz tx ty tz, sensor frame). */
  wrench(arm: ArmName, ns: bigint, w: ArrayLike<number>): void {
    this.stamp(ns);
    for (let k = 0; k < 6; k++) this.row[2 + k] = w[k]!;
    void this.w.write(this.id(arm, 'wrench'), ns, encodeWrenchStamped(this.row, 0, sensorFrame(arm), this.buf));
  }

  /** A tool pose (x y z qx qy qz qw, cell frame). */
  toolPose(arm: ArmName, ns: bigint, pose: ArrayLike<number>): void {
    this.stamp(ns);
    for (let k = 0; k < 7; k++) this.row[2 + k] = pose[k]!;
    void this.w.write(this.id(arm, 'tool_pose'), ns, encodePoseStamped(this.row, 0, CELL_FRAME, this.buf));
  }

  jointState(arm: ArmName, ns: bigint, names: readonly string[], position: ArrayLike<number>, velocity: ArrayLike<number>): void {
    const { sec, nanosec } = this.stamp(ns);
    void this.w.write(this.id(arm, 'joint_states'), ns, encodeJointState(sec, nanosec, `${arm}_base`, names, position, velocity, EMPTY));
  }

  /** One state per zone in task order (0 free, 1 occupied, 2 unknown). */
  zoneView(arm: ArmName, ns: bigint, states: ArrayLike<number>): void {
    const stamp = this.stamp(ns);
    const msg = this.zoneWriter.writeMessage({ header: { stamp, frame_id: `${arm}_area_sensor` }, zones: this.zoneNames, state: Uint8Array.from(states) });
    void this.w.write(this.id(arm, 'zone_view'), ns, msg);
  }

  close(): Promise<WrittenBag> {
    return this.w.close();
  }
}
