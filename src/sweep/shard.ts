/**
 * Shards: `--shard i/n` (i from 0) or `--shard auto/n`, which takes i from the batch
 * scheduler: JOB_COMPLETION_INDEX (a Kubernetes Indexed Job) or SLURM_ARRAY_TASK_ID (a Slurm
 * job array; the array must be 0..n-1).
 */
import { createHash } from 'node:crypto';
import type { Family } from '../sim/family.js';
import { aggregate, runJobs, validateCompare, type CompareInput, type CompareJob, type CompareResult, type RunOutcome, pairedComparisons } from '../sim/compare.js';
import { simOptions } from '../sim/options.js';
import { strategyLabel, type StrategySpec } from '../sim/strategies.js';
import { worldSeed } from '../sim/world.js';
import { InputError, type Problem } from '../util/errors.js';
import type { Shard } from './run.js';

export function parseShard(raw: string | undefined, env: NodeJS.ProcessEnv = process.env): Shard | null {
  if (raw === undefined) return null;
  const m = /^(\d+|auto)\/(\d+)$/.exec(raw.trim());
  const hint = 'i/n with 0 <= i < n (e.g. 0/4), or auto/n to take i from JOB_COMPLETION_INDEX or SLURM_ARRAY_TASK_ID';
  if (!m) throw new InputError({ code: 'cli.bad_shard', message: `--shard must be i/n or auto/n, got '${raw}'`, where: { option: '--shard' }, hint });
  const count = Number(m[2]);
  if (!(count >= 1 && count <= 100_000)) throw new InputError({ code: 'cli.bad_shard', message: `--shard: n must be from 1 to 100000, got ${m[2]}`, where: { option: '--shard' }, hint });
  let index: number;
  if (m[1] === 'auto') {
    const from = env['JOB_COMPLETION_INDEX'] !== undefined ? 'JOB_COMPLETION_INDEX' : env['SLURM_ARRAY_TASK_ID'] !== undefined ? 'SLURM_ARRAY_TASK_ID' : undefined;
    if (!from) throw new InputError({ code: 'cli.no_shard_index', message: '--shard auto/n: neither JOB_COMPLETION_INDEX nor SLURM_ARRAY_TASK_ID is set', where: { option: '--shard' }, hint: 'run inside a Kubernetes Indexed Job or a Slurm job array, or give the index: --shard i/n' });
    const v = env[from]!;
    if (!/^\d+$/.test(v)) throw new InputError({ code: 'cli.bad_shard', message: `${from} is '${v}', not a whole number`, where: { option: '--shard' }, hint });
    index = Number(v);
    if (index >= count) throw new InputError({ code: 'cli.bad_shard', message: `${from} = ${index} is not below n = ${count}`, where: { option: '--shard' }, hint: 'the job array must run indices 0 to n-1 (Slurm: --array=0-<n-1>; Kubernetes: completions n)' });
  } else {
    index = Number(m[1]);
    if (index >= count) throw new InputError({ code: 'cli.bad_shard', message: `--shard ${raw}: i must be below n`, where: { option: '--shard' }, hint });
  }
  return { index, count };
}

// ---- compare --shard ---------------------------------------------------------------------

export const COMPARE_SHARD_FORMAT = 'antiphon-compare-shard/1';
export const COMPARE_SHARD_FILE = 'compare-shard.json';

/** A shard of `compare`: the runs of worlds [lo, hi) for every strategy (of every family). */
export interface CompareShardDocument {
  readonly format: string;
  readonly compare_id: string;
  readonly shard: Shard;
  readonly worlds: number;
  readonly seed: number;
  readonly arm_model: string;
  readonly strategies: readonly StrategySpec[];
  readonly world_range: readonly [number, number];
  /** Family-major (in --family order), then strategy-major over the shard's worlds. */
  readonly runs: readonly RunOutcome[];
  /** The families the worlds were drawn from (name, and the file as given); absent without --family. */
  readonly families?: readonly { readonly name: string; readonly file: string }[];
  /** The wrench rate the strategy labels are written with, Hz. */
  readonly sample_rate_hz?: number;
}

/** The id of a comparison: its inputs, and the families' contents when it has any (the id of a comparison without one is unchanged). */
export function compareId(input: CompareInput, families: readonly Family[] = []): string {
  const h = createHash('sha256');
  h.update(JSON.stringify({ format: COMPARE_SHARD_FORMAT, left: input.left, right: input.right, worlds: input.worlds, seed: input.seed, strategies: input.strategies, options: input.options ?? {}, duration_s: input.duration_s ?? null, ...(families.length ? { families: families.map((f) => f.spec) } : {}) }));
  return h.digest('hex').slice(0, 32);
}

/**
 * Run one shard of a comparison: worlds [floor(i W / n), floor((i + 1) W / n)) with every
 * strategy, on the compare pool; with families, those worlds of every family in turn (world w
 * of a family is drawn from the same seed whatever the shard).
 */
export async function runCompareShard(input: CompareInput, shard: Shard, families: readonly Family[] = []): Promise<CompareShardDocument> {
  validateCompare(input);
  const lo = Math.floor((shard.index * input.worlds) / shard.count);
  const hi = Math.floor(((shard.index + 1) * input.worlds) / shard.count);
  const jobs: CompareJob[] = [];
  for (const strategy of input.strategies) for (let w = lo; w < hi; w++) jobs.push({ id: jobs.length, world: w, seed: worldSeed(input.seed, w), strategy });
  const runs: RunOutcome[] = [];
  const list: (Family | undefined)[] = families.length ? [...families] : [undefined];
  let before = 0;
  for (const family of list) {
    const init = { left: input.left, right: input.right, options: { ...input.options, record: false }, duration_s: input.duration_s, ...(family ? { family } : {}) };
    const offset = before;
    runs.push(...(await runJobs(init, jobs, input.jobs ?? 1, input.onProgress ? (done) => input.onProgress!(offset + done, jobs.length * list.length) : undefined)));
    before += jobs.length;
  }
  return {
    format: COMPARE_SHARD_FORMAT,
    compare_id: compareId(input, families),
    shard,
    worlds: input.worlds,
    seed: input.seed,
    arm_model: simOptions({ ...input.options, record: false }).arm_model,
    strategies: input.strategies,
    world_range: [lo, hi],
    runs,
    ...(families.length ? { families: families.map((f) => ({ name: f.spec.family, file: f.file })) } : {}),
    sample_rate_hz: input.left.wrench_filter.sample_rate_hz,
  };
}

/**
 * Join compare shards into the results the unsharded run gives: one per family (one without a
 * family), each aggregated in strategy, world order as runCompare aggregates.
 */
export function mergeCompareShards(docs: readonly { dir: string; doc: CompareShardDocument }[]): CompareResult[] {
  const first = docs[0]!.doc;
  checkShardSet(docs.map((d) => ({ dir: d.dir, id: d.doc.compare_id, shard: d.doc.shard })), 'compare');
  const families = first.families ?? null;
  const nf = families ? families.length : 1;
  const ns = first.strategies.length;
  const byFamily = Array.from({ length: nf }, () => first.strategies.map(() => new Array<RunOutcome | undefined>(first.worlds)));
  for (const { dir, doc } of docs) {
    const span = doc.world_range[1] - doc.world_range[0];
    if (doc.runs.length !== nf * ns * span) throw new InputError({ code: 'merge.bad_shard', message: `the shard holds ${doc.runs.length} runs, not ${nf * ns * span} (${nf} famil${nf === 1 ? 'y' : 'ies'} x ${ns} strategies x ${span} worlds)`, where: { file: dir }, hint: 'give the compare-shard.json folders as compare --shard wrote them' });
    // Family-major, then strategy-major over the shard's worlds.
    doc.runs.forEach((r, idx) => {
      byFamily[Math.floor(idx / (ns * span))]![Math.floor((idx % (ns * span)) / span)]![r.world] = r;
    });
  }
  const rate = first.sample_rate_hz ?? 1000;
  return byFamily.map((byStrategy, fi) => {
    const rows = first.strategies.map((s, si) => {
      const runs = byStrategy[si]!;
      if (runs.some((r) => r === undefined)) throw new InputError({ code: 'merge.incomplete', message: `the shards hold no run of world ${runs.findIndex((r) => r === undefined)} for ${strategyLabel(s, rate)}${families ? ` of family ${families[fi]!.name}` : ''}`, where: { file: docs[0]!.dir } });
      return aggregate(s, runs as RunOutcome[], first.seed, rate);
    });
    const runs = byStrategy.flat() as RunOutcome[];
    const paired = pairedComparisons(rows.map((r) => r.label), byStrategy as RunOutcome[][]);
    const firstRuns = byStrategy[0] as RunOutcome[];
    const family = families ? { name: families[fi]!.name, file: families[fi]!.file, redraws: firstRuns.reduce((a, r) => a + r.redraws, 0), worlds_redrawn: firstRuns.filter((r) => r.redraws > 0).length } : null;
    return { worlds: first.worlds, worlds_done: first.worlds, seed: first.seed, arm_model: first.arm_model, strategies: rows, runs, family, paired };
  });
}

/** The shards must be one run's: one id, one count, every index exactly once. */
export function checkShardSet(items: readonly { dir: string; id: string; shard: Shard | null }[], what: string): void {
  const problems: Problem[] = [];
  const first = items[0]!;
  for (const it of items) {
    if (it.id !== first.id) problems.push({ code: 'merge.different_runs', message: `${it.dir} is a shard of another ${what} (${it.id}) than ${first.dir} (${first.id})`, where: { file: it.dir }, hint: `merge only the shards of one ${what}: the same parameters, space, data, objective and shard count` });
    if (it.shard === null) problems.push({ code: 'merge.not_a_shard', message: `${it.dir} holds a whole ${what}, not a shard`, where: { file: it.dir }, hint: 'give the folders written with --shard i/n' });
  }
  if (problems.length) throw new InputError(problems);
  const n = first.shard!.count;
  const seen = new Map<number, string>();
  for (const it of items) {
    if (it.shard!.count !== n) problems.push({ code: 'merge.different_counts', message: `${it.dir} is shard ${it.shard!.index}/${it.shard!.count}, ${first.dir} is one of ${n}`, where: { file: it.dir } });
    else if (seen.has(it.shard!.index)) problems.push({ code: 'merge.duplicate_shard', message: `${it.dir} and ${seen.get(it.shard!.index)} are both shard ${it.shard!.index}/${n}`, where: { file: it.dir } });
    else seen.set(it.shard!.index, it.dir);
  }
  const missing = Array.from({ length: n }, (_, i) => i).filter((i) => !seen.has(i));
  if (problems.length === 0 && missing.length) problems.push({ code: 'merge.missing_shard', message: `shard${missing.length > 1 ? 's' : ''} ${missing.join(', ')} of ${n} missing`, where: { file: first.dir }, hint: 'give every shard folder of the run' });
  if (problems.length) throw new InputError(problems);
}
