/**
 * Wrench filter properties over random configurations and inputs (fixed seeds, bounded runs):
 *  - complementarity: correction + impact = compensated, to one rounding (common practice: a
 *    split defined as x − lowpass(x) is exact up to rounding);
 *  - bounded output for bounded input: |lowpass| ≤ ‖h‖₁ · max|x| and |x − lowpass| ≤ (1 + ‖h‖₁) ·
 *    max|x| (common practice: BIBO stability of a stable LTI filter, ‖h‖₁ the l1 norm of its
 *    impulse response), with ‖h‖₁ of a Butterworth low-pass at least 1 (unity DC gain) and below
 *    2 up to order 8 (its step overshoot grows with the order, about 11 % at order 4: from memory).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { WrenchFilter, wrenchFilterConfig } from '../../src/core/filter/index.js';

const config = fc.record({ cutoff: fc.double({ min: 1, max: 40, noNaN: true }), order: fc.constantFrom(1, 2, 3, 4, 6, 8) });
const make = (c: { cutoff: number; order: number }) => new WrenchFilter(wrenchFilterConfig({ cutoff_hz: c.cutoff, order: c.order, tare: { on_start: false } }));

/** ‖h‖₁ of the correction band (the low-pass), from its response to a unit impulse after zeros. */
function l1(c: { cutoff: number; order: number }): number {
  const f = make(c);
  const x = new Float64Array(6);
  f.step(x);
  x[0] = 1;
  f.step(x);
  let s = Math.abs(f.correction[0]!);
  x[0] = 0;
  for (let k = 0; k < 40_000; k++) {
    f.step(x);
    s += Math.abs(f.correction[0]!);
  }
  return s;
}

describe('wrench filter (properties)', () => {
  it('splits exactly and stays within its l1 bound for bounded input', () => {
    fc.assert(
      fc.property(config, fc.double({ min: 1e-3, max: 1e5, noNaN: true }), fc.array(fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: 6, maxLength: 6 }), { minLength: 1, maxLength: 300 }), (c, bound, rows) => {
        const h = l1(c);
        expect(h).toBeGreaterThanOrEqual(1 - 1e-6);
        expect(h).toBeLessThan(2);
        const f = make(c);
        const x = new Float64Array(6);
        for (const r of rows) {
          for (let i = 0; i < 6; i++) x[i] = bound * r[i]!;
          f.step(x);
          for (let i = 0; i < 6; i++) {
            const lp = f.correction[i]!;
            const hp = f.impact[i]!;
            const s = f.compensated[i]!;
            expect(Math.abs(lp + hp - s)).toBeLessThanOrEqual(2 * Number.EPSILON * Math.max(Math.abs(lp), Math.abs(hp), Math.abs(s)));
            expect(Math.abs(lp)).toBeLessThanOrEqual(h * bound * (1 + 1e-9));
            expect(Math.abs(hp)).toBeLessThanOrEqual((1 + h) * bound * (1 + 1e-9));
          }
          expect(Number.isFinite(f.impactScore)).toBe(true);
        }
      }),
      { seed: 1521, numRuns: 40 },
    );
  });
});
