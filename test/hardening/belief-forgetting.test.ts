/**
 * Hardening: forgetting against its formula. src/core/belief.ts: after the Bayes update the
 * belief is mixed toward the uniform one, p'_k = (1 − e) · posterior_k + e / n (a mixture of
 * two distributions, so it sums to 1: common practice for a forgetting factor). The mixing is
 * checked to 1e-15 against the same belief updated without forgetting, and that posterior
 * against Bayes' rule computed here independently (to 1e-13: the log domain costs a few ulps).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { Belief } from '../../src/core/belief.js';

/** Bayes rule without the log domain: prior × likelihood, normalised. */
function posterior(prior: readonly number[], loglik: readonly number[]): number[] {
  const m = Math.max(...loglik);
  const w = prior.map((p, k) => p * Math.exp(loglik[k]! - m));
  const s = w.reduce((a, b) => a + b, 0);
  return w.map((v) => v / s);
}

const sizes = fc.constantFrom(1, 2, 3, 4, 8, 16, 64, 256);

describe('belief forgetting', () => {
  it('p\' = (1 − e) · posterior + e / n exactly (to 1e-15) and sums to 1, for random priors, likelihoods and e', () => {
    fc.assert(
      fc.property(
        sizes.chain((n) =>
          fc.tuple(
            fc.constant(n),
            fc.array(fc.double({ min: 0.01, max: 1, noNaN: true }), { minLength: n, maxLength: n }),
            fc.array(fc.double({ min: -20, max: 5, noNaN: true }), { minLength: n, maxLength: n }),
            fc.oneof(fc.constant(0), fc.constant(0.002), fc.constant(0.5), fc.double({ min: 0, max: 0.5, noNaN: true })),
          ),
        ),
        ([n, rawPrior, ll, e]) => {
          const b = new Belief(n);
          b.setPrior(rawPrior);
          const prior = Array.from(b.p);
          // The same update without forgetting: the module's own posterior.
          const plain = new Belief(n);
          plain.setPrior(rawPrior);
          plain.update(Float64Array.from(ll), 0);
          b.update(Float64Array.from(ll), e);
          // That posterior is Bayes' rule (independent computation; the log domain costs a few ulps per unit of log-likelihood).
          const post = posterior(prior, ll);
          for (let k = 0; k < n; k++) expect(Math.abs(plain.p[k]! - post[k]!), `posterior n=${n} k=${k}`).toBeLessThanOrEqual(1e-13);
          let sum = 0;
          for (let k = 0; k < n; k++) {
            const want = (1 - e) * plain.p[k]! + e / n;
            expect(Math.abs(b.p[k]! - want), `n=${n} e=${e} k=${k}`).toBeLessThanOrEqual(1e-15);
            expect(b.logp[k]).toBeCloseTo(Math.log(b.p[k]!), 12);
            sum += b.p[k]!;
          }
          // Sum of n doubles each within half an ulp of its value: |Σ − 1| ≤ n · 2⁻⁵² (here at most 5.7e-14).
          expect(Math.abs(sum - 1)).toBeLessThanOrEqual(Math.max(1e-15, n * Number.EPSILON));
          // The floor the forgetting keeps: no hypothesis below e / n.
          for (let k = 0; k < n; k++) expect(b.p[k]! >= e / n - 1e-18).toBe(true);
        },
      ),
      { numRuns: 200 },
    );
  });

  it('with decisive evidence the floor is exactly e / n (the evidence cannot rule a hypothesis out)', () => {
    // n = 4, e = 0.002: a hypothesis with likelihood exp(−745) (below the smallest double) keeps 0.0005.
    const b = new Belief(4);
    b.update(Float64Array.of(0, -800, -800, -800), 0.002);
    expect(b.p[1]).toBe(0.002 / 4);
    expect(b.p[0]).toBe(1 - 0.002 + 0.002 / 4);
    expect(b.p[0]! + b.p[1]! + b.p[2]! + b.p[3]!).toBeCloseTo(1, 15);
    expect(b.mostLikely).toBe(0);
  });

  it('repeated uninformative updates keep the uniform belief exactly; e = 0 is plain Bayes', () => {
    const b = new Belief(8);
    for (let i = 0; i < 100; i++) b.update(new Float64Array(8), 0.3);
    for (const v of b.p) expect(Math.abs(v - 1 / 8)).toBeLessThanOrEqual(1e-15);
    expect(b.entropy).toBeCloseTo(Math.log(8), 14);
    const c = new Belief(3);
    c.update(Float64Array.of(Math.log(0.2), Math.log(0.3), Math.log(0.5)), 0);
    expect(Math.abs(c.p[0]! - 0.2)).toBeLessThanOrEqual(1e-15);
    expect(Math.abs(c.p[1]! - 0.3)).toBeLessThanOrEqual(1e-15);
    expect(Math.abs(c.p[2]! - 0.5)).toBeLessThanOrEqual(1e-15);
    expect(c.mostLikely).toBe(2);
    // Entropy (nats) of (0.2, 0.3, 0.5): −Σ p ln p (Shannon; common practice).
    expect(c.entropy).toBeCloseTo(-(0.2 * Math.log(0.2) + 0.3 * Math.log(0.3) + 0.5 * Math.log(0.5)), 14);
  });
});
