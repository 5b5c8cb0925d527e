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
import { mean, wilsonInterval } from './stats.js';
import { strategyLabel, type StrategySpec } from './strategies.js';
import { sampleWorld, worldSeed } from './world.js';

export interface CompareInput {
  readonly left: ArmConfig;
  readonly right: ArmConfig;
  readonly worlds: number;
  readonly seed: number;
  readonly strategies: readonly StrategySpec[];
  readonly jobs?: number;
  readonly options?: SimOptionsOverrides;
  readonly duration_s?: number;
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
  readonly end_reasons: Readonly<Record<string, number>>;
  /** Every run's belief pairs pooled. */
  readonly calibration: CalibrationSummary;
  /** Every run's evaluated switches pooled. */
  readonly commitments: CommitmentSummary;
  /** Both arms in the same role: total over the runs, mean per run, and fraction of the simulated time. */
  readonly same_role: { readonly total_s: number; readonly mean_s: number; readonly fraction: number };
  /** Runs with an injected hold: the partner's detection time; null when no run had one. */
  readonly partner_hold: PartnerHoldAggregate | null;
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
}

export function outcomeOf(world: number, seed: number, s: EpisodeSummary, m: EpisodeMeasureSummary): RunOutcome {
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
      const r = runJob(mj, { left: input.left, right: input.right, options, duration_s: input.duration_s }, j);
      results[j.id] = outcomeOf(j.world, j.seed, r.summary, r.measures);
      progress();
    }
  } else {
    await runPool(workerScript(), nJobs, { left: input.left, right: input.right, options, duration_s: input.duration_s }, order, (id, r) => {
      results[id] = r;
      progress();
    }, input.shouldStop);
  }
  // Worlds every strategy finished (all of them unless interrupted); only those are aggregated.
  let worldsDone = 0;
  while (worldsDone < input.worlds && input.strategies.every((_, si) => results[si * input.worlds + worldsDone] !== undefined)) worldsDone++;
  const runs = (worldsDone === input.worlds ? results : input.strategies.flatMap((_, si) => results.slice(si * input.worlds, si * input.worlds + worldsDone))) as RunOutcome[];
  const rows = input.strategies.map((s, si) => aggregate(s, runs.slice(si * worldsDone, (si + 1) * worldsDone)));
  return { worlds: input.worlds, worlds_done: worldsDone, seed: input.seed, arm_model: simOptions(options).arm_model, strategies: rows, runs };
}

/** One job of a batch (main thread or worker). */
export function runJob(mj: MainModule, init: WorkerInit, j: CompareJob): EpisodeResult {
  const options: SimOptionsOverrides = j.options ? { ...init.options, ...j.options } : init.options;
  let world;
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
      results[j.id] = outcomeOf(j.world, j.seed, r.summary, r.measures);
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

export function aggregate(s: StrategySpec, runs: readonly RunOutcome[]): StrategyRow {
  const n = runs.length;
  const successes = runs.filter((r) => r.success).length;
  const end: Record<string, number> = {};
  for (const r of runs) end[r.end_reason] = (end[r.end_reason] ?? 0) + 1;
  return {
    name: s.name,
    k: s.k,
    label: strategyLabel(s),
    runs: n,
    successes,
    success_rate: n ? successes / n : 0,
    ci95: wilsonInterval(successes, n),
    collision_rate: n ? runs.filter((r) => r.collisions > 0).length / n : 0,
    mean_peak_internal_force_n: mean(runs.map((r) => r.peak_internal_force_n)) ?? 0,
    mean_internal_force_n: mean(runs.map((r) => r.mean_internal_force_n)) ?? 0,
    mean_time_s: mean(runs.filter((r) => r.success && r.time_to_goal_s !== null).map((r) => r.time_to_goal_s!)),
    end_reasons: end,
    calibration: pooledCalibration(runs.map((r) => r.calibration)),
    commitments: commitmentSummary(runs.map((r) => r.commitments)),
    same_role: sameRoleAggregate(runs),
    partner_hold: partnerHoldAggregate(runs.map((r) => r.partner_hold)),
  };
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
