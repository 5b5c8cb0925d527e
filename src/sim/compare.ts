/**
 * The strategy comparison: N randomized worlds, each run with every strategy (paired: the
 * same world, sensor noise included, for every strategy). Runs go to worker threads for
 * `jobs` > 1; results are stored by (strategy, world) and aggregated in that order, so they
 * are identical whatever the job count.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { ArmConfig } from '../params/config.js';
import { InputError } from '../util/errors.js';
import { yieldToSignals } from '../util/interrupt.js';
import type { MainModule } from 'mujoco-js';
import { pooledCalibration, type CalibrationSummary, type CalibrationSums } from './belief-metrics.js';
import { checkEpisodeSetup, runEpisodeWith, type EndReason, type EpisodeResult, type EpisodeSummary } from './episode.js';
import { commitmentSummary, percentile, type CommitmentSummary, type CommitmentSums, type EpisodeMeasureSummary, type PartnerHoldSummary } from './measures.js';
import { loadMujoco } from './mujoco.js';
import { simOptions, type SimOptionsOverrides } from './options.js';
import { bootstrapMeanInterval, mean, signTest, wilcoxonSignedRank, wilsonInterval } from './stats.js';
import { strategyLabel, type StrategySpec } from './strategies.js';
import { sampleWorld, worldSeed } from './world.js';
import { beliefTimingSummary, type BeliefTimingSums, type BeliefTimingSummary } from './belief-timing.js';
import { drawFamilyWorld, type Family } from './family.js';

export interface CompareInput {
  readonly left: ArmConfig;
  readonly right: ArmConfig;
  readonly worlds: number;
  readonly seed: number;
  readonly strategies: readonly StrategySpec[];
  readonly jobs?: number;
  readonly options?: SimOptionsOverrides;
  readonly duration_s?: number;
  /** Draw the worlds from this scenario family (src/sim/family.ts). */
  readonly family?: Family;
  readonly onProgress?: (done: number, total: number) => void;
  /** Checked between worlds: true starts no new world (the world under way finishes; src/util/interrupt.ts). */
  readonly shouldStop?: () => boolean;
}

/** What one run contributes to the table. */
export interface RunOutcome {
  readonly world: number;
  readonly seed: number;
  readonly strategy: string;
  readonly success: boolean;
  readonly end_reason: EndReason;
  readonly collisions: number;
  readonly peak_internal_force_n: number;
  readonly mean_internal_force_n: number;
  readonly time_to_goal_s: number | null;
  readonly holds: number;
  readonly duration_s: number;
  /** Raw calibration sums of the run's belief pairs (pooled over a batch). */
  readonly calibration: CalibrationSums;
  readonly commitments: CommitmentSums;
  readonly same_role_s: number;
  /** Sampled time of the run (samples x sample period), s. */
  readonly sampled_s: number;
  readonly partner_hold: PartnerHoldSummary | null;
  readonly belief_timing: BeliefTimingSums;
  readonly holds_by_reason: Readonly<Record<string, number>>;
  readonly false_impact_holds: number;
  /** Family worlds: draws that failed the task checks before this world's (0 without a family). */
  readonly redraws: number;
  readonly knocks: number;
}

export interface StrategyRow {
  readonly name: string;
  readonly k: number | null;
  readonly label: string;
  readonly runs: number;
  readonly successes: number;
  readonly success_rate: number;
  readonly ci95: [number, number];
  /** Fraction of worlds with at least one collision. */
  readonly collision_rate: number;
  readonly mean_peak_internal_force_n: number;
  readonly mean_internal_force_n: number;
  /** Mean time to goal over the successful runs, s; null when none succeeded. */
  readonly mean_time_s: number | null;
  /** Percentile bootstrap 95 % intervals of the means (2000 resamples, seeded by the batch seed). */
  readonly bootstrap95: { readonly mean_peak_internal_force_n: [number, number] | null; readonly mean_time_s: [number, number] | null; readonly confident_wrong_s: [number, number] | null };
  readonly end_reasons: Readonly<Record<string, number>>;
  /** Every run's belief pairs pooled. */
  readonly calibration: CalibrationSummary;
  /** Every run's evaluated switches pooled. */
  readonly commitments: CommitmentSummary;
  /** Both arms in the same role: total over the runs, mean per run, and fraction of the simulated time. */
  readonly same_role: { readonly total_s: number; readonly mean_s: number; readonly fraction: number };
  /** Runs with an injected hold: the partner's detection time; null when no run had one. */
  readonly partner_hold: PartnerHoldAggregate | null;
  /** Belief timing pooled over the runs: time to correct (median, p95 over every determination), confident-wrong time per run. */
  readonly belief: { readonly time_to_correct_s: BeliefTimingSummary['time_to_correct_s']; readonly confident_wrong_s: { readonly mean: number | null; readonly max: number | null } };
  readonly holds_by_reason: Readonly<Record<string, number>>;
  readonly false_impact_holds: number;
}

export interface PartnerHoldAggregate {
  readonly runs: number;
  /** Runs where the partner's twist was zero from some time on to the end. */
  readonly detected: number;
  readonly never_rate: number;
  readonly detection_s: { readonly max: number | null; readonly p95: number | null; readonly median: number | null };
  readonly object_moved_m: { readonly max: number | null; readonly mean: number | null };
}

export function partnerHoldAggregate(all: readonly (PartnerHoldSummary | null)[]): PartnerHoldAggregate | null {
  const ph = all.filter((p): p is PartnerHoldSummary => p !== null && p.injected_at_s !== null);
  if (ph.length === 0) return null;
  const det = ph.filter((p) => p.detection_s !== null).map((p) => p.detection_s!);
  const moved = ph.map((p) => p.object_moved_m);
  return {
    runs: ph.length,
    detected: det.length,
    never_rate: (ph.length - det.length) / ph.length,
    detection_s: { max: det.length ? Math.max(...det) : null, p95: percentile(det, 0.95), median: percentile(det, 0.5) },
    object_moved_m: { max: Math.max(...moved), mean: mean(moved) },
  };
}

export interface CompareResult {
  readonly worlds: number;
  /** Worlds every strategy finished (fewer than `worlds` only after an interruption); the table covers these. */
  readonly worlds_done: number;
  readonly seed: number;
  readonly arm_model: string;
  readonly strategies: readonly StrategyRow[];
  readonly runs: readonly RunOutcome[];
  /** The family the worlds were drawn from: its name and file, and the redraws over the worlds; null without one. */
  readonly family: { readonly name: string; readonly file: string; readonly redraws: number; readonly worlds_redrawn: number } | null;
  /** Every pair of strategies on the same worlds. */
  readonly paired: readonly PairedComparison[];
}

/** One measure of a pair of strategies on the same worlds: a wins where it is better. */
export interface PairedMeasure {
  readonly wins: number;
  readonly losses: number;
  readonly ties: number;
  /** The test and its two-sided p-value (wins against losses; ties dropped). */
  readonly test: 'sign' | 'wilcoxon_signed_rank_exact' | 'wilcoxon_signed_rank_normal';
  readonly p: number;
  /** Median of a − b over the pairs compared (null for success). */
  readonly median_difference: number | null;
}

export interface PairedComparison {
  readonly a: string;
  readonly b: string;
  /** Worlds both ran. */
  readonly worlds: number;
  /** Success: a wins where a succeeded and b did not; sign test. */
  readonly success: PairedMeasure;
  /** Peak internal force: lower wins; Wilcoxon signed-rank test on a − b. */
  readonly peak_internal_force_n: PairedMeasure;
  /** Time to goal over the worlds where both succeeded: lower wins; Wilcoxon signed-rank test. */
  readonly time_s: PairedMeasure;
}

function medianOf(xs: readonly number[]): number | null {
  if (xs.length === 0) return null;
  const s = [...xs].sort((x, y) => x - y);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
}

function lowerWins(d: readonly number[]): PairedMeasure {
  const w = wilcoxonSignedRank(d);
  return { wins: d.filter((x) => x < 0).length, losses: d.filter((x) => x > 0).length, ties: d.filter((x) => x === 0).length, test: w.method === 'exact' ? 'wilcoxon_signed_rank_exact' : 'wilcoxon_signed_rank_normal', p: w.p, median_difference: medianOf(d) };
}

/** Every pair (a before b in the list) compared world by world. */
export function pairedComparisons(labels: readonly string[], runsOf: readonly (readonly RunOutcome[])[]): PairedComparison[] {
  const out: PairedComparison[] = [];
  for (let i = 0; i < labels.length; i++) {
    for (let j = i + 1; j < labels.length; j++) {
      const byWorld = new Map(runsOf[j]!.map((r) => [r.world, r]));
      const pairs = runsOf[i]!.flatMap((r) => (byWorld.has(r.world) ? [[r, byWorld.get(r.world)!] as const] : []));
      let wins = 0, losses = 0;
      for (const [a, b] of pairs) {
        if (a.success && !b.success) wins++;
        else if (!a.success && b.success) losses++;
      }
      const force = pairs.map(([a, b]) => a.peak_internal_force_n - b.peak_internal_force_n);
      const time = pairs.filter(([a, b]) => a.success && b.success && a.time_to_goal_s !== null && b.time_to_goal_s !== null).map(([a, b]) => a.time_to_goal_s! - b.time_to_goal_s!);
      out.push({
        a: labels[i]!,
        b: labels[j]!,
        worlds: pairs.length,
        success: { wins, losses, ties: pairs.length - wins - losses, test: 'sign', p: signTest(wins, wins + losses), median_difference: null },
        peak_internal_force_n: lowerWins(force),
        time_s: lowerWins(time),
      });
    }
  }
  return out;
}

export function outcomeOf(world: number, seed: number, s: EpisodeSummary, m: EpisodeMeasureSummary, bt: BeliefTimingSums = { times_s: [], unresolved: 0, confident_wrong_s: 0 }): RunOutcome {
  return {
    world,
    seed,
    strategy: s.strategy,
    success: s.success,
    end_reason: s.end_reason,
    collisions: s.collisions.count,
    peak_internal_force_n: s.internal_force.peak_n,
    mean_internal_force_n: s.internal_force.mean_abs_n,
    time_to_goal_s: s.time_to_goal_s,
    holds: s.holds.count,
    duration_s: s.duration_s,
    calibration: m.calibration_sums,
    commitments: m.commitment_sums,
    same_role_s: m.same_role.total_s,
    sampled_s: m.same_role.sampled_s,
    partner_hold: m.partner_hold,
    belief_timing: bt,
    holds_by_reason: s.holds.reasons,
    false_impact_holds: s.holds.false_impact,
    redraws: s.family?.redraws ?? 0,
    knocks: s.world.knocks.length,
  };
}

/** A job of the pool: world index and strategy index. */
export interface CompareJob {
  readonly id: number;
  readonly world: number;
  readonly seed: number;
  readonly strategy: StrategySpec;
  /** Measurement batches: replace the drawn world's occupancy (task zone order). */
  readonly occupied?: readonly boolean[];
  /** Measurement batches: options of this run on top of the batch's. */
  readonly options?: SimOptionsOverrides;
}

export interface WorkerInit {
  readonly left: ArmConfig;
  readonly right: ArmConfig;
  readonly options: SimOptionsOverrides;
  readonly duration_s: number | undefined;
  readonly family?: Family;
}

/** The built worker script (worker threads need JavaScript: run `npx tsc -p tsconfig.build.json`). */
export function workerScript(): string {
  const here = fileURLToPath(import.meta.url);
  const candidates = here.endsWith('.ts')
    ? [fileURLToPath(new URL('../../dist/src/sim/worker.js', import.meta.url))]
    : [fileURLToPath(new URL('./worker.js', import.meta.url))];
  for (const c of candidates) if (existsSync(c)) return c;
  throw new Error(`the worker script ${candidates[0]} is missing: build with 'npx tsc -p tsconfig.build.json'`);
}

export function validateCompare(input: CompareInput): void {
  if (!Number.isInteger(input.worlds) || input.worlds < 1) {
    throw new InputError({ code: 'cli.bad_worlds', message: `--worlds must be a whole number of at least 1, got ${input.worlds}`, where: { option: '--worlds' }, hint: 'from 1 to 1000000' });
  }
  if (input.strategies.length === 0) throw new InputError({ code: 'cli.no_strategies', message: 'no strategy to compare', where: { option: '--strategies' } });
  const o = simOptions({ ...input.options, record: false });
  const problems = checkEpisodeSetup(input.left, o);
  if (problems.length) throw new InputError(problems);
}

export async function runCompare(input: CompareInput): Promise<CompareResult> {
  validateCompare(input);
  const jobs: CompareJob[] = [];
  const seeds = Array.from({ length: input.worlds }, (_, w) => worldSeed(input.seed, w));
  input.strategies.forEach((strategy, si) => {
    for (let w = 0; w < input.worlds; w++) jobs.push({ id: si * input.worlds + w, world: w, seed: seeds[w]!, strategy });
  });
  const options: SimOptionsOverrides = { ...input.options, record: false };
  const results: Array<RunOutcome | undefined> = new Array(jobs.length);
  const nJobs = Math.max(1, Math.min(input.jobs ?? 1, jobs.length));
  let done = 0;
  const progress = () => input.onProgress?.(++done, jobs.length);
  // World by world (every strategy of a world, then the next), so an interruption leaves whole worlds.
  const order = input.shouldStop ? [...jobs].sort((a, b) => a.world - b.world || a.id - b.id) : jobs;
  if (nJobs === 1) {
    const mj = await loadMujoco();
    let world = -1;
    for (const j of order) {
      // Interrupted: the world under way is finished (every strategy), then no new one starts.
      if (input.shouldStop && j.world !== world) {
        await yieldToSignals();
        if (input.shouldStop()) break;
      }
      world = j.world;
      const r = runJob(mj, { left: input.left, right: input.right, options, duration_s: input.duration_s, ...(input.family ? { family: input.family } : {}) }, j);
      results[j.id] = outcomeOf(j.world, j.seed, r.summary, r.measures, r.beliefTiming);
      progress();
    }
  } else {
    await runPool(workerScript(), nJobs, { left: input.left, right: input.right, options, duration_s: input.duration_s, ...(input.family ? { family: input.family } : {}) }, order, (id, r) => {
      results[id] = r;
      progress();
    }, input.shouldStop);
  }
  // Worlds every strategy finished (all of them unless interrupted); only those are aggregated.
  let worldsDone = 0;
  while (worldsDone < input.worlds && input.strategies.every((_, si) => results[si * input.worlds + worldsDone] !== undefined)) worldsDone++;
  const runs = (worldsDone === input.worlds ? results : input.strategies.flatMap((_, si) => results.slice(si * input.worlds, si * input.worlds + worldsDone))) as RunOutcome[];
  const per = input.strategies.map((_, si) => runs.slice(si * worldsDone, (si + 1) * worldsDone));
  const rows = input.strategies.map((s, si) => aggregate(s, per[si]!, input.seed, input.left.wrench_filter.sample_rate_hz));
  const first = runs.slice(0, worldsDone);
  const family = input.family ? { name: input.family.spec.family, file: input.family.file, redraws: first.reduce((a, r) => a + r.redraws, 0), worlds_redrawn: first.filter((r) => r.redraws > 0).length } : null;
  return { worlds: input.worlds, worlds_done: worldsDone, seed: input.seed, arm_model: simOptions(options).arm_model, strategies: rows, runs, family, paired: pairedComparisons(rows.map((r) => r.label), per) };
}

/** One job of a batch (main thread or worker). */
export function runJob(mj: MainModule, init: WorkerInit, j: CompareJob): EpisodeResult {
  const options: SimOptionsOverrides = j.options ? { ...init.options, ...j.options } : init.options;
  let world;
  if (init.family) {
    const fw = drawFamilyWorld(init.family, init.left, options, j.seed);
    const left = { ...init.left, task: fw.task };
    const right = { ...init.right, task: fw.task };
    const o2: SimOptionsOverrides = j.options ? { ...fw.options, ...j.options } : fw.options;
    return runEpisodeWith(mj, { left, right, strategy: j.strategy, seed: j.seed, options: o2, duration_s: init.duration_s, world: fw.world, family: { name: init.family.spec.family, redraws: fw.redraws } });
  }
  if (j.occupied) {
    const drawn = sampleWorld(init.left.task, simOptions(options), j.seed);
    if (j.occupied.length !== drawn.occupied.length) throw new Error(`job ${j.id}: ${j.occupied.length} occupancy values for ${drawn.occupied.length} zones`);
    world = { ...drawn, occupied: [...j.occupied] };
  }
  return runEpisodeWith(mj, { left: init.left, right: init.right, strategy: j.strategy, seed: j.seed, options, duration_s: init.duration_s, ...(world ? { world } : {}) });
}

/**
 * Run any list of jobs (measurement batches): results by job id, identical whatever `jobs`.
 */
export async function runJobs(init: WorkerInit, list: readonly CompareJob[], jobs = 1, onProgress?: (done: number, total: number) => void): Promise<RunOutcome[]> {
  const results: Array<RunOutcome | undefined> = new Array(list.length);
  let done = 0;
  const init2: WorkerInit = { ...init, options: { ...init.options, record: false } };
  const nJobs = Math.max(1, Math.min(jobs, list.length));
  if (nJobs === 1) {
    const mj = await loadMujoco();
    for (const j of list) {
      const r = runJob(mj, init2, j);
      results[j.id] = outcomeOf(j.world, j.seed, r.summary, r.measures, r.beliefTiming);
      onProgress?.(++done, list.length);
    }
  } else {
    await runPool(workerScript(), nJobs, init2, list, (id, r) => {
      results[id] = r;
      onProgress?.(++done, list.length);
    });
  }
  return results as RunOutcome[];
}

export function aggregate(s: StrategySpec, runs: readonly RunOutcome[], seed = 1, rateHz = 1000): StrategyRow {
  const n = runs.length;
  const successes = runs.filter((r) => r.success).length;
  const end: Record<string, number> = {};
  for (const r of runs) end[r.end_reason] = (end[r.end_reason] ?? 0) + 1;
  return {
    name: s.name,
    k: s.k,
    label: strategyLabel(s, rateHz),
    runs: n,
    successes,
    success_rate: n ? successes / n : 0,
    ci95: wilsonInterval(successes, n),
    collision_rate: n ? runs.filter((r) => r.collisions > 0).length / n : 0,
    mean_peak_internal_force_n: mean(runs.map((r) => r.peak_internal_force_n)) ?? 0,
    mean_internal_force_n: mean(runs.map((r) => r.mean_internal_force_n)) ?? 0,
    mean_time_s: mean(runs.filter((r) => r.success && r.time_to_goal_s !== null).map((r) => r.time_to_goal_s!)),
    bootstrap95: {
      mean_peak_internal_force_n: bootstrapMeanInterval(runs.map((r) => r.peak_internal_force_n), seed),
      mean_time_s: bootstrapMeanInterval(runs.filter((r) => r.success && r.time_to_goal_s !== null).map((r) => r.time_to_goal_s!), seed + 1),
      confident_wrong_s: bootstrapMeanInterval(runs.map((r) => r.belief_timing.confident_wrong_s), seed + 2),
    },
    end_reasons: end,
    calibration: pooledCalibration(runs.map((r) => r.calibration)),
    commitments: commitmentSummary(runs.map((r) => r.commitments)),
    same_role: sameRoleAggregate(runs),
    partner_hold: partnerHoldAggregate(runs.map((r) => r.partner_hold)),
    belief: beliefAggregate(runs),
    holds_by_reason: sumRecords(runs.map((r) => r.holds_by_reason)),
    false_impact_holds: runs.reduce((a, r) => a + r.false_impact_holds, 0),
  };
}

function beliefAggregate(runs: readonly RunOutcome[]): StrategyRow['belief'] {
  const t = beliefTimingSummary(runs.map((r) => r.belief_timing));
  const wrong = runs.map((r) => r.belief_timing.confident_wrong_s);
  return { time_to_correct_s: t.time_to_correct_s, confident_wrong_s: { mean: mean(wrong), max: wrong.length ? Math.max(...wrong) : null } };
}

function sumRecords(all: readonly Readonly<Record<string, number>>[]): Record<string, number> {
  const out: Record<string, number> = {};
  for (const r of all) for (const [k, v] of Object.entries(r)) out[k] = (out[k] ?? 0) + v;
  return out;
}

function sameRoleAggregate(runs: readonly RunOutcome[]): { total_s: number; mean_s: number; fraction: number } {
  let total = 0;
  let time = 0;
  for (const r of runs) {
    total += r.same_role_s;
    time += r.sampled_s;
  }
  return { total_s: total, mean_s: runs.length ? total / runs.length : 0, fraction: time > 0 ? total / time : 0 };
}

type FromWorker = { type: 'ready' } | { type: 'result'; id: number; outcome: RunOutcome } | { type: 'error'; id: number; message: string };

function runPool(script: string, n: number, init: WorkerInit, jobs: readonly CompareJob[], onResult: (id: number, r: RunOutcome) => void, shouldStop?: () => boolean): Promise<void> {
  return new Promise((resolve, reject) => {
    let next = 0;
    let finished = 0;
    let busy = 0;
    let failed = false;
    const workers: Worker[] = [];
    const stopAll = () => {
      for (const w of workers) void w.terminate();
    };
    const feed = (w: Worker) => {
      // Interrupted: the worlds under way are finished (jobs come world by world), no new one starts.
      if (shouldStop?.() && (next >= jobs.length || next === 0 || jobs[next]!.world !== jobs[next - 1]!.world)) {
        // Interrupted: hand out nothing more; done when the episodes running have finished.
        if (busy === 0) {
          stopAll();
          resolve();
        }
        return;
      }
      if (next < jobs.length) {
        busy++;
        w.postMessage({ type: 'job', job: jobs[next++] });
      }
    };
    for (let i = 0; i < n; i++) {
      const w = new Worker(script, { workerData: init });
      workers.push(w);
      w.on('message', (m: FromWorker) => {
        if (failed) return;
        if (m.type === 'ready') {
          feed(w);
        } else if (m.type === 'result') {
          busy--;
          onResult(m.id, m.outcome);
          finished++;
          if (finished === jobs.length) {
            stopAll();
            resolve();
          } else feed(w);
        } else {
          failed = true;
          stopAll();
          reject(new Error(`run ${m.id} failed in a worker: ${m.message}`));
        }
      });
      w.on('error', (err) => {
        if (failed) return;
        failed = true;
        stopAll();
        reject(err);
      });
    }
  });
}
