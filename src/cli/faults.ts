/**
 * `antiphon faults`: the fault campaign on the kinematic cell (src/faults): episodes with one
 * injected fault each, the watchdog's invariants checked on every sample, and a clock-skew curve.
 * Exit 0 when no invariant was violated, 1 otherwise.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import type { Command } from 'commander';
import cliProgress from 'cli-progress';
import { loadCell } from '../params/config.js';
import { runCampaign, type CampaignResult } from '../faults/campaign.js';
import { FAULT_KINDS, type FaultKind } from '../faults/kinds.js';
import { InputError } from '../util/errors.js';
import { interruptExitCode, interrupted, watchInterrupts } from '../util/interrupt.js';
import { integerOption, numberOption, printJson, printText, runCommand } from './common.js';

/** The demo cell shipped with the package (the campaign needs zones; the built-in defaults have none). */
export function demoCellPath(): string | undefined {
  for (const rel of ['../../config/demo_cell.yaml', '../../../config/demo_cell.yaml']) {
    const p = fileURLToPath(new URL(rel, import.meta.url));
    if (existsSync(p)) return p;
  }
  return undefined;
}

export function parseKinds(raw: string | undefined): FaultKind[] | undefined {
  if (raw === undefined) return undefined;
  const list = raw.split(',').map((s) => s.trim()).filter((s) => s !== '');
  const bad = list.filter((k) => !(FAULT_KINDS as readonly string[]).includes(k));
  if (bad.length || list.length === 0) {
    throw new InputError({ code: 'cli.bad_fault_kind', message: `--kinds: unknown fault kind${bad.length === 1 ? '' : 's'} '${bad.join("', '")}'`, where: { option: '--kinds' }, hint: FAULT_KINDS.join(', ') });
  }
  return [...new Set(list)] as FaultKind[];
}

const f3 = (v: number | null) => (v === null ? '-' : v.toFixed(3));

export function faultsTable(r: CampaignResult): string {
  const head = ['kind', 'episodes', 'holds', 'missed', 'reaction max s', 'p99 s', 'success', 'violations'];
  const rows = Object.entries(r.kinds).map(([k, v]) => [k, String(v.episodes), String(v.holds), `${v.missed_holds}/${v.expected_holds}`, f3(v.reaction_s.max), f3(v.reaction_s.p99), `${(100 * v.task_success).toFixed(1)}%`, String(v.violations)]);
  const w = head.map((h, c) => Math.max(h.length, ...rows.map((row) => row[c]!.length)));
  const line = (cells: string[]) => cells.map((x, c) => (c === 0 ? x.padEnd(w[c]!) : x.padStart(w[c]!))).join('  ');
  const faulted = Object.values(r.kinds).reduce((a, v) => a + v.episodes, 0);
  const skewRuns = r.skew_curve.reduce((a, p) => a + p.episodes, 0);
  const out = [`${faulted} of ${r.episodes} fault episodes and ${skewRuns} clock-skew episodes, seed ${r.seed}${r.interrupted ? ' (interrupted)' : ''}`, line(head), ...rows.map(line), ''];
  out.push(`invariant violations: ${r.violations} (${Object.entries(r.violations_by_invariant).map(([k, v]) => `${k} ${v}`).join(', ')})`);
  for (const e of r.examples) out.push(`  ${e}`);
  if (r.skew_curve.length) {
    out.push('', 'clock skew between the arms (one arm ahead, no other fault):', '  skew ms  episodes  success  peak F_int mean/max N  same role');
    for (const p of r.skew_curve) out.push(`  ${(1000 * p.skew_s).toFixed(0).padStart(7)}  ${String(p.episodes).padStart(8)}  ${`${(100 * p.task_success).toFixed(1)}%`.padStart(7)}  ${`${p.peak_internal_n.mean.toFixed(2)}/${p.peak_internal_n.max.toFixed(2)}`.padStart(21)}  ${`${(100 * p.same_role_fraction).toFixed(2)}%`.padStart(9)}`);
  }
  return out.join('\n');
}

export function faultsJson(r: CampaignResult): Record<string, unknown> {
  return {
    kinds: r.kinds,
    violations: r.violations,
    violations_by_invariant: r.violations_by_invariant,
    episodes: r.episodes,
    episodes_done: r.episodes_done,
    seed: r.seed,
    skew_curve: r.skew_curve,
    examples: r.examples,
    ...(r.interrupted ? { interrupted: true } : {}),
  };
}

export function register(program: Command): void {
  program
    .command('faults')
    .description('Fault campaign on the kinematic cell: inject sensor, timing and partner faults, check the watchdog invariants on every sample, and measure clock skew.')
    .option('--episodes <N>', 'fault episodes (the kinds in turn)', String(10 * FAULT_KINDS.length))
    .option('--seed <s>', 'seed of the campaign', '1')
    .option('--jobs <k>', 'worker threads', '1')
    .option('--kinds <list>', `comma-separated fault kinds (default all: ${FAULT_KINDS.join(', ')})`)
    .option('--skew-episodes <N>', 'episodes per point of the clock-skew curve (0: no curve)', '10')
    .option('--duration <s>', 'simulated time limit per episode, s', '40')
    .option('--params <file>', 'ROS 2 parameters file (default: the demo cell shipped with the package)')
    .option('--json', 'print the result as JSON (no progress bar)')
    .action(async (opts: { episodes: string; seed: string; jobs: string; kinds?: string; skewEpisodes: string; duration: string; params?: string; json?: boolean }) =>
      runCommand(!!opts.json, async () => {
        const episodes = integerOption('--episodes', opts.episodes, 0, 10_000_000)!;
        const seed = integerOption('--seed', opts.seed, 0, 4294967295)!;
        const jobs = integerOption('--jobs', opts.jobs, 1, 256)!;
        const skew = integerOption('--skew-episodes', opts.skewEpisodes, 0, 100_000)!;
        const duration = numberOption('--duration', opts.duration, 1, 3600)!;
        const kinds = parseKinds(opts.kinds);
        const params = opts.params ?? demoCellPath();
        if (!opts.params) process.stderr.write(`antiphon faults: using the demo cell ${params ?? '(built-in defaults)'}\n`);
        const cell = loadCell(params);
        const showBar = !opts.json && process.stderr.isTTY === true;
        const bar = showBar ? new cliProgress.SingleBar({ stream: process.stderr, hideCursor: true }, cliProgress.Presets.shades_classic) : null;
        let result: CampaignResult;
        const unwatch = watchInterrupts();
        try {
          bar?.start(episodes + skew * 9, 0);
          result = await runCampaign({ left: cell.left.config, right: cell.right.config, duration_s: duration, episodes, seed, jobs, skew_episodes: skew, shouldStop: interrupted, ...(kinds ? { kinds } : {}), ...(bar ? { onProgress: (d: number) => bar.update(d) } : {}) });
        } finally {
          unwatch();
          bar?.stop();
        }
        if (opts.json) printJson(faultsJson(result));
        else printText(faultsTable(result));
        return interruptExitCode(result.violations > 0 ? 1 : 0);
      }),
    );
}
