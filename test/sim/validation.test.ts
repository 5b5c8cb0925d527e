/** Bad input is refused before any simulation starts, naming the key or option and what is allowed. */
import { mkdtempSync, writeFileSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadCell, type ArmConfig } from '../../src/params/config.js';
import { runCompare, validateCompare } from '../../src/sim/compare.js';
import { checkEpisodeSetup } from '../../src/sim/episode.js';
import { simOptions } from '../../src/sim/options.js';
import { parseStrategy, parseStrategyList, STRATEGY_NAMES } from '../../src/sim/strategies.js';
import { InputError } from '../../src/util/errors.js';

const cell = loadCell('config/demo_cell.yaml');
const left = cell.left.config;
const right = cell.right.config;

function problemsOf(fn: () => unknown): InputError {
  try {
    fn();
  } catch (err) {
    if (err instanceof InputError) return err;
    throw err;
  }
  throw new Error('expected an InputError');
}

function withTask(c: ArmConfig, task: Partial<ArmConfig['task']>): ArmConfig {
  return { ...c, task: { ...c.task, ...task } };
}

describe('strategy names', () => {
  it('refuses unknown names with the option and the allowed list', () => {
    const e = problemsOf(() => parseStrategyList('centralized,telepathy'));
    expect(e.problems[0]!.where?.option).toBe('--strategies');
    for (const n of STRATEGY_NAMES) expect(e.problems[0]!.hint).toContain(n);
  });
  it('refuses a period on a strategy without one, and periods out of range', () => {
    expect(problemsOf(() => parseStrategy('fixed:10')).problems[0]!.code).toBe('cli.period_not_allowed');
    expect(problemsOf(() => parseStrategy('alternating:0')).problems[0]!.hint).toContain('1 to 600000 samples');
    expect(problemsOf(() => parseStrategy('alternating:2.5')).problems[0]!.code).toBe('cli.bad_period');
  });
  it('expands a bare alternating into the default periods', () => {
    expect(parseStrategyList('alternating').map((s) => s.k)).toEqual([50, 200, 500, 1000]);
    expect(parseStrategyList('explicit:100,fixed')).toEqual([{ name: 'explicit', k: 100 }, { name: 'fixed', k: null }]);
  });
});

describe('compare input', () => {
  it('refuses --worlds 0 before any run', async () => {
    let progressed = false;
    const input = { left, right, worlds: 0, seed: 1, strategies: parseStrategyList('fixed'), onProgress: () => (progressed = true) };
    expect(problemsOf(() => validateCompare(input)).problems[0]!.where?.option).toBe('--worlds');
    await expect(runCompare(input)).rejects.toBeInstanceOf(InputError);
    expect(progressed).toBe(false);
  });
});

describe('task against the cell', () => {
  const o = simOptions();
  it('refuses a goal inside a zone (sim check, and the parameter loader)', () => {
    const post = left.task.zones.find((z) => z.name === 'clamp_post')!;
    const p = checkEpisodeSetup(withTask(left, { goal_m: [post.center_m[0], 0] }), o);
    expect(p.map((x) => x.code)).toContain('sim.zone_overlaps_goal');
    expect(p.find((x) => x.code === 'sim.zone_overlaps_goal')!.where?.key).toBe('task.zones.clamp_post.center_m');
    const dir = mkdtempSync(join(tmpdir(), 'antiphon-sim-'));
    const yaml = readFileSync('config/demo_cell.yaml', 'utf8').replace('goal_m: [1.6, 0.0]', 'goal_m: [0.6, 0.0]');
    writeFileSync(join(dir, 'cell.yaml'), yaml);
    const e = problemsOf(() => loadCell(join(dir, 'cell.yaml')));
    expect(e.problems.some((x) => x.code === 'param.zone_overlaps_goal')).toBe(true);
  });
  it('refuses a beam longer than the cell is wide', () => {
    const c = withTask(left, { object: { ...left.task.object, length_m: 3.5 } });
    const p = checkEpisodeSetup(c, o).find((x) => x.code === 'sim.object_longer_than_cell')!;
    expect(p.where?.key).toBe('task.object.length_m');
    expect(p.hint).toContain('less than 3 m');
  });
  it('refuses a beam without mass (sim check, and the schema minimum)', () => {
    const c = withTask(left, { object: { ...left.task.object, mass_kg: 0 } });
    expect(checkEpisodeSetup(c, o).find((x) => x.code === 'sim.no_mass')!.where?.key).toBe('task.object.mass_kg');
    const dir = mkdtempSync(join(tmpdir(), 'antiphon-sim-'));
    writeFileSync(join(dir, 'cell.yaml'), readFileSync('config/demo_cell.yaml', 'utf8').replace('mass_kg: 2.4', 'mass_kg: 0.0'));
    const e = problemsOf(() => loadCell(join(dir, 'cell.yaml')));
    expect(e.problems.some((x) => x.where?.key === 'task.object.mass_kg')).toBe(true);
  });
  it('refuses a wrench rate that is not the physics rate over a whole number', () => {
    const c = { ...left, wrench_filter: { ...left.wrench_filter, sample_rate_hz: 300 } };
    expect(checkEpisodeSetup(c, o).map((x) => x.code)).toContain('sim.rate_not_multiple');
  });
  it('refuses sim options out of range, naming the key and the range', () => {
    const e = problemsOf(() => simOptions({ admittance_damping_n_s_m: 0, sensor: { noise_force_n: -1 } }));
    expect(e.problems.map((p) => p.where?.key)).toEqual(['sim.admittance_damping_n_s_m', 'sim.sensor.noise_force_n']);
    expect(e.problems[0]!.hint).toBe('from 1 to 10000');
  });
  it('the demo cell passes', () => {
    expect(checkEpisodeSetup(left, o)).toEqual([]);
    expect(checkEpisodeSetup(right, o)).toEqual([]);
  });
});

describe('strategy periods in seconds (one vocabulary with roles.period_s)', () => {
  it('reads name:0.5s as seconds and name:500 as wrench samples, and labels both in seconds', async () => {
    const { parseStrategy, strategyLabel } = await import('../../src/sim/strategies.js');
    expect(parseStrategy('alternating:0.5s')).toEqual({ name: 'alternating', k: 500 });
    expect(parseStrategy('alternating:500')).toEqual({ name: 'alternating', k: 500 });
    expect(parseStrategy('explicit:0.05s')).toEqual({ name: 'explicit', k: 50 });
    expect(strategyLabel({ name: 'alternating', k: 500 })).toBe('alternating:0.5s');
    expect(strategyLabel({ name: 'alternating', k: 1000 }, 500)).toBe('alternating:2s');
    expect(() => parseStrategy('alternating:0.0005s')).toThrow(/whole number of wrench samples at 1000 Hz/);
    expect(() => parseStrategy('alternating:s')).toThrow(/whole number of wrench samples/);
  });
});
