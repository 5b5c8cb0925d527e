/** The comparison runner and the two commands (the CLI parts need the build: npx tsc -p tsconfig.build.json). */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { runCompare } from '../../src/sim/compare.js';
import { parseStrategyList } from '../../src/sim/strategies.js';

const built = existsSync('dist/src/sim/worker.js') && existsSync('dist/src/cli/main.js');
const cell = loadCell('config/demo_cell.yaml');
const cli = (...args: string[]) => spawnSync(process.execPath, ['dist/src/cli/main.js', ...args], { encoding: 'utf8' });

describe('compare', () => {
  it.skipIf(!built)('gives identical results whatever the job count (common practice: reproducible parallel batches)', async () => {
    const input = { left: cell.left.config, right: cell.right.config, worlds: 3, seed: 9, strategies: parseStrategyList('alternating:200,independent'), duration_s: 1.5 };
    const one = await runCompare({ ...input, jobs: 1 });
    const two = await runCompare({ ...input, jobs: 2 });
    expect(JSON.stringify(two)).toBe(JSON.stringify(one));
    expect(one.strategies.map((s) => s.label)).toEqual(['alternating:0.2s', 'independent']);
    expect(one.strategies[0]!.runs).toBe(3);
  });
});

describe.skipIf(!built)('CLI', () => {
  it('compare refuses --worlds 0 and unknown strategies with exit code 2 before running', () => {
    const a = cli('compare', '--worlds', '0', '--params', 'config/demo_cell.yaml');
    expect(a.status).toBe(2);
    expect(a.stderr).toContain('--worlds');
    const b = cli('compare', '--worlds', '2', '--strategies', 'centralized,psychic', '--json');
    expect(b.status).toBe(2);
    const j = JSON.parse(b.stdout) as { ok: boolean; errors: Array<{ where: { option: string } }> };
    expect(j.ok).toBe(false);
    expect(j.errors[0]!.where.option).toBe('--strategies');
  });

  it('compare --json has the documented shape', () => {
    const r = cli('compare', '--worlds', '1', '--seed', '4', '--strategies', 'centralized,fixed', '--duration', '1', '--params', 'config/demo_cell.yaml', '--json');
    expect(r.status).toBe(0);
    expect(r.stderr).toBe(''); // no progress bar with --json
    const j = JSON.parse(r.stdout) as { worlds: number; seed: number; strategies: Array<Record<string, unknown>> };
    expect(j.worlds).toBe(1);
    expect(j.seed).toBe(4);
    for (const key of ['name', 'label', 'period_samples', 'success_rate', 'ci95', 'collision_rate', 'mean_peak_internal_force_n', 'mean_time_s']) expect(j.strategies[0]).toHaveProperty(key);
  });

  it('simulate writes bag/, summary.json and report.html (renamed into place) and prints the same summary', () => {
    const dir = mkdtempSync(join(tmpdir(), 'antiphon-simulate-'));
    const r = cli('simulate', '--seed', '2', '--strategy', 'alternating', '--period-steps', '200', '--duration', '1', '--params', 'config/demo_cell.yaml', '--out', dir, '--json');
    expect(r.status).toBe(0);
    const printed = JSON.parse(r.stdout) as { seed: number; strategy: string; files: string[] };
    expect(printed.strategy).toBe('alternating:0.2s');
    expect(readdirSync(dir).sort()).toEqual(['.antiphon-output', 'bag', 'report.html', 'summary.json']); // the marker: --overwrite replaces only folders antiphon wrote
    const written = JSON.parse(readFileSync(join(dir, 'summary.json'), 'utf8')) as Record<string, unknown>;
    const { files, ...summary } = printed;
    expect(files).toEqual([join(dir, 'bag'), join(dir, 'summary.json'), join(dir, 'report.html')]);
    expect(written).toEqual(summary);
    expect(cli('simulate', '--strategy', 'fixed', '--period-steps', '10').status).toBe(2);
  });
});
