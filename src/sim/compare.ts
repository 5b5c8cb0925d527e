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
import { checkEpisodeSetup, runEpisodeWith, type EndReason, type EpisodeSummary } from './episode.js';
import { loadMujoco } from './mujoco.js';
import { simOptions, type SimOptionsOverrides } from './options.js';
import { mean, wilsonInterval } from './stats.js';
import { strategyLabel, type StrategySpec } from './strategies.js';
import { worldSeed } from './world.js';

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
}

export interface CompareResult {
  readonly worlds: number;
  readonly seed: number;
  readonly arm_model: string;
  readonly strategies: readonly StrategyRow[];
  readonly runs: readonly RunOutcome[];
}

export function outcomeOf(world: number, seed: number, s: EpisodeSummary): RunOutcome {
  return {
    world,
    seed,
    strategy: s.strategy,
    success: s.success,
    end_reason: s.end_reason,
    collisions: s.collisions.count,
    peak_internal_force_n: s.internal_force.peak_n,
    mean_internal_force_n: s.internal_force.mean_n,
    time_to_goal_s: s.time_to_goal_s,
    holds: s.holds.count,
  };
}

/** A job of the pool: world index and strategy index. */
export interface CompareJob {
  readonly id: number;
  readonly world: number;
  readonly seed: number;
  readonly strategy: StrategySpec;
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
  if (nJobs === 1) {
    const mj = await loadMujoco();
    for (const j of jobs) {
      const r = runEpisodeWith(mj, { left: input.left, right: input.right, strategy: j.strategy, seed: j.seed, options, duration_s: input.duration_s });
      results[j.id] = outcomeOf(j.world, j.seed, r.summary);
      progress();
    }
  } else {
    await runPool(workerScript(), nJobs, { left: input.left, right: input.right, options, duration_s: input.duration_s }, jobs, (id, r) => {
      results[id] = r;
      progress();
    });
  }
  const runs = results as RunOutcome[];
  const rows = input.strategies.map((s, si) => aggregate(s, runs.slice(si * input.worlds, (si + 1) * input.worlds)));
  return { worlds: input.worlds, seed: input.seed, arm_model: simOptions(options).arm_model, strategies: rows, runs };
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
  };
}

type FromWorker = { type: 'ready' } | { type: 'result'; id: number; outcome: RunOutcome } | { type: 'error'; id: number; message: string };

function runPool(script: string, n: number, init: WorkerInit, jobs: readonly CompareJob[], onResult: (id: number, r: RunOutcome) => void): Promise<void> {
  return new Promise((resolve, reject) => {
    let next = 0;
    let finished = 0;
    let failed = false;
    const workers: Worker[] = [];
    const stopAll = () => {
      for (const w of workers) void w.terminate();
    };
    const feed = (w: Worker) => {
      if (next < jobs.length) w.postMessage({ type: 'job', job: jobs[next++] });
    };
    for (let i = 0; i < n; i++) {
      const w = new Worker(script, { workerData: init });
      workers.push(w);
      w.on('message', (m: FromWorker) => {
        if (failed) return;
        if (m.type === 'ready') {
          feed(w);
        } else if (m.type === 'result') {
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
