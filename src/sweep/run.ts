/**
 * A sweep: the candidates of a space, run over bags (decoded once per worker) or over
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
import { pooledCalibration } from '../sim/belief-metrics.js';
import { runJobs, type CompareJob, type RunOutcome } from '../sim/compare.js';
import { mean } from '../sim/stats.js';
import type { SimOptionsOverrides } from '../sim/options.js';
import type { StrategySpec } from '../sim/strategies.js';
import { worldSeed } from '../sim/world.js';
import type { ArmConfig } from '../params/config.js';
import { InputError } from '../util/errors.js';
import { decodeBag, type BagInfo, type DecodedBag } from './decoded.js';
import { evaluateBag, metricsFromBags, type CandidateMetrics } from './evaluate.js';
import { bagName, type Label, type Labels } from './labels.js';
import { choose, paretoFront, rocCurve, type CandidateResult, type Objective, type Roc } from './objective.js';
import { startPool, type BagJob } from './pool.js';
import { candidateAt, candidateConfigs, type Space } from './space.js';

export const SWEEP_FORMAT = 'antiphon-sweep/1';

export interface Shard {
  readonly index: number;
  readonly count: number;
}

export type SweepData =
  | { readonly kind: 'bags'; readonly bags: readonly BagInfo[]; readonly labels: Labels; readonly perBag: readonly (readonly Label[])[] }
  | { readonly kind: 'worlds'; readonly worlds: number; readonly seed: number; readonly options: SimOptionsOverrides; readonly duration_s?: number };

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
  return { kind: 'worlds', worlds: data.worlds, seed: data.seed, options: data.options, duration_s: data.duration_s ?? null, note: 'simulated cell (MuJoCo), our own synthetic worlds; labels are its ground truth (contacts, occupancy); the cell has no knocks yet, so every hold is a false hold' };
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

function strategyOf(c: ArmConfig): StrategySpec {
  const r = c.roles;
  if (r.scheduler === 'adaptive' || r.scheduler === 'lookahead') return { name: r.scheduler, k: null };
  if (r.scheduler === 'fixed') return { name: 'fixed', k: null };
  return { name: 'alternating', k: Math.max(1, Math.round(r.period_s * c.wrench_filter.sample_rate_hz)) };
}

export function metricsFromWorlds(runs: readonly RunOutcome[]): CandidateMetrics {
  const dur = runs.reduce((a, r) => a + r.duration_s, 0);
  const holds = runs.reduce((a, r) => a + r.holds, 0);
  const n = runs.length;
  const sampled = runs.reduce((a, r) => a + r.sampled_s, 0);
  return {
    duration_s: dur,
    labelled_impacts: 0,
    detected_impacts: 0,
    missed_impacts: 0,
    detection_rate: null,
    holds,
    false_holds: holds,
    false_holds_per_hour: dur > 0 ? (3600 * holds) / dur : 0,
    negative_bins: 0,
    false_hold_bins: 0,
    false_hold_bin_rate: null,
    detection_delay_s: { median: null, p95: null },
    peak_internal_force_n: mean(runs.map((r) => r.peak_internal_force_n)) ?? 0,
    peak_correction_force_n: null,
    success_rate: n ? runs.filter((r) => r.success).length / n : null,
    collision_rate: n ? runs.filter((r) => r.collisions > 0).length / n : null,
    mean_time_to_goal_s: mean(runs.filter((r) => r.success && r.time_to_goal_s !== null).map((r) => r.time_to_goal_s!)),
    belief_ece: pooledCalibration(runs.map((r) => r.calibration)).ece,
    same_role_fraction: sampled > 0 ? runs.reduce((a, r) => a + r.same_role_s, 0) / sampled : null,
  };
}

export interface SweepRun {
  readonly document: SweepDocument;
  readonly interrupted: boolean;
  readonly done: number;
  readonly total: number;
  readonly resumed: number;
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
  if (data.kind === 'bags') {
    const zoneNames = configs.get(0)!.left.task.zones.map((z) => z.name);
    if (input.jobs <= 1 || todo.length <= 1) {
      input.onStart?.(() => {});
      const decoded: DecodedBag[] = [];
      for (const b of data.bags) decoded.push(await decodeBag(b.path, zoneNames));
      for (const i of todo) {
        if (stopRequested()) break;
        const c = configs.get(i)!;
        record(i, metricsFromBags(decoded.map((b, k) => evaluateBag(b, c.left, c.right, data.perBag[k]!, data.labels.tolerance_s))));
        // Let a SIGINT handler run between candidates.
        await new Promise<void>((r) => setImmediate(r));
      }
    } else {
      const jobs: BagJob[] = todo.map((i) => ({ id: i, left: configs.get(i)!.left, right: configs.get(i)!.right }));
      const pool = startPool(input.jobs, { bags: data.bags.map((b) => b.path), zoneNames, labels: data.perBag, tolerance_s: data.labels.tolerance_s }, jobs, (i, m) => record(i, m));
      input.onStart?.(() => pool.stop());
      await pool.done;
    }
  } else {
    input.onStart?.(() => {});
    const seeds = Array.from({ length: data.worlds }, (_, w) => worldSeed(data.seed, w));
    for (const i of todo) {
      if (stopRequested()) break;
      const c = configs.get(i)!;
      const strategy = strategyOf(c.left);
      const list: CompareJob[] = seeds.map((seed, w) => ({ id: w, world: w, seed, strategy }));
      const runs = await runJobs({ left: c.left, right: c.right, options: data.options, duration_s: data.duration_s }, list, input.jobs);
      record(i, metricsFromWorlds(runs));
    }
  }
  const candidates: CandidateResult[] = indices.filter((i) => results.has(i)).map((i) => ({ index: i, values: candidateAt(space, i).values, metrics: results.get(i)! }));
  const interrupted = candidates.length < indices.length;
  const document = buildDocument({ id, shard: input.shard, space, baseText: input.baseText, basePath: input.base.path, data: dataDescription(data), objective: input.objective, candidates });
  return { document, interrupted, done: candidates.length, total: indices.length, resumed };
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
