/**
 * Episode artefacts: the MCAP bag, the summary and the HTML report of one simulated episode.
 *
 * The bag is made in two steps, so that a simulated bag is exactly what a recording of the
 * live nodes would be: (1) every input each arm's step was fed (wrench, joint states, tool
 * pose, zone view), on sim time, under the live topic names; (2) that bag replayed through
 * the arm step with the episode's configurations, which passes the inputs through and adds
 * every output topic. Because the sim's clock is exactly the replayed bag time, the replayed
 * outputs equal the ones the sim's arms computed in closed loop, bit for bit (`matchingSamples`).
 */
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import { MessageWriter } from '@foxglove/rosmsg2-serialization';
import { builtinDefinition, parseDefinition } from '../bag/definitions.js';
import { encodeJointState, encodePoseStamped, encodeWrenchStamped } from '../bag/fast.js';
import { openBag } from '../bag/index.js';
import { BagWriter } from '../bag/writer.js';
import type { ArmConfig } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import { replayBag, writerSink, type ReplayRecord } from '../replay/replay.js';
import { replayReportInput, summarize } from '../replay/summary.js';
import type { ReportEvent, ReportInput } from '../report/types.js';
import { CELL_FRAME, INPUT_KINDS, INPUT_TYPES, inputTopic, sensorFrame } from '../ros/topics.js';
import type { EpisodeResult } from './episode.js';
import type { EpisodeRecord } from './record.js';

const SENSOR_QOS = [{ history: 1, depth: 5, reliability: 2, durability: 2, deadline: { sec: 0, nsec: 0 }, lifespan: { sec: 0, nsec: 0 }, liveliness: 1, liveliness_lease_duration: { sec: 0, nsec: 0 }, avoid_ros_namespace_conventions: false }];
const SIDES: readonly ArmName[] = ['left', 'right'];

/** Write what each arm's step was fed, on sim time (log time = sim time, as with use_sim_time). */
export async function writeEpisodeInputs(dir: string, record: EpisodeRecord): Promise<void> {
  const w = await BagWriter.create(dir, { compression: 'zstd', overwrite: true });
  const ids = new Map<string, number>();
  for (const arm of SIDES) for (const kind of INPUT_KINDS) ids.set(`${arm}/${kind}`, await w.addTopic({ name: inputTopic(arm, kind), type: INPUT_TYPES[kind], offeredQos: SENSOR_QOS }));
  const zoneWriter = new MessageWriter(parseDefinition('antiphon/msg/ZoneView', builtinDefinition('antiphon/msg/ZoneView')!));
  const nz = record.zoneNames.length;
  const nj = record.left.jointVelocity.length / Math.max(1, record.samples);
  const names = { left: Array.from({ length: nj }, (_, k) => `left_joint_${k + 1}`), right: Array.from({ length: nj }, (_, k) => `right_joint_${k + 1}`) };
  const row = new Float64Array(9);
  const buf = new Uint8Array(256);
  for (let i = 0; i < record.samples; i++) {
    const t = record.t[i]!;
    const ns = BigInt(Math.round(t * 1e9));
    const sec = Number(ns / 1_000_000_000n);
    const nanosec = Number(ns % 1_000_000_000n);
    row[0] = sec;
    row[1] = nanosec;
    for (const arm of SIDES) {
      const a = record[arm];
      void w.write(ids.get(`${arm}/joint_states`)!, ns, encodeJointState(sec, nanosec, `${arm}_base`, names[arm], a.jointPosition.subarray(i * nj, i * nj + nj), a.jointVelocity.subarray(i * nj, i * nj + nj), []));
      for (let k = 0; k < 7; k++) row[2 + k] = a.toolPose[7 * i + k]!;
      void w.write(ids.get(`${arm}/tool_pose`)!, ns, encodePoseStamped(row, 0, CELL_FRAME, buf));
      if (a.zoneFed[i] === 1) {
        const msg = zoneWriter.writeMessage({ header: { stamp: { sec, nanosec }, frame_id: `${arm}_area_sensor` }, zones: record.zoneNames, state: a.zoneView.subarray(i * nz, i * nz + nz) });
        void w.write(ids.get(`${arm}/zone_view`)!, ns, msg);
      }
      for (let k = 0; k < 6; k++) row[2 + k] = a.wrench[6 * i + k]!;
      void w.write(ids.get(`${arm}/wrench`)!, ns, encodeWrenchStamped(row, 0, sensorFrame(arm), buf));
    }
  }
  await w.close();
}

export interface EpisodeArtifacts {
  readonly replay: ReplayRecord;
  /** Samples (both arms) where the replayed recommended speed equals the sim's, bit for bit. */
  readonly matchingSamples: number;
  readonly samples: number;
  readonly report: ReportInput;
  readonly replaySummary: Record<string, unknown>;
}

/**
 * Write `<dir>/bag` (inputs and outputs) and return what the report needs. `dir` is the
 * temporary output folder (the caller renames it when complete).
 */
export async function writeEpisodeBag(dir: string, result: EpisodeResult, configs: { left: ArmConfig; right: ArmConfig }): Promise<EpisodeArtifacts> {
  const record = result.record;
  if (!record) throw new Error('the episode was run without a record');
  const inputs = join(dir, '.inputs');
  await writeEpisodeInputs(inputs, record);
  const source = await openBag(inputs);
  let replay: ReplayRecord;
  const writer = await BagWriter.create(join(dir, 'bag'), { compression: 'zstd' });
  try {
    replay = await replayBag(source, { arms: ['left', 'right'], configs, sink: writerSink(writer, source) });
    await writer.close();
  } catch (err) {
    writer.abort();
    throw err;
  } finally {
    source.close();
    rmSync(inputs, { recursive: true, force: true });
  }
  // The closed loop and its replay must agree exactly.
  let matching = 0;
  for (const [k, arm] of SIDES.entries()) {
    const tw = record[arm].twist;
    const rs = replay.arms[k]!.recommendedSpeed;
    for (let i = 0; i < record.samples && i < rs.length; i++) {
      const s = Math.sqrt(tw[6 * i]! * tw[6 * i]! + tw[6 * i + 1]! * tw[6 * i + 1]! + tw[6 * i + 2]! * tw[6 * i + 2]!);
      if (Object.is(s, rs[i])) matching++;
    }
  }
  const replaySummary = summarize(replay, null);
  const report = simReportInput(result, replay, replaySummary);
  return { replay, matchingSamples: matching, samples: 2 * record.samples, report, replaySummary };
}

function simReportInput(result: EpisodeResult, replay: ReplayRecord, replaySummary: Record<string, unknown>): ReportInput {
  const s = result.summary;
  const record = result.record!;
  const base = replayReportInput(replay, '', replaySummary);
  // Collisions (contact onsets per zone) as events on both arms' timelines.
  const collisions: ReportEvent[] = [];
  let prev = 0;
  for (let i = 0; i < record.samples; i++) {
    const m = record.contacts[i]!;
    const onset = m & ~prev;
    for (let z = 0; onset && z < record.zoneNames.length; z++) if ((onset >>> z) & 1) collisions.push({ t_s: record.t[i]!, kind: 'collision', text: `beam touches ${record.zoneNames[z]}` });
    prev = m;
  }
  const occ = Object.entries(s.world.occupied).map(([k, v]) => `${k} ${v ? 'occupied' : 'free'}`).join(', ');
  const f = (v: number | null, d = 2) => (v === null ? '-' : v.toFixed(d));
  return {
    ...base,
    title: 'antiphon simulation',
    subtitle: `seed ${s.seed}, strategy ${s.strategy}, ${s.arm_model} arms; ${occ || 'no zones'}`,
    summary: [
      ['outcome', `${s.success ? 'success' : 'failure'} (${s.end_reason}) after ${f(s.duration_s)} s`],
      ['time to goal', s.time_to_goal_s === null ? '-' : `${f(s.time_to_goal_s)} s`],
      ['collisions', `${s.collisions.count}${s.collisions.first_s === null ? '' : `, first at ${f(s.collisions.first_s, 3)} s`}`],
      ['internal force (true, along the beam)', `peak ${f(s.internal_force.peak_n)} N, mean ${f(s.internal_force.mean_n)} N`],
      ['holds', String(s.holds.count)],
      ...base.summary.filter(([k]) => k !== 'bag' && k !== 'storage' && !k.includes('internal force')),
    ],
    arms: base.arms.map((a) => ({ ...a, events: [...a.events, ...collisions].sort((x, y) => x.t_s - y.t_s) })),
    internalForce: { t: record.t, y: record.internalForce },
  };
}
