/**
 * SIGINT on a running `antiphon sweep` (the built CLI in a child process): exit 130, the
 * finished candidates kept in the journal beside --out, no output folder; `--resume` then
 * completes the sweep to the same sweep.json as an uninterrupted run. Our own synthetic bags.
 */
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { register } from '../../src/cli/sweep.js';
import { journalPath } from '../../src/sweep/run.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered } from '../support/run-command.js';
import { makeKnockBags } from './helpers.js';

const MAIN = 'dist/src/cli/main.js';
let dir: string;
let args: string[];
beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-sweep-int-'));
  const { bags, labels } = await makeKnockBags(join(dir, 'bags'), 8);
  writeFileSync(join(dir, 'space.yaml'), 'version: 1\nparameters:\n  wrench_filter.impact.force_n:\n    range: { from: 5.0, to: 50.0, step: 5.0 }\n  roles.period_s:\n    grid: [0.25, 0.5]\n');
  args = ['sweep', '--params', 'config/demo_cell.yaml', '--space', join(dir, 'space.yaml'), '--bags', ...bags, '--labels', labels];
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe.skipIf(!existsSync(MAIN))('sweep and SIGINT', () => {
  it('keeps finished candidates; --resume completes to the uninterrupted result', async () => {
    const out = join(dir, 'out');
    const journal = journalPath(out);
    const child = spawn(process.execPath, [MAIN, ...args, '--out', out], { stdio: ['ignore', 'pipe', 'pipe'] });
    let err = '';
    child.stderr.on('data', (d) => (err += String(d)));
    const code = await new Promise<number>((resolve) => {
      const poll = setInterval(() => {
        if (existsSync(journal) && readFileSync(journal, 'utf8').trim().split('\n').length >= 3) {
          clearInterval(poll);
          child.kill('SIGINT');
        }
      }, 50);
      child.on('exit', (c, sig) => {
        clearInterval(poll);
        resolve(c ?? (sig ? 128 : 0));
      });
    });
    expect(code).toBe(130);
    expect(err).toMatch(/interrupted: \d+ of 20 candidates finished, kept in .*--resume/);
    expect(existsSync(out)).toBe(false);
    const kept = readFileSync(journal, 'utf8').trim().split('\n').length - 1;
    expect(kept).toBeGreaterThanOrEqual(2);
    resetLogging();
    const r = await runRegistered(register, 'sweep', [...args.slice(1), '--out', out, '--resume', '--json']);
    expect(r.code).toBe(0);
    expect(JSON.parse(r.stdout).resumed).toBe(kept);
    expect(existsSync(journal)).toBe(false);
    resetLogging();
    expect((await runRegistered(register, 'sweep', [...args.slice(1), '--out', join(dir, 'whole')])).code).toBe(0);
    expect(readFileSync(join(out, 'sweep.json'), 'utf8')).toBe(readFileSync(join(dir, 'whole', 'sweep.json'), 'utf8'));
  }, 600_000);
});
