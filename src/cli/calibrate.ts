/** `antiphon calibrate <bag> --params <file>`: sensor noise and bias from still periods, the coupling damping from the partner's corrections and the correction band's slow disturbance from the coupling's residual, each with a 95 % interval. */
import { existsSync } from 'node:fs';
import type { Command } from 'commander';
import { cellFromFile } from '../params/config.js';
import { loadParamsFile } from '../params/load.js';
import { calibrateBag, type Estimate } from '../sweep/calibrate.js';
import { decodeBag, inspectBags } from '../sweep/decoded.js';
import { applyChanges } from '../sweep/tuned.js';
import { parseParamsText } from '../params/load.js';
import { InputError } from '../util/errors.js';
import { realPathOf, writeFileAtomic } from '../util/outdir.js';
import { INPUT_LIMITS, readInputText } from '../util/read-input.js';
import { printJson, printText, runCommand } from './common.js';

/**
 * Estimates that are parameters (written by --out); the rest are reported only. The belief's
 * disturbance keys must be equal on both arms (the belief's common knowledge needs the same
 * likelihood scale): one estimate from one bag, written to every section that sets the key
 * (else to `/**`), so they are. With no disturbance found, only disturbance_force_n (0) is written and
 * disturbance_time_s stays as the file had it (it has no effect at 0 N).
 */
const PARAMETER_KEYS = ['coupling.damping_n_s_m', 'belief.disturbance_force_n', 'belief.disturbance_time_s'];

const g = (v: number) => v.toPrecision(4);

export function register(program: Command): void {
  program
    .command('calibrate')
    .description('Estimate the wrist sensors\' noise and bias (still periods), the coupling damping (partner corrections) and the correction band\'s slow disturbance (the coupling\'s residual) from a recording, with 95 % intervals.')
    .argument('<bag>', 'a recording of the cell: both arms\' inputs')
    .requiredOption('--params <file>', 'the parameters file the cell ran with (replayed to the commands it ran)')
    .option('--out <file>', 'write the parameters file with only the estimated parameters changed, each with a comment')
    .option('--overwrite', 'replace an existing --out file')
    .option('--json', 'print {"estimates": {"<dotted key>": {"value", "ci95", "unit", "from"}}}')
    .action(async (bagPath: string, opts: { params: string; out?: string; overwrite?: boolean; json?: boolean }) =>
      runCommand(!!opts.json, async () => {
        const file = loadParamsFile(opts.params);
        const cell = cellFromFile(file, opts.params);
        const text = readInputText(opts.params, { what: 'parameters file', code: 'param', maxBytes: INPUT_LIMITS.params, option: '--params' });
        if (opts.out !== undefined) {
          const out = realPathOf(opts.out);
          if (out === realPathOf(opts.params) || out === realPathOf(bagPath) || out.startsWith(realPathOf(bagPath) + '/')) throw new InputError({ code: 'out.is_input', message: `--out ${opts.out} is an input`, where: { option: '--out', file: opts.out }, hint: 'write the calibrated file beside the inputs, e.g. config/calibrated.yaml' });
          if (existsSync(opts.out) && !opts.overwrite) throw new InputError({ code: 'out.exists', message: `${opts.out} exists`, where: { option: '--out', file: opts.out }, hint: 'choose another --out or pass --overwrite' });
        }
        await inspectBags([bagPath]);
        const bag = await decodeBag(bagPath, cell.left.config.task.zones.map((z) => z.name));
        const estimates: Record<string, Estimate> = calibrateBag(bag, cell.left.config, cell.right.config);
        if (opts.out !== undefined) {
          const changes = PARAMETER_KEYS.filter((k) => k in estimates).map((k) => {
            const e = estimates[k]!;
            return { key: k, value: Number(e.value.toPrecision(4)), comment: `calibrated from ${bagPath}: ${g(e.value)} ${e.unit}, 95 % interval [${g(e.ci95[0])}, ${g(e.ci95[1])}] (${e.from.split(':')[0]})` };
          });
          const outText = applyChanges(text, changes);
          cellFromFile(parseParamsText(outText, opts.out), opts.out);
          writeFileAtomic(opts.out, outText);
        }
        if (opts.json) printJson({ estimates });
        else {
          const rows = Object.entries(estimates).map(([k, e]) => `${k.padEnd(32)} ${g(e.value).padStart(10)} ${e.unit.padEnd(6)} [${g(e.ci95[0])}, ${g(e.ci95[1])}]`);
          printText([`calibration from ${bagPath} (95 % intervals):`, ...rows, ...(opts.out ? [`wrote ${opts.out} (${PARAMETER_KEYS.filter((k) => k in estimates).join(', ')} changed)`] : [])].join('\n'));
        }
        return 0;
      }),
    );
}
