/**
 * The DARE solver against closed forms: scalar systems (the positive root of a quadratic),
 * the Lyapunov case b = 0, and spectral radii of small matrices with complex eigenvalues.
 */
import { describe, expect, it } from 'vitest';
import { DareError, dareResidual, rank, solveDare, spectralRadius, unstabilizableMode } from '../../src/analysis/dare.js';

/** Positive root of b²P² + (r − a²r − q b²)P − q r = 0 (closed form of the scalar DARE). */
function scalarP(a: number, b: number, q: number, r: number): number {
  const A2 = b * b;
  const B1 = r - a * a * r - q * b * b;
  const C = -q * r;
  return (-B1 + Math.sqrt(B1 * B1 - 4 * A2 * C)) / (2 * A2);
}

describe('scalar DARE', () => {
  // (a, b, q, r): stable, unstable, marginal, negative a, strongly unstable with weak input, cheap and dear input
  const cases: [number, number, number, number][] = [
    [0.5, 1, 1, 1],
    [1.2, 0.3, 2, 0.5],
    [1, 1, 1, 1],
    [-0.9, 2, 0.1, 3],
    [3, 0.1, 1, 10],
    [1.05, 0.5, 0.01, 100],
    [0.2, 5, 7, 0.001],
  ];
  for (const [a, b, q, r] of cases) {
    it(`a=${a} b=${b} q=${q} r=${r}`, () => {
      const sol = solveDare([[a]], [[b]], [[q]], [[r]]);
      const P = scalarP(a, b, q, r);
      // closed form: positive root of b²P² + (r − a²r − q b²)P − q r = 0
      expect(Math.abs(sol.P[0]![0]! - P) / P).toBeLessThan(1e-10);
      // closed form: K = a b P / (r + b² P)
      const K = (a * b * P) / (r + b * b * P);
      expect(Math.abs(sol.K[0]![0]! - K)).toBeLessThan(1e-10 * Math.max(1, Math.abs(K)));
      // textbook: the stabilizing solution gives |a − bK| < 1
      expect(Math.abs(a - b * sol.K[0]![0]!)).toBeLessThan(1);
      expect(sol.closedLoopSpectralRadius).toBeCloseTo(Math.abs(a - b * K), 10);
      expect(dareResidual([[a]], [[b]], [[q]], [[r]], sol.P)).toBeLessThan(1e-10);
    });
  }

  it('b = 0 with |a| < 1 reduces to the Lyapunov equation P = q / (1 − a²)', () => {
    // closed form: with no input the DARE is P = a²P + q
    const sol = solveDare([[0.6]], [[0]], [[2]], [[1]]);
    expect(sol.P[0]![0]!).toBeCloseTo(2 / (1 - 0.36), 10);
    expect(sol.K[0]![0]!).toBe(0);
  });

  it('refuses an unstabilizable pair and bad weights', () => {
    // textbook (PBH test): a mode with |λ| ≥ 1 that no input reaches cannot be stabilized
    expect(() => solveDare([[1.1]], [[0]], [[1]], [[1]])).toThrowError(DareError);
    try {
      solveDare([[1.1]], [[0]], [[1]], [[1]]);
    } catch (e) {
      expect((e as DareError).code).toBe('dare.not_stabilizable');
    }
    // common practice: R must be positive definite, Q positive semidefinite
    expect(() => solveDare([[0.5]], [[1]], [[1]], [[0]])).toThrowError(/R must be symmetric positive definite/);
    expect(() => solveDare([[0.5]], [[1]], [[-1]], [[1]])).toThrowError(/Q must be symmetric positive semidefinite/);
  });

  it('reports no stabilizing solution for a unit-circle mode that Q does not see', () => {
    // textbook: A = 1 (on the unit circle), b reaches it, q = 0 → the DARE has P = 0 with
    // closed loop a − bK = 1, not stabilizing: no stabilizing solution exists
    expect(() => solveDare([[1]], [[1]], [[0]], [[1]])).toThrowError(/no stabilizing solution/);
  });
});

describe('spectral radius and rank', () => {
  it('complex eigenvalues: a scaled rotation has radius equal to its scale', () => {
    // closed form: s·[[cos θ, −sin θ], [sin θ, cos θ]] has eigenvalues s e^{±iθ}
    const s = 1.1;
    const th = 0.7;
    const M = [
      [s * Math.cos(th), -s * Math.sin(th)],
      [s * Math.sin(th), s * Math.cos(th)],
    ];
    expect(spectralRadius(M)).toBeCloseTo(s, 10);
  });

  it('a 3×3 companion matrix with a complex pair', () => {
    // closed form: roots of (λ − 0.5)(λ² + 0.64) are 0.5 and ±0.8i → radius 0.8
    // λ³ − 0.5λ² + 0.64λ − 0.32: companion rows
    const M = [
      [0.5, -0.64, 0.32],
      [1, 0, 0],
      [0, 1, 0],
    ];
    expect(spectralRadius(M)).toBeCloseTo(0.8, 8);
  });

  it('rank of small matrices', () => {
    // closed form
    expect(rank([[1, 2], [2, 4]])).toBe(1);
    expect(rank([[1, 0], [0, 1e-3]])).toBe(2);
    expect(rank([[0, 0]])).toBe(0);
  });

  it('PBH finds the unreachable unstable mode among complex ones', () => {
    // closed form: block-diagonal with an unreached unstable rotation (radius 1.2) and a reached stable state
    const c = 1.2 * Math.cos(0.3);
    const sn = 1.2 * Math.sin(0.3);
    const A = [
      [c, -sn, 0],
      [sn, c, 0],
      [0, 0, 0.5],
    ];
    const B = [[0], [0], [1]];
    const bad = unstabilizableMode(A, B);
    expect(bad).toBeDefined();
    expect(Math.hypot(bad!.re, bad!.im)).toBeCloseTo(1.2, 8);
    // reaching the rotation with an input on its first state makes it stabilizable (textbook PBH)
    expect(unstabilizableMode(A, [[1], [0], [0]])).toBeUndefined();
  });
});
