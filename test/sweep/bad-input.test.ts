/**
 * Bad input to sweep is refused before any work (exit 2, nothing written), naming the key or
 * file, line and column, and what is allowed: a space key that does not exist (with the
 * nearest key), a value past a hard ceiling, an empty grid, a candidate the cross-key checks
 * refuse, labels outside a bag's span, bags without the topics a sweep needs. Our own
 * synthetic bags. Ceilings and ranges: src/params/schema.ts.
 */
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { register } from '../../src/cli/sweep.js';
import { createBagWriter, encodeWrenchStamped } from '../../src/bag/index.js';
import { parseSpace, allCandidates } from '../../src/sweep/space.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered } from '../support/run-command.js';
import { makeKnockBags } from './helpers.js';

let dir: string;
let bags: string[];
let labels: string;
beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-sweep-bad-'));
  ({ bags, labels } = await makeKnockBags(join(dir, 'bags'), 3, [{ name: 'short', seed: 1, arm: 'left', t_s: 2, force_n: 50 }]));
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function sweepWith(space: string, ...extra: string[]) {
  const f = join(dir, `space-${Math.random().toString(36).slice(2)}.yaml`);
  writeFileSync(f, space);
  resetLogging();
  const out = join(dir, 'out-' + Math.random().toString(36).slice(2));
  const r = await runRegistered(register, 'sweep', ['--params', 'config/demo_cell.yaml', '--space', f, '--bags', ...bags, '--out', out, ...extra]);
  expect(existsSync(out)).toBe(false);
  return { ...r, file: f };
}

describe('sweep refuses bad input before any work', () => {
  it('a key that does not exist, with the nearest key', async () => {
    const r = await sweepWith('version: 1\nparameters:\n  wrench_filter.impact.forse_n:\n    grid: [10.0]\n');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`${r.file}:3:3, key wrench_filter.impact.forse_n: unknown parameter`);
    expect(r.stderr).toContain('did you mean wrench_filter.impact.force_n?');
  });

  it('a range past a hard ceiling (watchdog.force_limit_n: ceiling 500 N)', async () => {
    const r = await sweepWith('version: 1\nparameters:\n  watchdog.force_limit_n:\n    range: { from: 100.0, to: 600.0, step: 100.0 }\n');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/:4:31, key watchdog.force_limit_n: watchdog.force_limit_n range.to = 600 is above the hard safety ceiling 500 N/);
  });

  it('a grid value past a ceiling, an out-of-range value and a wrong type, all at once', async () => {
    const r = await sweepWith('version: 1\nparameters:\n  policy.speed_m_s:\n    grid: [0.1, 2.0]\n  roles.period_s:\n    grid: [0.0001]\n  roles.scheduler:\n    grid: [alternating, sometimes]\n');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/:4:17, key policy.speed_m_s: policy.speed_m_s grid\[1\] = 2 is above the hard safety ceiling 1/);
    expect(r.stderr).toMatch(/:6:12, key roles.period_s: roles.period_s grid\[0\] = 0.0001 is out of range \(floating-point number, from 0.005 to 600 s\)/);
    expect(r.stderr).toMatch(/:8:25, key roles.scheduler: roles.scheduler grid\[1\] = 'sometimes' is not allowed \(string, one of fixed, alternating, adaptive, lookahead\)/);
  });

  it('an empty grid', async () => {
    const r = await sweepWith('version: 1\nparameters:\n  roles.period_s:\n    grid: []\n');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/:4:11, key roles.period_s: roles.period_s.grid is empty/);
  });

  it('a candidate the cross-key checks refuse names the space line', async () => {
    // policy.speed_m_s must stay below watchdog.linear_speed_limit_m_s (0.25 in the demo cell).
    const r = await sweepWith('version: 1\nparameters:\n  policy.speed_m_s:\n    grid: [0.1, 0.3]\n');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/:3:3, key policy.speed_m_s: candidate 1 \(policy.speed_m_s=0.3\): \[left\] policy.speed_m_s = 0.3 exceeds watchdog.linear_speed_limit_m_s/);
  });

  it('labels outside the bag\'s time span', async () => {
    const f = join(dir, 'late.csv');
    writeFileSync(f, 'bag,t_s,kind,arm\nshort,2.0,impact,left\nshort,7.5,impact,right\n');
    const r = await sweepWith('version: 1\nparameters:\n  roles.period_s:\n    grid: [0.5]\n', '--labels', f);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/late\.csv:3:1: event at 7.5 s lies outside bag short \(0 to 2.999 s\)/);
    expect(r.stderr).not.toMatch(/late\.csv:2/);
  });

  it('bags without the topics a sweep needs', async () => {
    const b = join(dir, 'one-arm');
    const w = await createBagWriter(b, { storage: 'mcap' });
    const id = await w.addTopic({ name: '/left/wrench', type: 'geometry_msgs/msg/WrenchStamped' });
    void w.write(id, 1_000_000_000n, encodeWrenchStamped([1, 0, 0, 0, 0, 0, 0, 0], 0, 'left_ft_sensor'));
    await w.close();
    const f = join(dir, 'sp.yaml');
    writeFileSync(f, 'version: 1\nparameters:\n  roles.period_s:\n    grid: [0.5]\n');
    resetLogging();
    const r = await runRegistered(register, 'sweep', ['--params', 'config/demo_cell.yaml', '--space', f, '--bags', b]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/one-arm, topic \/right\/wrench: the bag has no \/right\/wrench \(geometry_msgs\/msg\/WrenchStamped\): a sweep replays both arms \(the bag has \/left\/wrench\)/);
  });
});

describe('the space file', () => {
  it('range, random and grid values; the product, last key fastest', () => {
    const s = parseSpace('version: 1\nseed: 3\nparameters:\n  roles.period_s:\n    range: { from: 0.1, to: 0.3, step: 0.1 }\n  belief.noise_force_n:\n    random: { from: 0.5, to: 3.0, count: 2 }\n  watchdog.on_impact:\n    grid: [hold, report]\n', 'x.yaml');
    expect(s.axes[0]!.values).toEqual([0.1, 0.2, 0.3]);
    expect(s.axes[1]!.values).toHaveLength(2);
    for (const v of s.axes[1]!.values as number[]) expect(v >= 0.5 && v <= 3).toBe(true);
    expect(s.count).toBe(12);
    const c = allCandidates(s);
    expect(c[1]!.values).toEqual({ 'roles.period_s': 0.1, 'belief.noise_force_n': s.axes[1]!.values[0], 'watchdog.on_impact': 'report' });
    // The same seed draws the same values.
    expect(parseSpace('version: 1\nseed: 3\nparameters:\n  roles.period_s:\n    range: { from: 0.1, to: 0.3, step: 0.1 }\n  belief.noise_force_n:\n    random: { from: 0.5, to: 3.0, count: 2 }\n', 'y.yaml').axes[1]!.values).toEqual(s.axes[1]!.values);
  });

  it('the shipped example loads', async () => {
    const { loadSpace } = await import('../../src/sweep/space.js');
    const s = loadSpace('examples/sweep-space.yaml');
    expect(s.count).toBe(20);
  });
});
