/**
 * The nominal path from a topic: `nav_msgs/msg/Path` of the object frame (each pose is the
 * object centre's pose in the cell frame; its orientation is the object's, whose own y axis is
 * its long axis, as `task.path.orientations_xyzw`). The ROS edge decodes the message here and
 * checks it with the same rules as the parameters (`pathProblems`); the core only ever gets a
 * validated task. The poses' time stamps are not used: the speed is `policy.speed_m_s`.
 *
 * CDR layout (XCDR1, the 4-byte encapsulation header first, alignment counted after it; from
 * the ROS 2 definitions nav_msgs/msg/Path and geometry_msgs/msg/PoseStamped): header (int32 sec,
 * uint32 nanosec, string frame_id), uint32 pose count, then per pose a header and seven float64
 * (position x y z, orientation x y z w) aligned to 8.
 */
import type { ArmConfig, TaskParams } from '../params/config.js';
import { pathProblems } from '../params/task-geometry.js';
import { InputError, type Place, type Problem } from '../util/errors.js';

export const PATH_TYPE = 'nav_msgs/msg/Path';

/** The full ros2msg definition of nav_msgs/msg/Path (for bags that carry the path topic). */
export const PATH_DEFINITION = `std_msgs/Header header
geometry_msgs/PoseStamped[] poses
================================================================================
MSG: std_msgs/Header
builtin_interfaces/Time stamp
string frame_id
================================================================================
MSG: builtin_interfaces/Time
int32 sec
uint32 nanosec
================================================================================
MSG: geometry_msgs/PoseStamped
std_msgs/Header header
Pose pose
================================================================================
MSG: geometry_msgs/Pose
Point position
Quaternion orientation
================================================================================
MSG: geometry_msgs/Point
float64 x
float64 y
float64 z
================================================================================
MSG: geometry_msgs/Quaternion
float64 x 0
float64 y 0
float64 z 0
float64 w 1`;

/** More poses than this are refused (a bound on a message from the network). */
export const MAX_PATH_POSES = 10_000;

/** A decoded path message. */
export interface TopicPath {
  readonly frame_id: string;
  readonly stamp_s: number;
  /** x, y, z per pose (m). */
  readonly waypoints_m: number[];
  /** x, y, z, w per pose. */
  readonly orientations_xyzw: number[];
  /** Each pose's own frame_id ('' when left empty). */
  readonly pose_frames: string[];
}

class Reader {
  private o = 4;
  readonly le: boolean;
  constructor(private readonly v: DataView) {
    this.le = v.getUint8(1) === 1;
  }
  get offset(): number {
    return this.o;
  }
  private need(n: number, what: string): void {
    if (this.o + n > this.v.byteLength) throw new Error(`${what} at byte ${this.o} runs past the end of the ${this.v.byteLength}-byte message`);
  }
  private align(n: number): void {
    const r = (this.o - 4) % n;
    if (r) this.o += n - r;
  }
  u32(what: string): number {
    this.align(4);
    this.need(4, what);
    const x = this.v.getUint32(this.o, this.le);
    this.o += 4;
    return x;
  }
  i32(what: string): number {
    this.align(4);
    this.need(4, what);
    const x = this.v.getInt32(this.o, this.le);
    this.o += 4;
    return x;
  }
  f64(what: string): number {
    this.align(8);
    this.need(8, what);
    const x = this.v.getFloat64(this.o, this.le);
    this.o += 8;
    return x;
  }
  str(what: string): string {
    const n = this.u32(`${what} length`);
    if (n === 0) return '';
    this.need(n, what);
    const bytes = new Uint8Array(this.v.buffer, this.v.byteOffset + this.o, n - 1);
    this.o += n;
    return new TextDecoder().decode(bytes);
  }
}

/** Decode a serialized nav_msgs/msg/Path; a problem (with `where` and the byte offset) when it does not parse. */
export function decodePath(data: Uint8Array, where: Place): TopicPath | Problem {
  const v = new DataView(data.buffer, data.byteOffset, data.byteLength);
  if (v.byteLength < 8 || v.getUint8(0) !== 0 || v.getUint8(1) > 1) {
    return { code: 'ros.path_bad_message', message: `not a CDR-encoded ${PATH_TYPE} (${v.byteLength} bytes, encapsulation ${v.byteLength >= 2 ? `${v.getUint8(0)} ${v.getUint8(1)}` : 'missing'})`, where: { ...where, byteOffset: 0 }, hint: `a ${PATH_TYPE} message (plain CDR, little or big endian)` };
  }
  const r = new Reader(v);
  try {
    const sec = r.i32('header.stamp.sec');
    const nsec = r.u32('header.stamp.nanosec');
    const frame = r.str('header.frame_id');
    const n = r.u32('poses length');
    if (n > MAX_PATH_POSES) return { code: 'ros.path_too_many_poses', message: `${n} poses`, where: { ...where, byteOffset: r.offset - 4 }, hint: `at most ${MAX_PATH_POSES} poses` };
    const W: number[] = [];
    const O: number[] = [];
    const frames: string[] = [];
    for (let k = 0; k < n; k++) {
      r.i32(`poses[${k}].header.stamp.sec`);
      r.u32(`poses[${k}].header.stamp.nanosec`);
      frames.push(r.str(`poses[${k}].header.frame_id`));
      for (const a of ['x', 'y', 'z']) W.push(r.f64(`poses[${k}].pose.position.${a}`));
      for (const a of ['x', 'y', 'z', 'w']) O.push(r.f64(`poses[${k}].pose.orientation.${a}`));
    }
    return { frame_id: frame, stamp_s: sec + nsec * 1e-9, waypoints_m: W, orientations_xyzw: O, pose_frames: frames };
  } catch (err) {
    const m = /at byte (\d+)/.exec((err as Error).message);
    return { code: 'ros.path_bad_message', message: `${PATH_TYPE} does not parse: ${(err as Error).message}`, where: { ...where, byteOffset: m ? Number(m[1]) : r.offset }, hint: `a complete ${PATH_TYPE} message` };
  }
}

/** Serialize a path (little-endian CDR): the bags of tests and demos, and `ros2 topic pub` stand-ins. */
export function encodePath(frame: string, stampS: number, waypoints: ArrayLike<number>, orientations?: ArrayLike<number>): Uint8Array {
  const n = Math.floor(waypoints.length / 3);
  const enc = new TextEncoder();
  const fb = enc.encode(frame);
  const out = new Uint8Array(64 + fb.length + n * (96 + fb.length));
  const v = new DataView(out.buffer);
  out[1] = 1;
  let o = 4;
  const align = (a: number) => {
    const r = (o - 4) % a;
    if (r) o += a - r;
  };
  const u32 = (x: number) => {
    align(4);
    v.setUint32(o, x, true);
    o += 4;
  };
  const f64 = (x: number) => {
    align(8);
    v.setFloat64(o, x, true);
    o += 8;
  };
  const str = () => {
    u32(fb.length + 1);
    out.set(fb, o);
    o += fb.length + 1;
  };
  const sec = Math.floor(stampS);
  const nsec = Math.round((stampS - sec) * 1e9);
  u32(sec);
  u32(nsec);
  str();
  u32(n);
  for (let k = 0; k < n; k++) {
    u32(sec);
    u32(nsec);
    str();
    for (let a = 0; a < 3; a++) f64(waypoints[3 * k + a]!);
    if (orientations && orientations.length >= 4 * n) for (let a = 0; a < 4; a++) f64(orientations[4 * k + a]!);
    else for (const x of [0, 0, 0, 1]) f64(x);
  }
  return out.subarray(0, o);
}

/** The task with the topic's path in place of the parameters' (start and goal follow its ends). */
export function taskWithPath(task: TaskParams, p: TopicPath): TaskParams {
  const W = p.waypoints_m;
  const n = W.length;
  return {
    ...task,
    path: { ...task.path, waypoints_m: [...W], orientations_xyzw: [...p.orientations_xyzw] },
    ...(n >= 6 ? { start_m: [W[0]!, W[1]!] as const, goal_m: [W[n - 3]!, W[n - 2]!] as const } : {}),
  } as TaskParams;
}

/**
 * Why a path from a topic cannot be taken, with the parameters' rules (fewer than two poses,
 * repeated points, orientations not of unit norm, a turn tighter than the object allows, a
 * start or end inside a zone), plus the frame: the header's frame_id must be the cell frame and
 * every pose's frame_id empty or the same. Each problem's place is `where` (the topic).
 */
export function topicPathProblems(config: ArmConfig, p: TopicPath, cellFrame: string, where: Place): Problem[] {
  const out: Problem[] = [];
  const bad = p.pose_frames.findIndex((f) => f !== '' && f !== cellFrame);
  if (p.frame_id !== cellFrame) out.push({ code: 'ros.path_wrong_frame', message: `header.frame_id is '${p.frame_id}'`, where, hint: `poses of the object in the cell frame '${cellFrame}' (ros.frames.cell)` });
  else if (bad >= 0) out.push({ code: 'ros.path_wrong_frame', message: `poses[${bad}].header.frame_id is '${p.pose_frames[bad]}'`, where, hint: `every pose in the cell frame '${cellFrame}' (or its frame_id empty)` });
  const nonFinite = (a: readonly number[], w: number) => {
    const i = a.findIndex((x) => !Number.isFinite(x));
    return i < 0 ? -1 : Math.floor(i / w);
  };
  const k = Math.max(nonFinite(p.waypoints_m, 3), nonFinite(p.orientations_xyzw, 4));
  if (k >= 0) out.push({ code: 'ros.path_not_finite', message: `pose ${k} has a position or orientation that is not finite`, where, hint: 'finite positions (m) and unit quaternions' });
  if (out.length) return out;
  const task = taskWithPath(config.task, p);
  for (const q of pathProblems(task, () => where, new Set())) {
    // The parameters' wording names their keys; here the same rule applies to the message's poses.
    out.push({ ...q, message: q.message.replace(/task\.path\.waypoints_m/g, 'the poses').replace(/task\.path\.orientations_xyzw/g, 'the orientations'), where });
  }
  return out;
}

/**
 * What the poses of a path topic are (`--path-of`): the object's centre (`object`, the default),
 * or one arm's planned tool path (`left-tool`, `right-tool`: the grasp point of that arm, with
 * the object's orientation, as a motion planner plans each arm's tool). Both arms' tool paths of
 * one rigid carry give the same object path; a cell whose two planners disagree gives each arm a
 * different task, so take both from one plan.
 */
export type PathOf = 'object' | 'left-tool' | 'right-tool';
export const PATH_OF: readonly PathOf[] = ['object', 'left-tool', 'right-tool'];

/**
 * The object path from one arm's tool path: the grasp points are at +grasp_offset (left) and
 * -grasp_offset (right) along the object's own y axis (task.object.grasp_offset_m), so the centre
 * is p - s * offset * R(q) y, with R(q) y the second column of the rotation matrix of the unit
 * quaternion q (common practice: the quaternion-to-matrix identity). Orientations are kept; a
 * quaternion of norm 0 or not finite leaves its pose not finite, which the checks then refuse.
 */
export function objectPathFromTool(p: TopicPath, of: PathOf, graspOffsetM: number): TopicPath {
  if (of === 'object') return p;
  const s = of === 'left-tool' ? graspOffsetM : -graspOffsetM;
  const W = p.waypoints_m, O = p.orientations_xyzw;
  const out: number[] = new Array<number>(W.length);
  for (let k = 0; 3 * k + 2 < W.length; k++) {
    const n = Math.hypot(O[4 * k]!, O[4 * k + 1]!, O[4 * k + 2]!, O[4 * k + 3]!);
    const x = O[4 * k]! / n, y = O[4 * k + 1]! / n, z = O[4 * k + 2]! / n, w = O[4 * k + 3]! / n;
    out[3 * k] = W[3 * k]! - s * 2 * (x * y - z * w);
    out[3 * k + 1] = W[3 * k + 1]! - s * (1 - 2 * (x * x + z * z));
    out[3 * k + 2] = W[3 * k + 2]! - s * 2 * (y * z + x * w);
  }
  return { ...p, waypoints_m: out };
}

/** A `--path-of` value, or an InputError naming the option and what is allowed. */
export function parsePathOf(v: string | undefined, option = '--path-of'): PathOf {
  if (v === undefined) return 'object';
  if ((PATH_OF as readonly string[]).includes(v)) return v as PathOf;
  throw new InputError({ code: 'cli.bad_path_of', message: `${option} must be ${PATH_OF.join(', ')}; got '${v}'`, where: { option }, hint: 'object: the poses are the object centre; left-tool / right-tool: that arm\'s planned tool (grasp point) path' });
}

/** The arm's configuration with the topic's path (after `topicPathProblems` found none). */
export function configWithPath(config: ArmConfig, p: TopicPath): ArmConfig {
  return { ...config, task: taskWithPath(config.task, p) };
}
