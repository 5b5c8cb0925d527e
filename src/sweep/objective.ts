/**
 * Choosing among candidates: the objectives, the Pareto front and the ROC of the impact
 * threshold. Pure functions of the candidates' metrics (ties go to the lower index), so the
 * choice is the same however the candidates were computed (jobs, shards, resume).
 */
import type { ParamValue } from '../params/spec.js';
import { InputError } from '../util/errors.js';
import type { CandidateMetrics } from './evaluate.js';

export interface CandidateResult {
  readonly index: number;
  readonly values: Readonly<Record<string, ParamValue>>;
  readonly metrics: CandidateMetrics;
}

type Cmp = (a: CandidateMetrics, b: CandidateMetrics) => number;
/** Compare two values, null (not measured) last; equal values (two nulls too) compare 0. */
function cmpNum(x: number | null, y: number | null): number {
  if (x === y) return 0;
  if (x === null) return 1;
  if (y === null) return -1;
  return x < y ? -1 : x > y ? 1 : 0;
}
const asc = (f: (m: CandidateMetrics) => number | null): Cmp => (a, b) => cmpNum(f(a), f(b));
const neg = (v: number | null) => (v === null ? null : -v);
const desc = (f: (m: CandidateMetrics) => number | null): Cmp => (a, b) => cmpNum(neg(f(a)), neg(f(b)));

export interface Objective {
  readonly name: string;
  readonly description: string;
  /** Candidates that may be chosen at all. */
  readonly admissible: (m: CandidateMetrics) => boolean;
  readonly order: readonly Cmp[];
}

const noMiss = (m: CandidateMetrics) => m.missed_impacts === 0;

export const OBJECTIVES: readonly Objective[] = [
  { name: 'safe', description: 'drop every candidate that misses a labelled impact, then fewest false holds per hour, then highest success rate, then lowest peak internal force (the default)', admissible: noMiss, order: [asc((m) => m.false_holds_per_hour), desc((m) => m.success_rate), asc((m) => m.peak_internal_force_n)] },
  { name: 'success', description: 'highest success rate, then fewest missed impacts, then fewest false holds', admissible: () => true, order: [desc((m) => m.success_rate), asc((m) => m.missed_impacts), asc((m) => m.false_holds_per_hour)] },
  { name: 'gentle', description: 'drop candidates that miss an impact, then lowest peak internal force, then fewest false holds', admissible: noMiss, order: [asc((m) => m.peak_internal_force_n), asc((m) => m.false_holds_per_hour)] },
  { name: 'fast-detection', description: 'drop candidates that miss an impact, then lowest p95 detection delay, then fewest false holds', admissible: noMiss, order: [asc((m) => m.detection_delay_s.p95), asc((m) => m.false_holds_per_hour)] },
  { name: 'fast-transfer', description: 'drop candidates that miss an impact, then shortest mean time to goal, then highest success rate', admissible: noMiss, order: [asc((m) => m.mean_time_to_goal_s), desc((m) => m.success_rate)] },
];

export function objectiveByName(name: string): Objective {
  const o = OBJECTIVES.find((x) => x.name === name);
  if (!o) throw new InputError({ code: 'cli.bad_objective', message: `unknown objective '${name}'`, where: { option: '--objective' }, hint: OBJECTIVES.map((x) => `${x.name}: ${x.description}`).join('; ') });
  return o;
}

/**
 * The chosen candidate's index, or null when none is admissible. Ties under the objective go
 * to the candidate that changes the fewest keys of the base file (`base`: the swept keys'
 * values there), then to the lower index.
 */
export function choose(cands: readonly CandidateResult[], objective: Objective, base: Readonly<Record<string, ParamValue>> = {}): number | null {
  let best: CandidateResult | null = null;
  const changed = (c: CandidateResult) => Object.keys(c.values).filter((k) => k in base && JSON.stringify(base[k]) !== JSON.stringify(c.values[k])).length;
  for (const c of cands) {
    if (!objective.admissible(c.metrics)) continue;
    if (best === null) {
      best = c;
      continue;
    }
    let d = 0;
    for (const cmp of objective.order) {
      d = cmp(c.metrics, best.metrics);
      if (d !== 0) break;
    }
    if (d === 0) d = changed(c) - changed(best);
    if (d < 0 || (d === 0 && c.index < best.index)) best = c;
  }
  return best === null ? null : best.index;
}

/** Criteria of the Pareto front, each minimised: missed impacts, false holds per hour, failure rate, peak internal force. */
export const PARETO_CRITERIA = ['missed_impacts', 'false_holds_per_hour', 'failure_rate', 'peak_internal_force_n'] as const;

function criteria(m: CandidateMetrics): number[] {
  return [m.missed_impacts, m.false_holds_per_hour, m.success_rate === null ? 0 : 1 - m.success_rate, m.peak_internal_force_n];
}

/** Indices of the candidates no other candidate dominates (at least as good in every criterion, better in one), ascending. */
export function paretoFront(cands: readonly CandidateResult[]): number[] {
  const xs = cands.map((c) => criteria(c.metrics));
  const out: number[] = [];
  for (let i = 0; i < cands.length; i++) {
    let dominated = false;
    for (let j = 0; j < cands.length && !dominated; j++) {
      if (i === j) continue;
      let le = true, lt = false;
      for (let k = 0; k < xs[i]!.length; k++) {
        if (xs[j]![k]! > xs[i]![k]!) le = false;
        if (xs[j]![k]! < xs[i]![k]!) lt = true;
      }
      dominated = le && lt;
    }
    if (!dominated) out.push(cands[i]!.index);
  }
  return out.sort((a, b) => a - b);
}

export const THRESHOLD_KEY = 'wrench_filter.impact.force_n';

export interface RocPoint {
  readonly index: number;
  readonly threshold: number;
  /** Detected labelled impacts over labelled impacts. */
  readonly tpr: number;
  /** 1 s bins with the start of a false hold over the bins that overlap no impact window. */
  readonly fpr: number;
}

export interface Roc {
  readonly key: string;
  /** The slice: every swept key but the threshold held at the chosen candidate's value. */
  readonly at: Readonly<Record<string, ParamValue>>;
  readonly points: readonly RocPoint[];
  /** Trapezoid area under (0,0), the points by false-positive rate, (1,1). */
  readonly auc: number;
}

/**
 * The ROC of the impact threshold, along the slice through `through` (null when the threshold
 * is not swept, no impact is labelled or no negative bin exists).
 */
export function rocCurve(cands: readonly CandidateResult[], through: CandidateResult | undefined): Roc | null {
  if (!through || !(THRESHOLD_KEY in through.values)) return null;
  const others = Object.keys(through.values).filter((k) => k !== THRESHOLD_KEY);
  const slice = cands.filter((c) => others.every((k) => c.values[k] === through.values[k]));
  if (slice.some((c) => c.metrics.labelled_impacts === 0 || c.metrics.negative_bins === 0)) return null;
  const points = slice
    .map((c) => ({ index: c.index, threshold: c.values[THRESHOLD_KEY] as number, tpr: c.metrics.detected_impacts / c.metrics.labelled_impacts, fpr: c.metrics.false_hold_bins / c.metrics.negative_bins }))
    .sort((a, b) => a.fpr - b.fpr || a.tpr - b.tpr || a.threshold - b.threshold);
  return { key: THRESHOLD_KEY, at: Object.fromEntries(others.map((k) => [k, through.values[k]!])), points, auc: trapezoid([{ fpr: 0, tpr: 0 }, ...points, { fpr: 1, tpr: 1 }]) };
}

function trapezoid(p: readonly { fpr: number; tpr: number }[]): number {
  let a = 0;
  for (let k = 1; k < p.length; k++) a += ((p[k]!.fpr - p[k - 1]!.fpr) * (p[k]!.tpr + p[k - 1]!.tpr)) / 2;
  return a;
}
