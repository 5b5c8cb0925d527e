/** `antiphon compare`: every strategy on N randomized worlds; success rate with Wilson 95 % intervals. */
import type { Command } from 'commander';
import cliProgress from 'cli-progress';
import { loadCell } from '../params/config.js';
import { runCompare, validateCompare, type CompareResult } from '../sim/compare.js';
import { parseStrategyList } from '../sim/strategies.js';
import { compareShardCommand } from '../sweep/compare-shard-cli.js';
import { integerOption, numberOption, printJson, printText, runCommand } from './common.js';
import { armModelOption, calibrationText, commitmentText, injectHoldOption, measureOptions } from './simulate.js';

export function compareTable(r: CompareResult): string {
  const head = ['strategy', 'k', 'success', 'ci95', 'collisions', 'peak F_int N', 'mean F_int N', 'mean time s'];
  const rows = r.strategies.map((s) => [
    s.name,
    s.k === null ? '-' : String(s.k),
    `${s.successes}/${s.runs} ${(100 * s.success_rate).toFixed(1)}%`,
    `[${(100 * s.ci95[0]).toFixed(1)}, ${(100 * s.ci95[1]).toFixed(1)}]%`,
    `${(100 * s.collision_rate).toFixed(1)}%`,
    s.mean_peak_internal_force_n.toFixed(2),
    s.mean_internal_force_n.toFixed(2),
    s.mean_time_s === null ? '-' : s.mean_time_s.toFixed(2),
  ]);
  const w = head.map((h, c) => Math.max(h.length, ...rows.map((row) => row[c]!.length)));
  const line = (cells: string[]) => cells.map((x, c) => (c < 2 ? x.padEnd(w[c]!) : x.padStart(w[c]!))).join('  ');
  const out = [`${r.worlds} worlds, seed ${r.seed}${r.arm_model ? `, arms ${r.arm_model}` : ''}`, line(head), ...rows.map(line), '', 'belief calibration, commitment agreement and same-role time (pooled over the worlds):'];
  const nw = Math.max(...r.strategies.map((s) => s.label.length));
  for (const s of r.strategies) {
    out.push(`${s.label.padEnd(nw)}  belief: ${calibrationText(s.calibration)}`);
    out.push(`${' '.repeat(nw)}  commitments: ${commitmentText(s.commitments)}`);
    out.push(`${' '.repeat(nw)}  same role: ${s.same_role.total_s.toFixed(3)} s in all, ${s.same_role.mean_s.toFixed(3)} s per run (${(100 * s.same_role.fraction).toFixed(2)} % of the time)`);
    const ph = s.partner_hold;
    if (ph) {
      const f = (v: number | null) => (v === null ? '-' : v.toFixed(3));
      out.push(`${' '.repeat(nw)}  partner hold: detected in ${ph.detected} of ${ph.runs} runs (never ${(100 * ph.never_rate).toFixed(1)} %); detection max ${f(ph.detection_s.max)} s, p95 ${f(ph.detection_s.p95)} s; object moved up to ${f(ph.object_moved_m.max)} m`);
    }
  }
  return out.join('\n');
}

export function compareJson(r: CompareResult): Record<string, unknown> {
  return {
    worlds: r.worlds,
    seed: r.seed,
    arm_model: r.arm_model,
    strategies: r.strategies.map((s) => ({
      name: s.name,
      k: s.k,
      success_rate: s.success_rate,
      ci95: s.ci95,
      collision_rate: s.collision_rate,
      mean_peak_internal_force_n: s.mean_peak_internal_force_n,
      mean_time_s: s.mean_time_s,
      successes: s.successes,
      runs: s.runs,
      mean_internal_force_n: s.mean_internal_force_n,
      end_reasons: s.end_reasons,
      calibration: s.calibration,
      commitments: s.commitments,
      same_role: s.same_role,
      partner_hold: s.partner_hold,
    })),
  };
}

export function register(program: Command): void {
  program
    .command('compare')
    .description('Run every strategy on N randomized worlds of the simulated cell and compare success, collisions, internal force and time.')
    .requiredOption('--worlds <N>', 'number of randomized worlds')
    .option('--seed <s>', 'seed of the batch (world i uses a seed derived from it)', '1')
    .option('--jobs <k>', 'worker threads', '1')
    .option('--strategies <list>', 'comma-separated: centralized, explicit[:k], alternating[:k], fixed, independent, adaptive (alternating alone: k = 50, 200, 500, 1000)')
    .option('--params <file>', 'ROS 2 parameters file (default: built-in defaults)')
    .option('--duration <s>', 'simulated time limit per episode, s (default task.time_limit_s)')
    .option('--arm-model <m>', 'tool_point or six_joint', 'tool_point')
    .option('--disturbance-n <N>', 'correction-band force disturbance on each wrist sensor: stationary std, N (Ornstein-Uhlenbeck, 0.2 s), after the start-up tare', '0')
    .option('--inject-hold <arm:t>', 'one NaN wrench sample on that arm at that time in every run, s (e.g. left:3.0); also turns off the hold timeout')
    .option('--json', 'print the result as JSON (no progress bar)')
    .option('--shard <i/n>', 'run worlds slice i of n (i from 0, or auto/n) into --out; join the shards with antiphon merge')
    .option('--out <dir>', 'with --shard: the shard\'s output folder (compare-shard.json)')
    .option('--overwrite', 'with --shard: replace an output folder antiphon wrote before')
    .action(async (opts: { worlds: string; seed: string; jobs: string; strategies?: string; params?: string; duration?: string; armModel: string; disturbanceN: string; injectHold?: string; json?: boolean; shard?: string; out?: string; overwrite?: boolean }) =>
      runCommand(!!opts.json, async () => {
        const worlds = integerOption('--worlds', opts.worlds, 1, 1_000_000)!;
        const seed = integerOption('--seed', opts.seed, 0, 4294967295)!;
        const jobs = integerOption('--jobs', opts.jobs, 1, 256)!;
        const duration = numberOption('--duration', opts.duration, 0.01, 3600);
        const strategies = parseStrategyList(opts.strategies);
        const armModel = armModelOption(opts.armModel);
        const disturbance = numberOption('--disturbance-n', opts.disturbanceN, 0, 100);
        const inject = injectHoldOption(opts.injectHold);
        const cell = loadCell(opts.params);
        const input = { left: cell.left.config, right: cell.right.config, worlds, seed, strategies, jobs, options: { arm_model: armModel, ...measureOptions(disturbance, inject) }, ...(duration !== undefined ? { duration_s: duration } : {}) };
        validateCompare(input);
        if (opts.shard !== undefined || opts.out !== undefined) return compareShardCommand(input, opts);
        const showBar = !opts.json && process.stderr.isTTY === true;
        const bar = showBar ? new cliProgress.SingleBar({ stream: process.stderr, hideCursor: true }, cliProgress.Presets.shades_classic) : null;
        bar?.start(worlds * strategies.length, 0);
        let result: CompareResult;
        try {
          result = await runCompare({ ...input, ...(bar ? { onProgress: (done: number) => bar.update(done) } : {}) });
        } finally {
          bar?.stop();
        }
        if (opts.json) printJson(compareJson(result));
        else {
          printText(compareTable(result));
          if (cell.left.config.task.zones.length === 0) printText('note: the task has no keep-out zones, so every strategy does the same (pass --params config/demo_cell.yaml for the demo cell)');
        }
        return 0;
      }),
    );
}
