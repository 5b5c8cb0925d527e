/**
 * Review (issue 9): `analyze` on plain 6-state models failed with mathjs "eigenvalues failed to
 * converge" (8 of 15 random models of 6–12 states), and accepted 150 states and 10,000 runs ×
 * 10⁶ steps with no bound and no progress. Now the eigenvalues come from a Hessenberg/real-Schur
 * QR decomposition (ml-matrix; checked against numpy in test/reference/eigen-numpy.test.ts), and
 * MAX_STATES, MAX_RUNS and MAX_SIMULATED_STEPS bound the work. Random models are invented
 * (seeded), for our own behaviour.
 */
import { describe, expect, it } from 'vitest';
import { register } from '../../src/cli/analyze.js';
import { analyzeTeam, buildTeam, MAX_STATES, parseLinearTeamModel, type LinearTeamModel } from '../../src/analysis/linear-team.js';
import { Rng } from '../../src/util/rng.js';
import { problemsOf, tempFiles } from '../support/files.js';
import { runRegistered } from '../support/run-command.js';

const files = tempFiles('review-analyze');

/** A seeded random team: A near identity (stable-ish), B1 on the first half of the inputs, B2 on the rest. */
export function randomModel(rng: Rng, n: number): LinearTeamModel {
  const n1 = Math.floor(n / 2);
  const A = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 1 : 0) + rng.range(-0.3, 0.3)));
  const B1 = Array.from({ length: n }, () => Array.from({ length: n1 }, () => rng.range(-1, 1)));
  const B2 = Array.from({ length: n }, () => Array.from({ length: n - n1 }, () => rng.range(-1, 1)));
  const I = (m: number) => Array.from({ length: m }, (_, i) => Array.from({ length: m }, (_, j) => (i === j ? 1 : 0)));
  return {
    A, B1, B2, Q: I(n), R: I(n),
    observes: [Array.from({ length: n1 }, (_, i) => i), Array.from({ length: n - n1 }, (_, i) => n1 + i)],
    x0: Array.from({ length: n }, () => rng.range(-1, 1)),
    steps: 50,
    periods: [1, 2, 4],
  };
}

const yamlOf = (m: LinearTeamModel): string =>
  `A: ${JSON.stringify(m.A)}\nB1: ${JSON.stringify(m.B1)}\nB2: ${JSON.stringify(m.B2)}\nQ: ${JSON.stringify(m.Q)}\nR: ${JSON.stringify(m.R)}\n` +
  `observes: { agent1: ${JSON.stringify(m.observes[0])}, agent2: ${JSON.stringify(m.observes[1])} }\nx0: ${JSON.stringify(m.x0)}\nsteps: ${m.steps}\n`;

describe('review: analyze numerics and limits', () => {
  it('15 seeded random models of 6 to 12 states analyze without an eigenvalue failure', () => {
    const rng = new Rng(9);
    for (let c = 0; c < 15; c++) {
      const n = 6 + (c % 7);
      const report = analyzeTeam(buildTeam(randomModel(rng, n)));
      expect(Number.isFinite(report.centralized.spectral_radius), `model ${c}`).toBe(true);
      expect(report.centralized.spectral_radius).toBeLessThan(1);
      for (const a of report.alternating) expect(a.spectral_radius >= 0, `model ${c} period ${a.period_steps}`).toBe(true);
    }
  }, 120_000);

  it(`more than ${MAX_STATES} states: refused at the model's A with file and line`, () => {
    const m = randomModel(new Rng(1), MAX_STATES + 1);
    const p = problemsOf(() => parseLinearTeamModel(yamlOf(m), 'big.yaml'));
    expect(p).toEqual([expect.objectContaining({ code: 'model.too_many_states', where: expect.objectContaining({ file: 'big.yaml', line: 1, key: 'A' }) })]);
  });

  it('10,000 runs × 10⁶ steps: refused before any work (exit 2), with the limit', async () => {
    const m = { ...randomModel(new Rng(2), 2), steps: 1_000_000 };
    const f = files.write(yamlOf(m).replace('steps: 1000000', 'steps: 1000000\nperiods: [1]'));
    const runs = await runRegistered(register, 'analyze', ['--model', f, '--noise-std', '0.1', '--runs', '10000']);
    expect(runs.code).toBe(2);
    expect(runs.stderr).toMatch(/--runs must be a number from 1 to 1000/);
    const steps = await runRegistered(register, 'analyze', ['--model', f, '--noise-std', '0.1', '--runs', '100']);
    expect(steps.code).toBe(2);
    expect(steps.stderr).toMatch(/would simulate 2\.02e\+8 steps .* more than the limit of 2e\+7/);
  });

  it('--json prints no progress bar', async () => {
    const r = await runRegistered(register, 'analyze', ['--model', 'examples/linear-team.yaml', '--json']);
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    expect(JSON.parse(r.stdout).alternating).toHaveLength(5);
  });
});
