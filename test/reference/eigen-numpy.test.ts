/**
 * Eigenvalues of non-symmetric matrices (src/analysis/dare.ts `eigenvalues`, ml-matrix's
 * Hessenberg + shifted-QR real Schur decomposition) against numpy.linalg.eigvals (LAPACK geev),
 * from Debian's python3-numpy under /usr/bin/python3, on seeded random matrices: the alternating
 * monodromy matrices of random linear teams up to MAX_STATES (augmented size 2n, up to 64), and
 * plain random matrices of 2 to 64. Compared: the sorted eigenvalue moduli and the spectral
 * radius, relative to the largest modulus. Without numpy: skipped locally, fails under CI.
 */
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { eigenvalues, spectralRadius, type Mat } from '../../src/analysis/dare.js';
import { buildTeam, MAX_STATES, monodromy, type LinearTeamModel } from '../../src/analysis/linear-team.js';
import { Rng } from '../../src/util/rng.js';

const PYTHON = '/usr/bin/python3';
const MISSING = '.ci/run must install python3-numpy (apt-get install -y python3-numpy) for /usr/bin/python3';
const available = spawnSync(PYTHON, ['-c', 'import numpy'], { encoding: 'utf8' }).status === 0;

const SCRIPT = `
import json, sys
import numpy as np
out = []
for M in json.load(sys.stdin):
    w = np.linalg.eigvals(np.array(M, dtype=float))
    out.append(sorted(abs(w).tolist()))
json.dump(out, sys.stdout)
`;

function randomTeam(rng: Rng, n: number): LinearTeamModel {
  const n1 = Math.floor(n / 2);
  const A = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 1 : 0) + rng.range(-0.3, 0.3)));
  const B1 = Array.from({ length: n }, () => Array.from({ length: n1 }, () => rng.range(-1, 1)));
  const B2 = Array.from({ length: n }, () => Array.from({ length: n - n1 }, () => rng.range(-1, 1)));
  const I = (m: number) => Array.from({ length: m }, (_, i) => Array.from({ length: m }, (_, j) => (i === j ? 1 : 0)));
  return { A, B1, B2, Q: I(n), R: I(n), observes: [Array.from({ length: n1 }, (_, i) => i), Array.from({ length: n - n1 }, (_, i) => n1 + i)], x0: new Array<number>(n).fill(1), steps: 10 };
}

function cases(): { label: string; M: Mat }[] {
  const rng = new Rng(20260);
  const out: { label: string; M: Mat }[] = [];
  for (const n of [2, 3, 6, 8, 12, 16, 24, MAX_STATES]) {
    const team = buildTeam(randomTeam(rng, n));
    for (const p of [1, 3]) out.push({ label: `monodromy n=${n} p=${p} (${2 * n}×${2 * n})`, M: monodromy(team, { kind: 'alternating', period: p }) });
  }
  for (const n of [2, 5, 10, 20, 40, 64]) out.push({ label: `random ${n}×${n}`, M: Array.from({ length: n }, () => Array.from({ length: n }, () => rng.range(-1, 1))) });
  return out;
}

if (!available && process.env['CI']) {
  describe('eigenvalues vs numpy', () => {
    it('needs numpy', () => {
      throw new Error(MISSING);
    });
  });
} else if (!available) {
  describe.skip(`eigenvalues vs numpy (skipped: ${MISSING})`, () => {
    it('runs where python3 with numpy is installed (apt-get install -y python3-numpy; .ci/run installs it)', () => {});
  });
} else {
  describe('eigenvalues vs numpy.linalg.eigvals', () => {
    it('sorted moduli and spectral radius agree to 1e-9 relative on seeded teams up to MAX_STATES and random matrices', () => {
      const list = cases();
      const r = spawnSync(PYTHON, ['-c', SCRIPT], { input: JSON.stringify(list.map((c) => c.M)), encoding: 'utf8', maxBuffer: 1 << 26 });
      expect(r.status, r.stderr).toBe(0);
      const ref = JSON.parse(r.stdout) as number[][];
      let worst = 0;
      let worstRadius = 0;
      list.forEach((c, k) => {
        const mine = eigenvalues(c.M).map((e) => Math.hypot(e.re, e.im)).sort((a, b) => a - b);
        const theirs = ref[k]!;
        expect(mine.length, c.label).toBe(theirs.length);
        const scale = Math.max(theirs[theirs.length - 1]!, 1e-300);
        const dev = Math.max(...mine.map((v, i) => Math.abs(v - theirs[i]!) / scale));
        const devRadius = Math.abs(spectralRadius(c.M) - theirs[theirs.length - 1]!) / scale;
        worst = Math.max(worst, dev);
        worstRadius = Math.max(worstRadius, devRadius);
        expect(dev, c.label).toBeLessThan(1e-9);
        expect(devRadius, c.label).toBeLessThan(1e-12);
      });
      console.log(`eigenvalues vs numpy: ${list.length} matrices, worst sorted-modulus deviation ${worst.toExponential(2)}, worst spectral-radius deviation ${worstRadius.toExponential(2)} (relative to the radius)`);
    }, 120_000);
  });
}
