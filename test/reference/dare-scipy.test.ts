/**
 * The DARE solver against SciPy's scipy.linalg.solve_discrete_are on seeded random systems.
 * SciPy comes from Debian's python3-scipy under /usr/bin/python3 (not the pyenv python3 on
 * PATH). Without it the test is skipped locally and fails under CI.
 */
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { solveDare, type Mat } from '../../src/analysis/dare.js';
import { Rng } from '../../src/util/rng.js';

const PYTHON = '/usr/bin/python3';
const MISSING = '.ci/run must install python3-scipy (apt-get install -y python3-scipy) for /usr/bin/python3';

function scipyAvailable(): boolean {
  const r = spawnSync(PYTHON, ['-c', 'import scipy.linalg'], { encoding: 'utf8' });
  return r.status === 0;
}

const SCRIPT = `
import json, sys
import numpy as np
from scipy.linalg import solve_discrete_are
out = []
for c in json.load(sys.stdin):
    A, B, Q, R = (np.array(c[k], dtype=float) for k in ('A', 'B', 'Q', 'R'))
    P = solve_discrete_are(A, B, Q, R)
    K = np.linalg.solve(R + B.T @ P @ B, B.T @ P @ A)
    out.append({'P': P.tolist(), 'K': K.tolist()})
json.dump(out, sys.stdout)
`;

interface Case {
  A: Mat;
  B: Mat;
  Q: Mat;
  R: Mat;
}

/** A seeded random 2-state system: A entries in [−1.3, 1.3], B 2×m, Q = MᵀM + 0.1 I, R diagonal positive. */
function randomCase(rng: Rng, m: number): Case {
  const A = [0, 1].map(() => [0, 1].map(() => rng.range(-1.3, 1.3)));
  const B = [0, 1].map(() => Array.from({ length: m }, () => rng.range(-1, 1)));
  const M = [0, 1].map(() => [0, 1].map(() => rng.range(-1, 1)));
  const Q = [0, 1].map((i) => [0, 1].map((j) => M[0]![i]! * M[0]![j]! + M[1]![i]! * M[1]![j]! + (i === j ? 0.1 : 0)));
  const R = Array.from({ length: m }, (_, i) => Array.from({ length: m }, (_, j) => (i === j ? rng.range(0.2, 3) : 0)));
  return { A, B, Q, R };
}

function relErr(a: Mat, b: Mat): number {
  let num = 0;
  let den = 0;
  a.forEach((row, i) => row.forEach((v, j) => ((num += (v - b[i]![j]!) ** 2), (den += b[i]![j]! ** 2))));
  return Math.sqrt(num) / Math.max(Math.sqrt(den), 1e-300);
}

const available = scipyAvailable();
if (!available && process.env['CI']) {
  describe('DARE vs SciPy', () => {
    it('needs SciPy', () => {
      throw new Error(MISSING);
    });
  });
}

describe.skipIf(!available)(`DARE vs SciPy solve_discrete_are${available ? '' : ` (skipped: ${MISSING})`}`, () => {
  it('matches SciPy on seeded random 2-state systems (seed 20240611), relative 1e-8', () => {
    const rng = new Rng(20240611);
    const cases: Case[] = [];
    for (let i = 0; i < 6; i++) cases.push(randomCase(rng, 1 + (i % 2)));
    // the worked example of the linear team as one more case
    cases.push({ A: [[1.02, 0.05], [0.05, 1.02]], B: [[0, 0.1], [0.1, 0]], Q: [[1, 0], [0, 1]], R: [[1, 0], [0, 1]] });
    const r = spawnSync(PYTHON, ['-c', SCRIPT], { input: JSON.stringify(cases), encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const ref = JSON.parse(r.stdout) as { P: Mat; K: Mat }[];
    cases.forEach((c, i) => {
      const sol = solveDare(c.A, c.B, c.Q, c.R);
      // SciPy scipy.linalg.solve_discrete_are
      expect(relErr(sol.P, ref[i]!.P), `case ${i} P`).toBeLessThan(1e-8);
      // SciPy P, then K = (R + BᵀPB)⁻¹BᵀPA with numpy.linalg.solve
      expect(relErr(sol.K, ref[i]!.K), `case ${i} K`).toBeLessThan(1e-8);
    });
  });
});
