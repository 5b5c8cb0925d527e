/** The replay summary (summary.json) and the adapter to the HTML report's input. */
import type { ReportArm, ReportInput, ReportSeries } from '../report/types.js';
import type { ArmReplayRecord, ReplayRecord } from './replay.js';
import type { Verdict } from './expect.js';

const r4 = (v: number) => (Number.isFinite(v) ? Math.round(v * 1e4) / 1e4 : null);

export interface ArmSummary {
  readonly arm: string;
  readonly topics: Record<string, string | null>;
  readonly samples: number;
  readonly first_s: number | null;
  readonly last_s: number | null;
  readonly tared_at_s: number | null;
  readonly holds: { t_s: number; reasons: { check: string; value: number | null; limit: number | null }[] }[];
  readonly role_switches: number;
  readonly impacts: { start_s: number; end_s: number | null; peak_score: number | null }[];
  /** Over the samples after the tare (before it the bias is unknown). */
  readonly peak_correction_force_n: number | null;
  readonly peak_raw_force_n: number | null;
  /** `active`: JointState carried velocities; `unavailable`: it did not (the joint-speed check could not run); `no_joint_states`. */
  readonly joint_velocity_check: 'active' | 'unavailable' | 'no_joint_states';
  readonly tares_refused: { t_s: number; reason: string }[];
  readonly belief_final: Record<string, number | null>;
}

function armSummary(a: ArmReplayRecord): ArmSummary {
  // A hold event opens an entry; the trips recorded while it lasts are its reasons.
  const holds: ArmSummary['holds'] = [];
  for (const e of a.events) {
    if (e.kind === 'hold') holds.push({ t_s: r4(e.t_s)!, reasons: [] });
    if (e.kind === 'trip' && holds.length) holds[holds.length - 1]!.reasons.push({ check: e.check ?? '?', value: r4(e.value ?? Number.NaN), limit: r4(e.limit ?? Number.NaN) });
  }
  const impacts: ArmSummary['impacts'] = [];
  for (const e of a.events) {
    if (e.kind === 'impact_start') impacts.push({ start_s: r4(e.t_s)!, end_s: null, peak_score: null });
    if (e.kind === 'impact_end' && impacts.length) (impacts[impacts.length - 1] as { end_s: number | null }).end_s = r4(e.t_s);
  }
  // Peak score per impact from the full-rate record.
  for (const imp of impacts) {
    let peak = 0;
    const end = imp.end_s ?? Number.POSITIVE_INFINITY;
    for (let i = 0; i < a.samples; i++) if (a.t[i]! >= imp.start_s && a.t[i]! <= end) peak = Math.max(peak, a.impactScore[i]!);
    (imp as { peak_score: number | null }).peak_score = r4(peak);
  }
  const max = (x: Float64Array) => {
    let m = Number.NEGATIVE_INFINITY;
    for (const v of x) if (v > m) m = v;
    return x.length ? r4(m) : null;
  };
  const w = a.hiddenZones.length;
  const n = a.beliefT.length;
  const belief_final: Record<string, number | null> = {};
  a.hiddenZones.forEach((z, k) => (belief_final[z] = n ? r4(a.beliefMarginals[(n - 1) * w + k]!) : null));
  return {
    arm: a.arm,
    topics: a.topics,
    samples: a.samples,
    first_s: a.samples ? r4(a.t[0]!) : null,
    last_s: a.samples ? r4(a.t[a.samples - 1]!) : null,
    tared_at_s: r4(a.events.find((e) => e.kind === 'tared')?.t_s ?? Number.NaN),
    holds,
    role_switches: a.events.filter((e) => e.kind === 'role').length,
    impacts,
    peak_correction_force_n: max(a.correctionForce.subarray(a.taredFrom)),
    peak_raw_force_n: max(a.rawForce),
    joint_velocity_check: a.jointVelocityAvailable === null ? 'no_joint_states' : a.jointVelocityAvailable ? 'active' : 'unavailable',
    tares_refused: a.events.filter((e) => e.kind === 'tare_refused').map((e) => ({ t_s: r4(e.t_s)!, reason: e.text })),
    belief_final,
  };
}

export function summarize(record: ReplayRecord, params: string | null, verdicts?: readonly Verdict[]): Record<string, unknown> {
  let peak = 0;
  let sum = 0;
  const y = record.internalForce?.y;
  if (y) for (const v of y) {
    peak = Math.max(peak, Math.abs(v));
    sum += Math.abs(v);
  }
  return {
    bag: record.bag,
    storage: record.storage,
    params,
    start_ns: record.startNs.toString(),
    duration_s: r4(record.duration_s),
    arms: record.arms.map(armSummary),
    ...(y ? { internal_force: { peak_n: r4(peak), mean_abs_n: r4(y.length ? sum / y.length : 0) } } : {}),
    warnings: record.warnings.map((w) => ({ code: w.code, message: w.message, ...(w.where ? { where: w.where } : {}) })),
    ...(verdicts ? { expectations: verdicts, ok: verdicts.every((v) => v.pass) } : {}),
  };
}

const series = (t: Float64Array, y: Float64Array): ReportSeries => ({ t, y });

export function replayReportInput(record: ReplayRecord, subtitle: string, summary: Record<string, unknown>, verdicts?: readonly Verdict[]): ReportInput {
  const arms: ReportArm[] = record.arms.map((a) => ({
    name: a.arm,
    rawForce: series(a.t, a.rawForce),
    correctionForce: series(a.t, a.correctionForce),
    impactForce: series(a.t, a.impactForce),
    role: series(a.t, a.role),
    held: series(a.t, a.held),
    recommendedSpeed: series(a.t, a.recommendedSpeed),
    measuredSpeed: series(a.poseT, a.measuredSpeed),
    hiddenZones: a.hiddenZones,
    beliefT: a.beliefT,
    beliefMarginals: a.beliefMarginals,
    events: a.events.map((e) => ({ t_s: e.t_s, kind: e.kind, text: e.text })),
  }));
  const rows: [string, string][] = [
    ['bag', record.bag],
    ['storage', record.storage],
    ['duration', `${record.duration_s.toFixed(3)} s`],
  ];
  for (const a of (summary['arms'] as ArmSummary[])) {
    rows.push([`${a.arm}: samples`, String(a.samples)]);
    rows.push([`${a.arm}: holds`, a.holds.length ? a.holds.map((h) => `${h.t_s} s (${h.reasons.map((r) => r.check).join(', ')})`).join('; ') : 'none']);
    rows.push([`${a.arm}: impacts`, String(a.impacts.length)]);
    rows.push([`${a.arm}: role switches`, String(a.role_switches)]);
    rows.push([`${a.arm}: peak correction force`, `${a.peak_correction_force_n ?? '-'} N`]);
  }
  const inf = summary['internal_force'] as { peak_n: number } | undefined;
  if (inf) rows.push(['peak internal force', `${inf.peak_n} N`]);
  return {
    title: 'antiphon replay',
    subtitle,
    summary: rows,
    arms,
    ...(record.internalForce ? { internalForce: series(record.internalForce.t, record.internalForce.y) } : {}),
    ...(verdicts ? { checks: verdicts.map((v) => ({ name: v.name, measured: v.measured, verdict: v.pass ? ('pass' as const) : ('fail' as const) })) } : {}),
  };
}
