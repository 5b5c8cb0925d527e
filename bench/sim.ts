/**
 * Simulated-cell benchmarks: the real-time factor of one episode (MuJoCo at 1 kHz with both
 * arm pipelines, goal at least 50x), and the wall time of `compare --worlds N --jobs 2`.
 *
 *   node dist/bench/run.js sim                               (N = 1000)
 *   ANTIPHON_BENCH_WORLDS=50 node dist/bench/run.js sim      (a quick run; the JSON names N)
 */
import { spawnSync } from 'node:child_process';
import { loadavg } from 'node:os';
import { fileURLToPath } from 'node:url';
import { loadCell } from '../src/params/config.js';
import { runCompare, runJob, type CompareJob } from '../src/sim/compare.js';
import { runEpisodeWith } from '../src/sim/episode.js';
import { drawFamilyWorld, loadFamily } from '../src/sim/family.js';
import { loadMujoco } from '../src/sim/mujoco.js';
import { worldSeed } from '../src/sim/world.js';

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

/**
 * What a scenario family costs. (1) One thread, the same worlds: the demo family draws exactly
 * the worlds of a run without a family, so an episode with it against one without measures the
 * family path alone (the draw, its checks, the dynamic-world hooks); runs interleaved, the order
 * alternating. (2) `compare` wall time on `jobs` worker threads, scaled to 1000 episodes, without
 * a family and with each shipped family (their worlds differ: more zones, longer transfers).
 *
 *   node dist/bench/sim.js families [worlds]      (default 8 worlds)
 */
export async function benchFamilies(worlds = Number(process.env['ANTIPHON_BENCH_WORLDS'] ?? 8), jobs = 2): Promise<Record<string, unknown>> {
  const params = fileURLToPath(new URL('../../config/demo_cell.yaml', import.meta.url));
  const dir = fileURLToPath(new URL('../../examples/families/', import.meta.url));
  const cell = loadCell(params);
  const mj = await loadMujoco();
  const load0 = loadavg();
  const demo = loadFamily(`${dir}demo_cell.yaml`, cell.left.config);
  const plainInit = { left: cell.left.config, right: cell.right.config, options: { record: false }, duration_s: undefined };
  const famInit = { ...plainInit, family: demo };
  const strategy = { name: 'alternating' as const, k: 500 };
  // A second run without a family (A/A) gives the noise of the shared machine beside the A/B ratio.
  const wall = { plain: 0, plain2: 0, family: 0 };
  let identical = true;
  runJob(mj, plainInit, { id: 0, world: 0, seed: worldSeed(1, 0), strategy }); // warm-up
  for (let w = 0; w < worlds; w++) {
    const job: CompareJob = { id: w, world: w, seed: worldSeed(1, w), strategy };
    const orders = [['plain', 'plain2', 'family'], ['plain2', 'family', 'plain'], ['family', 'plain', 'plain2']] as const;
    const order = orders[w % 3]!;
    const res: Record<string, string> = {};
    for (const k of order) {
      const t0 = performance.now();
      const r = runJob(mj, k === 'family' ? famInit : plainInit, job);
      wall[k] += (performance.now() - t0) / 1000;
      res[k] = JSON.stringify({ ...r.summary, family: null });
    }
    identical &&= res['plain'] === res['family'] && res['plain'] === res['plain2'];
  }
  const perEpisode = { plain_s: wall.plain / worlds, plain_again_s: wall.plain2 / worlds, demo_family_s: wall.family / worlds };
  // The family path's own cost per episode: drawing and checking the world (50 draws per family).
  const drawMs: Record<string, number> = {};
  for (const name of ['demo_cell', 'cluttered', 'changing', 'poor_sensors']) {
    const fam = loadFamily(`${dir}${name}.yaml`, cell.left.config);
    const t0 = performance.now();
    for (let w = 0; w < 50; w++) drawFamilyWorld(fam, cell.left.config, {}, worldSeed(1, w));
    drawMs[name] = (performance.now() - t0) / 50;
  }
  const compare: Record<string, unknown> = {};
  const strategies = [{ name: 'centralized' as const, k: null }, strategy, { name: 'adaptive' as const, k: null }];
  for (const name of process.env['ANTIPHON_BENCH_COMPARE'] === '0' ? [] : ['none', 'demo_cell', 'cluttered', 'changing', 'poor_sensors']) {
    const family = name === 'none' ? undefined : loadFamily(`${dir}${name}.yaml`, cell.left.config);
    const t0 = performance.now();
    await runCompare({ left: cell.left.config, right: cell.right.config, worlds, seed: 1, strategies, jobs, ...(family ? { family } : {}) });
    const s = (performance.now() - t0) / 1000;
    compare[name] = { episodes: worlds * strategies.length, wall_s: s, wall_s_per_1000_episodes: (1000 * s) / (worlds * strategies.length) };
  }
  return {
    worlds,
    jobs,
    one_thread_same_worlds: { ...perEpisode, ratio: (2 * perEpisode.demo_family_s) / (perEpisode.plain_s + perEpisode.plain_again_s), aa_ratio: perEpisode.plain_again_s / perEpisode.plain_s, limit_ratio: 1.1, summaries_identical: identical },
    draw_ms_per_world: drawMs,
    draw_fraction_of_episode: Object.fromEntries(Object.entries(drawMs).map(([k, v]) => [k, v / 1000 / perEpisode.plain_s])),
    compare,
    load_average_before: load0,
    load_average_after: loadavg(),
    note: 'the machine is shared: compare the ratio, not the absolute times',
  };
}

if (import.meta.url === `file://${process.argv[1]}`) {
  if (process.argv[2] === 'families') {
    const n = process.argv[3] === undefined ? undefined : Number(process.argv[3]);
    process.stdout.write(JSON.stringify(await benchFamilies(n), null, 2) + '\n');
  } else {
    const n = process.argv[2] === undefined ? undefined : Number(process.argv[2]);
    process.stdout.write(JSON.stringify(await benchSim(n), null, 2) + '\n');
  }
}
