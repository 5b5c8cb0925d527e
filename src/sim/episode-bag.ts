/**
 * Episode artefacts: the bag (MCAP, or sqlite3 with `--storage sqlite3`), the summary and the HTML report of one simulated episode.
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
import { openBag } from '../bag/index.js';
import { createBagWriter } from '../bag/writer.js';
import type { StorageId } from '../bag/types.js';
import type { ArmConfig } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import { replayBag, writerSink, type ReplayRecord } from '../replay/replay.js';
import { replayReportInput, summarize } from '../replay/summary.js';
import type { ReportEvent, ReportInput, ReportPlan, ReportSide } from '../report/types.js';
import { isPlanar, taskPath } from '../params/task-geometry.js';
import type { EpisodeResult } from './episode.js';
import { InputBagWriter } from './input-bag.js';
import type { EpisodeRecord } from './record.js';

const SIDES: readonly ArmName[] = ['left', 'right'];

/** Write what each arm's step was fed, on sim time (log time = sim time, as with use_sim_time). */
export async function writeEpisodeInputs(dir: string, record: EpisodeRecord): Promise<void> {
  const w = await InputBagWriter.create(dir, record.zoneNames);
  const nz = record.zoneNames.length;
  const nj = record.left.jointVelocity.length / Math.max(1, record.samples);
  const names = { left: Array.from({ length: nj }, (_, k) => `left_joint_${k + 1}`), right: Array.from({ length: nj }, (_, k) => `right_joint_${k + 1}`) };
  for (let i = 0; i < record.samples; i++) {
    const ns = BigInt(Math.round(record.t[i]! * 1e9));
    // In the order each arm's step was fed: joints, pose, zone view (when fed), then the wrench.
    for (const arm of SIDES) {
      const a = record[arm];
      w.jointState(arm, ns, names[arm], a.jointPosition.subarray(i * nj, i * nj + nj), a.jointVelocity.subarray(i * nj, i * nj + nj));
      w.toolPose(arm, ns, a.toolPose.subarray(7 * i, 7 * i + 7));
      if (a.zoneFed[i] === 1) w.zoneView(arm, ns, a.zoneView.subarray(i * nz, i * nz + nz));
      w.wrench(arm, ns, a.wrench.subarray(6 * i, 6 * i + 6));
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
export async function writeEpisodeBag(dir: string, result: EpisodeResult, configs: { left: ArmConfig; right: ArmConfig }, storage: StorageId = 'mcap'): Promise<EpisodeArtifacts> {
  const record = result.record;
  if (!record) throw new Error('the episode was run without a record');
  const inputs = join(dir, '.inputs');
  await writeEpisodeInputs(inputs, record);
  const source = await openBag(inputs);
  let replay: ReplayRecord;
  let writer;
  try {
    writer = await createBagWriter(join(dir, 'bag'), { compression: 'zstd', storage });
  } catch (err) {
    source.close();
    rmSync(inputs, { recursive: true, force: true });
    throw err;
  }
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
  const plan = planOf(result, record);
  const occ = Object.entries(s.world.occupied).map(([k, v]) => `${k} ${v ? 'occupied' : 'free'}`).join(', ');
  const f = (v: number | null, d = 2) => (v === null ? '-' : v.toFixed(d));
  return {
    ...base,
    title: 'antiphon simulation',
    subtitle: `seed ${s.seed}, strategy ${s.strategy}, ${s.arm_model} arms; ${occ || 'no zones'}`,
    summary: [
      ['outcome', s.success ? `success: goal reached after ${f(s.duration_s)} s` : `failure (${s.end_reason.replace('_', ' ')}) after ${f(s.duration_s)} s, goal not reached`],
      ['collisions', `${s.collisions.count}${s.collisions.first_s === null ? '' : `, first at ${f(s.collisions.first_s, 3)} s`}`],
      ['internal force (true, along the beam; + squeeze)', `peak ${f(s.internal_force.peak_n)} N, mean |f| ${f(s.internal_force.mean_abs_n)} N`],
      ['holds', String(s.holds.count)],
      ['belief calibration', calibrationRow(s)],
      ['commitments', `${s.commitments.disagreeing} of ${s.commitments.switches} switches disagree; repair max ${s.commitments.repair_s.max === null ? '-' : f(s.commitments.repair_s.max, 3) + ' s'}; unrepaired ${s.commitments.unrepaired}`],
      ['both arms in the same role', `${f(s.same_role.total_s, 3)} s`],
      ...(s.partner_hold ? [['partner hold', partnerRow(s)] as [string, string]] : []),
      ...base.summary.filter(([k]) => k !== 'bag' && k !== 'storage' && !k.includes('internal force')),
    ],
    arms: base.arms.map((a) => ({ ...a, events: [...a.events, ...collisions].sort((x, y) => x.t_s - y.t_s) })),
    internalForce: { t: record.t, y: record.internalForce },
    plan,
    calibration: { what: 'listener belief updates of both arms, one pair per hidden zone, against the world', ...s.belief.calibration },
  };
}

/** The plan view's series from the record: object centre and heading, both grasp points, contact onsets. */
function planOf(result: EpisodeResult, record: NonNullable<EpisodeResult['record']>): ReportPlan {
  const n = record.samples;
  const col = (a: Float64Array, w: number, k: number) => Float64Array.from({ length: n }, (_, i) => a[i * w + k]!);
  const yaw = Float64Array.from({ length: n }, (_, i) => {
    const b = i * 7;
    const qx = record.beamPose[b + 3]!, qy = record.beamPose[b + 4]!, qz = record.beamPose[b + 5]!, qw = record.beamPose[b + 6]!;
    return Math.atan2(2 * (qw * qz + qx * qy), 1 - 2 * (qy * qy + qz * qz));
  });
  const collisions: ReportPlan['collisions'][number][] = [];
  let prev = 0;
  for (let i = 0; i < n; i++) {
    const m = record.contacts[i]!;
    const onset = m & ~prev;
    for (let z = 0; onset && z < record.zoneNames.length; z++) if ((onset >>> z) & 1) collisions.push({ t_s: record.t[i]!, x: record.beamPose[i * 7]!, y: record.beamPose[i * 7 + 1]!, zone: record.zoneNames[z]! });
    prev = m;
  }
  const w = result.summary.world;
  const task = result.configs.left.task;
  const planar = isPlanar(task);
  const zoneOf = new Map(task.zones.map((z) => [z.name, z]));
  // A task with waypoints: the zones' yaw and heights, and the side view.
  const solid = (name: string) => {
    const z = zoneOf.get(name);
    if (planar || !z) return {};
    return { yaw_rad: z.yaw_rad ?? 0, height_m: z.shape === 'sphere' ? null : (z.height_m ?? [0, 10]), center_z_m: z.shape === 'sphere' ? (z.center_z_m ?? 0) : null };
  };
  let side: ReportSide | undefined;
  if (!planar) {
    const path = taskPath(task);
    const m = Math.max(1, Math.ceil(path.length / 0.02));
    const pathX: number[] = [], pathZ: number[] = [];
    for (let k = 0; k <= m; k++) {
      path.locate((k / m) * path.length);
      pathX.push(path.pos[0]!);
      pathZ.push(path.pos[2]!);
    }
    side = { objectZ: col(record.beamPose, 7, 2), leftZ: col(record.left.toolPose, 7, 2), rightZ: col(record.right.toolPose, 7, 2), pathX, pathZ, radius_m: task.object.radius_m ?? 0 };
  }
  return {
    zones: w.zones.map((z) => ({ name: z.name, shape: z.shape, center_m: z.center_m, size_m: z.size_m, radius_m: z.radius_m, observed_by: z.observed_by, ...solid(z.name), occupied: z.occupied, changes: z.changes })),
    object_length_m: result.configs.left.task.object.length_m,
    start_m: w.start_m,
    goal_m: w.goal_m,
    t: record.t.subarray(0, n),
    objectX: col(record.beamPose, 7, 0),
    objectY: col(record.beamPose, 7, 1),
    objectYaw: yaw,
    leftX: col(record.left.toolPose, 7, 0),
    leftY: col(record.left.toolPose, 7, 1),
    rightX: col(record.right.toolPose, 7, 0),
    rightY: col(record.right.toolPose, 7, 1),
    collisions,
    ...(side ? { side } : {}),
  };
}

function calibrationRow(s: EpisodeResult['summary']): string {
  const c = s.belief.calibration;
  return `ECE ${c.ece === null ? '-' : c.ece.toFixed(3)}; P(truth) < 0.05 in ${c.p_truth_below_0_05_rate === null ? '-' : (100 * c.p_truth_below_0_05_rate).toFixed(2) + ' %'} of ${c.updates} pairs`;
}

function partnerRow(s: EpisodeResult['summary']): string {
  const p = s.partner_hold!;
  if (p.injected_at_s === null) return `injected on ${p.arm}: the episode ended first`;
  return `NaN wrench on ${p.arm} at ${p.injected_at_s.toFixed(3)} s; ${p.partner} ${p.detection_s === null ? 'never stopped' : `stopped after ${p.detection_s.toFixed(3)} s`}; object moved ${p.object_moved_m.toFixed(3)} m`;
}
