/**
 * A bag read and decoded once, for many candidates: each arm's inputs as typed columns
 * (wrench rows, tool poses, joint velocities, zone views in task order) and the order in
 * which replay would feed them (log-time order, as the reader yields them). Every candidate
 * then runs its arm steps on these rows (evaluate.ts); nothing is decoded twice.
 *
 * Times follow replay exactly: the int64 log time as two 32-bit halves, relative to the bag
 * start in ns, then seconds (`rel`), and the step's clock `t0s + rel` (src/replay/replay.ts).
 */
import { openBag, type Bag, type MessageBatch } from '../bag/index.js';
import { bagDecoders } from '../bag/decode.js';
import { canonicalType } from '../bag/definitions.js';
import { decodePoseStamped, decodeWrenchStamped, JointStateDecoder } from '../bag/fast.js';
import { ZONE_UNKNOWN } from '../core/arm-step.js';
import type { ArmName } from '../params/spec.js';
import { Column } from '../replay/series.js';
import { INPUT_KINDS, INPUT_TYPES, inputTopic, type InputKind } from '../ros/topics.js';
import { InputError, type Problem } from '../util/errors.js';
import { KIND_JOINTS, KIND_POSE, KIND_WRENCH, KIND_ZONES, type DecodedArm, type DecodedBag } from './columns.js';

export { KIND_JOINTS, KIND_POSE, KIND_WRENCH, KIND_ZONES, type DecodedArm, type DecodedBag } from './columns.js';

const MAX_JOINTS = 64;

export interface BagInfo {
  readonly path: string;
  readonly duration_s: number;
  readonly startNs: bigint;
  readonly endNs: bigint;
  readonly messages: number;
}

/** The topics the sweep needs from a bag, checked without reading messages: both arms' wrench. */
export function checkBagTopics(bag: Bag, problems: Problem[]): void {
  const byName = new Map(bag.topics().map((t) => [t.name, t]));
  for (const arm of ['left', 'right'] as const) {
    for (const kind of INPUT_KINDS) {
      const name = inputTopic(arm, kind);
      const info = byName.get(name);
      if (!info) {
        if (kind === 'wrench') problems.push({ code: 'sweep.missing_topic', message: `the bag has no ${name} (${INPUT_TYPES[kind]}): a sweep replays both arms`, where: { file: bag.path, topic: name }, hint: `the bag has ${bag.topics().map((t) => t.name).join(', ') || 'no topics'}` });
        continue;
      }
      if (canonicalType(info.type) !== INPUT_TYPES[kind]) problems.push({ code: 'sweep.wrong_type', message: `topic ${name} has type ${info.type}, the ${kind} input needs ${INPUT_TYPES[kind]}`, where: { file: bag.path, topic: name } });
    }
  }
}

/** Open every bag, check its topics, and return its span; all problems at once, before any work. */
export async function inspectBags(paths: readonly string[]): Promise<BagInfo[]> {
  const problems: Problem[] = [];
  const out: BagInfo[] = [];
  for (const path of paths) {
    let bag: Bag;
    try {
      bag = await openBag(path);
    } catch (err) {
      if (err instanceof InputError) {
        problems.push(...err.problems);
        continue;
      }
      throw err;
    }
    try {
      checkBagTopics(bag, problems);
      if (bag.messageCount === 0) problems.push({ code: 'sweep.empty_bag', message: 'the bag holds no messages', where: { file: path } });
      out.push({ path, duration_s: Number(bag.endNs - bag.startNs) / 1e9, startNs: bag.startNs, endNs: bag.endNs, messages: bag.messageCount });
    } finally {
      bag.close();
    }
  }
  if (problems.length) throw new InputError(problems);
  return out;
}

/** Read and decode a bag once. `zoneNames`: the task's zones in task order (sorted by name). */
export async function decodeBag(path: string, zoneNames: readonly string[]): Promise<DecodedBag> {
  const bag = await openBag(path);
  try {
    return decodeOpenBag(bag, zoneNames);
  } finally {
    bag.close();
  }
}

export function decodeOpenBag(bag: Bag, zoneNames: readonly string[]): DecodedBag {
  const problems: Problem[] = [];
  checkBagTopics(bag, problems);
  if (problems.length) throw new InputError(problems);
  const topics = bag.topics();
  const decoders = bagDecoders(bag);
  const zoneIndex = new Map(zoneNames.map((z, k) => [z, k]));
  const nz = zoneNames.length;
  // route[topic index] = stream code, or -1.
  const route = new Int8Array(topics.length).fill(-1);
  const present = { left: {} as Record<InputKind, boolean>, right: {} as Record<InputKind, boolean> };
  topics.forEach((t, k) => {
    for (const [a, arm] of (['left', 'right'] as const).entries()) {
      INPUT_KINDS.forEach((kind, j) => {
        if (t.name === inputTopic(arm, kind)) route[k] = a * 4 + j;
      });
    }
  });
  for (const arm of ['left', 'right'] as const) for (const kind of INPUT_KINDS) present[arm][kind] = topics.some((t) => t.name === inputTopic(arm, kind));
  const cap = (arm: ArmName, kind: InputKind) => Math.max(16, Math.min(1 << 22, topics.find((t) => t.name === inputTopic(arm, kind))?.count ?? 16));
  const cols = (['left', 'right'] as const).map((arm) => ({
    wrenchRel: new Column(cap(arm, 'wrench')),
    wrench: new Column(6 * cap(arm, 'wrench')),
    poseRel: new Column(cap(arm, 'tool_pose')),
    pose: new Column(7 * cap(arm, 'tool_pose')),
    jointRel: new Column(cap(arm, 'joint_states')),
    jointCount: [] as number[],
    jointOffset: [] as number[],
    jointVel: new Column(3 * cap(arm, 'joint_states')),
    zoneRel: new Column(cap(arm, 'zone_view')),
    zones: [] as number[],
  }));
  const order = new Column(Math.max(16, Math.min(1 << 23, bag.messageCount)));
  const index = new Column(Math.max(16, Math.min(1 << 23, bag.messageCount)));
  const row = new Float64Array(9);
  const jointRow = new Float64Array(2 + 3 * MAX_JOINTS);
  const joint = new JointStateDecoder(MAX_JOINTS);
  const t0ns = bag.startNs;
  const t0hi = Number(BigInt.asIntN(32, t0ns >> 32n));
  const t0lo = Number(BigInt.asUintN(32, t0ns));
  const handle = (batch: MessageBatch): void => {
    const halves = new Int32Array(batch.logTimeNs.buffer, batch.logTimeNs.byteOffset, 2 * batch.count);
    for (let i = 0; i < batch.count; i++) {
      const code = route[batch.topicIndex[i]!]!;
      if (code < 0) continue;
      const relNs = (halves[2 * i + 1]! - t0hi) * 4294967296 + ((halves[2 * i]! >>> 0) - t0lo);
      const rel = relNs / 1e9;
      const off = batch.offset[i]!;
      const len = batch.length[i]!;
      const c = cols[code >> 2]!;
      const kind = code & 3;
      let at = 0;
      try {
        switch (kind) {
          case KIND_WRENCH:
            decodeWrenchStamped(batch.view, off, len, row, 0);
            at = c.wrenchRel.length;
            c.wrenchRel.push(rel);
            for (let k = 2; k < 8; k++) c.wrench.push(row[k]!);
            break;
          case KIND_JOINTS: {
            const n = joint.decode(batch.view, off, len, jointRow, 0, 0);
            at = c.jointRel.length;
            c.jointRel.push(rel);
            let measured = false;
            for (let q = 0; q < n; q++) if (!Number.isNaN(jointRow[2 + MAX_JOINTS + q]!)) measured = true;
            c.jointOffset.push(c.jointVel.length);
            c.jointCount.push(measured ? n : 0);
            if (measured) for (let q = 0; q < n; q++) c.jointVel.push(jointRow[2 + MAX_JOINTS + q]!);
            break;
          }
          case KIND_POSE:
            decodePoseStamped(batch.view, off, len, row, 0);
            at = c.poseRel.length;
            c.poseRel.push(rel);
            for (let k = 2; k < 9; k++) c.pose.push(row[k]!);
            break;
          case KIND_ZONES: {
            const t = topics[batch.topicIndex[i]!]!;
            const m = decoders.decode(t.type, batch.bytes.subarray(off, off + len), { topic: t.name }) as { zones: string[]; state: ArrayLike<number> };
            at = c.zoneRel.length;
            c.zoneRel.push(rel);
            const states = new Array<number>(nz).fill(ZONE_UNKNOWN);
            for (let z = 0; z < m.zones.length; z++) {
              const idx = zoneIndex.get(m.zones[z]!);
              if (idx !== undefined) states[idx] = m.state[z]! <= 2 ? m.state[z]! : ZONE_UNKNOWN;
            }
            c.zones.push(...states);
            break;
          }
        }
      } catch (err) {
        if (!(err instanceof InputError)) throw err;
        const p = err.problems[0]!;
        throw new InputError({ ...p, where: { ...p.where, file: bag.path, topic: topics[batch.topicIndex[i]!]!.name }, message: `${p.message} (message at ${batch.logTimeNs[i]} ns)` });
      }
      order.push(code);
      index.push(at);
    }
  };
  for (const batch of bag.batches({ topics: topics.filter((_, k) => route[k]! >= 0).map((t) => t.name) })) handle(batch);
  const arm = (a: 0 | 1): DecodedArm => {
    const c = cols[a]!;
    const name = a === 0 ? 'left' : 'right';
    return {
      arm: name,
      present: present[name],
      wrenchRel: c.wrenchRel.view().slice(),
      wrench: c.wrench.view().slice(),
      poseRel: c.poseRel.view().slice(),
      pose: c.pose.view().slice(),
      jointRel: c.jointRel.view().slice(),
      jointCount: Uint8Array.from(c.jointCount),
      jointOffset: Uint32Array.from(c.jointOffset),
      jointVel: c.jointVel.view().slice(),
      zoneRel: c.zoneRel.view().slice(),
      zones: Uint8Array.from(c.zones),
    };
  };
  return {
    path: bag.path,
    duration_s: Number(bag.endNs - bag.startNs) / 1e9,
    t0s: Number(t0ns) / 1e9,
    zoneCount: nz,
    arms: { left: arm(0), right: arm(1) },
    count: order.length,
    order: Uint8Array.from(order.view()),
    index: Uint32Array.from(index.view()),
  };
}
