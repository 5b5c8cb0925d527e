/** The replay summary (summary.json) and the adapter to the HTML report's input. */
import type { ReportArm, ReportInput, ReportSeries } from '../report/types.js';
import type { ArmReplayRecord, ReplayRecord } from './replay.js';
import type { Verdict } from './expect.js';
import { changedParamsText, type ChangedParam } from '../params/diff.js';
import { CHECK_UNITS, tripText } from '../core/trip-text.js';
import type { CheckName } from '../core/watchdog.js';

const r4 = (v: number) => (Number.isFinite(v) ? Math.round(v * 1e4) / 1e4 : null);

export interface ArmSummary {
  readonly arm: string;
  readonly topics: Record<string, string | null>;
  readonly samples: number;
  readonly first_s: number | null;
  readonly last_s: number | null;
  readonly tared_at_s: number | null;
  /** Each hold: when it latched, when a reset released it (null: held to the end), and its trips. */
  readonly holds: HoldSummary[];
  readonly role_switches: number;
  readonly impacts: { start_s: number; end_s: number | null; peak_score: number | null }[];
  /** Over the samples after the tare (before it the bias is unknown). */
  readonly peak_correction_force_n: number | null;
  readonly peak_raw_force_n: number | null;
  /** `active`: every JointState carried velocities; `unavailable`: some did not (the joint-speed check could not run then); `no_joint_states`. */
  readonly joint_velocity_check: 'active' | 'unavailable' | 'no_joint_states';
  readonly tares_refused: { t_s: number; reason: string }[];
  readonly belief_final: Record<string, number | null>;
}

/** Identifies the summary.json format; `version` changes when a shared field changes meaning. */
export const SUMMARY_SCHEMA = 'antiphon.episode-summary';
export const SUMMARY_VERSION = 1;
/** The one sign convention for internal force, in every output. */
export const INTERNAL_FORCE_SIGN = 'positive: the arms squeeze the object along its axis; negative: they pull it apart';

export interface HoldSummary {
  readonly arm: string;
  readonly start_s: number;
  readonly end_s: number | null;
  readonly reasons: TripSummary[];
}

/** Holds of all arms: how many, how many per check, each hold in time order. */
export function holdTotals(holds: readonly HoldSummary[]): { count: number; reasons: Record<string, number>; events: HoldSummary[] } {
  const reasons: Record<string, number> = {};
  for (const h of holds) for (const r of h.reasons) reasons[r.check] = (reasons[r.check] ?? 0) + 1;
  return { count: holds.length, reasons, events: [...holds].sort((a, b) => a.start_s - b.start_s) };
}

/** One trip as every summary writes it (replay and simulate alike). */
export interface TripSummary {
  readonly check: string;
  readonly input: string;
  /** When it tripped, s. */
  readonly t_s: number | null;
  /** The value when it tripped, in `unit`. */
  readonly value: number | null;
  /** The worst value while the hold lasted (what the WatchdogTrip message carries). */
  readonly worst: number | null;
  readonly limit: number | null;
  readonly unit: string;
  /** The same words as the terminal and the report. */
  readonly text: string;
}

/** A trip in the summaries' form. */
export function tripSummary(t: { check: string; input: string; value: number; limit: number; first?: number; t_s?: number }): TripSummary {
  const first = t.first ?? t.value;
  return {
    check: t.check,
    input: t.input,
    t_s: t.t_s === undefined ? null : r4(t.t_s),
    value: r4(first),
    worst: r4(t.value),
    limit: r4(t.limit),
    unit: CHECK_UNITS[t.check as CheckName] ?? '',
    text: tripText(t),
  };
}

function armSummary(a: ArmReplayRecord): ArmSummary {
  // A hold event opens an entry; the trips recorded while it lasts are its reasons.
  const holds: HoldSummary[] = [];
  for (const e of a.events) {
    if (e.kind === 'hold') holds.push({ arm: a.arm, start_s: r4(e.t_s)!, end_s: null, reasons: [] });
    if (e.kind === 'release' && holds.length) (holds[holds.length - 1] as { end_s: number | null }).end_s = r4(e.t_s);
    if (e.kind === 'trip' && holds.length) holds[holds.length - 1]!.reasons.push(tripSummary({ check: e.check ?? '?', input: e.input ?? '?', value: e.value ?? Number.NaN, limit: e.limit ?? Number.NaN, first: e.first ?? Number.NaN, t_s: e.t_s }));
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

/** How replay (and simulate's estimate) gets the internal force. */
export const ESTIMATED_SOURCE = 'estimated: half the difference of the two arms\' correction-band forces along the object, from the tare on';

export function summarize(record: ReplayRecord, params: string | null, verdicts?: readonly Verdict[], changed?: Readonly<Record<string, readonly ChangedParam[]>>): Record<string, unknown> {
  let peak = 0;
  let sum = 0;
  const y = record.internalForce?.y;
  if (y) for (const v of y) {
    peak = Math.max(peak, Math.abs(v));
    sum += Math.abs(v);
  }
  const arms = record.arms.map(armSummary);
  return {
    schema: SUMMARY_SCHEMA,
    version: SUMMARY_VERSION,
    kind: 'replay',
    bag: record.bag,
    storage: record.storage,
    params,
    ...(changed ? { params_changed: changed } : {}),
    start_ns: record.startNs.toString(),
    duration_s: r4(record.duration_s),
    arms,
    holds: holdTotals(arms.flatMap((a) => a.holds)),
    ...(y ? { internal_force: { peak_n: r4(peak), mean_abs_n: r4(y.length ? sum / y.length : 0), source: ESTIMATED_SOURCE, sign: INTERNAL_FORCE_SIGN } } : {}),
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
  const changed = summary['params_changed'] as Record<string, ChangedParam[]> | undefined;
  if (changed) for (const [arm, list] of Object.entries(changed)) rows.push([`${arm}: parameters`, changedParamsText(list)]);
  for (const a of (summary['arms'] as ArmSummary[])) {
    rows.push([`${a.arm}: samples`, String(a.samples)]);
    rows.push([`${a.arm}: holds`, a.holds.length ? a.holds.map((h) => `${h.start_s} s (${h.reasons.map((r) => r.text).join('; ')})`).join('; ') : 'none']);
    rows.push([`${a.arm}: impacts`, String(a.impacts.length)]);
    rows.push([`${a.arm}: role switches`, String(a.role_switches)]);
    rows.push([`${a.arm}: peak correction force`, `${a.peak_correction_force_n ?? '-'} N`]);
  }
  const inf = summary['internal_force'] as { peak_n: number } | undefined;
  if (inf) rows.push(['peak internal force (estimated from the wrist wrenches; + squeeze)', `${inf.peak_n.toFixed(2)} N`]);
  return {
    title: 'antiphon replay',
    subtitle,
    summary: rows,
    arms,
    ...(record.internalForce ? { internalForce: series(record.internalForce.t, record.internalForce.y) } : {}),
    ...(verdicts ? { checks: verdicts.map((v) => ({ name: v.name, expected: v.expected, measured: v.measured, verdict: v.pass ? ('pass' as const) : ('fail' as const) })) } : {}),
  };
}
