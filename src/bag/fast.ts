/**
 * Fixed-layout CDR decoders and encoders for the hot types, reading straight into (and writing
 * straight from) Float64Arrays: no object per message. Layout (plain CDR, XCDR1): a 4-byte
 * encapsulation header (00 00 big-endian, 00 01 little-endian), then fields aligned to their size
 * counted from the byte after the header; strings are a uint32 length counting the NUL, the
 * bytes, the NUL; sequences a uint32 count, then the elements (aligned only when non-empty).
 *
 * Row layouts (one row per message, `stride` numbers):
 *   WrenchStamped  [sec, nanosec, force.x, force.y, force.z, torque.x, torque.y, torque.z]
 *   TwistStamped   [sec, nanosec, linear.x, linear.y, linear.z, angular.x, angular.y, angular.z]
 *   PoseStamped    [sec, nanosec, position.x, .y, .z, orientation.x, .y, .z, .w]
 *   JointState     [sec, nanosec, position[0..J), velocity[0..J), effort[0..J)]  (NaN where absent)
 */
import { InputError } from '../util/errors.js';
import { canonicalType } from './definitions.js';
import type { Bag, ReadOptions } from './types.js';

export const WRENCH_STAMPED_STRIDE = 8;
export const TWIST_STAMPED_STRIDE = 8;
export const POSE_STAMPED_STRIDE = 9;

function layoutError(message: string, byteOffset: number): never {
  throw new InputError({
    code: 'bag.cdr_layout',
    message,
    where: { byteOffset },
    hint: 'the message is cut, or not of the expected type',
  });
}

/** Checks the encapsulation header; returns true for little-endian. */
function encapsulation(view: DataView, offset: number, length: number): boolean {
  if (length < 4 || offset + length > view.byteLength) layoutError(`message of ${length} bytes is too short for a CDR header`, 0);
  const kind = view.getUint16(offset, false);
  if (kind === 1) return true;
  if (kind === 0) return false;
  return layoutError(`CDR encapsulation 0x${kind.toString(16).padStart(4, '0')} is not plain CDR (00 00 / 00 01)`, 0);
}

/**
 * Position (relative to the CDR origin, i.e. offset + 4) just after the std_msgs/Header, i.e.
 * after frame_id's NUL. Writes sec and nanosec to out[at], out[at + 1].
 */
function readHeader(view: DataView, origin: number, end: number, le: boolean, out: Float64Array, at: number): number {
  if (origin + 12 > end) layoutError('message is cut inside its header', origin - 4 + Math.min(12, end - origin));
  out[at] = view.getInt32(origin, le);
  out[at + 1] = view.getUint32(origin + 4, le);
  const len = view.getUint32(origin + 8, le);
  const p = 12 + len;
  if (origin + p > end) layoutError(`frame_id of ${len} bytes runs past the message end`, 12);
  return p;
}

function vector6(view: DataView, offset: number, length: number, out: Float64Array, at: number): void {
  const le = encapsulation(view, offset, length);
  const origin = offset + 4;
  const end = offset + length;
  let p = readHeader(view, origin, end, le, out, at);
  p = (p + 7) & ~7;
  const q = origin + p;
  if (q + 48 > end) layoutError(`message ends at byte ${length}, needs ${p + 4 + 48}`, p + 4);
  out[at + 2] = view.getFloat64(q, le);
  out[at + 3] = view.getFloat64(q + 8, le);
  out[at + 4] = view.getFloat64(q + 16, le);
  out[at + 5] = view.getFloat64(q + 24, le);
  out[at + 6] = view.getFloat64(q + 32, le);
  out[at + 7] = view.getFloat64(q + 40, le);
}

/** geometry_msgs/msg/WrenchStamped at view[offset, offset+length) → out[at .. at+8). */
export function decodeWrenchStamped(view: DataView, offset: number, length: number, out: Float64Array, at: number): void {
  vector6(view, offset, length, out, at);
}

/** geometry_msgs/msg/TwistStamped at view[offset, offset+length) → out[at .. at+8). */
export function decodeTwistStamped(view: DataView, offset: number, length: number, out: Float64Array, at: number): void {
  vector6(view, offset, length, out, at);
}

/** geometry_msgs/msg/PoseStamped at view[offset, offset+length) → out[at .. at+9). */
export function decodePoseStamped(view: DataView, offset: number, length: number, out: Float64Array, at: number): void {
  const le = encapsulation(view, offset, length);
  const origin = offset + 4;
  const end = offset + length;
  let p = readHeader(view, origin, end, le, out, at);
  p = (p + 7) & ~7;
  const q = origin + p;
  if (q + 56 > end) layoutError(`message ends at byte ${length}, needs ${p + 4 + 56}`, p + 4);
  for (let k = 0; k < 7; k++) out[at + 2 + k] = view.getFloat64(q + 8 * k, le);
}

const utf8 = new TextDecoder();
const utf8enc = new TextEncoder();

/** The header's frame_id of a message that starts with std_msgs/Header. */
export function readFrameId(view: DataView, offset: number, length: number): string {
  const le = encapsulation(view, offset, length);
  const origin = offset + 4;
  if (origin + 12 > offset + length) layoutError('message is cut inside its header', length);
  const len = view.getUint32(origin + 8, le);
  if (origin + 12 + len > offset + length) layoutError('frame_id runs past the message end', 12);
  return utf8.decode(new Uint8Array(view.buffer, view.byteOffset + origin + 12, Math.max(0, len - 1)));
}

/**
 * sensor_msgs/msg/JointState into rows of `2 + 3 * maxJoints` numbers. Joint names are decoded
 * only when their bytes change from the previous message (`namesChanged`).
 */
export class JointStateDecoder {
  readonly maxJoints: number;
  readonly stride: number;
  /** Names of the last decoded message. */
  names: readonly string[] = [];
  /** True when the last decoded message's names differ from the one before. */
  namesChanged = false;
  #nameBytes = new Uint8Array(0);

  constructor(maxJoints: number) {
    if (!Number.isInteger(maxJoints) || maxJoints < 0) throw new RangeError(`maxJoints must be a whole number ≥ 0, got ${maxJoints}`);
    this.maxJoints = maxJoints;
    this.stride = 2 + 3 * maxJoints;
  }

  /**
   * Decode one message into out[at .. at + stride); returns its joint (name) count. Values past
   * a shorter array read NaN up to `fill` joints (default all `maxJoints`; a caller that reads
   * only the first `count` joints may pass a smaller `fill` and save the writes).
   */
  decode(view: DataView, offset: number, length: number, out: Float64Array, at: number, fill: number = this.maxJoints): number {
    const le = encapsulation(view, offset, length);
    const origin = offset + 4;
    const end = offset + length;
    let p = readHeader(view, origin, end, le, out, at);
    // name: string[]
    p = (p + 3) & ~3;
    if (origin + p + 4 > end) layoutError('message is cut at the name count', p + 4);
    const nNames = view.getUint32(origin + p, le);
    const namesStart = p;
    p += 4;
    for (let i = 0; i < nNames; i++) {
      p = (p + 3) & ~3;
      if (origin + p + 4 > end) layoutError(`message is cut in name ${i}`, p + 4);
      const len = view.getUint32(origin + p, le);
      p += 4 + len;
      if (origin + p > end) layoutError(`name ${i} runs past the message end`, p + 4);
    }
    this.#checkNames(view, origin + namesStart, origin + p, nNames, le);
    const J = this.maxJoints;
    for (let a = 0; a < 3; a++) {
      p = (p + 3) & ~3;
      if (origin + p + 4 > end) layoutError(`message is cut at array ${a} count`, p + 4);
      const n = view.getUint32(origin + p, le);
      p += 4;
      if (n > J) layoutError(`joint array of ${n} values is longer than maxJoints ${J}`, p);
      const base = at + 2 + a * J;
      if (n > 0) {
        p = (p + 7) & ~7;
        if (origin + p + 8 * n > end) layoutError(`joint array of ${n} values runs past the message end`, p + 4);
        for (let i = 0; i < n; i++) out[base + i] = view.getFloat64(origin + p + 8 * i, le);
        p += 8 * n;
      }
      const fillTo = fill < J ? Math.max(fill, nNames) : J;
      for (let i = n; i < fillTo; i++) out[base + i] = NaN;
    }
    if (nNames > J) layoutError(`${nNames} joint names, more than maxJoints ${J}`, namesStart + 4);
    return nNames;
  }

  #checkNames(view: DataView, from: number, to: number, n: number, le: boolean): void {
    // Compare in place (no view object per message); copy only when the names changed.
    const prev = this.#nameBytes;
    const len = to - from;
    let same = prev.length === len;
    for (let i = 0; same && i < len; i++) if (prev[i] !== view.getUint8(from + i)) same = false;
    this.namesChanged = !same;
    if (same) return;
    this.#nameBytes = new Uint8Array(view.buffer, view.byteOffset + from, len).slice();
    const names: string[] = [];
    let p = 4;
    const local = new DataView(this.#nameBytes.buffer);
    // Alignment inside the region counts from the CDR origin: `from` is 4-aligned there.
    for (let i = 0; i < n; i++) {
      p = (p + 3) & ~3;
      const len = local.getUint32(p, le);
      names.push(utf8.decode(this.#nameBytes.subarray(p + 4, p + 4 + Math.max(0, len - 1))));
      p += 4 + len;
    }
    this.names = names;
  }
}

// ---- Encoders -----------------------------------------------------------------------------------

let lastFrame = '';
let lastFrameBytes = new Uint8Array(0);
function frameBytes(frameId: string): Uint8Array {
  if (frameId !== lastFrame) {
    lastFrame = frameId;
    lastFrameBytes = utf8enc.encode(frameId);
  }
  return lastFrameBytes;
}

/** Writes the header at CDR position 0 (byte 4); returns the position after frame_id's NUL. */
function writeHeader(view: DataView, bytes: Uint8Array, sec: number, nanosec: number, frame: Uint8Array): number {
  view.setUint32(0, 0x00010000, false); // 00 01 00 00: little-endian plain CDR
  view.setInt32(4, sec, true);
  view.setUint32(8, nanosec, true);
  view.setUint32(12, frame.length + 1, true);
  bytes.set(frame, 16);
  bytes[16 + frame.length] = 0;
  return 12 + frame.length + 1;
}

function buffer(size: number, out?: Uint8Array): { bytes: Uint8Array; view: DataView } {
  const bytes = out && out.length >= size ? out.subarray(0, size) : new Uint8Array(size);
  bytes.fill(0);
  return { bytes, view: new DataView(bytes.buffer, bytes.byteOffset, size) };
}

function encodeFixed(values: ArrayLike<number>, at: number, frameId: string, nFloats: number, out?: Uint8Array): Uint8Array {
  const frame = frameBytes(frameId);
  const p = (12 + frame.length + 1 + 7) & ~7;
  const { bytes, view } = buffer(4 + p + 8 * nFloats, out);
  writeHeader(view, bytes, values[at]!, values[at + 1]!, frame);
  for (let k = 0; k < nFloats; k++) view.setFloat64(4 + p + 8 * k, values[at + 2 + k]!, true);
  return bytes;
}

/** Encode a WrenchStamped from a row [sec, nanosec, fx, fy, fz, tx, ty, tz] at values[at]. */
export function encodeWrenchStamped(values: ArrayLike<number>, at: number, frameId: string, out?: Uint8Array): Uint8Array {
  return encodeFixed(values, at, frameId, 6, out);
}

/** Encode a TwistStamped from a row [sec, nanosec, vx, vy, vz, wx, wy, wz] at values[at]. */
export function encodeTwistStamped(values: ArrayLike<number>, at: number, frameId: string, out?: Uint8Array): Uint8Array {
  return encodeFixed(values, at, frameId, 6, out);
}

/** Encode a PoseStamped from a row [sec, nanosec, px, py, pz, qx, qy, qz, qw] at values[at]. */
export function encodePoseStamped(values: ArrayLike<number>, at: number, frameId: string, out?: Uint8Array): Uint8Array {
  return encodeFixed(values, at, frameId, 7, out);
}

/** Encode a JointState. Arrays may be shorter than `names` (empty when not measured). */
export function encodeJointState(
  sec: number,
  nanosec: number,
  frameId: string,
  names: readonly string[],
  position: ArrayLike<number>,
  velocity: ArrayLike<number>,
  effort: ArrayLike<number>,
): Uint8Array {
  const frame = utf8enc.encode(frameId);
  const nameBytes = names.map((n) => utf8enc.encode(n));
  let p = 12 + frame.length + 1;
  p = (p + 3) & ~3;
  p += 4;
  for (const nb of nameBytes) p = ((p + 3) & ~3) + 4 + nb.length + 1;
  for (const arr of [position, velocity, effort]) {
    p = ((p + 3) & ~3) + 4;
    if (arr.length > 0) p = ((p + 7) & ~7) + 8 * arr.length;
  }
  const { bytes, view } = buffer(4 + p);
  p = writeHeader(view, bytes, sec, nanosec, frame);
  p = (p + 3) & ~3;
  view.setUint32(4 + p, names.length, true);
  p += 4;
  for (const nb of nameBytes) {
    p = (p + 3) & ~3;
    view.setUint32(4 + p, nb.length + 1, true);
    bytes.set(nb, 4 + p + 4);
    p += 4 + nb.length + 1;
  }
  for (const arr of [position, velocity, effort]) {
    p = (p + 3) & ~3;
    view.setUint32(4 + p, arr.length, true);
    p += 4;
    if (arr.length > 0) {
      p = (p + 7) & ~7;
      for (let i = 0; i < arr.length; i++) view.setFloat64(4 + p + 8 * i, arr[i]!, true);
      p += 8 * arr.length;
    }
  }
  return bytes;
}

// ---- Whole topics into arrays ---------------------------------------------------------------------

export type FixedDecoder = (view: DataView, offset: number, length: number, out: Float64Array, at: number) => void;

const FIXED: Record<string, { stride: number; decode: FixedDecoder }> = {
  'geometry_msgs/msg/WrenchStamped': { stride: WRENCH_STAMPED_STRIDE, decode: decodeWrenchStamped },
  'geometry_msgs/msg/TwistStamped': { stride: TWIST_STAMPED_STRIDE, decode: decodeTwistStamped },
  'geometry_msgs/msg/PoseStamped': { stride: POSE_STAMPED_STRIDE, decode: decodePoseStamped },
};

/** The fixed-layout decoder for a type (either spelling), or undefined. JointState: use the class. */
export function fixedDecoder(type: string): { stride: number; decode: FixedDecoder } | undefined {
  return FIXED[canonicalType(type)];
}

export interface TopicSeries {
  readonly topic: string;
  readonly type: string;
  readonly count: number;
  readonly stride: number;
  readonly logTimeNs: BigInt64Array;
  /** count × stride numbers, row layouts as above. */
  readonly values: Float64Array;
  /** JointState only: joint names of the first message. */
  readonly names?: readonly string[];
}

/**
 * Read one WrenchStamped / TwistStamped / PoseStamped / JointState topic into typed arrays.
 * JointState rows have room for `maxJoints` joints (default: the first message's name count).
 * Throws InputError naming the topic and log time of a message that does not fit the layout.
 */
export function readTopicSeries(bag: Bag, topic: string, opts: Omit<ReadOptions, 'topics'> & { maxJoints?: number } = {}): TopicSeries {
  const info = bag.topics().find((t) => t.name === topic);
  if (!info) {
    throw new InputError({
      code: 'bag.unknown_topic',
      message: `topic ${topic} is not in the bag`,
      where: { file: bag.path, topic },
      hint: `topics: ${bag.topics().map((t) => t.name).join(', ')}`,
    });
  }
  const type = canonicalType(info.type);
  const fixed = FIXED[type];
  const isJoint = type === 'sensor_msgs/msg/JointState';
  if (!fixed && !isJoint) {
    throw new InputError({
      code: 'bag.no_fast_decoder',
      message: `topic ${topic} has type ${info.type}; fast decoding covers WrenchStamped, TwistStamped, PoseStamped, JointState`,
      where: { file: bag.path, topic },
      hint: 'use the generic decoder (bagDecoders) for other types',
    });
  }
  const read = { ...opts, topics: [topic] };
  let joint: JointStateDecoder | undefined;
  if (isJoint) {
    let J = opts.maxJoints;
    if (J === undefined) {
      J = 0;
      for (const b of bag.batches(read)) {
        if (b.count === 0) continue;
        const v = b.view;
        const le = encapsulation(v, b.offset[0]!, b.length[0]!);
        const origin = b.offset[0]! + 4;
        const end = b.offset[0]! + b.length[0]!;
        // Declared lengths are checked against the message before use: a bad first message gives
        // J = 0 here and a clear layout error from the decoder below.
        if (origin + 12 <= end) {
          const flen = v.getUint32(origin + 8, le);
          const p = (12 + flen + 3) & ~3;
          // Each joint name takes at least 4 bytes, so a message holds at most length/4 names.
          if (origin + p + 4 <= end) J = Math.min(v.getUint32(origin + p, le), Math.floor(b.length[0]! / 4));
        }
        break;
      }
    }
    joint = new JointStateDecoder(J);
  }
  const stride = joint ? joint.stride : fixed!.stride;
  // The recorded count sizes the arrays, up to 2^20 rows at first (a count is a declaration).
  let cap = Math.max(Math.min(info.count, 1 << 20), 16);
  let times = new BigInt64Array(cap);
  let values = new Float64Array(cap * stride);
  let n = 0;
  let names: readonly string[] | undefined;
  for (const b of bag.batches(read)) {
    if (n + b.count > cap) {
      cap = Math.max(cap * 2, n + b.count);
      const t2 = new BigInt64Array(cap);
      t2.set(times.subarray(0, n));
      times = t2;
      const v2 = new Float64Array(cap * stride);
      v2.set(values.subarray(0, n * stride));
      values = v2;
    }
    times.set(b.logTimeNs, n);
    for (let i = 0; i < b.count; i++) {
      try {
        if (joint) {
          joint.decode(b.view, b.offset[i]!, b.length[i]!, values, (n + i) * stride);
          names ??= joint.names;
        } else {
          fixed!.decode(b.view, b.offset[i]!, b.length[i]!, values, (n + i) * stride);
        }
      } catch (err) {
        if (!(err instanceof InputError)) throw err;
        const p = err.problems[0]!;
        throw new InputError({
          ...p,
          message: `${info.type} at log time ${b.logTimeNs[i]}: ${p.message}`,
          where: { file: bag.path, topic, ...(p.where?.byteOffset !== undefined ? { byteOffset: p.where.byteOffset } : {}) },
        });
      }
    }
    n += b.count;
  }
  return {
    topic,
    type: info.type,
    count: n,
    stride,
    logTimeNs: times.subarray(0, n),
    values: values.subarray(0, n * stride),
    ...(names ? { names } : {}),
  };
}
