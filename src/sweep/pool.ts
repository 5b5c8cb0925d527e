/**
 * The worker-thread pool of a sweep over bags. Each worker decodes every bag once at start and
 * then runs the chunks of candidates it is fed, one at a time, sharing work within itself
 * (share.ts); results are stored by candidate index, and sharing never changes a result, so
 * they are the same whatever the number of workers and the order they finish in.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { ArmConfig } from '../params/config.js';
import type { CandidateMetrics } from './evaluate.js';
import type { Label } from './labels.js';

export interface BagWorkerInit {
  readonly bags: readonly string[];
  readonly zoneNames: readonly string[];
  readonly labels: readonly (readonly Label[])[];
  readonly tolerance_s: number;
  /** false: every candidate in full, no work shared (the reference of the tests). */
  readonly share?: boolean;
}

export interface BagJob {
  readonly id: number;
  readonly left: ArmConfig;
  readonly right: ArmConfig;
}

/** What a bag worker is sent: candidates that may share work (share.ts), run in order. */
export interface BagChunk {
  readonly id: number;
  readonly jobs: readonly BagJob[];
}

export interface ChunkResult {
  readonly results: readonly { readonly id: number; readonly metrics: CandidateMetrics }[];
}

/**
 * Candidates in chunks for the pool: those that may share work (same configuration but for
 * `wrench_filter.impact.*`: `key`) together, each group cut into pieces of at most
 * ceil(N / (2 jobs)) so that every worker gets work.
 */
export function bagChunks(jobs: readonly BagJob[], workers: number, key: (j: BagJob) => string): BagChunk[] {
  const groups = new Map<string, BagJob[]>();
  for (const j of jobs) {
    const k = key(j);
    const g = groups.get(k);
    if (g) g.push(j);
    else groups.set(k, [j]);
  }
  const most = Math.max(1, Math.ceil(jobs.length / (2 * Math.max(1, workers))));
  const out: BagChunk[] = [];
  for (const g of groups.values()) for (let k = 0; k < g.length; k += most) out.push({ id: out.length, jobs: g.slice(k, k + most) });
  return out;
}

/** A built worker script of src/sweep (worker threads need JavaScript: `npm run build`). */
export function sweepScript(name: string): string {
  const here = fileURLToPath(import.meta.url);
  const c = here.endsWith('.ts') ? fileURLToPath(new URL(`../../dist/src/sweep/${name}`, import.meta.url)) : fileURLToPath(new URL(`./${name}`, import.meta.url));
  if (!existsSync(c)) throw new Error(`the worker script ${c} is missing: build with 'npm run build'`);
  return c;
}

/** The worker of a sweep over bags. */
export function sweepWorkerScript(): string {
  return sweepScript('worker.js');
}

type FromWorker<R> = { type: 'ready' } | { type: 'result'; id: number; metrics: R } | { type: 'error'; id: number; message: string };

export interface PoolHandle {
  readonly done: Promise<void>;
  /** Stop feeding and terminate the workers; `done` resolves once they are gone. */
  stop(): void;
}

export function startPool(n: number, init: BagWorkerInit, chunks: readonly BagChunk[], onResult: (id: number, m: CandidateMetrics) => void): PoolHandle {
  return startWorkerPool<BagChunk, ChunkResult>(sweepWorkerScript(), n, init, chunks, (_, r) => {
    for (const x of r.results) onResult(x.id, x.metrics);
  });
}

/**
 * A pool of `n` workers running `script`: each gets `init` as its workerData, says 'ready', and
 * answers every job it is sent with its result (`metrics`) or an error; results go to
 * `onResult` by job id.
 */
export function startWorkerPool<J extends { readonly id: number }, R>(script: string, n: number, init: unknown, jobs: readonly J[], onResult: (id: number, r: R) => void): PoolHandle {
  const workers: Worker[] = [];
  let stopped = false;
  let stopAll = (): void => {};
  const done = new Promise<void>((resolve, reject) => {
    let next = 0;
    let finished = 0;
    let failed = false;
    stopAll = () => {
      stopped = true;
      void Promise.all(workers.map((w) => w.terminate())).then(() => resolve());
    };
    if (jobs.length === 0) {
      resolve();
      return;
    }
    const feed = (w: Worker) => {
      if (!stopped && next < jobs.length) w.postMessage({ type: 'job', job: jobs[next++] });
    };
    for (let i = 0; i < Math.max(1, Math.min(n, jobs.length)); i++) {
      const w = new Worker(script, { workerData: init });
      workers.push(w);
      w.on('message', (m: FromWorker<R>) => {
        if (failed || stopped) return;
        if (m.type === 'ready') feed(w);
        else if (m.type === 'result') {
          onResult(m.id, m.metrics);
          finished++;
          if (finished === jobs.length) stopAll();
          else feed(w);
        } else {
          failed = true;
          stopped = true;
          for (const x of workers) void x.terminate();
          reject(new Error(`job ${m.id} failed in a worker: ${m.message}`));
        }
      });
      w.on('error', (err) => {
        if (failed || stopped) return;
        failed = true;
        stopped = true;
        for (const x of workers) void x.terminate();
        reject(err);
      });
    }
  });
  return { done, stop: () => stopAll() };
}
