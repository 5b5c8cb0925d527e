/**
 * Sweep throughput: candidate-seconds of bag per wall-clock second for a 20-candidate sweep
 * (examples/sweep-space.yaml: 5 impact thresholds x 4 role periods) over a generated 60 s
 * dual-arm bag of our scenario (demo bag, wrenches 1 kHz, joint states 500 Hz, tool poses
 * 100 Hz, area sensor 10 Hz per arm), with --jobs 1 and --jobs 2; the wall time includes
 * decoding the bag (once per worker). Work is shared across candidates where no result changes
 * (src/sweep/share.ts); the same sweep with every candidate run in full (`share: false`) is
 * measured beside it, and the two sweep.json must be equal. Goal: at least 1000
 * candidate-seconds per second per core. The machine's load average is recorded beside the
 * figures (other processes share the cores).
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadCell } from '../src/params/config.js';
import { loadParamsFile } from '../src/params/load.js';
import { writeDemoBag } from '../src/sim/demo-bag.js';
import { decodeBag, inspectBags } from '../src/sweep/decoded.js';
import { SharedEvaluator } from '../src/sweep/share.js';
import { candidateConfigs } from '../src/sweep/space.js';
import { NO_LABELS } from '../src/sweep/labels.js';
import { objectiveByName } from '../src/sweep/objective.js';
import { runSweep } from '../src/sweep/run.js';
import { loadSpace } from '../src/sweep/space.js';
import { round } from './harness.js';

/** `quick` (bench/run.ts --quick): a 20 s bag; a number: the bag's length in seconds. */
export async function benchSweep(quick: boolean | number = false): Promise<Record<string, unknown>> {
  const durationS = typeof quick === 'number' ? quick : quick ? 20 : 60;
  const dir = mkdtempSync(join(tmpdir(), 'antiphon-bench-sweep-'));
  try {
    const cell = loadCell('config/demo_cell.yaml');
    const bagDir = join(dir, 'bag');
    await writeDemoBag(bagDir, { left: cell.left.config, right: cell.right.config, occupied: [true, true], seed: 1, duration_s: durationS, poseEvery: 10 });
    const space = loadSpace('examples/sweep-space.yaml');
    const base = loadParamsFile('config/demo_cell.yaml');
    const bags = await inspectBags([bagDir]);
    const input = { base, baseText: readFileSync('config/demo_cell.yaml', 'utf8'), space, data: { kind: 'bags' as const, bags, labels: NO_LABELS, perBag: [[]] }, objective: objectiveByName('safe'), shard: null };
    const t0 = process.hrtime.bigint();
    const decoded = await decodeBag(bagDir, cell.left.config.task.zones.map((z) => z.name));
    const decodeS = Number(process.hrtime.bigint() - t0) / 1e9;
    // What was shared: candidate-bags run in full and reused, filter passes.
    const ev = new SharedEvaluator([decoded], [[]], NO_LABELS.tolerance_s);
    for (const c of candidateConfigs(base, space, Array.from({ length: space.count }, (_, i) => i))) ev.metrics(c.left, c.right);
    const load = [loadavg()];
    const out: Record<string, unknown> = {};
    let first = '';
    for (const [name, jobs, share] of [['jobs_1', 1, true], ['jobs_2', 2, true], ['unshared_jobs_1', 1, false]] as const) {
      const runs: number[] = [];
      for (let k = 0; k < 2; k++) {
        const a = process.hrtime.bigint();
        const r = await runSweep({ ...input, jobs, share });
        runs.push(Number(process.hrtime.bigint() - a) / 1e9);
        const text = JSON.stringify(r.document);
        if (!first) first = text;
        else if (text !== first) throw new Error(`sweep results differ between runs (${name})`);
        load.push(loadavg());
      }
      const best = Math.min(...runs);
      const cs = (space.count * durationS) / best;
      out[name] = { runs_s: runs.map(round), best_s: round(best), candidate_seconds_per_s: Math.round(cs), per_core: Math.round(cs / jobs) };
    }
    const j1 = out['jobs_1'] as { best_s: number; candidate_seconds_per_s: number; per_core: number };
    const j2 = out['jobs_2'] as { best_s: number; candidate_seconds_per_s: number };
    const u1 = out['unshared_jobs_1'] as { best_s: number };
    return {
      bag: { duration_s: durationS, composition: 'per arm: wrench 1 kHz, joint_states 500 Hz, tool_pose 100 Hz, zone_view 10 Hz; zstd chunks' },
      candidates: space.count,
      decode_once_s: round(decodeS),
      shared: { ...ev.stats, note: 'candidate-bags run in full / reusing counts; filter passes for impact-flag traces / impact-band maxima' },
      candidate_seconds_per_s: j1.candidate_seconds_per_s,
      ...out,
      speedup_shared_over_unshared: round(u1.best_s / j1.best_s),
      speedup_jobs_2: round(j1.best_s / j2.best_s),
      goal_per_core: 1000,
      meets_goal: j1.per_core >= 1000,
      cores: cpus().length,
      load_average_1_5_15: load.map((l) => l.map((x) => round(x))),
      note: 'shared machine: the load average (1, 5, 15 min) before and after each run is recorded; other processes on the cores move the figures',
    };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
