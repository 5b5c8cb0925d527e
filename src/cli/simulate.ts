/** `antiphon simulate`: one episode of the simulated cell; prints the summary and writes summary.json. */
import { join } from 'node:path';
import type { Command } from 'commander';
import type { StorageId } from '../bag/types.js';
import { storageOption } from '../bag/writer.js';
import { loadCell } from '../params/config.js';
import { renderReport } from '../report/html.js';
import { demoCellNote, demoCellPath } from '../sim/demo-cell.js';
import { writeEpisodeBag } from '../sim/episode-bag.js';
import { drawFamilyWorld, loadFamily } from '../sim/family.js';
import { runEpisode, type EpisodeResult, type EpisodeSummary } from '../sim/episode.js';
import type { CalibrationSummary } from '../sim/belief-metrics.js';
import type { CommitmentSummary, PartnerHoldSummary } from '../sim/measures.js';
import { ARM_MODELS, type ArmModel, type InjectHold, type SimOptionsOverrides } from '../sim/options.js';
import { PERIODIC, parseStrategy, type StrategySpec } from '../sim/strategies.js';
import { InputError } from '../util/errors.js';
import { logger } from '../util/log.js';
import { simulateSummaryJson } from '../sim/summary-json.js';
import { tripText } from '../core/trip-text.js';
import { interruptExitCode, interruptedFields, watchInterrupts } from '../util/interrupt.js';
import { checkOutputDir, withOutputDir, writeFileAtomic } from '../util/outdir.js';
import { integerOption, numberOption, printJson, printText, runCommand } from './common.js';

/**
 * Everything an episode leaves in its output folder, written whole or not at all:
 * `bag/` (both arms' inputs and every output, under the live topic names), `summary.json`
 * and `report.html`.
 */
export async function writeEpisodeArtifacts(dir: string, result: EpisodeResult, overwrite: boolean, storage: StorageId = 'mcap', inputs: readonly (string | undefined)[] = []): Promise<{ files: string[]; replayMatches: boolean; summary: Record<string, unknown> }> {
  let replayMatches = false;
  let summary: Record<string, unknown> = {};
  await withOutputDir(dir, { overwrite, inputs }, async (tmp) => {
    const art = await writeEpisodeBag(tmp, result, result.configs, storage);
    replayMatches = art.matchingSamples === art.samples;
    summary = { ...simulateSummaryJson(result.summary, art.replaySummary, replayMatches), ...interruptedFields({ episodes_done: 1 }) };
    writeFileAtomic(join(tmp, 'summary.json'), JSON.stringify(summary, null, 2) + '\n');
    writeFileAtomic(join(tmp, 'report.html'), renderReport(art.report));
  });
  return { files: [join(dir, 'bag'), join(dir, 'summary.json'), join(dir, 'report.html')], replayMatches, summary };
}

/**
 * The parameters file of `simulate` and `compare`: the one given, else the demo cell's shipped in
 * the package, with one line on stderr saying so (stdout stays the command's output).
 */
export function resolveParams(command: string, given: string | undefined): string {
  if (given !== undefined) return given;
  logger('sim').info({ code: 'sim.demo_cell' }, demoCellNote(command));
  return demoCellPath();
}

/** Parse --arm-model. */
export function armModelOption(raw: string): ArmModel {
  if (!(ARM_MODELS as readonly string[]).includes(raw)) {
    throw new InputError({ code: 'cli.bad_arm_model', message: `--arm-model must be ${ARM_MODELS.join(' or ')}, got '${raw}'`, where: { option: '--arm-model' }, hint: ARM_MODELS.join(', ') });
  }
  return raw as ArmModel;
}

/** Parse --inject-hold ARM:T (e.g. left:3.0). */
export function injectHoldOption(raw: string | undefined): InjectHold | undefined {
  if (raw === undefined) return undefined;
  const m = /^(left|right):([^:]+)$/.exec(raw.trim());
  const t = m ? Number(m[2]) : Number.NaN;
  if (!m || m[2]!.trim() === '' || !Number.isFinite(t) || t < 0 || t > 3600) {
    throw new InputError({ code: 'cli.bad_inject_hold', message: `--inject-hold must be ARM:TIME with ARM left or right and TIME in s from 0 to 3600, got '${raw}'`, where: { option: '--inject-hold' }, hint: 'e.g. left:3.0' });
  }
  return { arm: m[1] as 'left' | 'right', t_s: t };
}

/**
 * The simulation options of --disturbance-n and --inject-hold. An injected hold also turns off
 * the hold timeout, so the episode goes on and the partner can be watched.
 */
export function measureOptions(disturbance: number | undefined, inject: InjectHold | undefined): SimOptionsOverrides {
  return { ...(disturbance !== undefined ? { disturbance_n: disturbance } : {}), ...(inject ? { inject_hold: inject, hold_timeout_s: 0 } : {}) };
}

const pct = (v: number | null, d = 2) => (v === null ? '-' : `${(100 * v).toFixed(d)} %`);
const num = (v: number | null, d = 3) => (v === null ? '-' : v.toFixed(d));

export function calibrationText(c: CalibrationSummary): string {
  return `${c.updates} belief pairs; ECE ${num(c.ece)}; P(truth) < 0.05 in ${pct(c.p_truth_below_0_05_rate)}`;
}

export function commitmentText(c: CommitmentSummary): string {
  return `${c.disagreeing} of ${c.switches} switches disagree (${pct(c.rate, 1)}; just committed ${c.fresh_disagreeing}, ${pct(c.fresh_rate, 1)}), ${c.onsets} onsets; repair max ${num(c.repair_s.max)} s, p95 ${num(c.repair_s.p95)} s, max ${c.repair_slots_max ?? '-'} slots; unrepaired ${c.unrepaired}`;
}

export function partnerHoldText(p: PartnerHoldSummary): string {
  if (p.injected_at_s === null) return `injected hold on ${p.arm}: the episode ended before it`;
  const det = p.detection_s === null ? 'never stopped' : `stopped ${num(p.detection_s)} s after it (watched ${num(p.watched_after_stop_s, 2)} s more)`;
  return `NaN wrench on ${p.arm} (${p.role_at_injection}) at ${num(p.injected_at_s)} s, held at ${num(p.held_at_s)} s; partner ${p.partner} (${p.partner_role_at_injection}) ${det}; object moved ${num(p.object_moved_m)} m (path ${num(p.object_path_m)} m) after it`;
}

/** "success after 16.61 s" or "failure (stall) after 30.00 s": the end reason only when it adds something. */
export function outcomeText(s: EpisodeSummary): string {
  return s.success ? `success: goal reached after ${s.duration_s.toFixed(2)} s` : `failure (${s.end_reason.replace('_', ' ')}) after ${s.duration_s.toFixed(2)} s, goal not reached`;
}

export function summaryText(s: EpisodeSummary): string {
  const f = (v: number | null, d = 2) => (v === null ? '-' : v.toFixed(d));
  const occ = Object.entries(s.world.occupied).map(([k, v]) => `${k} ${v ? 'occupied' : 'free'}`).join(', ');
  const changes = s.world.zones.flatMap((z) => z.changes.map((c) => `${z.name} ${c.occupied ? 'occupied' : 'free'} at ${f(c.t_s, 2)} s`));
  const tc = s.belief.time_to_correct_s;
  const lines = [
    `seed ${s.seed}, strategy ${s.strategy}, arms ${s.arm_model}${s.family ? `, family ${s.family.name} (${s.family.redraws} redraws)` : ''}`,
    `world: ${occ || 'no zones'}; start (${f(s.world.start_m[0], 3)}, ${f(s.world.start_m[1], 3)}) m, goal (${f(s.world.goal_m[0], 3)}, ${f(s.world.goal_m[1], 3)}) m`,
    ...(changes.length ? [`changes: ${changes.join(', ')}`] : []),
    ...(s.world.knocks.length ? [`knocks: ${s.world.knocks.map((k) => `${f(k.force_n, 1)} N at ${f(k.t_s, 2)} s`).join(', ')}`] : []),
    `outcome: ${outcomeText(s)}; final distance to the goal ${f(s.final_distance_m, 3)} m`,
    `collisions: ${s.collisions.count}${s.collisions.first_s === null ? '' : `, first at ${f(s.collisions.first_s, 3)} s`}; contact ${f(s.collisions.contact_s, 3)} s`,
    `internal force (true, along the beam; + squeeze): peak ${f(s.internal_force.peak_n)} N, mean |f| ${f(s.internal_force.mean_abs_n)} N`,
    `holds: ${s.holds.count}${s.holds.count ? ' (' + Object.entries(s.holds.reasons).map(([k, v]) => `${k} x${v}`).join(', ') + ')' : ''}; false impact holds ${s.holds.false_impact}`,
    `belief: time to correct median ${f(tc.median)} s, p95 ${f(tc.p95)} s (${tc.count} determinations, ${tc.unresolved} unresolved); confident wrong ${f(s.belief.confident_wrong_s, 3)} s`,
    `role switches: left ${s.role_switches.left}, right ${s.role_switches.right}; tared at left ${f(s.tared_at_s.left, 3)} s, right ${f(s.tared_at_s.right, 3)} s`,
    `belief calibration (this one world; compare pools many worlds): ${calibrationText(s.belief.calibration)}`,
    `commitments: ${commitmentText(s.commitments)}${s.disturbance_n > 0 ? ` (disturbance ${s.disturbance_n} N)` : ''}`,
    `same role: ${f(s.same_role.total_s, 3)} s (speaker ${f(s.same_role.both_speaker_s, 3)} s, listener ${f(s.same_role.both_listener_s, 3)} s)`,
  ];
  if (s.partner_hold) lines.push(`partner hold: ${partnerHoldText(s.partner_hold)}`);
  for (const e of s.holds.events) {
    lines.push(`  hold ${e.arm} at ${f(e.start_s, 3)} s${e.end_s === null ? ', not released' : `, released at ${f(e.end_s, 3)} s`}: ${e.reasons.map((r) => tripText(r)).join('; ')}`);
  }
  return lines.join('\n');
}

export function register(program: Command): void {
  program
    .command('simulate')
    .description('Run one episode of the simulated cell (MuJoCo) with both arm pipelines and print its summary.')
    .option('--params <file>', "ROS 2 parameters file (default: the demo cell's, shipped in the package)")
    .option('--seed <n>', 'world seed', '1')
    .option('--family <file>', 'draw the world from this scenario family (YAML; examples/families/)')
    .option('--strategy <s>', 'centralized, explicit, alternating, fixed, independent, adaptive or lookahead (name:0.5s sets the period in seconds; name:500 in wrench samples)', 'alternating')
    .option('--period-steps <k>', 'period in wrench samples for alternating (role slot) and explicit (message period); default from roles.period_s')
    .option('--duration <s>', 'simulated time limit, s (default task.time_limit_s)')
    .option('--arm-model <m>', 'tool_point (three admittance carriages) or six_joint (articulated arm under Cartesian damping)', 'tool_point')
    .option('--disturbance-n <N>', 'correction-band force disturbance on each wrist sensor: stationary std, N (Ornstein-Uhlenbeck, 0.2 s), after the start-up tare', '0')
    .option('--inject-hold <arm:t>', 'one NaN wrench sample on that arm at that time, s (e.g. left:3.0); also turns off the hold timeout')
    .option('--out <dir>', 'output folder for bag/, summary.json and report.html (default out/sim-<seed>)')
    .option('--overwrite', 'replace an existing output folder')
    .option('--storage <s>', 'storage of the output bag: mcap or sqlite3 (rosbag2 .db3, as Humble records by default)', 'mcap')
    .option('--json', 'print the summary as JSON')
    .action(async (opts: { params?: string; family?: string; seed: string; strategy: string; periodSteps?: string; duration?: string; armModel: string; disturbanceN: string; injectHold?: string; out?: string; overwrite?: boolean; storage?: string; json?: boolean }) =>
      runCommand(!!opts.json, async () => {
        // SIGINT/SIGTERM: the episode (the unit here: it runs without a break) finishes, its bag and summary.json are written, exit 130/143.
        const unwatch = watchInterrupts();
        try {
          const seed = integerOption('--seed', opts.seed, 0, 4294967295)!;
          const period = integerOption('--period-steps', opts.periodSteps, 1, 600000);
          const duration = numberOption('--duration', opts.duration, 0.01, 3600);
          const armModel = armModelOption(opts.armModel);
          const disturbance = numberOption('--disturbance-n', opts.disturbanceN, 0, 100);
          const inject = injectHoldOption(opts.injectHold);
          const storage = storageOption(opts.storage);
          const paramsPath = resolveParams('simulate', opts.params);
          const cell = loadCell(paramsPath);
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
          checkOutputDir(dir, { overwrite: !!opts.overwrite, inputs: [paramsPath] });
          const options: SimOptionsOverrides = { arm_model: armModel, ...measureOptions(disturbance, inject) };
          let left = cell.left.config;
          let right = cell.right.config;
          let drawn = {};
          if (opts.family !== undefined) {
            const family = loadFamily(opts.family, left, options);
            const fw = drawFamilyWorld(family, left, options, seed);
            left = { ...left, task: fw.task };
            right = { ...right, task: fw.task };
            Object.assign(options, fw.options);
            drawn = { world: fw.world, family: { name: family.spec.family, redraws: fw.redraws } };
          }
          const result = await runEpisode({ left, right, strategy, seed, options, ...drawn, ...(duration !== undefined ? { duration_s: duration } : {}) });
          const { files, summary } = await writeEpisodeArtifacts(dir, result, !!opts.overwrite, storage, [paramsPath, opts.family]);
          if (opts.json) printJson({ ...summary, files });
          else printText(`${summaryText(result.summary)}\nwrote ${files.join(', ')}\nreport: ${join(dir, 'report.html')}`);
          return interruptExitCode(0);
        } finally {
          unwatch();
        }
      }),
    );
}
