/** `antiphon simulate`: one episode of the simulated cell; prints the summary and writes summary.json. */
import { join } from 'node:path';
import type { Command } from 'commander';
import { loadCell } from '../params/config.js';
import { renderReport } from '../report/html.js';
import { writeEpisodeBag } from '../sim/episode-bag.js';
import { runEpisode, type EpisodeResult, type EpisodeSummary } from '../sim/episode.js';
import { ARM_MODELS, type ArmModel } from '../sim/options.js';
import { PERIODIC, parseStrategy, type StrategySpec } from '../sim/strategies.js';
import { InputError } from '../util/errors.js';
import { checkOutputDir, withOutputDir, writeFileAtomic } from '../util/outdir.js';
import { integerOption, numberOption, printJson, printText, runCommand } from './common.js';

/**
 * Everything an episode leaves in its output folder, written whole or not at all:
 * `bag/` (both arms' inputs and every output, under the live topic names), `summary.json`
 * and `report.html`.
 */
export async function writeEpisodeArtifacts(dir: string, result: EpisodeResult, overwrite: boolean, inputs: readonly (string | undefined)[] = []): Promise<{ files: string[]; replayMatches: boolean }> {
  let replayMatches = false;
  await withOutputDir(dir, { overwrite, inputs }, async (tmp) => {
    const art = await writeEpisodeBag(tmp, result, result.configs);
    replayMatches = art.matchingSamples === art.samples;
    const summary = { ...result.summary, bag_replay_matches_closed_loop: replayMatches };
    writeFileAtomic(join(tmp, 'summary.json'), JSON.stringify(summary, null, 2) + '\n');
    writeFileAtomic(join(tmp, 'report.html'), renderReport(art.report));
  });
  return { files: [join(dir, 'bag'), join(dir, 'summary.json'), join(dir, 'report.html')], replayMatches };
}

/** Parse --arm-model. */
export function armModelOption(raw: string): ArmModel {
  if (!(ARM_MODELS as readonly string[]).includes(raw)) {
    throw new InputError({ code: 'cli.bad_arm_model', message: `--arm-model must be ${ARM_MODELS.join(' or ')}, got '${raw}'`, where: { option: '--arm-model' }, hint: ARM_MODELS.join(', ') });
  }
  return raw as ArmModel;
}

export function summaryText(s: EpisodeSummary): string {
  const f = (v: number | null, d = 2) => (v === null ? '-' : v.toFixed(d));
  const occ = Object.entries(s.world.occupied).map(([k, v]) => `${k} ${v ? 'occupied' : 'free'}`).join(', ');
  const lines = [
    `seed ${s.seed}, strategy ${s.strategy}, arms ${s.arm_model}`,
    `world: ${occ || 'no zones'}; start (${f(s.world.start_m[0], 3)}, ${f(s.world.start_m[1], 3)}) m, goal (${f(s.world.goal_m[0], 3)}, ${f(s.world.goal_m[1], 3)}) m`,
    `outcome: ${s.success ? 'success' : 'failure'} (${s.end_reason}) after ${f(s.duration_s)} s; time to goal ${f(s.time_to_goal_s)} s; final distance ${f(s.final_distance_m, 3)} m`,
    `collisions: ${s.collisions.count}${s.collisions.first_s === null ? '' : `, first at ${f(s.collisions.first_s, 3)} s`}; contact ${f(s.collisions.contact_s, 3)} s`,
    `internal force: peak ${f(s.internal_force.peak_n)} N, mean ${f(s.internal_force.mean_n)} N`,
    `holds: ${s.holds.count}${s.holds.count ? ' (' + Object.entries(s.holds.reasons).map(([k, v]) => `${k} x${v}`).join(', ') + ')' : ''}`,
    `role switches: left ${s.role_switches.left}, right ${s.role_switches.right}; tared at left ${f(s.tared_at_s.left, 3)} s, right ${f(s.tared_at_s.right, 3)} s`,
  ];
  for (const e of s.holds.events) {
    lines.push(`  hold ${e.arm} at ${f(e.start_s, 3)} s${e.end_s === null ? ', not released' : `, released at ${f(e.end_s, 3)} s`}: ${e.reasons.map((r) => `${r.check} (${r.input} ${r.value.toFixed(3)} > ${r.limit})`).join(', ')}`);
  }
  return lines.join('\n');
}

export function register(program: Command): void {
  program
    .command('simulate')
    .description('Run one episode of the simulated cell (MuJoCo) with both arm pipelines and print its summary.')
    .option('--params <file>', 'ROS 2 parameters file (default: built-in defaults)')
    .option('--seed <n>', 'world seed', '1')
    .option('--strategy <s>', 'centralized, explicit, alternating, fixed, independent or adaptive (name:k sets the period)', 'alternating')
    .option('--period-steps <k>', 'period in wrench samples for alternating (role slot) and explicit (message period); default from roles.period_s')
    .option('--duration <s>', 'simulated time limit, s (default task.time_limit_s)')
    .option('--arm-model <m>', 'tool_point (three admittance carriages) or six_joint (articulated arm under Cartesian damping)', 'tool_point')
    .option('--out <dir>', 'output folder for bag/, summary.json and report.html (default out/sim-<seed>)')
    .option('--overwrite', 'replace an existing output folder')
    .option('--json', 'print the summary as JSON')
    .action(async (opts: { params?: string; seed: string; strategy: string; periodSteps?: string; duration?: string; armModel: string; out?: string; overwrite?: boolean; json?: boolean }) =>
      runCommand(!!opts.json, async () => {
        const seed = integerOption('--seed', opts.seed, 0, 4294967295)!;
        const period = integerOption('--period-steps', opts.periodSteps, 1, 600000);
        const duration = numberOption('--duration', opts.duration, 0.01, 3600);
        const armModel = armModelOption(opts.armModel);
        const cell = loadCell(opts.params);
        const defaultK = Math.max(1, Math.round(cell.left.config.roles.period_s * cell.left.config.wrench_filter.sample_rate_hz));
        let strategy: StrategySpec = parseStrategy(opts.strategy, '--strategy', defaultK);
        if (period !== undefined) {
          if (!PERIODIC.has(strategy.name)) {
            throw new InputError({ code: 'cli.period_not_allowed', message: `--period-steps does not apply to strategy '${strategy.name}'`, where: { option: '--period-steps' }, hint: 'only alternating and explicit take a period' });
          }
          strategy = { name: strategy.name, k: period };
        }
        // --out is checked before the episode runs (it may take minutes).
        const dir = opts.out ?? join('out', `sim-${seed}`);
        checkOutputDir(dir, { overwrite: !!opts.overwrite, inputs: [opts.params] });
        const result = await runEpisode({ left: cell.left.config, right: cell.right.config, strategy, seed, options: { arm_model: armModel }, ...(duration !== undefined ? { duration_s: duration } : {}) });
        const { files, replayMatches } = await writeEpisodeArtifacts(dir, result, !!opts.overwrite, [opts.params]);
        if (opts.json) printJson({ ...result.summary, bag_replay_matches_closed_loop: replayMatches, files });
        else printText(`${summaryText(result.summary)}\nwrote ${files.join(', ')}\nreport: ${join(dir, 'report.html')}`);
        return 0;
      }),
    );
}
