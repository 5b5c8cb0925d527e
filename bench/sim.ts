/**
 * Simulated-cell benchmarks: the real-time factor of one episode (MuJoCo at 1 kHz with both
 * arm pipelines, goal at least 50x), and the wall time of `compare --worlds N --jobs 2`.
 *
 *   node dist/bench/run.js sim                               (N = 1000)
 *   ANTIPHON_BENCH_WORLDS=50 node dist/bench/run.js sim      (a quick run; the JSON names N)
 */
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { loadCell } from '../src/params/config.js';
import { runEpisodeWith } from '../src/sim/episode.js';
import { loadMujoco } from '../src/sim/mujoco.js';

export const RTF_GOAL = 50;

export async function benchSim(worlds = Number(process.env['ANTIPHON_BENCH_WORLDS'] ?? 1000), jobs = 2): Promise<Record<string, unknown>> {
  const params = fileURLToPath(new URL('../../config/demo_cell.yaml', import.meta.url));
  const cell = loadCell(params);
  const mj = await loadMujoco();
  // Seed 7 draws both zones occupied: a full transfer around the clamp post and the tray drop.
  const episode = (record: boolean) => {
    const t0 = performance.now();
    const r = runEpisodeWith(mj, { left: cell.left.config, right: cell.right.config, strategy: { name: 'alternating', k: 500 }, seed: 7, options: { record } });
    const wall = (performance.now() - t0) / 1000;
    return { sim: r.summary.duration_s, wall, samples: r.summary.samples };
  };
  episode(false); // warm-up (JIT)
  const runs = [episode(false), episode(false), episode(false)];
  const best = runs.reduce((a, b) => (b.sim / b.wall > a.sim / a.wall ? b : a));
  const rec = episode(true);
  const cli = fileURLToPath(new URL('../src/cli/main.js', import.meta.url));
  const t0 = performance.now();
  const p = spawnSync(process.execPath, [cli, 'compare', '--worlds', String(worlds), '--jobs', String(jobs), '--seed', '1', '--params', params, '--json'], { encoding: 'utf8', maxBuffer: 64 << 20 });
  const compareWall = (performance.now() - t0) / 1000;
  if (p.status !== 0) throw new Error(`compare failed (${p.status}): ${p.stderr}`);
  const out = JSON.parse(p.stdout) as { strategies: unknown[] };
  const episodes = worlds * out.strategies.length;
  return {
    episode_sim_s: best.sim,
    episode_wall_s: best.wall,
    episode_samples: best.samples,
    rtf: best.sim / best.wall,
    rtf_median_of_3: [...runs.map((r) => r.sim / r.wall)].sort((a, b) => a - b)[1]!,
    rtf_recording: rec.sim / rec.wall,
    rtf_goal: RTF_GOAL,
    meets_rtf_goal: best.sim / best.wall >= RTF_GOAL ? 1 : 0,
    compare_worlds: worlds,
    compare_jobs: jobs,
    compare_strategies: out.strategies.length,
    compare_episodes: episodes,
    compare_wall_s: compareWall,
    compare_episodes_per_s: episodes / compareWall,
    // The table itself, so the figures quoted for the strategy orderings come with the run.
    compare_strategies_table: out.strategies,
  };
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const n = process.argv[2] === undefined ? undefined : Number(process.argv[2]);
  process.stdout.write(JSON.stringify(await benchSim(n), null, 2) + '\n');
}
