/**
 * The fuzzer: seeded cases over every input antiphon reads (bags in every storage and layout,
 * metadata.yaml, sqlite3 rows, CSV, parameters, models, expectations), each run in-process in a
 * worker thread under a time bound (the worker is terminated on a hang) and a memory bound (heap
 * limits on the worker; the process's peak RSS checked after each case), plus a few child-process
 * cases for stdout (a full disk, a closed pipe). Failures are saved with what reproduces them.
 */
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, openSync, closeSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Worker } from 'node:worker_threads';
import { Rng } from '../util/rng.js';
import type { CaseResult, FuzzCase } from './case.js';
import { mutateBytes, mutateMcap, mutateText, sqliteMutation } from './mutate.js';
import { buildSeeds, demoBag, ROOT, type Seed } from './seeds.js';

export const TARGETS = ['mcap', 'mcap-zstd', 'sqlite', 'metadata', 'csv', 'params', 'model', 'expect', 'stdout'] as const;
export type Target = (typeof TARGETS)[number];
const WEIGHTS: Record<Target, number> = { mcap: 30, 'mcap-zstd': 5, sqlite: 18, metadata: 10, csv: 10, params: 10, model: 5, expect: 6, stdout: 0.6 };

export interface FuzzOptions {
  readonly cases: number;
  readonly seed: number;
  readonly targets?: readonly Target[];
  /** Time bound per case (ms). */
  readonly timeMs?: number;
  /** Memory bound: the process's peak RSS (MB) a case may raise it to. */
  readonly memMb?: number;
  /** V8 old-generation limit of the worker (MB). */
  readonly heapMb?: number;
  /** Where failing inputs are saved (default: none). */
  readonly saveDir?: string;
  readonly progress?: (done: number, total: number, failures: number) => void;
  /** Called after every case (the `--trace` option prints these). */
  readonly onCase?: (info: { id: number; target: string; seed: string; mutation: string; args: readonly string[]; outcome: string; code: number; ms: number }) => void;
  /** Called every `checkpointEvery` cases (default 500) with the report so far (`--checkpoint`). */
  readonly checkpoint?: (partial: FuzzReport) => void;
  readonly checkpointEvery?: number;
  /** Extra environment for the worker (the planted-defect test sets ANTIPHON_FUZZ_PLANT here). */
  readonly env?: Readonly<Record<string, string>>;
}

export interface Failure {
  readonly id: number;
  readonly target: string;
  readonly kind: 'crash' | 'hang' | 'memory';
  readonly seed: string;
  readonly mutation: string;
  readonly args: readonly string[];
  readonly detail: string;
  readonly saved?: string;
}

export interface TargetCounts {
  cases: number;
  crashes: number;
  hangs: number;
  skipped: number;
}

export interface FuzzReport {
  readonly cases: number;
  readonly crashes: number;
  readonly hangs: number;
  readonly by_target: Record<string, TargetCounts>;
  readonly seed: number;
  readonly memory_failures: number;
  readonly usage_errors: number;
  readonly elapsed_s: number;
  readonly cases_per_s: number;
  readonly peak_rss_mb: number;
  readonly peak_rss_case: { id: number; target: string; seed: string; mutation: string } | undefined;
  readonly slowest: { id: number; target: string; ms: number; seed: string; mutation: string; args: readonly string[] } | undefined;
  readonly failures: readonly Failure[];
}

/** A compact patch from a seed's bytes to a mutated file: common prefix and suffix kept. */
export interface Patch {
  readonly prefix: number;
  readonly suffix: number;
  readonly middle: string; // base64
}

export function makePatch(base: Uint8Array, mutated: Uint8Array): Patch {
  let p = 0;
  const n = Math.min(base.length, mutated.length);
  while (p < n && base[p] === mutated[p]) p++;
  let s = 0;
  while (s < n - p && base[base.length - 1 - s] === mutated[mutated.length - 1 - s]) s++;
  return { prefix: p, suffix: s, middle: Buffer.from(mutated.subarray(p, mutated.length - s)).toString('base64') };
}

export function applyPatch(base: Uint8Array, patch: Patch): Uint8Array {
  const mid = Buffer.from(patch.middle, 'base64');
  const out = new Uint8Array(patch.prefix + mid.length + patch.suffix);
  out.set(base.subarray(0, patch.prefix));
  out.set(mid, patch.prefix);
  out.set(base.subarray(base.length - patch.suffix), patch.prefix + mid.length);
  return out;
}

/** What a saved case (and a corpus entry) holds: enough to rebuild it from its seed. */
export interface SavedCase {
  readonly target: string;
  readonly seed: string;
  readonly mutation: string;
  readonly args: readonly string[];
  readonly sql?: string;
  readonly sqlFile?: string;
  readonly patch: Patch;
  readonly kind?: string;
  readonly detail?: string;
}

/** Rebuild a case's files from its seed and patch. */
export function rebuild(seed: Seed, saved: SavedCase, id = 0): FuzzCase {
  const files = [{ name: seed.name, bytes: applyPatch(seed.bytes, saved.patch) }];
  if (seed.asDir) for (const [name, bytes] of seed.siblings) files.push({ name, bytes });
  return { id, target: saved.target, seed: saved.seed, mutation: saved.mutation, files, args: saved.args, ...(saved.sql !== undefined ? { sql: saved.sql, sqlFile: saved.sqlFile! } : {}) };
}

function pick<T>(rng: Rng, xs: readonly T[]): T {
  return xs[rng.int(xs.length)]!;
}

const KIND_OF: Record<Exclude<Target, 'stdout'>, Seed['kind']> = {
  mcap: 'mcap', 'mcap-zstd': 'mcap-zstd', sqlite: 'sqlite', metadata: 'metadata', csv: 'csv', params: 'params', model: 'model', expect: 'expect',
};

const FILE_ENTRIES = ['""', '"."', '".."', '/dev/zero', '../../../../etc/hostname', 'missing.mcap', 'metadata.yaml'];

/** Make case `id` of `target` from the seeds (deterministic in `rng`). */
function makeCase(rng: Rng, id: number, target: Exclude<Target, 'stdout'>, seeds: readonly Seed[]): { c: FuzzCase; patch: Patch } | undefined {
  const pool = seeds.filter((s) => s.kind === KIND_OF[target]);
  if (pool.length === 0) return undefined;
  const seed = pick(rng, pool);
  let bytes = seed.bytes;
  let mutation: string;
  let sql: string | undefined;
  switch (target) {
    case 'mcap': {
      const m = mutateMcap(rng, seed.bytes);
      bytes = m.bytes;
      mutation = m.name;
      break;
    }
    case 'mcap-zstd':
    case 'params':
    case 'model':
    case 'expect':
    case 'csv': {
      const m = target === 'mcap-zstd' ? mutateBytes(rng, seed.bytes) : mutateText(rng, new TextDecoder().decode(seed.bytes), target === 'csv' ? 'csv' : 'yaml');
      bytes = m.bytes;
      mutation = m.name;
      break;
    }
    case 'sqlite': {
      if (rng.uniform() < 0.65) {
        const m = sqliteMutation(rng);
        sql = m.sql;
        mutation = m.name;
      } else {
        const m = mutateBytes(rng, seed.bytes);
        bytes = m.bytes;
        mutation = m.name;
      }
      break;
    }
    case 'metadata': {
      let text = new TextDecoder().decode(seed.bytes);
      if (rng.uniform() < 0.3) {
        // relative_file_paths entries: empty, '.', a folder, a device, outside, missing, twice.
        const e = pick(rng, [...FILE_ENTRIES, 'twice']);
        text = text.replace(/(\n(\s*)- )([^\n]+)/, (_m, head: string, ind: string, name: string) => (e === 'twice' ? `${head}${name}\n${ind}- ./${name}` : `${head}${e}`));
        mutation = `relative_file_paths:${e}`;
        bytes = new TextEncoder().encode(text);
      } else {
        const m = mutateText(rng, text, 'yaml');
        bytes = m.bytes;
        mutation = m.name;
      }
      break;
    }
  }
  const X = seed.asDir ? '{case}' : '{file}';
  let args: string[];
  switch (target) {
    case 'csv':
      args = pick(rng, [['classify', '--csv', '{file}', '--summary'], ['classify', '--csv', '{file}', '--json', '--params', '{root}/config/demo_cell.yaml']]);
      break;
    case 'params':
      args = pick(rng, [['check-config', '{file}'], ['check-config', '{file}', '--json']]);
      break;
    case 'model':
      args = ['analyze', '--model', '{file}', '--json'];
      break;
    case 'expect':
      args = ['replay', '{demo}', '--params', '{root}/config/demo_cell.yaml', '--expect', '{file}', '--json'];
      break;
    default: {
      const options: string[][] = [['bag', 'info', X], ['bag', 'info', '--json', X], ['bag', 'dump', '--limit', '60', X]];
      if (seed.id.startsWith('gen:cell')) options.push(['replay', X, '--arm', 'left', '--json']);
      args = pick(rng, options);
    }
  }
  const files = [{ name: seed.name, bytes }];
  if (seed.asDir) for (const [name, b] of seed.siblings) files.push({ name, bytes: b });
  const c: FuzzCase = { id, target, seed: seed.id, mutation: mutation!, files, args, ...(sql !== undefined ? { sql, sqlFile: seed.name } : {}) };
  return { c, patch: makePatch(seed.bytes, bytes) };
}

/** A stdout case as a child process: `bag dump` into a full disk, or into a pipe closed after the first bytes. */
async function stdoutCase(rng: Rng, bagDir: string, timeMs: number): Promise<{ result: CaseResult; mutation: string; args: string[] }> {
  const cli = join(ROOT, 'dist/src/cli/main.js');
  const args = pick(rng, [['bag', 'dump', bagDir], ['check-config', '--list', '--json'], ['bag', 'info', '--json', bagDir]]);
  const t0 = performance.now();
  const env = { ...process.env, ANTIPHON_LOG_LEVEL: 'silent' };
  const judge = (status: number | null, signal: string | null, stderr: string, timedOut: boolean): CaseResult => {
    const crash = status === 70 || /internal error|\n\s+at \S+ \(/.test(stderr) || (signal !== null && !timedOut);
    return { outcome: timedOut ? 'crash' : crash ? 'crash' : 'ok', code: status ?? -1, detail: timedOut ? 'timeout' : crash ? `signal ${signal}; ${stderr.slice(0, 2000)}` : '', ms: performance.now() - t0 };
  };
  if (rng.uniform() < 0.5 && existsSync('/dev/full')) {
    const fd = openSync('/dev/full', 'w');
    try {
      const r = spawnSync(process.execPath, [cli, ...args], { stdio: ['ignore', fd, 'pipe'], env, timeout: timeMs, encoding: 'utf8' });
      const timedOut = (r.error as NodeJS.ErrnoException | undefined)?.code === 'ETIMEDOUT';
      return { result: judge(r.status, r.signal, r.stderr ?? '', timedOut), mutation: 'stdout:/dev/full', args };
    } finally {
      closeSync(fd);
    }
  }
  return await new Promise((resolve) => {
    const child = spawn(process.execPath, [cli, ...args], { stdio: ['ignore', 'pipe', 'pipe'], env });
    let stderr = '';
    let timedOut = false;
    const timer = setTimeout(() => {
      timedOut = true;
      child.kill('SIGKILL');
    }, timeMs);
    child.stderr.on('data', (d: Buffer) => {
      if (stderr.length < 4096) stderr += d.toString();
    });
    child.stdout.once('data', () => child.stdout.destroy());
    child.on('close', (status, signal) => {
      clearTimeout(timer);
      resolve({ result: judge(status, signal, stderr, timedOut), mutation: 'stdout:closed-pipe', args });
    });
  });
}

class Pool {
  #worker: Worker | undefined;
  #ready: Promise<void> | undefined;
  constructor(
    readonly workDir: string,
    readonly vars: Record<string, string>,
    readonly heapMb: number,
    readonly env: Readonly<Record<string, string>>,
  ) {}

  #start(): Promise<void> {
    const w = new Worker(new URL('./worker.js', import.meta.url), {
      workerData: { workDir: this.workDir, vars: this.vars },
      resourceLimits: { maxOldGenerationSizeMb: this.heapMb, maxYoungGenerationSizeMb: 64, stackSizeMb: 8 },
      env: { ...process.env, ANTIPHON_LOG_LEVEL: 'silent', ...this.env },
      stdout: true,
      stderr: true,
    });
    // Output the commands write outside our capture (e.g. a library's console) is dropped,
    // unless ANTIPHON_FUZZ_DEBUG is set.
    w.stdout.resume();
    if (process.env['ANTIPHON_FUZZ_DEBUG']) w.stderr.pipe(process.stderr);
    else w.stderr.resume();
    this.#worker = w;
    return new Promise((resolve, reject) => {
      const onMsg = (m: { type: string }) => {
        if (m.type === 'ready') {
          w.off('message', onMsg);
          resolve();
        }
      };
      w.on('message', onMsg);
      w.once('error', reject);
    });
  }

  async run(c: FuzzCase, timeMs: number): Promise<{ result: CaseResult; maxRssKb: number; kind?: 'hang' | 'oom' }> {
    if (!this.#worker) {
      this.#ready = this.#start();
    }
    await this.#ready;
    const w = this.#worker!;
    const t0 = performance.now();
    return await new Promise((resolve) => {
      let settled = false;
      const finish = (r: { result: CaseResult; maxRssKb: number; kind?: 'hang' | 'oom' }, dead: boolean) => {
        if (settled) return;
        settled = true;
        clearTimeout(timer);
        w.off('message', onMsg);
        w.off('error', onErr);
        w.off('exit', onExit);
        if (dead) {
          this.#worker = undefined;
          void w.terminate();
        }
        resolve(r);
      };
      const onMsg = (m: { type: string; id?: number; result?: CaseResult; maxRssKb?: number; detail?: string }) => {
        if (m.type === 'done' && m.id === c.id) finish({ result: m.result!, maxRssKb: m.maxRssKb! }, false);
        else if (m.type === 'fatal') finish({ result: { outcome: 'crash', code: 70, detail: m.detail ?? '', ms: performance.now() - t0 }, maxRssKb: process.resourceUsage().maxRSS }, true);
      };
      const onErr = (err: Error & { code?: string }) => {
        const oom = err.code === 'ERR_WORKER_OUT_OF_MEMORY';
        finish(
          { result: { outcome: 'crash', code: 134, detail: oom ? `V8 out of memory (worker heap limit ${this.heapMb} MB)` : `worker died: ${err.stack ?? err.message}`, ms: performance.now() - t0 }, maxRssKb: process.resourceUsage().maxRSS, kind: 'oom' },
          true,
        );
      };
      const onExit = (code: number) => finish({ result: { outcome: 'crash', code, detail: `worker exited with ${code}`, ms: performance.now() - t0 }, maxRssKb: process.resourceUsage().maxRSS, kind: 'oom' }, true);
      const timer = setTimeout(
        () => finish({ result: { outcome: 'crash', code: -1, detail: `no result after ${timeMs} ms`, ms: timeMs }, maxRssKb: process.resourceUsage().maxRSS, kind: 'hang' }, true),
        timeMs,
      );
      w.on('message', onMsg);
      w.on('error', onErr);
      w.on('exit', onExit);
      w.postMessage(c);
    });
  }

  async close(): Promise<void> {
    if (this.#worker) await this.#worker.terminate();
    this.#worker = undefined;
  }
}

function pickTarget(rng: Rng, targets: readonly Target[]): Target {
  const total = targets.reduce((a, t) => a + WEIGHTS[t], 0);
  let x = rng.uniform() * total;
  for (const t of targets) {
    x -= WEIGHTS[t];
    if (x < 0) return t;
  }
  return targets[targets.length - 1]!;
}

export async function runFuzz(opts: FuzzOptions): Promise<FuzzReport> {
  const timeMs = opts.timeMs ?? 10_000;
  const memMb = opts.memMb ?? 1536;
  const heapMb = opts.heapMb ?? 768;
  const work = mkdtempSync(join(tmpdir(), 'antiphon-fuzz-'));
  const started = performance.now();
  try {
    const seeds = await buildSeeds(join(work, 'seeds'));
    const targets = (opts.targets ?? TARGETS).filter((t) => t === 'stdout' ? existsSync(join(ROOT, 'dist/src/cli/main.js')) : seeds.some((s) => s.kind === KIND_OF[t]));
    const needDemo = targets.includes('expect');
    const vars: Record<string, string> = { root: ROOT, demo: needDemo ? await demoBag(join(work, 'demo')) : '' };
    const pool = new Pool(join(work, 'cases'), vars, heapMb, opts.env ?? {});
    const rng = new Rng(opts.seed);
    const by: Record<string, TargetCounts> = {};
    for (const t of targets) by[t] = { cases: 0, crashes: 0, hangs: 0, skipped: 0 };
    const failures: Failure[] = [];
    let crashes = 0;
    let hangs = 0;
    let memoryFailures = 0;
    let usage = 0;
    let peakKb = process.resourceUsage().maxRSS;
    let peakCase: FuzzReport['peak_rss_case'];
    let slowest: FuzzReport['slowest'];
    try {
      for (let id = 0; id < opts.cases; id++) {
        const caseRng = rng.fork();
        const target = pickTarget(caseRng, targets);
        let result: CaseResult;
        let kind: 'hang' | 'oom' | undefined;
        let maxRssKb: number;
        let c: FuzzCase | undefined;
        let patch: Patch | undefined;
        let mutation: string;
        let seedId: string;
        let args: readonly string[];
        if (target === 'stdout') {
          const s = await stdoutCase(caseRng, join(work, 'seeds', 'cell-zstd'), timeMs);
          result = s.result;
          if (s.result.detail === 'timeout') kind = 'hang';
          maxRssKb = process.resourceUsage().maxRSS;
          mutation = s.mutation;
          seedId = 'gen:cell-zstd';
          args = s.args;
        } else {
          const made = makeCase(caseRng, id, target, seeds)!;
          c = made.c;
          patch = made.patch;
          const r = await pool.run(c, timeMs);
          result = r.result;
          kind = r.kind;
          maxRssKb = r.maxRssKb;
          mutation = c.mutation;
          seedId = c.seed;
          args = c.args;
        }
        opts.onCase?.({ id, target, seed: seedId, mutation, args, outcome: kind ?? result.outcome, code: result.code, ms: Math.round(result.ms) });
        const counts = by[target]!;
        counts.cases++;
        if (result.outcome === 'skipped') counts.skipped++;
        if (result.outcome === 'usage') usage++;
        let failKind: Failure['kind'] | undefined;
        if (kind === 'hang') failKind = 'hang';
        else if (result.outcome === 'crash') failKind = 'crash';
        if (maxRssKb > peakKb) {
          peakKb = maxRssKb;
          peakCase = { id, target, seed: seedId, mutation };
          if (peakKb > memMb * 1024 && failKind === undefined) failKind = 'memory';
        }
        if (!slowest || result.ms > slowest.ms) slowest = { id, target, ms: Math.round(result.ms), seed: seedId, mutation, args };
        if (failKind) {
          if (failKind === 'hang') {
            hangs++;
            counts.hangs++;
          } else {
            crashes++;
            counts.crashes++;
            if (failKind === 'memory') memoryFailures++;
          }
          let saved: string | undefined;
          if (opts.saveDir) {
            saved = join(opts.saveDir, `${target}-${opts.seed}-${id}`);
            mkdirSync(saved, { recursive: true });
            const rec: SavedCase = {
              target, seed: seedId, mutation, args, patch: patch ?? { prefix: 0, suffix: 0, middle: '' },
              ...(c?.sql !== undefined ? { sql: c.sql, sqlFile: c.sqlFile! } : {}), kind: failKind, detail: result.detail,
            };
            writeFileSync(join(saved, 'case.json'), JSON.stringify(rec, null, 2) + '\n');
            for (const f of c?.files ?? []) writeFileSync(join(saved, f.name), f.bytes);
          }
          failures.push({ id, target, kind: failKind, seed: seedId, mutation, args, detail: result.detail.slice(0, 1500), ...(saved ? { saved } : {}) });
        }
        opts.progress?.(id + 1, opts.cases, failures.length);
        if (opts.checkpoint && (id + 1) % (opts.checkpointEvery ?? 500) === 0) opts.checkpoint(report(id + 1));
      }
    } finally {
      await pool.close();
    }
    return report(opts.cases);
    function report(done: number): FuzzReport {
    const elapsed = (performance.now() - started) / 1000;
    return {
      cases: done,
      crashes,
      hangs,
      by_target: by,
      seed: opts.seed,
      memory_failures: memoryFailures,
      usage_errors: usage,
      elapsed_s: Math.round(elapsed * 10) / 10,
      cases_per_s: Math.round((done / elapsed) * 10) / 10,
      peak_rss_mb: Math.round(peakKb / 1024),
      peak_rss_case: peakCase,
      slowest,
      failures,
    };
    }
  } finally {
    rmSync(work, { recursive: true, force: true });
  }
}
