/**
 * `antiphon sweep --worlds N` over the simulated cell (our own synthetic worlds): success,
 * collisions, internal force and belief calibration per candidate from the simulator's ground
 * truth; the same sweep.json with --jobs 1 and --jobs 2; the report draws success against the
 * role period.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { register } from '../../src/cli/sweep.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered } from '../support/run-command.js';

let dir: string;
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-sweep-worlds-'));
  writeFileSync(join(dir, 'space.yaml'), 'version: 1\nparameters:\n  roles.period_s:\n    grid: [0.25, 0.5]\n');
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const sweep = (...args: string[]) => {
  resetLogging();
  return runRegistered(register, 'sweep', ['--params', 'config/demo_cell.yaml', '--space', join(dir, 'space.yaml'), '--worlds', '2', '--seed', '3', '--duration', '2', ...args]);
};

describe('sweep over simulated worlds', () => {
  it('measures success, collisions, internal force and calibration; jobs 1 and 2 agree', async () => {
    const a = await sweep('--out', join(dir, 'w1'));
    expect(a.stderr).toBe('');
    expect(a.code).toBe(0);
    const b = await sweep('--out', join(dir, 'w2'), '--jobs', '2');
    expect(b.code).toBe(0);
    const text = readFileSync(join(dir, 'w1', 'sweep.json'), 'utf8');
    expect(readFileSync(join(dir, 'w2', 'sweep.json'), 'utf8')).toBe(text);
    const doc = JSON.parse(text);
    expect(doc.data.kind).toBe('worlds');
    for (const c of doc.candidates) {
      expect(c.metrics.success_rate).not.toBeNull();
      expect(c.metrics.collision_rate).not.toBeNull();
      expect(c.metrics.peak_internal_force_n).toBeGreaterThan(0);
      expect(c.metrics.duration_s).toBeGreaterThan(0);
    }
    expect(readFileSync(join(dir, 'w1', 'report.html'), 'utf8')).toContain('<svg id="period-success"');
  }, 600_000);
});
