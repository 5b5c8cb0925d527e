/**
 * The belief stays a probability distribution under any input: any log-likelihoods (NaN, ±∞,
 * huge, denormal) and any forgetting in the schema's range [0, 0.5]. Normalized (Kolmogorov's
 * axioms: non-negative, summing to 1), finite entropy within [0, ln n] (Shannon: the uniform
 * distribution maximises it). Fixed seed, bounded runs.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { Belief } from '../../src/core/belief.js';

const anyLoglik = fc.oneof(
  { weight: 6, arbitrary: fc.double({ min: -50, max: 5, noNaN: true }) },
  { weight: 1, arbitrary: fc.constantFrom(Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY, 1e308, -1e308, 5e-324) },
  { weight: 1, arbitrary: fc.double() },
);

describe('belief (properties)', () => {
  it('is normalized and finite after any updates', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 256 }).chain((n) => fc.tuple(fc.constant(n), fc.array(fc.array(anyLoglik, { minLength: n, maxLength: n }), { minLength: 1, maxLength: 20 }), fc.double({ min: 0, max: 0.5, noNaN: true }))),
        ([n, updates, forgetting]) => {
          const b = new Belief(n);
          for (const u of updates) {
            b.update(Float64Array.from(u), forgetting);
            let s = 0;
            for (let k = 0; k < n; k++) {
              const p = b.p[k]!;
              expect(Number.isFinite(p)).toBe(true);
              expect(p).toBeGreaterThanOrEqual(0);
              s += p;
            }
            expect(Math.abs(s - 1)).toBeLessThanOrEqual(1e-9);
            expect(Number.isFinite(b.entropy)).toBe(true);
            expect(b.entropy).toBeGreaterThanOrEqual(-1e-12);
            expect(b.entropy).toBeLessThanOrEqual(Math.log(n) + 1e-9);
            expect(b.mostLikely).toBeGreaterThanOrEqual(0);
            expect(b.mostLikely).toBeLessThan(n);
          }
        },
      ),
      { seed: 1531, numRuns: 300 },
    );
  });
});
