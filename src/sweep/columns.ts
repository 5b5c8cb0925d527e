/**
 * The columns of a decoded bag (decoded.ts reads and decodes; evaluate.ts and share.ts run
 * candidates on them), apart from the bag readers so that a sweep worker handed decoded bags
 * loads no reader, no decompressor and no message definitions.
 *
 * `sharedBag` copies a bag's columns into one SharedArrayBuffer: posted to a worker thread, its
 * typed arrays are shared, not copied (structured clone keeps SharedArrayBuffer memory shared).
 * Nobody writes to the columns after decoding: the workers only read them.
 */
import type { ArmName } from '../params/spec.js';
import type { InputKind } from '../ros/topics.js';

/** Stream codes in `order`: arm (0 left, 1 right) * 4 + input kind (INPUT_KINDS order). */
export const KIND_WRENCH = 0;
export const KIND_JOINTS = 1;
export const KIND_POSE = 2;
export const KIND_ZONES = 3;

export interface DecodedArm {
  readonly arm: ArmName;
  readonly present: { readonly [K in InputKind]: boolean };
  readonly wrenchRel: Float64Array;
  /** 6 per sample: fx fy fz tx ty tz (sensor frame). */
  readonly wrench: Float64Array;
  readonly poseRel: Float64Array;
  /** 7 per pose: x y z qx qy qz qw. */
  readonly pose: Float64Array;
  readonly jointRel: Float64Array;
  /** Per joint message: joints with a velocity (0: none measured) and where its velocities start in `jointVel`. */
  readonly jointCount: Uint8Array;
  readonly jointOffset: Uint32Array;
  readonly jointVel: Float64Array;
  readonly zoneRel: Float64Array;
  /** Per zone view: one state per task zone (task order), ZONE_UNKNOWN for zones it does not name. */
  readonly zones: Uint8Array;
}

export interface DecodedBag {
  readonly path: string;
  readonly duration_s: number;
  /** Bag start, s since the epoch (as replay computes it). */
  readonly t0s: number;
  readonly zoneCount: number;
  readonly arms: { readonly left: DecodedArm; readonly right: DecodedArm };
  readonly count: number;
  readonly order: Uint8Array;
  readonly index: Uint32Array;
}

type Column = Float64Array | Uint8Array | Uint32Array;
const ARM_COLUMNS = ['wrenchRel', 'wrench', 'poseRel', 'pose', 'jointRel', 'jointCount', 'jointOffset', 'jointVel', 'zoneRel', 'zones'] as const;

/** The same bag with every column in one SharedArrayBuffer (8-byte aligned), values copied exactly. */
export function sharedBag(bag: DecodedBag): DecodedBag {
  const all: Column[] = [bag.order, bag.index];
  for (const a of [bag.arms.left, bag.arms.right]) for (const k of ARM_COLUMNS) all.push(a[k]);
  const align = (n: number) => Math.ceil(n / 8) * 8;
  const buffer = new SharedArrayBuffer(Math.max(8, all.reduce((s, c) => s + align(c.byteLength), 0)));
  let at = 0;
  const put = <T extends Column>(c: T): T => {
    const Ctor = c.constructor as new (b: SharedArrayBuffer, offset: number, length: number) => T;
    const out = new Ctor(buffer, at, c.length);
    out.set(c as never);
    at += align(c.byteLength);
    return out;
  };
  const arm = (a: DecodedArm): DecodedArm => ({
    arm: a.arm,
    present: { ...a.present },
    wrenchRel: put(a.wrenchRel),
    wrench: put(a.wrench),
    poseRel: put(a.poseRel),
    pose: put(a.pose),
    jointRel: put(a.jointRel),
    jointCount: put(a.jointCount),
    jointOffset: put(a.jointOffset),
    jointVel: put(a.jointVel),
    zoneRel: put(a.zoneRel),
    zones: put(a.zones),
  });
  const order = put(bag.order);
  const index = put(bag.index);
  // The same property order as decodeBag's (one object shape for the evaluators).
  const arms = { left: arm(bag.arms.left), right: arm(bag.arms.right) };
  return { path: bag.path, duration_s: bag.duration_s, t0s: bag.t0s, zoneCount: bag.zoneCount, arms, count: bag.count, order, index };
}
