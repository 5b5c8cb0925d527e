/** `antiphon classify --csv <file>`: label each wrench sample quiet, correction, impact or untared (before the tare). */
import type { Command } from 'commander';
import { classifyWrench, LABELS } from '../core/classify.js';
import type { WrenchFilterConfig } from '../core/filter/index.js';
import { GAP_PERIODS, findGaps, readWrenchCsv, estimateRate } from '../io/wrench-csv.js';
import { buildArmConfig } from '../params/config.js';
import { loadParamsFile } from '../params/load.js';
import { InputError, formatProblem, type Problem } from '../util/errors.js';
import { numberOption, printJson, printText, runCommand } from './common.js';

export function register(program: Command): void {
  program
    .command('classify')
    .description('Run the wrench filter over a CSV of timestamped wrench samples and label each sample quiet, correction, impact, or untared (before the start-up tare).')
    .requiredOption('--csv <file>', 'samples with header t,fx,fy,fz,tx,ty,tz (t in s; comma, tab or whitespace separated)')
    .option('--params <file>', 'ROS 2 parameters file (wrench_filter.* is used)')
    .option('--arm <arm>', 'which section of the parameters file: left or right', 'left')
    .option('--rate <Hz>', 'sample rate; default: estimated from t')
    .option('--summary', 'print only the counts and the impacts, not a line per sample')
    .option('--json', 'one JSON object on stdout')
    .action(async (opts: { csv: string; params?: string; arm: string; rate?: string; summary?: boolean; json?: boolean }) =>
      runCommand(!!opts.json, () => {
        if (opts.arm !== 'left' && opts.arm !== 'right') {
          throw new InputError({ code: 'cli.bad_arm', message: `--arm must be left or right, got '${opts.arm}'`, where: { option: '--arm' } });
        }
        const rateOpt = numberOption('--rate', opts.rate, 50, 8000);
        const file = opts.params === undefined ? undefined : loadParamsFile(opts.params);
        const { config } = buildArmConfig(file, opts.arm);
        const table = readWrenchCsv(opts.csv);
        const estimated = estimateRate(table.t);
        const rate = rateOpt ?? estimated;
        if (!(rate >= 50 && rate <= 8000)) {
          throw new InputError({ code: 'csv.rate_out_of_range', message: `the sample rate estimated from t is ${rate.toFixed(3)} Hz`, where: { file: opts.csv }, hint: 'the wrench filter supports 50 Hz to 8 kHz; pass --rate if t is not in seconds' });
        }
        const wf = { ...config.wrench_filter, sample_rate_hz: rate } as unknown as WrenchFilterConfig;
        if (wf.cutoff_hz >= 0.45 * rate) {
          throw new InputError({ code: 'param.cutoff_too_high', message: `wrench_filter.cutoff_hz = ${wf.cutoff_hz} Hz is too high for ${rate.toFixed(1)} Hz samples`, where: { key: 'wrench_filter.cutoff_hz' }, hint: `below ${(0.45 * rate).toFixed(1)} Hz` });
        }
        // Holes in t: the filter runs on sample count, so a hole reads as a jump. Warn with the line.
        const holes = findGaps(table, rate);
        const warnings: Problem[] = holes.gaps.map((g) => ({
          code: 'csv.gap',
          message: `no sample for ${g.duration_s.toPrecision(4)} s (t ${g.from_s} s to ${g.to_s} s), more than ${GAP_PERIODS} sample periods at ${rate.toFixed(1)} Hz`,
          where: { file: opts.csv, line: g.line },
          hint: 'the filter treats the samples as evenly spaced; split the file at the gap',
        }));
        if (holes.count > holes.gaps.length) warnings.push({ code: 'csv.gap', message: `${holes.count - holes.gaps.length} more gaps`, where: { file: opts.csv } });
        if (!opts.json) for (const w of warnings) process.stderr.write(`antiphon: warning: ${formatProblem(w)}\n`);
        const r = classifyWrench(table.t, table.wrench, wf, config.wrench_filter.correction_force_n, config.wrench_filter.correction_torque_nm);
        const counts = { quiet: 0, correction: 0, impact: 0, untared: 0 };
        for (const l of r.labels) counts[LABELS[l]!]++;
        if (opts.json) {
          printJson({
            rate_hz: rate,
            rate_source: rateOpt === undefined ? 'estimated' : 'option',
            samples: table.samples,
            tared_at_s: r.tared_at_s,
            counts,
            labels: Array.from(r.labels, (l) => LABELS[l]),
            scores: Array.from(r.scores, (s) => Math.round(s * 1e4) / 1e4),
            impacts: r.impacts,
            params: wf,
            warnings: warnings.map((w) => ({ code: w.code, message: w.message, where: w.where })),
          });
          return 0;
        }
        const out: string[] = [];
        if (!opts.summary) {
          out.push('t_s\tlabel\timpact_score');
          for (let k = 0; k < table.samples; k++) out.push(`${table.t[k]}\t${LABELS[r.labels[k]!]}\t${r.scores[k]!.toFixed(3)}`);
        }
        out.push(`# ${table.samples} samples at ${rate.toFixed(1)} Hz (${rateOpt === undefined ? 'estimated from t' : '--rate'}); tared at ${r.tared_at_s === null ? 'never (no still window)' : r.tared_at_s.toFixed(3) + ' s'}`);
        out.push(`# quiet ${counts.quiet}, correction ${counts.correction}, impact ${counts.impact}, untared ${counts.untared} (before the tare)`);
        if (holes.count) out.push(`# ${holes.count} gap${holes.count === 1 ? '' : 's'} longer than ${GAP_PERIODS} sample periods (see the warnings)`);
        for (const i of r.impacts) out.push(`# impact ${i.start_s.toFixed(3)}-${i.end_s.toFixed(3)} s, peak score ${i.peak_score.toFixed(2)}`);
        printText(out.join('\n'));
        return 0;
      }),
    );
}
