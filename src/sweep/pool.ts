/**
 * The worker-thread pool of a sweep over bags. The main thread decodes each bag once while the
 * workers start (their module import overlaps the decode), then hands every worker the decoded
 * columns in SharedArrayBuffers (columns.ts: shared, not copied). Each worker runs the chunks
 * of candidates it is fed, one at a time, sharing work within itself (share.ts); results are
 * stored by candidate index, and sharing never changes a result, so they are the same whatever
 * the number of workers and the order they finish in. The world sweep's pool (startWorkerPool)
 * feeds its episodes one at a time.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { ArmConfig } from '../params/config.js';
import type { DecodedBag } from './columns.js';
import type { CandidateMetrics } from './evaluate.js';
import type { Label } from './labels.js';
import { SharedEvaluator } from './share.js';

export interface BagWorkerInit {
  readonly bags: readonly string[];
  readonly zoneNames: readonly string[];
  readonly labels: readonly (readonly Label[])[];
  readonly tolerance_s: number;
  /** false: every candidate in full, no work shared (the reference of the tests). */
  readonly share?: boolean;
  /** true: the decoded bags arrive in the setup message (BagSetup); false or absent: the worker decodes `bags` itself. */
  readonly sent?: boolean;
  /** A candidate to warm the worker's JIT with (warmup.ts) while it waits for the bags. */
  readonly warmup?: { readonly left: ArmConfig; readonly right: ArmConfig };
}

export interface BagJob {
  readonly id: number;
  readonly left: ArmConfig;
  readonly right: ArmConfig;
}

/** What a bag worker is sent: candidates that may share work (share.ts), run in order. */
export interface BagChunk {
  readonly id: number;
  /** The share group (candidates with the same configuration but for `wrench_filter.impact.*`), numbered from 0. */
  readonly group: number;
  readonly jobs: readonly BagJob[];
}

export interface ChunkResult {
  readonly results: readonly { readonly id: number; readonly metrics: CandidateMetrics }[];
}

/**
 * Candidates in chunks for the pool. Shared (`share`): those that may share work (same
 * configuration but for `wrench_filter.impact.*`: `key`) together, the largest groups first,
 * each group cut into pieces of at most ceil(N / (2 jobs)) so that every worker gets work
 * (claimChunk keeps a group's pieces on one thread where it can). Unshared: one candidate a
 * chunk (every candidate costs a full run; the finest pieces balance best).
 */
export function bagChunks(jobs: readonly BagJob[], workers: number, key: (j: BagJob) => string, share = true): BagChunk[] {
  if (!share) return jobs.map((j, k) => ({ id: k, group: k, jobs: [j] }));
  const groups = new Map<string, BagJob[]>();
  for (const j of jobs) {
    const k = key(j);
    const g = groups.get(k);
    if (g) g.push(j);
    else groups.set(k, [j]);
  }
  // Largest first; ties in order of first appearance (stable sort).
  const sorted = [...groups.values()].sort((a, b) => b.length - a.length);
  const most = Math.max(1, Math.ceil(jobs.length / (2 * Math.max(1, workers))));
  const out: BagChunk[] = [];
  sorted.forEach((g, gi) => {
    for (let k = 0; k < g.length; k += most) out.push({ id: out.length, group: gi, jobs: g.slice(k, k + most) });
  });
  return out;
}

/** The number of share groups among the chunks (full runs needed at least, per bag). */
export function groupCount(chunks: readonly BagChunk[]): number {
  return new Set(chunks.map((c) => c.group)).size;
}

/**
 * Claim the next chunk for a thread, lock-free (`claims`: one Int32 per chunk in a
 * SharedArrayBuffer, 0 free, 1 taken; every thread of the pool claims from the same one): a
 * piece of a group the thread has run (`seen`: its evaluator holds that group's counts, so the
 * piece costs little), else the first piece left (the largest groups come first). Returns the
 * chunk's index, or -1 when none is left.
 */
export function claimChunk(claims: Int32Array, chunks: readonly BagChunk[], seen: Set<number>): number {
  for (let pass = 0; pass < 2; pass++) {
    for (let k = 0; k < chunks.length; k++) {
      if (Atomics.load(claims, k) !== 0 || (pass === 0 && !seen.has(chunks[k]!.group))) continue;
      if (Atomics.compareExchange(claims, k, 0, 1) === 0) {
        seen.add(chunks[k]!.group);
        return k;
      }
    }
  }
  return -1;
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

/** What a bag worker is sent once: the bags (null: it decodes them itself), every chunk, and the claims they share. */
export interface BagSetup {
  readonly type: 'setup';
  readonly bags: readonly DecodedBag[] | null;
  readonly chunks: readonly BagChunk[];
  readonly claims: Int32Array;
}

/** What a bag worker says: a chunk's results, or its failure. */
export type FromBagWorker = { type: 'result'; id: number; metrics: ChunkResult } | { type: 'error'; id: number; message: string };

/** How the bag pool gets its data and whether this thread works too. */
export interface BagPoolOptions {
  /** Called once the workers are started (their import overlaps it); every worker is sent what it resolves to (the decoded bags, best in SharedArrayBuffers: columns.ts sharedBag). Its failure (a bad message) fails the pool with the same error. Absent: each worker decodes the bags itself. */
  readonly decode?: () => Promise<readonly DecodedBag[]>;
  /** This thread claims and runs chunks too, between its events, as one of the `n` (needs `decode`): n - 1 workers are started. */
  readonly inline?: boolean;
}

/**
 * The pool of a sweep over bags: `n` threads in all (with `inline`, this one among them). Every
 * thread claims its chunks itself from shared claims (claimChunk), so a free worker never waits
 * for this thread to feed it, and a slow one (a cold JIT) holds no queued work back.
 */
export function startPool(n: number, init: BagWorkerInit, chunks: readonly BagChunk[], onResult: (id: number, m: CandidateMetrics) => void, options: BagPoolOptions = {}): PoolHandle {
  const { decode, inline = false } = options;
  if (inline && !decode) throw new Error('startPool: inline needs decode (this thread runs on the decoded bags)');
  if (!chunks.every((c, k) => c.id === k)) throw new Error('startPool: chunk ids must be their positions 0 .. n-1 (as bagChunks numbers them)');
  const share = init.share ?? true;
  const claims = new Int32Array(new SharedArrayBuffer(4 * Math.max(1, chunks.length)));
  const workers: Worker[] = [];
  let stopped = false;
  let stopAll = (): void => {};
  const done = new Promise<void>((resolve, reject) => {
    let finished = 0;
    let failed = false;
    stopAll = () => {
      if (stopped && !failed) return;
      stopped = true;
      // Nothing more is claimed; the workers are stopped.
      for (let k = 0; k < chunks.length; k++) Atomics.store(claims, k, 1);
      void Promise.all(workers.map((w) => w.terminate())).then(() => resolve());
    };
    const fail = (err: unknown): void => {
      if (failed || stopped) return;
      failed = true;
      stopped = true;
      for (let k = 0; k < chunks.length; k++) Atomics.store(claims, k, 1);
      for (const x of workers) void x.terminate();
      reject(err);
    };
    if (chunks.length === 0) {
      resolve();
      return;
    }
    // Chunks with their results in (a chunk may be run twice: see `here`; the first result counts, both are the same).
    const finishedChunk = new Uint8Array(chunks.length);
    const got = (k: number, r: ChunkResult): void => {
      if (finishedChunk[k]) return;
      finishedChunk[k] = 1;
      for (const x of r.results) onResult(x.id, x.metrics);
      if (++finished === chunks.length) stopAll();
    };
    const spawn = inline ? Math.min(n - 1, chunks.length - 1) : Math.max(1, Math.min(n, chunks.length));
    const script = sweepWorkerScript();
    for (let i = 0; i < spawn; i++) {
      const w = new Worker(script, { workerData: { ...init, sent: decode !== undefined, ...(decode && chunks[0] ? { warmup: { left: chunks[0].jobs[0]!.left, right: chunks[0].jobs[0]!.right } } : {}) } satisfies BagWorkerInit });
      workers.push(w);
      w.on('message', (m: FromBagWorker) => {
        if (failed || stopped) return;
        if (m.type === 'result') got(m.id, m.metrics);
        else fail(new Error(`chunk ${m.id} failed in a worker: ${m.message}`));
      });
      w.on('error', fail);
    }
    // This thread: claims chunks like a worker; once none is left, it runs the chunks still in a
    // worker's hands too (a cold worker may hold the last one long), and the first result counts.
    const here = async (bags: readonly DecodedBag[]): Promise<void> => {
      const ev = new SharedEvaluator(bags, init.labels, init.tolerance_s, share);
      const seen = new Set<number>();
      const ranHere = new Uint8Array(chunks.length);
      const nextHere = (): number => {
        const k = claimChunk(claims, chunks, seen);
        if (k >= 0) return k;
        for (let j = 0; j < chunks.length; j++) if (!finishedChunk[j] && !ranHere[j]) return j;
        return -1;
      };
      for (let k = nextHere(); k >= 0 && !stopped; k = nextHere()) {
        ranHere[k] = 1;
        let r: ChunkResult;
        try {
          r = { results: chunks[k]!.jobs.map((j) => ({ id: j.id, metrics: ev.metrics(j.left, j.right) })) };
        } catch (err) {
          fail(err);
          return;
        }
        if (stopped) return;
        got(k, r);
        // Let the workers' results (and a SIGINT handler) in between chunks.
        await new Promise<void>((ok) => setImmediate(ok));
      }
    };
    const start = (bags: readonly DecodedBag[] | null): void => {
      if (failed || stopped) return;
      const setup: BagSetup = { type: 'setup', bags, chunks, claims };
      for (const w of workers) w.postMessage(setup);
      if (inline) void here(bags!);
    };
    if (decode) decode().then(start, fail);
    else start(null);
  });
  return { done, stop: () => stopAll() };
}

type FromWorker<R> = { type: 'ready' } | { type: 'result'; id: number; metrics: R } | { type: 'error'; id: number; message: string };

export interface PoolHandle {
  readonly done: Promise<void>;
  /** Stop feeding and terminate the workers; `done` resolves once they are gone. */
  stop(): void;
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
