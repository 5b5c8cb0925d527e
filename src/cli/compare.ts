/** `antiphon compare`: every strategy on N randomized worlds; success rate with Wilson 95 % intervals. */
import type { Command } from 'commander';
import cliProgress from 'cli-progress';
import { loadCell } from '../params/config.js';
import { runCompare, validateCompare, type CompareResult } from '../sim/compare.js';
import { parseStrategyList } from '../sim/strategies.js';
import { integerOption, numberOption, printJson, printText, runCommand } from './common.js';
import { armModelOption } from './simulate.js';

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
  return [`${r.worlds} worlds, seed ${r.seed}${r.arm_model ? `, arms ${r.arm_model}` : ''}`, line(head), ...rows.map(line)].join('\n');
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
    .option('--json', 'print the result as JSON (no progress bar)')
    .action(async (opts: { worlds: string; seed: string; jobs: string; strategies?: string; params?: string; duration?: string; armModel: string; json?: boolean }) =>
      runCommand(!!opts.json, async () => {
        const worlds = integerOption('--worlds', opts.worlds, 1, 1_000_000)!;
        const seed = integerOption('--seed', opts.seed, 0, 4294967295)!;
        const jobs = integerOption('--jobs', opts.jobs, 1, 256)!;
        const duration = numberOption('--duration', opts.duration, 0.01, 3600);
        const strategies = parseStrategyList(opts.strategies);
        const armModel = armModelOption(opts.armModel);
        const cell = loadCell(opts.params);
        const input = { left: cell.left.config, right: cell.right.config, worlds, seed, strategies, jobs, options: { arm_model: armModel }, ...(duration !== undefined ? { duration_s: duration } : {}) };
        validateCompare(input);
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
