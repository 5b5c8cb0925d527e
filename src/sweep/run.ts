/**
 * A sweep: the candidates of a space, run over bags (decoded once, by the main thread) or over
 * simulated worlds, each candidate's metrics stored by its index. Then the choice, the Pareto
 * front and the ROC (objective.ts), and the outputs (output.ts).
 *
 * - Identity: `sweep_id` hashes the base parameters text, the space text, the data (each bag's
 *   name, span and message count and the labels; or worlds, seed and options) and the
 *   objective. Shards of one sweep carry the same id; merge refuses others.
 * - Shards: `--shard i/n` runs candidates [floor(i N / n), floor((i + 1) N / n)).
 * - Journal: every finished candidate is appended to `.<out>.sweep-journal.jsonl` beside the
 *   output folder, so SIGINT keeps them and `--resume` goes on from there; the journal is
 *   removed once the output folder is complete.
 */
import { createHash } from 'node:crypto';
import { appendFileSync, existsSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { parseParamsText, resolveForArm, type ParamsFile } from '../params/load.js';
import type { ParamValue } from '../params/spec.js';
import { loadMujoco } from '../sim/mujoco.js';
import type { Family } from '../sim/family.js';
import type { SimOptionsOverrides } from '../sim/options.js';
import { worldSeed } from '../sim/world.js';
import { InputError } from '../util/errors.js';
import { sharedBag } from './columns.js';
import { decodeBag, type BagInfo, type DecodedBag } from './decoded.js';
import type { CandidateMetrics } from './evaluate.js';
import { restKey, SharedEvaluator } from './share.js';
import { bagName, type Label, type Labels } from './labels.js';
import { choose, paretoFront, rocCurve, type CandidateResult, type Objective, type Roc } from './objective.js';
import { bagChunks, groupCount, startPool, startWorkerPool, sweepScript, type BagChunk, type BagJob } from './pool.js';
import { metricsFromWorlds, runWorldJob, strategyOf, type WorldJob, type WorldRun, type WorldWorkerInit } from './worlds.js';
import { candidateAt, candidateConfigs, type Space } from './space.js';

export const SWEEP_FORMAT = 'antiphon-sweep/1';

export interface Shard {
  readonly index: number;
  readonly count: number;
}

export type SweepData =
  | { readonly kind: 'bags'; readonly bags: readonly BagInfo[]; readonly labels: Labels; readonly perBag: readonly (readonly Label[])[] }
  | { readonly kind: 'worlds'; readonly worlds: number; readonly seed: number; readonly options: SimOptionsOverrides; readonly duration_s?: number; readonly family?: Family };

export interface SweepInput {
  readonly base: ParamsFile;
  readonly baseText: string;
  readonly space: Space;
  readonly data: SweepData;
  readonly objective: Objective;
  readonly jobs: number;
  readonly shard: Shard | null;
  /** Journal file of finished candidates (none: nothing kept on SIGINT). */
  readonly journal?: string;
  readonly resume?: boolean;
  /** Over bags: share work across candidates where no result changes (share.ts; default true). false runs every candidate in full. */
  readonly share?: boolean;
  /** Over bags with jobs > 1: use the worker pool even when the work looks too small to pay its start-up (bagPlan; tests and benchmarks). */
  readonly forcePool?: boolean;
  readonly onProgress?: (done: number, total: number) => void;
  /** Set by the caller (SIGINT): stop after the candidates in flight. */
  readonly stopRequested?: () => boolean;
  /** Called once the run has started, with a function that stops the pool at once. */
  readonly onStart?: (stop: () => void) => void;
}

/** What sweep.json holds. */
export interface SweepDocument {
  readonly format: string;
  readonly sweep_id: string;
  readonly shard: Shard | null;
  readonly candidates_total: number;
  readonly data: Record<string, unknown>;
  readonly base: { readonly file: string; readonly text: string };
  readonly space: { readonly file: string; readonly text: string };
  readonly objective: { readonly name: string; readonly description: string };
  readonly keys: readonly string[];
  readonly candidates: readonly CandidateResult[];
  readonly chosen: number | null;
  readonly pareto: readonly number[] | null;
  readonly roc: Roc | null;
}

export function dataDescription(data: SweepData): Record<string, unknown> {
  if (data.kind === 'bags') {
    return {
      kind: 'bags',
      bags: data.bags.map((b) => ({ name: bagName(b.path), duration_s: b.duration_s, messages: b.messages, start_ns: String(b.startNs), end_ns: String(b.endNs) })),
      labels: data.labels.path === null ? null : { file: basename(data.labels.path), tolerance_s: data.labels.tolerance_s, events: data.perBag.map((l, k) => ({ bag: bagName(data.bags[k]!.path), events: l.map((e) => ({ t_s: e.t_s, end_s: e.end_s, kind: e.kind, arm: e.arm })) })) },
      note: 'recordings: the recommended twist moves nothing, so success, collisions and time to goal are not measured; an operator reset is simulated after each hold',
    };
  }
  return {
    kind: 'worlds',
    worlds: data.worlds,
    seed: data.seed,
    options: data.options,
    duration_s: data.duration_s ?? null,
    ...(data.family ? { family: { name: data.family.spec.family, file: basename(data.family.file), spec: data.family.spec } } : {}),
    note: `simulated cell (MuJoCo), our own synthetic worlds${data.family ? ` drawn from family '${data.family.spec.family}'` : ''}; labels are its ground truth: the knocks (impacts to detect), contacts (collisions; holds from the first contact on are the contact's) and true occupancy (belief calibration); every other hold is a false hold`,
  };
}

export function sweepId(input: Pick<SweepInput, 'baseText' | 'space' | 'data' | 'objective'>): string {
  const h = createHash('sha256');
  h.update(JSON.stringify({ format: SWEEP_FORMAT, base: input.baseText, space: input.space.text, data: dataDescription(input.data), objective: input.objective.name }));
  return h.digest('hex').slice(0, 32);
}

export function shardRange(total: number, shard: Shard | null): [number, number] {
  if (!shard) return [0, total];
  return [Math.floor((shard.index * total) / shard.count), Math.floor(((shard.index + 1) * total) / shard.count)];
}

/** The journal beside an output folder. */
export function journalPath(out: string): string {
  const abs = resolve(out);
  return join(dirname(abs), `.${basename(abs)}.sweep-journal.jsonl`);
}

function readJournal(path: string, id: string): Map<number, CandidateMetrics> {
  const done = new Map<number, CandidateMetrics>();
  if (!existsSync(path)) return done;
  const lines = readFileSync(path, 'utf8').split('\n');
  let head: { sweep_id?: string } | undefined;
  try {
    head = JSON.parse(lines[0] ?? '') as { sweep_id?: string };
  } catch {
    head = undefined;
  }
  if (head?.sweep_id !== id) {
    throw new InputError({ code: 'sweep.resume_mismatch', message: `the journal ${path} belongs to another sweep (${head?.sweep_id ?? 'unreadable'}), not this one (${id})`, where: { file: path, option: '--resume' }, hint: 'run with the same parameters, space, data and objective, or without --resume to start over' });
  }
  for (const line of lines.slice(1)) {
    if (line.trim() === '') continue;
    try {
      const r = JSON.parse(line) as { index: number; metrics: CandidateMetrics };
      done.set(r.index, r.metrics);
    } catch {
      // a line cut short by the interruption: that candidate runs again
    }
  }
  return done;
}

export interface SweepRun {
  readonly document: SweepDocument;
  readonly interrupted: boolean;
  readonly done: number;
  readonly total: number;
  readonly resumed: number;
  /** How the candidates ran: on how many threads, how many of them workers (0: all in this thread), and why. Never changes a result. */
  readonly threads: Threads;
}

export interface Threads {
  /** Threads running candidates (this one included when it runs some). */
  readonly threads: number;
  /** Worker threads started. */
  readonly workers: number;
  readonly reason: string;
}

/**
 * Estimated cost of a full run of one candidate, per message of a bag, on one core; and what
 * a worker costs beyond the work it takes over (its start, its import and its cold JIT, not
 * hidden behind this thread's decode). Measured with bench/sweep.ts on the development machine
 * (DEVELOPERS.md); only the choice between threads and this thread alone hangs on them, never
 * a result.
 */
export const FULL_RUN_NS_PER_MESSAGE = 340;
export const POOL_OVERHEAD_S = 0.3;

/**
 * Threads for a sweep over bags: this thread and k - 1 workers (pool.ts `inline`), or this
 * thread alone. The work they can split is at least one full run per share group and bag
 * (every candidate when not shared); k threads save about (1 - 1 / k) of it, and workers are
 * started only when that is more than their overhead.
 */
export function bagPlan(jobs: number, chunks: readonly BagChunk[], bags: readonly BagInfo[], share: boolean, force = false): Threads {
  const alone = (reason: string): Threads => ({ threads: 1, workers: 0, reason });
  if (jobs <= 1) return alone('jobs 1');
  if (chunks.length === 0) return alone('nothing to run');
  if (chunks.length === 1) return alone('one chunk of candidates');
  const k = Math.min(jobs, chunks.length);
  const runs = share ? groupCount(chunks) : chunks.reduce((s, c) => s + c.jobs.length, 0);
  const messages = bags.reduce((s, b) => s + b.messages, 0);
  const work = (runs * messages * FULL_RUN_NS_PER_MESSAGE) / 1e9;
  const saved = work * (1 - 1 / k);
  const est = `at least ${runs} full run${runs === 1 ? '' : 's'} over each bag (${messages} messages in all), about ${work.toFixed(2)} s on one core`;
  const pool = (why: string): Threads => ({ threads: k, workers: k - 1, reason: `${est}; ${why}` });
  if (force) return pool(`${k} threads (forced)`);
  if (saved <= POOL_OVERHEAD_S * (k - 1)) return alone(`${est}: ${k} threads could save up to ${saved.toFixed(2)} s, no more than ${k - 1} worker start-up${k > 2 ? 's' : ''} (${POOL_OVERHEAD_S} s each)`);
  return pool(`${k} threads could save up to ${saved.toFixed(2)} s`);
}

/** Validate everything, then run the shard's candidates. */
export async function runSweep(input: SweepInput): Promise<SweepRun> {
  const space = input.space;
  const [lo, hi] = shardRange(space.count, input.shard);
  const indices = Array.from({ length: hi - lo }, (_, k) => lo + k);
  // Every candidate of the whole space is checked, not only this shard's: a bad space fails everywhere alike.
  const configs = new Map(candidateConfigs(input.base, space, Array.from({ length: space.count }, (_, i) => i)).map((c) => [c.index, c]));
  const id = sweepId(input);
  const results = new Map<number, CandidateMetrics>();
  if (input.journal) {
    if (input.resume && existsSync(input.journal)) {
      for (const [k, m] of readJournal(input.journal, id)) if (k >= lo && k < hi) results.set(k, m);
    } else writeFileSync(input.journal, JSON.stringify({ sweep_id: id, shard: input.shard }) + '\n');
  }
  const resumed = results.size;
  const todo = indices.filter((i) => !results.has(i));
  let done = resumed;
  const record = (i: number, m: CandidateMetrics): void => {
    results.set(i, m);
    if (input.journal) appendFileSync(input.journal, JSON.stringify({ index: i, metrics: m }) + '\n');
    input.onProgress?.(++done, indices.length);
  };
  const stopRequested = input.stopRequested ?? (() => false);
  const data = input.data;
  let threads: Threads = { threads: 1, workers: 0, reason: 'nothing to run' };
  if (data.kind === 'bags') {
    const zoneNames = configs.get(0)!.left.task.zones.map((z) => z.name);
    const share = input.share ?? true;
    const jobs: BagJob[] = todo.map((i) => ({ id: i, left: configs.get(i)!.left, right: configs.get(i)!.right }));
    const chunks = bagChunks(jobs, input.jobs, (j) => restKey(j.left, j.right), share);
    const plan = bagPlan(input.jobs, chunks, data.bags, share, input.forcePool ?? false);
    threads = plan;
    const decodeAll = async (shared: boolean): Promise<DecodedBag[]> => {
      const out: DecodedBag[] = [];
      for (const b of data.bags) {
        const d = await decodeBag(b.path, zoneNames);
        out.push(shared ? sharedBag(d) : d);
      }
      return out;
    };
    if (plan.threads === 1) {
      input.onStart?.(() => {});
      const ev = new SharedEvaluator(await decodeAll(false), data.perBag, data.labels.tolerance_s, share);
      for (const i of todo) {
        if (stopRequested()) break;
        const c = configs.get(i)!;
        record(i, ev.metrics(c.left, c.right));
        // Let a SIGINT handler run between candidates.
        await new Promise<void>((r) => setImmediate(r));
      }
    } else {
      // The workers start (and import) while this thread decodes; they get the columns shared.
      const pool = startPool(plan.threads, { bags: data.bags.map((b) => b.path), zoneNames, labels: data.perBag, tolerance_s: data.labels.tolerance_s, share }, chunks, (i, m) => record(i, m), { decode: () => decodeAll(true), inline: true });
      input.onStart?.(() => pool.stop());
      await pool.done;
    }
  } else {
    const seeds = Array.from({ length: data.worlds }, (_, w) => worldSeed(data.seed, w));
    const W = data.worlds;
    const init: WorldWorkerInit = { options: { ...data.options, record: false }, duration_s: data.duration_s, ...(data.family ? { family: data.family } : {}) };
    // Candidate-major: a candidate's worlds are done together, so an interruption keeps whole candidates.
    const jobs: WorldJob[] = [];
    for (const i of todo) {
      const c = configs.get(i)!;
      const strategy = strategyOf(c.left);
      for (let w = 0; w < W; w++) jobs.push({ id: jobs.length, candidate: i, world: w, seed: seeds[w]!, strategy, left: c.left, right: c.right });
    }
    const runs = new Array<WorldRun | undefined>(jobs.length);
    const left = new Map(todo.map((i) => [i, W]));
    const finished = (id: number, r: WorldRun): void => {
      runs[id] = r;
      const j = jobs[id]!;
      const n = left.get(j.candidate)! - 1;
      left.set(j.candidate, n);
      if (n === 0) {
        const first = id - j.world;
        record(j.candidate, metricsFromWorlds(runs.slice(first, first + W) as WorldRun[]));
      }
    };
    const w = Math.min(input.jobs, jobs.length);
    threads = input.jobs <= 1 || jobs.length <= 1 ? { threads: 1, workers: 0, reason: input.jobs <= 1 ? 'jobs 1' : 'one episode' } : { threads: w, workers: w, reason: `jobs ${input.jobs}` };
    if (threads.workers === 0) {
      input.onStart?.(() => {});
      const mj = await loadMujoco();
      for (const j of jobs) {
        if (j.world === 0 && stopRequested()) break;
        finished(j.id, runWorldJob(mj, init, j));
        // Let a SIGINT handler run between episodes.
        await new Promise<void>((r) => setImmediate(r));
      }
    } else {
      const pool = startWorkerPool<WorldJob, WorldRun>(sweepScript('world-worker.js'), input.jobs, init, jobs, finished);
      input.onStart?.(() => pool.stop());
      await pool.done;
    }
  }
  const candidates: CandidateResult[] = indices.filter((i) => results.has(i)).map((i) => ({ index: i, values: candidateAt(space, i).values, metrics: results.get(i)! }));
  const interrupted = candidates.length < indices.length;
  const document = buildDocument({ id, shard: input.shard, space, baseText: input.baseText, basePath: input.base.path, data: dataDescription(data), objective: input.objective, candidates });
  return { document, interrupted, done: candidates.length, total: indices.length, resumed, threads };
}

export function buildDocument(a: { id: string; shard: Shard | null; space: Space; baseText: string; basePath: string; data: Record<string, unknown>; objective: Objective; candidates: readonly CandidateResult[] }): SweepDocument {
  const whole = a.shard === null;
  const chosen = whole ? choose(a.candidates, a.objective, baseValues(a.baseText, a.basePath, a.space.axes.map((x) => x.key))) : null;
  const through = a.candidates.find((c) => c.index === chosen);
  return {
    format: SWEEP_FORMAT,
    sweep_id: a.id,
    shard: a.shard,
    candidates_total: a.space.count,
    data: a.data,
    base: { file: basename(a.basePath), text: a.baseText },
    space: { file: basename(a.space.path), text: a.space.text },
    objective: { name: a.objective.name, description: a.objective.description },
    keys: a.space.axes.map((x) => x.key),
    candidates: a.candidates,
    chosen,
    pareto: whole ? paretoFront(a.candidates) : null,
    roc: whole ? rocCurve(a.candidates, through) : null,
  };
}

/** The swept keys' values in the base file (the left arm's; the tie-break of the choice). */
export function baseValues(text: string, path: string, keys: readonly string[]): Record<string, ParamValue> {
  const v = resolveForArm(parseParamsText(text, basename(path)), 'left');
  return Object.fromEntries(keys.filter((k) => v.has(k)).map((k) => [k, v.get(k)!.value]));
}

export function removeJournal(path: string | undefined): void {
  if (path) rmSync(path, { force: true });
}
