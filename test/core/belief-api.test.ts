/**
 * The belief's public API at its edges (src/core/belief.ts): construction, reset, a hypothesis
 * ruled out, everything ruled out, ties of the most likely hypothesis, marginals against
 * enumeration, and snapshot/restore. References: Bayes' rule and Shannon entropy
 * (H = −Σ p ln p, with 0 · ln 0 = 0 by convention; textbook, from memory); the marginal of a
 * bit is the sum of the probabilities of the hypotheses with that bit set (the law of total
 * probability, from memory).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { Belief } from '../../src/core/belief.js';

const entropyOf = (p: ArrayLike<number>) => {
  let h = 0;
  for (let k = 0; k < p.length; k++) if (p[k]! > 0) h -= p[k]! * Math.log(p[k]!);
  return h;
};

describe('Belief construction and reset', () => {
  it('needs a positive whole number of hypotheses', () => {
    for (const n of [0, -1, 1.5, Number.NaN, Number.POSITIVE_INFINITY]) expect(() => new Belief(n), String(n)).toThrow(RangeError);
    expect(() => new Belief(0)).toThrow('a belief needs at least one hypothesis');
    const one = new Belief(1);
    expect([one.n, one.p[0], one.entropy, one.mostLikely, one.updates]).toEqual([1, 1, 0, 0, 0]);
  });

  it('reset returns to the uniform belief: p = 1/n, ln p, entropy ln n, most likely 0, no updates', () => {
    const b = new Belief(4);
    b.update(Float64Array.from([-3, -1, 0, -2]), 0.01);
    b.update(Float64Array.from([-3, -1, 0, -2]), 0.01);
    expect([b.mostLikely, b.updates]).toEqual([2, 2]);
    b.reset();
    expect(Array.from(b.p)).toEqual([0.25, 0.25, 0.25, 0.25]);
    expect(Array.from(b.logp)).toEqual([1, 2, 3, 4].map(() => -Math.log(4)));
    expect([b.entropy, b.mostLikely, b.updates]).toEqual([Math.log(4), 0, 0]);
  });
});

describe('Belief updates at the edges', () => {
  it('a hypothesis ruled out without forgetting: p = 0 and 0 · ln 0 counts 0 in the entropy', () => {
    const b = new Belief(4);
    b.update(Float64Array.from([Number.NEGATIVE_INFINITY, 0, 0, 0]), 0);
    expect(b.p[0]).toBe(0);
    expect(b.p[1]).toBeCloseTo(1 / 3, 15);
    expect(b.entropy).toBeCloseTo(Math.log(3), 14);
    expect(Number.isFinite(b.entropy)).toBe(true);
    expect(b.mostLikely).toBe(1);
  });

  it('with forgetting e, a ruled-out hypothesis keeps e / n', () => {
    const b = new Belief(4);
    b.update(Float64Array.from([Number.NEGATIVE_INFINITY, 0, 0, 0]), 0.2);
    expect(b.p[0]).toBeCloseTo(0.05, 15);
    expect(b.p[3]).toBeCloseTo(0.8 / 3 + 0.05, 15);
  });

  it('everything ruled out (or NaN everywhere): the belief starts over, uniform, and the update is counted', () => {
    for (const bad of [Number.NEGATIVE_INFINITY, Number.NaN]) {
      const b = new Belief(3);
      b.update(Float64Array.from([0, -5, -5]), 0);
      b.update(Float64Array.from([bad, bad, bad]), 0);
      for (const p of b.p) expect(p).toBeCloseTo(1 / 3, 15);
      expect(b.entropy).toBeCloseTo(Math.log(3), 15);
      expect([b.mostLikely, b.updates]).toEqual([0, 1]);
    }
  });

  it('most likely: the first of equal maxima; a later larger one wins', () => {
    const b = new Belief(5);
    b.update(Float64Array.from([-1, 0, -1, 0, -2]), 0);
    expect(b.mostLikely).toBe(1);
    b.update(Float64Array.from([0, 0, 0, 0.1, 0]), 0);
    expect(b.mostLikely).toBe(3);
    const u = new Belief(3);
    u.update(Float64Array.from([0, 0, 0]), 0);
    expect(u.mostLikely).toBe(0);
  });

  it('setPrior normalises any positive weights (without counting an update)', () => {
    const b = new Belief(3);
    b.setPrior([2, 6, 2]);
    expect(Array.from(b.p).map((p) => Number(p.toFixed(15)))).toEqual([0.2, 0.6, 0.2]);
    expect([b.mostLikely, b.updates]).toEqual([1, 0]);
    expect(b.entropy).toBeCloseTo(entropyOf([0.2, 0.6, 0.2]), 14);
  });

  it('property: p sums to 1, logp = ln p, entropy = −Σ p ln p, most likely is the first argmax', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 32 }).chain((n) =>
          fc.tuple(fc.array(fc.array(fc.double({ min: -30, max: 5, noNaN: true }), { minLength: n, maxLength: n }), { minLength: 1, maxLength: 6 }), fc.double({ min: 0, max: 0.5, noNaN: true })),
        ),
        ([lls, e]) => {
          const b = new Belief(lls[0]!.length);
          for (const ll of lls) b.update(Float64Array.from(ll), e);
          const p = Array.from(b.p);
          expect(p.reduce((a, x) => a + x, 0)).toBeCloseTo(1, 12);
          for (let k = 0; k < p.length; k++) expect(b.logp[k]).toBe(Math.log(p[k]!));
          expect(b.entropy).toBeCloseTo(entropyOf(p), 12);
          const max = Math.max(...p);
          expect(b.mostLikely).toBe(p.indexOf(max));
          expect(b.updates).toBe(lls.length);
        },
      ),
    );
  });
});

describe('Belief marginals', () => {
  it('property: marginal of bit b = Σ p_k over k with bit b set; only the first `bits` entries are written', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 6 }).chain((bits) =>
          fc.tuple(fc.constant(bits), fc.array(fc.double({ min: -10, max: 0, noNaN: true }), { minLength: 1 << bits, maxLength: 1 << bits })),
        ),
        ([bits, ll]) => {
          const b = new Belief(1 << bits);
          b.update(Float64Array.from(ll), 0);
          const out = new Float64Array(bits + 2).fill(7);
          b.marginals(bits, out);
          for (let bit = 0; bit < bits; bit++) {
            let want = 0;
            for (let k = 0; k < b.n; k++) if (Math.floor(k / 2 ** bit) % 2 === 1) want += b.p[k]!;
            expect(out[bit]).toBeCloseTo(want, 14);
          }
          expect([out[bits], out[bits + 1]]).toEqual([7, 7]);
        },
      ),
    );
  });

  it('a known case: 4 hypotheses (2 bits), p = [0.1, 0.2, 0.3, 0.4] → bit 0: 0.6, bit 1: 0.7', () => {
    const b = new Belief(4);
    b.setPrior([0.1, 0.2, 0.3, 0.4]);
    const out = new Float64Array(2).fill(9);
    b.marginals(2, out);
    expect(out[0]).toBeCloseTo(0.6, 15);
    expect(out[1]).toBeCloseTo(0.7, 15);
  });
});

describe('Belief marginals of fewer bits, or of a count that is no power of two', () => {
  it('8 hypotheses, 2 bits asked: the low bits only, out[2] untouched', () => {
    const b = new Belief(8);
    b.setPrior([1, 2, 3, 4, 5, 6, 7, 8]);
    const out = new Float64Array(3).fill(7);
    b.marginals(2, out);
    expect(out[0]).toBeCloseTo((2 + 4 + 6 + 8) / 36, 15);
    expect(out[1]).toBeCloseTo((3 + 4 + 7 + 8) / 36, 15);
    expect(out[2]).toBe(7);
  });

  it('3 hypotheses, 2 bits: bit 0 is set in 1 and 3 only (there is no 3)', () => {
    const b = new Belief(3);
    b.setPrior([0.5, 0.25, 0.25]);
    const out = new Float64Array(2);
    b.marginals(2, out);
    expect(out[0]).toBeCloseTo(0.25, 15);
    expect(out[1]).toBeCloseTo(0.25, 15);
  });
});

describe('Belief snapshot and restore', () => {
  it('restore gives back every field, and the next update is bit-identical', () => {
    const a = new Belief(8);
    const ll = Float64Array.from([-1, -0.5, 0, -2, -0.1, -3, 0.2, -1]);
    a.update(ll, 0.01);
    a.update(ll, 0.01);
    const s = a.snapshot();
    expect(s.length).toBeGreaterThanOrEqual(2 * 8 + 3); // log p, p, entropy, most likely, updates; then the staged update's state
    const b = new Belief(8);
    b.restore(s);
    expect(Array.from(b.logp)).toEqual(Array.from(a.logp));
    expect(Array.from(b.p)).toEqual(Array.from(a.p));
    expect([b.entropy, b.mostLikely, b.updates]).toEqual([a.entropy, a.mostLikely, a.updates]);
    expect(b.mostLikely).toBe(6);
    expect(b.updates).toBe(2);
    a.update(ll, 0.01);
    b.update(ll, 0.01);
    expect(Array.from(b.logp)).toEqual(Array.from(a.logp));
    expect([b.entropy, b.mostLikely, b.updates]).toEqual([a.entropy, a.mostLikely, a.updates]);
  });
});
