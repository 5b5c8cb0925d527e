/**
 * `antiphon analyze`: linear team analysis of a model file — centralized LQR reference, fixed
 * roles, alternating roles per period (monodromy spectral radius, stability, RMS gap to the
 * centralized trajectory) and, with --noise-std, noisy observed actions with and without a bias.
 * Exit 0 when every expectation in the model file holds, 1 when one fails, 2 on bad input.
 */
import type { Command } from 'commander';
import { progressBar } from './progress.js';
// The analysis (and mathjs, about a second to load) is imported only when the command runs.
import type { NoiseOptions, TeamReport } from '../analysis/linear-team.js';
import { EXIT_CHECKS_FAILED, EXIT_OK, InputError } from '../util/errors.js';
import { logger } from '../util/log.js';
import { integerOption, numberOption, printJson, printText, runCommand } from './common.js';

interface AnalyzeOptions {
  model?: string;
  periods?: string;
  noiseStd?: string;
  noiseBias?: string;
  runs?: string;
  seed?: string;
  commonKnowledge?: string;
  json?: boolean;
}

const fmt = (v: number, digits = 4): string => (Number.isFinite(v) ? (Math.abs(v) >= 1e5 || (v !== 0 && Math.abs(v) < 1e-4) ? v.toExponential(3) : v.toFixed(digits)) : String(v));

function pad(cells: readonly string[], widths: readonly number[]): string {
  return cells.map((c, i) => c.padEnd(widths[i] ?? 0)).join('  ').trimEnd();
}

function table(head: readonly string[], rows: readonly (readonly string[])[]): string[] {
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] ?? '').length)));
  return [pad(head, widths), ...rows.map((r) => pad(r, widths))];
}

/** The text report. */
export function formatReport(r: TeamReport): string {
  const out: string[] = [];
  out.push(`linear team${r.model.file ? ` ${r.model.file}` : ''}: ${r.model.states} states, gap over ${r.model.steps} steps`);
  out.push('');
  out.push(
    ...table(
      ['roles', 'period', 'spectral radius', 'per step', 'stable', 'gap'],
      [
        ['centralized', '-', fmt(r.centralized.spectral_radius), fmt(r.centralized.spectral_radius), 'yes', '0'],
        [`fixed (agent ${r.fixed.speaker} speaks)`, '-', fmt(r.fixed.spectral_radius), fmt(r.fixed.spectral_radius), r.fixed.stable ? 'yes' : 'NO', fmt(r.fixed.gap)],
        ...r.alternating.map((a) => [
          'alternating',
          String(a.period_steps),
          fmt(a.spectral_radius),
          fmt(a.spectral_radius_per_step),
          a.stable ? 'yes' : 'NO',
          fmt(a.gap),
        ]),
      ],
    ),
  );
  out.push('');
  out.push('spectral radius: of the one-step matrix (centralized, fixed) or of the 2p-step monodromy of a full speaker/listener cycle (alternating); per step = radius^(1/2p)');
  if (r.noise) {
    const nz = r.noise;
    out.push('');
    out.push(`noise on the observed actions: std ${nz.std}, bias ${nz.bias}; ${nz.runs} runs, seed ${nz.seed} (${nz.seeding}); common knowledge ${nz.common_knowledge}`);
    out.push(
      ...table(
        ['period', 'unbiased |x_N|', '|mean x_N|', 'gap', 'biased |x_N|', '|mean x_N|', 'gap'],
        nz.alternating.map((p) => [
          String(p.period_steps),
          fmt(p.unbiased.final_state_norm),
          fmt(p.unbiased.mean_final_state_norm),
          fmt(p.unbiased.gap),
          fmt(p.biased.final_state_norm),
          fmt(p.biased.mean_final_state_norm),
          fmt(p.biased.gap),
        ]),
      ),
    );
  }
  if (r.checks.length > 0) {
    out.push('');
    for (const c of r.checks) out.push(`${c.ok ? 'ok  ' : 'FAIL'} ${c.name}: expected ${c.expected}, got ${c.actual}`);
  }
  return out.join('\n');
}

export function register(program: Command): void {
  program
    .command('analyze')
    .description('Linear team analysis: centralized LQR vs fixed and alternating speaker/listener roles, optionally with noisy observed actions.')
    .requiredOption('--model <file>', 'linear team model (YAML), e.g. examples/linear-team.yaml')
    .option('--periods <list>', 'comma-separated role periods in steps (default: the model\'s periods, else 1,2,4,8,16)')
    .option('--noise-std <x>', 'std of zero-mean Gaussian noise on the observed actions (enables the noise analysis)')
    .option('--noise-bias <b>', 'mean of the noise in the biased variant (default: equal to --noise-std)')
    .option('--runs <n>', 'noisy runs per period (default 20)')
    .option('--seed <s>', 'seed of the noise; run r uses seed + r (default 1)')
    .option('--common-knowledge <mode>', "with noise: 'shared' (the speaker's held value is known to the listener exactly; default) or 'reconstructed' (the listener uses its own past state)")
    .option('--json', 'print one JSON document')
    .action(async (opts: AnalyzeOptions) => {
      const json = opts.json === true;
      await runCommand(json, async () => {
        const log = logger('analyze');
        const file = opts.model;
        if (file === undefined) throw new InputError({ code: 'cli.missing_option', message: '--model is required', where: { option: '--model' } });
        const { analyzeTeam, loadLinearTeam, parsePeriodsOption } = await import('../analysis/linear-team.js');
        const periods = opts.periods !== undefined ? parsePeriodsOption(opts.periods) : undefined;
        const std = numberOption('--noise-std', opts.noiseStd, 0, 1e6);
        const bias = numberOption('--noise-bias', opts.noiseBias, -1e6, 1e6);
        const runs = integerOption('--runs', opts.runs, 1, 1000); // MAX_RUNS
        const seed = integerOption('--seed', opts.seed, 0, 0xffffffff);
        const ck = opts.commonKnowledge;
        if (ck !== undefined && ck !== 'shared' && ck !== 'reconstructed')
          throw new InputError({
            code: 'cli.bad_choice',
            message: `--common-knowledge must be 'shared' or 'reconstructed', got '${ck}'`,
            where: { option: '--common-knowledge' },
            hint: 'shared: the held value is common knowledge exactly; reconstructed: the listener uses its own past state',
          });
        let noise: NoiseOptions | undefined;
        if (std !== undefined) noise = { std, bias: bias ?? std, runs: runs ?? 20, seed: seed ?? 1, commonKnowledge: ck ?? 'shared' };
        else if (bias !== undefined || runs !== undefined || seed !== undefined || ck !== undefined)
          log.warn('--noise-bias, --runs, --seed and --common-knowledge take effect only with --noise-std');
        const asInput = (err: unknown): unknown => {
          // A model that defeats the numerics is bad input, not an internal error.
          // (DareError by name: a static import would load mathjs at every start of the CLI.)
          if (err instanceof Error && err.name === 'DareError') {
            const e = err as Error & { code: string; hint: string };
            return new InputError({ code: `model.${e.code.slice(5)}`, message: e.message, where: { file }, hint: e.hint });
          }
          return err;
        };
        let team: ReturnType<typeof loadLinearTeam>;
        try {
          team = loadLinearTeam(file);
        } catch (err) {
          throw asInput(err);
        }
        log.debug({ file, states: team.n, periods: periods ?? team.model.periods }, 'analyzing');
        // A progress bar on a terminal (stderr), never with --json. The limits (MAX_STATES,
        // MAX_RUNS, MAX_SIMULATED_STEPS in src/analysis/linear-team.ts) are checked first.
        const bar = progressBar('analyze', json);
        let report: TeamReport;
        let started = false;
        try {
          report = analyzeTeam(team, {
            ...(periods ? { periods } : {}),
            ...(noise ? { noise } : {}),
            file,
            ...(bar
              ? {
                  onProgress: (done: number, total: number) => {
                    if (!started) bar.start(total, 0);
                    started = true;
                    bar.update(done);
                  },
                }
              : {}),
          });
        } catch (err) {
          throw asInput(err);
        } finally {
          bar?.stop();
        }
        if (json) printJson(report);
        else printText(formatReport(report));
        return report.ok ? EXIT_OK : EXIT_CHECKS_FAILED;
      });
    });
}
