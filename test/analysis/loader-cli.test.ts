/**
 * The model loader's refusals (file:line:col of the bad value) and the `analyze` command:
 * its JSON shape and its exit codes (0 ok, 1 an expectation failed, 2 bad input).
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { parseLinearTeamModel, buildTeam, loadLinearTeam, parsePeriodsOption } from '../../src/analysis/linear-team.js';
import { register } from '../../src/cli/analyze.js';
import { lineCol, problemsOf, tempFiles } from '../support/files.js';
import { runRegistered } from '../support/run-command.js';

const EXAMPLE = fileURLToPath(new URL('../../examples/linear-team.yaml', import.meta.url));
const BASE = readFileSync(EXAMPLE, 'utf8');
const { dir, write } = tempFiles('analyze');

/** Replace one exact piece of the example, failing loudly if it is not there. */
function edit(from: string, to: string): string {
  expect(BASE.includes(from), from).toBe(true);
  return BASE.replace(from, to);
}

const load = (text: string) => () => {
  const { model, locate } = parseLinearTeamModel(text, 'm.yaml');
  return buildTeam(model, locate);
};

describe('model loader', () => {
  it('loads the example', () => {
    const t = loadLinearTeam(EXAMPLE);
    expect(t.n).toBe(2);
    expect(t.model.observes).toEqual([[0], [1]]);
    expect(t.model.periods).toEqual([1, 2, 4, 8, 16]);
  });

  it('refuses a non-square A with its place', () => {
    // common practice: x[k+1] = A x[k] needs A square
    const text = edit('A: [[1.02, 0.05],\n    [0.05, 1.02]]', 'A: [[1.02, 0.05, 0],\n    [0.05, 1.02, 0]]');
    const [p] = problemsOf(load(text));
    expect(p!.code).toBe('model.not_square');
    expect(p!.where).toMatchObject({ file: 'm.yaml', ...lineCol(text, '[[1.02'), key: 'A' });
  });

  it('refuses dimension mismatches (B rows, R size, x0 length)', () => {
    // common practice: B is n × m, R is m × m with m = m1 + m2, x0 has n entries
    const text = edit('B1: [[0.0],        # agent 1\'s input reaches x2 only\n     [0.1]]', 'B1: [[0.0], [0.1], [0.3]]').replace('x0: [1.0, -0.7]', 'x0: [1.0]');
    const ps = problemsOf(load(text));
    expect(ps.map((p) => p.code)).toEqual(['model.dimension_mismatch', 'model.dimension_mismatch']);
    expect(ps[0]!.where).toMatchObject({ ...lineCol(text, '[[0.0], [0.1]'), key: 'B1' });
    expect(ps[1]!.where).toMatchObject({ ...lineCol(text, '[1.0]'), key: 'x0' });
    const r3 = edit('R: [[1, 0],\n    [0, 1]]', 'R: [[1]]');
    const [pr] = problemsOf(load(r3));
    expect(pr!.code).toBe('model.dimension_mismatch');
    expect(pr!.where?.key).toBe('R');
  });

  it('refuses index lists that do not partition the state', () => {
    // common practice: each state observed by exactly one agent
    const dup = edit('  agent2: [1]', '  agent2: [0]');
    const [pd] = problemsOf(load(dup));
    expect(pd!.code).toBe('model.not_partition');
    expect(pd!.where).toMatchObject({ ...lineCol(dup, '0]', '  agent2:'), key: 'observes.agent2[0]' });
    const out = edit('  agent2: [1]', '  agent2: [2]');
    const [po] = problemsOf(load(out));
    expect(po!.code).toBe('model.bad_index');
    expect(po!.where).toMatchObject({ ...lineCol(out, '2]', '  agent2:') });
    const missing = edit('  agent1: [0]\n  agent2: [1]', '  agent1: [0]\n  agent2: [0, 0]');
    expect(problemsOf(load(missing))[0]!.code).toBe('model.not_partition');
    const none = edit('  agent1: [0]', '  agent1: []');
    expect(problemsOf(load(none))[0]!.code).toBe('model.bad_observes');
  });

  it('refuses periods of zero or non-integers in the file, at the bad item', () => {
    // common practice: a role period is a positive whole number of steps
    const text = edit('periods: [1, 2, 4, 8, 16]', 'periods: [1, 0, 2.5]');
    const ps = problemsOf(load(text));
    expect(ps.map((p) => p.code)).toEqual(['model.bad_period', 'model.bad_period']);
    expect(ps[0]!.where).toMatchObject({ ...lineCol(text, '0, 2.5'), key: 'periods[1]' });
    expect(ps[1]!.where).toMatchObject({ ...lineCol(text, '2.5'), key: 'periods[2]' });
    expect(ps[0]!.hint).toMatch(/positive whole number/);
  });

  it('refuses a singular speaker map (the listener could not invert the action)', () => {
    // closed form: agent 1's input reaches nothing, so its LQR row is zero and its gain on x1 has rank 0
    const text = edit("B1: [[0.0],        # agent 1's input reaches x2 only\n     [0.1]]", 'B1: [[0.0], [0.0]]');
    const [p] = problemsOf(load(text));
    expect(p!.code).toBe('model.singular_speaker');
    expect(p!.where).toMatchObject({ ...lineCol(text, '[0]', '  agent1:'), key: 'observes.agent1' });
    expect(p!.hint).toMatch(/full-column-rank/);
  });

  it('refuses a speaker that observes more states than it has inputs', () => {
    // closed form: a 1-column gain on 2 observed states has rank ≤ 1 < 2
    const text = [
      'A: [[1.0, 0.1, 0], [0, 1.0, 0.1], [0, 0, 0.9]]',
      'B1: [[0], [0], [1]]',
      'B2: [[1], [0], [0]]',
      'Q: [[1, 0, 0], [0, 1, 0], [0, 0, 1]]',
      'R: [[1, 0], [0, 1]]',
      'observes: { agent1: [0, 1], agent2: [2] }',
      'x0: [1, 0, 0]',
      'steps: 10',
    ].join('\n');
    const ps = problemsOf(load(text));
    expect(ps[0]!.code).toBe('model.singular_speaker');
    expect(ps[0]!.where).toMatchObject({ line: 6, key: 'observes.agent1' });
  });

  it('refuses an unstabilizable team, unknown keys, bad YAML', () => {
    // textbook (PBH): no input reaches the unstable modes
    const text = edit("B1: [[0.0],        # agent 1's input reaches x2 only\n     [0.1]]", 'B1: [[0.0], [0.0]]').replace('B2: [[0.1],        # agent 2\'s input reaches x1 only\n     [0.0]]', 'B2: [[0.0], [0.0]]');
    expect(problemsOf(load(text))[0]!.code).toBe('model.not_stabilizable');
    // common practice: a misspelt key is reported with the closest allowed one
    const unk = edit('steps: 400', 'stepz: 400');
    const pu = problemsOf(load(unk));
    expect(pu[0]).toMatchObject({ code: 'model.unknown_key', where: { ...lineCol(unk, 'stepz'), key: 'stepz' } });
    expect(pu[0]!.hint).toMatch(/did you mean 'steps'/);
    const [py] = problemsOf(load('A: [[1, 2]\nB1: x\n'));
    expect(py!.code).toBe('model.yaml');
    expect(py!.where?.line).toBeGreaterThanOrEqual(1);
    expect(py!.where?.column).toBeGreaterThanOrEqual(1);
  });

  it('parses --periods and refuses zero, fractions and junk', () => {
    // common practice
    expect(parsePeriodsOption('1,2, 4')).toEqual([1, 2, 4]);
    for (const bad of ['0', '1,1.5', 'a', '1,,2', '-3']) {
      expect(problemsOf(() => parsePeriodsOption(bad))[0]).toMatchObject({ code: 'cli.bad_period', where: { option: '--periods' } });
    }
  });
});

describe('antiphon analyze', () => {
  const run = (args: string[]) => runRegistered(register, 'analyze', args);

  it('--json prints the documented shape and exits 0', async () => {
    // common practice (the command's documented output)
    const r = await run(['--model', EXAMPLE, '--json', '--periods', '1,2,4']);
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(Object.keys(j)).toEqual(expect.arrayContaining(['centralized', 'fixed', 'alternating', 'checks', 'ok']));
    expect(j.noise).toBeUndefined();
    expect(typeof j.centralized.spectral_radius).toBe('number');
    expect(j.fixed).toMatchObject({ stable: false });
    expect(typeof j.fixed.spectral_radius).toBe('number');
    expect(typeof j.fixed.gap).toBe('number');
    expect(j.alternating.map((a: { period_steps: number }) => a.period_steps)).toEqual([1, 2, 4]);
    for (const a of j.alternating) expect(Object.keys(a)).toEqual(expect.arrayContaining(['period_steps', 'spectral_radius', 'stable', 'gap']));
  });

  it('--noise-std adds the noise block with its seed and runs', async () => {
    // common practice: every noisy result names its seed
    const r = await run(['--model', EXAMPLE, '--json', '--periods', '1', '--noise-std', '0.02', '--noise-bias', '0.05', '--runs', '3', '--seed', '11']);
    expect(r.code).toBe(0);
    const n = JSON.parse(r.stdout).noise;
    expect(n).toMatchObject({ std: 0.02, bias: 0.05, runs: 3, seed: 11, common_knowledge: 'shared' });
    expect(n.alternating[0].period_steps).toBe(1);
    for (const v of [n.alternating[0].unbiased, n.alternating[0].biased]) {
      expect(Object.keys(v)).toEqual(expect.arrayContaining(['final_state_norm', 'mean_final_state_norm', 'gap']));
    }
  });

  it('prints a text table by default', async () => {
    const r = await run(['--model', EXAMPLE, '--periods', '1,2']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/centralized\s+-\s+0\.899/);
    expect(r.stdout).toMatch(/fixed \(agent 1 speaks\).*NO/);
    expect(r.stdout).toMatch(/ok\s+gap_grows_with_period/);
  });

  it('exits 1 when an expectation of the model file fails', async () => {
    const f = write(edit('  fixed_stable: false', '  fixed_stable: true'));
    const r = await run(['--model', f, '--json']);
    expect(r.code).toBe(1);
    const j = JSON.parse(r.stdout);
    expect(j.ok).toBe(false);
    expect(j.checks.find((c: { name: string }) => c.name === 'fixed_stable')).toMatchObject({ expected: true, actual: false, ok: false });
  });

  it('bad model file: exit 2 with file:line:col', async () => {
    const text = edit('periods: [1, 2, 4, 8, 16]', 'periods: [1, 2, 0]');
    const f = write(text);
    const { line, column } = lineCol(text, '0]', 'periods:');
    const r = await run(['--model', f]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`${f}:${line}:${column}`);
    const rj = await run(['--model', f, '--json']);
    expect(rj.code).toBe(2);
    const j = JSON.parse(rj.stdout);
    expect(j.ok).toBe(false);
    expect(j.errors[0]).toMatchObject({ code: 'model.bad_period', where: { file: f, line, column } });
  });

  it('bad options: exit 2 naming the option', async () => {
    const r = await run(['--model', EXAMPLE, '--periods', '2,0.5']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/option --periods/);
    const s = await run(['--model', EXAMPLE, '--noise-std', '-1']);
    expect(s.code).toBe(2);
    expect(s.stderr).toMatch(/option --noise-std/);
    const c = await run(['--model', EXAMPLE, '--noise-std', '0.01', '--common-knowledge', 'guessed']);
    expect(c.code).toBe(2);
    expect(c.stderr).toMatch(/option --common-knowledge/);
    const m = await run(['--model', join(dir, 'missing.yaml')]);
    expect(m.code).toBe(2);
  });
});
