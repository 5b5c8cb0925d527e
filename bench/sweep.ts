/**
 * Sweep throughput: candidate-seconds of bag per wall-clock second.
 *
 * Main case: a 20-candidate sweep (examples/sweep-space.yaml: 5 impact thresholds x 4 role
 * periods) over a generated 60 s dual-arm bag of our scenario (demo bag, wrenches 1 kHz, joint
 * states 500 Hz, tool poses 100 Hz, area sensor 10 Hz per arm), with --jobs 1 and --jobs 2;
 * the wall time includes decoding the bag (once, by the main thread; the workers start while it
 * decodes and get the columns shared). Work is shared across candidates where no result changes
 * (src/sweep/share.ts); the same sweep with every candidate run in full (`share: false`) is
 * measured beside it, on jobs 1 and 2 (enough work to show the pool's speed-up), and all the
 * sweep.json must be equal. Larger case: 40 candidates (5 thresholds x 8 role periods) over two
 * 60 s bags, shared, jobs 1 and 2. jobs 2 runs as the CLI runs it: the pool, or this thread when
 * bagPlan finds the work too small (`threads` says which); `jobs_2_pool` forces the pool on the
 * main case to show what it costs there. The figures above are best of two in one process (this
 * thread's JIT warm after the first run, a worker's always cold); `cli_cold_large` runs the large
 * case as a user does, a fresh `antiphon sweep` process each time. Goal: at least 1000 candidate-seconds per second per
 * core. The machine's load average is recorded beside the figures (other processes share the
 * cores).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { loadCell } from '../src/params/config.js';
import { loadParamsFile } from '../src/params/load.js';
import { writeDemoBag } from '../src/sim/demo-bag.js';
import { decodeBag, inspectBags } from '../src/sweep/decoded.js';
import { SharedEvaluator } from '../src/sweep/share.js';
import { candidateConfigs } from '../src/sweep/space.js';
import { NO_LABELS } from '../src/sweep/labels.js';
import { objectiveByName } from '../src/sweep/objective.js';
import { runSweep, type SweepInput } from '../src/sweep/run.js';
import { loadSpace } from '../src/sweep/space.js';
import { round } from './harness.js';

type Case = readonly [name: string, jobs: number, share: boolean, force: boolean];
type Figures = { runs_s: number[]; best_s: number; candidate_seconds_per_s: number; per_core: number; threads: { threads: number; workers: number; reason: string } };

/** `quick` (bench/run.ts --quick): a 20 s bag; a number: the bag's length in seconds. */
export async function benchSweep(quick: boolean | number = false): Promise<Record<string, unknown>> {
  const durationS = typeof quick === 'number' ? quick : quick ? 20 : 60;
  const dir = mkdtempSync(join(tmpdir(), 'antiphon-bench-sweep-'));
  try {
    const cell = loadCell('config/demo_cell.yaml');
    const bagDirs = [join(dir, 'bag'), join(dir, 'bag-2')];
    for (const [k, b] of bagDirs.entries()) await writeDemoBag(b, { left: cell.left.config, right: cell.right.config, occupied: [true, true], seed: 1 + k, duration_s: durationS, poseEvery: 10 });
    const space = loadSpace('examples/sweep-space.yaml');
    const spaceLarge = join(dir, 'space-40.yaml');
    writeFileSync(spaceLarge, 'version: 1\nparameters:\n  wrench_filter.impact.force_n:\n    grid: [4.0, 8.0, 15.0, 25.0, 40.0]\n  roles.period_s:\n    range: { from: 0.25, to: 2.0, step: 0.25 }\n');
    const large = loadSpace(spaceLarge);
    const base = loadParamsFile('config/demo_cell.yaml');
    const bags = await inspectBags([bagDirs[0]!]);
    const bags2 = await inspectBags(bagDirs);
    const common = { base, baseText: readFileSync('config/demo_cell.yaml', 'utf8'), objective: objectiveByName('safe'), shard: null };
    const input: Omit<SweepInput, 'jobs'> = { ...common, space, data: { kind: 'bags' as const, bags, labels: NO_LABELS, perBag: [[]] } };
    const inputLarge: Omit<SweepInput, 'jobs'> = { ...common, space: large, data: { kind: 'bags' as const, bags: bags2, labels: NO_LABELS, perBag: [[], []] } };
    const t0 = process.hrtime.bigint();
    const decoded = await decodeBag(bagDirs[0]!, cell.left.config.task.zones.map((z) => z.name));
    const decodeS = Number(process.hrtime.bigint() - t0) / 1e9;
    // What was shared: candidate-bags run in full and reused, filter passes.
    const ev = new SharedEvaluator([decoded], [[]], NO_LABELS.tolerance_s);
    for (const c of candidateConfigs(base, space, Array.from({ length: space.count }, (_, i) => i))) ev.metrics(c.left, c.right);
    const load = [loadavg()];
    const out: Record<string, Figures> = {};
    const measure = async (cases: readonly Case[], what: Omit<SweepInput, 'jobs'>, candidateSeconds: number): Promise<void> => {
      let first = '';
      for (const [name, jobs, share, force] of cases) {
        const runs: number[] = [];
        let threads: Figures['threads'] = { threads: 1, workers: 0, reason: '' };
        for (let k = 0; k < 2; k++) {
          const a = process.hrtime.bigint();
          const r = await runSweep({ ...what, jobs, share, forcePool: force });
          runs.push(Number(process.hrtime.bigint() - a) / 1e9);
          threads = r.threads;
          const text = JSON.stringify(r.document);
          if (!first) first = text;
          else if (text !== first) throw new Error(`sweep results differ between runs (${name})`);
          load.push(loadavg());
        }
        const best = Math.min(...runs);
        const cs = candidateSeconds / best;
        out[name] = { runs_s: runs.map(round), best_s: round(best), candidate_seconds_per_s: Math.round(cs), per_core: Math.round(cs / threads.threads), threads };
      }
    };
    // Interleaved so that a change of the machine's load falls on both sides of each comparison.
    await measure([['jobs_1', 1, true, false], ['jobs_2', 2, true, false], ['unshared_jobs_1', 1, false, false], ['unshared_jobs_2', 2, false, false], ['jobs_2_pool', 2, true, true]], input, space.count * durationS);
    await measure([['large_jobs_1', 1, true, false], ['large_jobs_2', 2, true, false]], inputLarge, large.count * 2 * durationS);
    // The large case as a user runs it: a fresh `antiphon sweep` process each time (cold JIT in
    // every thread, this one too), jobs 1 and 2 alternated; wall_s as the CLI reports it.
    const cli = fileURLToPath(new URL('../src/cli/main.js', import.meta.url));
    const cold: Record<string, number[]> = { jobs_1: [], jobs_2: [] };
    let coldThreads: unknown = null;
    if (existsSync(cli)) {
      for (let k = 0; k < 2; k++) {
        for (const jobs of [1, 2]) {
          const r = spawnSync(process.execPath, [cli, 'sweep', '--params', 'config/demo_cell.yaml', '--space', spaceLarge, '--bags', ...bagDirs, '--jobs', String(jobs), '--json'], { encoding: 'utf8' });
          if (r.status !== 0) throw new Error(`antiphon sweep --jobs ${jobs} failed: ${r.stderr}`);
          const j = JSON.parse(r.stdout) as { wall_s: number; threads: unknown };
          cold[`jobs_${jobs}`]!.push(j.wall_s);
          if (jobs === 2) coldThreads = j.threads;
          load.push(loadavg());
        }
      }
    }
    const coldBest = (k: string) => (cold[k]!.length ? Math.min(...cold[k]!) : null);
    const cliCold = { runs_s: { jobs_1: cold['jobs_1']!.map(round), jobs_2: cold['jobs_2']!.map(round) }, best_s: { jobs_1: round(coldBest('jobs_1') ?? NaN), jobs_2: round(coldBest('jobs_2') ?? NaN) }, threads_jobs_2: coldThreads, note: 'the large case, a fresh antiphon sweep process per run; wall_s of its --json (decode and candidates, not the process start)' };
    const s = (a: string, b: string) => round(out[a]!.best_s / out[b]!.best_s);
    return {
      bag: { duration_s: durationS, composition: 'per arm: wrench 1 kHz, joint_states 500 Hz, tool_pose 100 Hz, zone_view 10 Hz; zstd chunks' },
      candidates: space.count,
      large_case: { candidates: large.count, bags: 2, note: '5 impact thresholds x 8 role periods over two bags of the same length (seeds 1 and 2), shared' },
      decode_once_s: round(decodeS),
      shared: { ...ev.stats, note: 'candidate-bags run in full / reusing counts; filter passes for impact-flag traces / impact-band maxima' },
      candidate_seconds_per_s: out['jobs_1']!.candidate_seconds_per_s,
      ...out,
      speedup_shared_over_unshared: s('unshared_jobs_1', 'jobs_1'),
      speedup_jobs_2: s('jobs_1', 'jobs_2'),
      speedup_jobs_2_pool: s('jobs_1', 'jobs_2_pool'),
      speedup_jobs_2_unshared: s('unshared_jobs_1', 'unshared_jobs_2'),
      speedup_jobs_2_large: s('large_jobs_1', 'large_jobs_2'),
      cli_cold_large: cliCold,
      speedup_jobs_2_cli_cold_large: coldBest('jobs_1') !== null && coldBest('jobs_2') !== null ? round(coldBest('jobs_1')! / coldBest('jobs_2')!) : null,
      goal_per_core: 1000,
      meets_goal: out['jobs_1']!.per_core >= 1000,
      cores: cpus().length,
      load_average_1_5_15: load.map((l) => l.map((x) => round(x))),
      note: 'shared machine: the load average (1, 5, 15 min) before and after each run is recorded; other processes on the cores move the figures. per_core: per thread running candidates (threads.threads)',
    };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
