/** `antiphon compare`: every strategy on N randomized worlds; success rate with Wilson 95 % intervals. */
import type { Command } from 'commander';
import { progressBar } from './progress.js';
import { InputError } from '../util/errors.js';
import { loadCell } from '../params/config.js';
import { runCompare, validateCompare, type CompareResult } from '../sim/compare.js';
import { join } from 'node:path';
import { renderCompareReport, type CompareReportFamily } from '../report/compare-html.js';
import { loadFamily, type Family } from '../sim/family.js';
import { checkOutputDir, withOutputDir, writeFileAtomic } from '../util/outdir.js';
import { parseStrategyList } from '../sim/strategies.js';
import { interruptExitCode, interrupted, interruptedFields, watchInterrupts } from '../util/interrupt.js';
import { compareShardCommand } from '../sweep/compare-shard-cli.js';
import { integerOption, numberOption, printJson, printText, runCommand } from './common.js';
import { armModelOption, calibrationText, commitmentText, injectHoldOption, measureOptions, resolveParams } from './simulate.js';

export function compareTable(r: CompareResult): string {
  const head = ['strategy', 'period s', 'success', 'ci95', 'collisions', 'peak F_int N', 'mean F_int N', 'mean time s'];
  const rows = r.strategies.map((s) => [
    s.name,
    s.label.includes(':') ? s.label.slice(s.label.indexOf(':') + 1, -1) : '-',
    `${s.successes}/${s.runs} ${(100 * s.success_rate).toFixed(1)}%`,
    `[${(100 * s.ci95[0]).toFixed(1)}, ${(100 * s.ci95[1]).toFixed(1)}]%`,
    `${(100 * s.collision_rate).toFixed(1)}%`,
    s.mean_peak_internal_force_n.toFixed(2),
    s.mean_internal_force_n.toFixed(2),
    s.mean_time_s === null ? '-' : s.mean_time_s.toFixed(2),
  ]);
  const w = head.map((h, c) => Math.max(h.length, ...rows.map((row) => row[c]!.length)));
  const line = (cells: string[]) => cells.map((x, c) => (c < 2 ? x.padEnd(w[c]!) : x.padStart(w[c]!))).join('  ');
  const fam = r.family ? `family ${r.family.name} (${r.family.redraws} redraws in ${r.family.worlds_redrawn} worlds), ` : '';
  const out = [`${fam}${r.worlds_done < r.worlds ? `interrupted: ${r.worlds_done} of ` : ''}${r.worlds} worlds, seed ${r.seed}${r.arm_model ? `, arms ${r.arm_model}` : ''}`, line(head), ...rows.map(line), '', 'belief calibration, commitment agreement and same-role time (pooled over the worlds):'];
  const nw = Math.max(...r.strategies.map((s) => s.label.length));
  for (const s of r.strategies) {
    out.push(`${s.label.padEnd(nw)}  belief: ${calibrationText(s.calibration)}`);
    out.push(`${' '.repeat(nw)}  commitments: ${commitmentText(s.commitments)}`);
    const tc = s.belief.time_to_correct_s;
    const f3 = (v: number | null) => (v === null ? '-' : v.toFixed(3));
    out.push(`${' '.repeat(nw)}  belief timing: time to correct median ${f3(tc.median)} s, p95 ${f3(tc.p95)} s (${tc.count} determinations, ${tc.unresolved} unresolved); confident wrong mean ${f3(s.belief.confident_wrong_s.mean)} s, max ${f3(s.belief.confident_wrong_s.max)} s`);
    out.push(`${' '.repeat(nw)}  holds: ${Object.entries(s.holds_by_reason).map(([k, v]) => `${k} ${v}`).join(', ') || 'none'}; false impact holds ${s.false_impact_holds}`);
    out.push(`${' '.repeat(nw)}  same role: ${s.same_role.total_s.toFixed(3)} s in all, ${s.same_role.mean_s.toFixed(3)} s per run (${(100 * s.same_role.fraction).toFixed(2)} % of the time)`);
    const ph = s.partner_hold;
    if (ph) {
      const f = (v: number | null) => (v === null ? '-' : v.toFixed(3));
      out.push(`${' '.repeat(nw)}  partner hold: detected in ${ph.detected} of ${ph.runs} runs (never ${(100 * ph.never_rate).toFixed(1)} %); detection max ${f(ph.detection_s.max)} s, p95 ${f(ph.detection_s.p95)} s; object moved up to ${f(ph.object_moved_m.max)} m`);
    }
  }
  const key = r.paired.filter((p) => p.a.startsWith('adaptive') || p.b.startsWith('adaptive') || p.a.startsWith('lookahead') || p.b.startsWith('lookahead') || p.a.startsWith('explicit'));
  if (key.length) {
    out.push('', 'paired (same worlds; wins/losses/ties of the first; success: sign test; peak internal force and time: Wilcoxon signed-rank; all pairs in --json):');
    const c = (m: { wins: number; losses: number; ties: number; p: number }) => `${m.wins}/${m.losses}/${m.ties} p=${m.p < 0.001 ? m.p.toExponential(1) : m.p.toFixed(3)}`;
    for (const p of key) out.push(`  ${p.a} vs ${p.b}: success ${c(p.success)}; peak F_int ${c(p.peak_internal_force_n)}; time ${c(p.time_s)}`);
  }
  return out.join('\n');
}

/** The compare report's view of a result. */
export function reportFamily(r: CompareResult): CompareReportFamily {
  return { name: r.family?.name ?? 'parameters file', worlds: r.worlds, seed: r.seed, arm_model: r.arm_model, redraws: r.family ? r.family.redraws : null, strategies: r.strategies, paired: r.paired };
}

export function compareJson(r: CompareResult): Record<string, unknown> {
  return {
    worlds: r.worlds,
    ...interruptedFields({ worlds_done: r.worlds_done }),
    seed: r.seed,
    arm_model: r.arm_model,
    strategies: r.strategies.map((s) => ({
      name: s.name,
      label: s.label,
      /** The period in wrench samples (the label gives it in seconds). */
      period_samples: s.k,
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
      bootstrap95: s.bootstrap95,
      belief: s.belief,
      holds_by_reason: s.holds_by_reason,
      false_impact_holds: s.false_impact_holds,
    })),
    family: r.family,
    paired: r.paired,
  };
}

export function register(program: Command): void {
  program
    .command('compare')
    .description('Run every strategy on N randomized worlds of the simulated cell and compare success, collisions, internal force and time.')
    .requiredOption('--worlds <N>', 'number of randomized worlds')
    .option('--family <file>', 'draw the worlds from this scenario family (YAML; examples/families/); repeat for several families', (v: string, acc: string[] = []) => [...acc, v])
    .option('--out <dir>', 'write summary.json and a self-contained report.html there')
    .option('--overwrite', 'replace an existing output folder')
    .option('--seed <s>', 'seed of the batch (world i uses a seed derived from it)', '1')
    .option('--jobs <k>', 'worker threads', '1')
    .option('--strategies <list>', 'comma-separated: centralized, explicit[:0.5s], alternating[:0.5s], fixed, independent, adaptive[:0.5s], lookahead[:0.5s] (a period in seconds, or in wrench samples without the s; alternating alone: 0.05s, 0.2s, 0.5s, 1s)')
    .option('--params <file>', "ROS 2 parameters file (default: the demo cell's, shipped in the package)")
    .option('--duration <s>', 'simulated time limit per episode, s (default task.time_limit_s)')
    .option('--arm-model <m>', 'tool_point or six_joint', 'tool_point')
    .option('--disturbance-n <N>', 'correction-band force disturbance on each wrist sensor: stationary std, N (Ornstein-Uhlenbeck, 0.2 s), after the start-up tare', '0')
    .option('--inject-hold <arm:t>', 'one NaN wrench sample on that arm at that time in every run, s (e.g. left:3.0); also turns off the hold timeout')
    .option('--json', 'print the result as JSON (no progress bar)')
    .option('--shard <i/n>', 'run worlds slice i of n (i from 0, or auto/n) into --out (compare-shard.json); join the shards with antiphon merge')
    .action(async (opts: { worlds: string; family?: string[]; out?: string; overwrite?: boolean; seed: string; jobs: string; strategies?: string; params?: string; duration?: string; armModel: string; disturbanceN: string; injectHold?: string; json?: boolean; shard?: string }) =>
      runCommand(!!opts.json, async () => {
        const worlds = integerOption('--worlds', opts.worlds, 1, 1_000_000)!;
        const seed = integerOption('--seed', opts.seed, 0, 4294967295)!;
        const jobs = integerOption('--jobs', opts.jobs, 1, 256)!;
        const duration = numberOption('--duration', opts.duration, 0.01, 3600);
        const strategies = parseStrategyList(opts.strategies);
        const armModel = armModelOption(opts.armModel);
        const disturbance = numberOption('--disturbance-n', opts.disturbanceN, 0, 100);
        const inject = injectHoldOption(opts.injectHold);
        const paramsPath = resolveParams('compare', opts.params);
        const cell = loadCell(paramsPath);
        const options = { arm_model: armModel, ...measureOptions(disturbance, inject) };
        const families: (Family | undefined)[] = opts.family?.length ? opts.family.map((f) => loadFamily(f, cell.left.config, options)) : [undefined];
        const input = { left: cell.left.config, right: cell.right.config, worlds, seed, strategies, jobs, options, ...(duration !== undefined ? { duration_s: duration } : {}) };
        validateCompare(input);
        if (opts.shard !== undefined) return compareShardCommand(input, opts, families.filter((f): f is Family => f !== undefined));
        const outInputs = [paramsPath, ...(opts.family ?? [])];
        if (opts.out !== undefined) checkOutputDir(opts.out, { overwrite: !!opts.overwrite, inputs: outInputs });
        const bar = progressBar('compare', !!opts.json);
        const total = worlds * strategies.length * families.length;
        bar?.start(total, 0);
        const results: CompareResult[] = [];
        // SIGINT/SIGTERM: the episodes running finish, the whole worlds done are reported, exit 130/143.
        const unwatch = watchInterrupts();
        try {
          for (const [k, family] of families.entries()) {
            const offset = k * worlds * strategies.length;
            results.push(await runCompare({ ...input, shouldStop: interrupted, ...(family ? { family } : {}), ...(bar ? { onProgress: (done: number) => bar.update(offset + done) } : {}) }));
            if (interrupted()) break;
          }
        } finally {
          unwatch();
          bar?.stop();
        }
        const json = results.length === 1 ? compareJson(results[0]!) : { families: results.map(compareJson) };
        if (opts.out !== undefined) {
          await withOutputDir(opts.out, { overwrite: !!opts.overwrite, inputs: outInputs }, async (tmp) => {
            writeFileAtomic(join(tmp, 'summary.json'), JSON.stringify(json, null, 2) + '\n');
            writeFileAtomic(join(tmp, 'report.html'), renderCompareReport(results.map(reportFamily)));
          });
        }
        if (opts.json) printJson(opts.out !== undefined ? { ...json, files: [join(opts.out, 'summary.json'), join(opts.out, 'report.html')] } : json);
        else {
          printText(results.map(compareTable).join('\n\n'));
          if (families[0] === undefined && cell.left.config.task.zones.length === 0) printText('note: the task has no keep-out zones, so every strategy does the same (leave out --params for the demo cell)');
          if (opts.out !== undefined) printText(`wrote ${join(opts.out, 'summary.json')}, ${join(opts.out, 'report.html')}`);
        }
        return interruptExitCode(0);
      }),
    );
}
