/**
 * A sweep over simulated worlds: every (candidate, world) pair is one episode of the cell,
 * on the main thread or on a worker pool (world-worker.ts); each episode's outcome and its
 * counts against the simulator's ground truth (world-truth.ts) are stored by job id, and a
 * candidate's metrics are computed from its worlds in world order, so they are the same
 * whatever the job count and the order the episodes finish in.
 *
 * Worlds come from the seed alone, or from a scenario family (src/sim/family.ts): then each
 * world's task, sensors, coupling and knocks are drawn from the family, with the candidate's
 * parameters as the family's base (a draw reads the task, the policy and
 * belief.max_hidden_zones: a sweep of other keys runs every candidate on the same worlds).
 */
import type { MainModule } from 'mujoco-js';
import type { ArmConfig } from '../params/config.js';
import { pooledCalibration } from '../sim/belief-metrics.js';
import { outcomeOf, runJob, type RunOutcome } from '../sim/compare.js';
import type { Family } from '../sim/family.js';
import { percentile } from '../sim/measures.js';
import type { SimOptionsOverrides } from '../sim/options.js';
import { mean } from '../sim/stats.js';
import type { StrategySpec } from '../sim/strategies.js';
import type { CandidateMetrics } from './evaluate.js';
import { PARTNER_MARGIN_S } from './evaluate.js';
import { worldTruth, type WorldTruthCounts } from './world-truth.js';

export interface WorldWorkerInit {
  readonly options: SimOptionsOverrides;
  readonly duration_s: number | undefined;
  readonly family?: Family;
}

export interface WorldJob {
  readonly id: number;
  readonly candidate: number;
  readonly world: number;
  readonly seed: number;
  readonly strategy: StrategySpec;
  readonly left: ArmConfig;
  readonly right: ArmConfig;
}

export interface WorldRun {
  readonly outcome: RunOutcome;
  readonly truth: WorldTruthCounts;
}

export function strategyOf(c: ArmConfig): StrategySpec {
  const r = c.roles;
  if (r.scheduler === 'adaptive' || r.scheduler === 'lookahead') return { name: r.scheduler, k: null };
  if (r.scheduler === 'fixed') return { name: 'fixed', k: null };
  return { name: 'alternating', k: Math.max(1, Math.round(r.period_s * c.wrench_filter.sample_rate_hz)) };
}

/** One episode of a sweep over worlds (main thread or worker). */
export function runWorldJob(mj: MainModule, init: WorldWorkerInit, j: WorldJob): WorldRun {
  const r = runJob(mj, { left: j.left, right: j.right, options: { ...init.options, record: false }, duration_s: init.duration_s, ...(init.family ? { family: init.family } : {}) }, { id: j.id, world: j.world, seed: j.seed, strategy: j.strategy });
  const partnerWindow = j.left.watchdog.partner_stop.window_s + PARTNER_MARGIN_S;
  return { outcome: outcomeOf(j.world, j.seed, r.summary, r.measures, r.beliefTiming), truth: worldTruth(r.summary, partnerWindow) };
}

/** A candidate's metrics from its worlds' runs (in world order). */
export function metricsFromWorlds(runs: readonly WorldRun[]): CandidateMetrics {
  const o = runs.map((r) => r.outcome);
  const t = runs.map((r) => r.truth);
  const dur = o.reduce((a, r) => a + r.duration_s, 0);
  const n = o.length;
  const sampled = o.reduce((a, r) => a + r.sampled_s, 0);
  const sum = (f: (x: WorldTruthCounts) => number) => t.reduce((a, x) => a + f(x), 0);
  const labelled = sum((x) => x.knocks);
  const detected = sum((x) => x.detected);
  const falseHolds = sum((x) => x.false_holds);
  const negative = sum((x) => x.negative_bins);
  const delays = t.flatMap((x) => x.delays_s);
  return {
    duration_s: dur,
    labelled_impacts: labelled,
    detected_impacts: detected,
    missed_impacts: labelled - detected,
    detection_rate: labelled ? detected / labelled : null,
    holds: sum((x) => x.holds),
    false_holds: falseHolds,
    false_holds_per_hour: dur > 0 ? (3600 * falseHolds) / dur : 0,
    negative_bins: negative,
    false_hold_bins: sum((x) => x.false_bins),
    false_hold_bin_rate: negative ? sum((x) => x.false_bins) / negative : null,
    detection_delay_s: { median: percentile(delays, 0.5), p95: percentile(delays, 0.95) },
    peak_internal_force_n: mean(o.map((r) => r.peak_internal_force_n)) ?? 0,
    peak_correction_force_n: null,
    success_rate: n ? o.filter((r) => r.success).length / n : null,
    collision_rate: n ? o.filter((r) => r.collisions > 0).length / n : null,
    mean_time_to_goal_s: mean(o.filter((r) => r.success && r.time_to_goal_s !== null).map((r) => r.time_to_goal_s!)),
    belief_ece: pooledCalibration(o.map((r) => r.calibration)).ece,
    same_role_fraction: sampled > 0 ? o.reduce((a, r) => a + r.same_role_s, 0) / sampled : null,
  };
}
