import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { Belief } from '../../src/core/belief.js';

describe('Belief (log-domain Bayes)', () => {
  it('entropy of the uniform belief is ln n', () => {
    // Source: Shannon entropy of a uniform distribution over n outcomes is ln n (textbook).
    for (const n of [1, 2, 3, 16, 256]) expect(new Belief(n).entropy).toBeCloseTo(Math.log(n), 12);
  });

  it('equals Bayes by exact enumeration for any prior and likelihood sequence', () => {
    // Source: Bayes' theorem; the reference multiplies prior and likelihoods in the linear
    // domain and normalises once (exact enumeration over the hypotheses).
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 16 }).chain((n) =>
          fc.tuple(
            fc.array(fc.double({ min: 0.01, max: 1, noNaN: true }), { minLength: n, maxLength: n }),
            fc.array(fc.array(fc.double({ min: -5, max: 0, noNaN: true }), { minLength: n, maxLength: n }), { minLength: 1, maxLength: 12 }),
          ),
        ),
        ([prior, logliks]) => {
          const n = prior.length;
          const b = new Belief(n);
          b.setPrior(prior);
          const ref = prior.slice();
          for (const ll of logliks) {
            b.update(Float64Array.from(ll), 0);
            for (let k = 0; k < n; k++) ref[k]! *= Math.exp(ll[k]!);
          }
          const s = ref.reduce((a, x) => a + x, 0);
          for (let k = 0; k < n; k++) expect(b.p[k]!).toBeCloseTo(ref[k]! / s, 10);
          const h = -ref.reduce((a, x) => (x > 0 ? a + (x / s) * Math.log(x / s) : a), 0);
          expect(b.entropy).toBeCloseTo(h, 9);
        },
      ),
      { numRuns: 200 },
    );
  });

  it('a Gaussian listener of a linear speaker matches the conjugate-Gaussian (Kalman) closed form', () => {
    // Source: measurement update of the Kalman filter / conjugate normal prior (textbook):
    // x ~ N(m, P), y = g x + v, v ~ N(0, R): K = P g / (g^2 P + R), m' = m + K (y - g m), P' = (1 - K g) P.
    const m0 = 0.3, P0 = 0.8, g = 1.7, R = 0.25;
    const ys = [0.9, 1.4, 0.2, 1.1, 0.75];
    const grid = 8001, lo = -6, hi = 6;
    const xs = Float64Array.from({ length: grid }, (_, k) => lo + ((hi - lo) * k) / (grid - 1));
    const b = new Belief(grid);
    b.setPrior(xs.map((x) => Math.exp(-((x - m0) ** 2) / (2 * P0))));
    let m = m0, P = P0;
    const ll = new Float64Array(grid);
    for (const y of ys) {
      for (let k = 0; k < grid; k++) ll[k] = -((y - g * xs[k]!) ** 2) / (2 * R);
      b.update(ll, 0);
      const K = (P * g) / (g * g * P + R);
      m = m + K * (y - g * m);
      P = (1 - K * g) * P;
      let mean = 0, second = 0;
      for (let k = 0; k < grid; k++) {
        mean += b.p[k]! * xs[k]!;
        second += b.p[k]! * xs[k]! ** 2;
      }
      expect(mean).toBeCloseTo(m, 5);
      expect(second - mean * mean).toBeCloseTo(P, 5);
    }
  });

  it('never underflows on long runs with decisive evidence', () => {
    // Common practice: log-sum-exp normalisation keeps long products finite.
    const b = new Belief(256);
    const ll = new Float64Array(256).fill(-800);
    ll[37] = 0;
    for (let k = 0; k < 100_000; k++) b.update(ll, 0);
    expect(b.mostLikely).toBe(37);
    let s = 0;
    for (const p of b.p) {
      expect(Number.isFinite(p)).toBe(true);
      s += p;
    }
    expect(s).toBeCloseTo(1, 12);
  });

  it('forgetting keeps every hypothesis above forgetting / n and can recover', () => {
    // Mixing with the uniform distribution: p' = (1 - e) p + e / n (our design; bound follows directly).
    const e = 0.01;
    const b = new Belief(4);
    const ll = Float64Array.of(0, -50, -50, -50);
    for (let k = 0; k < 200; k++) b.update(ll, e);
    for (const p of b.p) expect(p).toBeGreaterThanOrEqual(e / 4 - 1e-15);
    const flipped = Float64Array.of(-5, 0, -5, -5);
    for (let k = 0; k < 50; k++) b.update(flipped, e);
    expect(b.mostLikely).toBe(1);
  });

  it('resets instead of propagating NaN', () => {
    const b = new Belief(3);
    b.update(Float64Array.of(Number.NaN, Number.NaN, Number.NaN), 0);
    for (const p of b.p) expect(p).toBeCloseTo(1 / 3, 15);
  });

  it('marginals sum the hypotheses that set each bit', () => {
    const b = new Belief(4);
    b.setPrior([0.1, 0.2, 0.3, 0.4]);
    const m = new Float64Array(2);
    b.marginals(2, m);
    expect(m[0]).toBeCloseTo(0.2 + 0.4, 12); // bit 0 set in hypotheses 1 and 3
    expect(m[1]).toBeCloseTo(0.3 + 0.4, 12); // bit 1 set in hypotheses 2 and 3
  });

  it('the staged update equals update() bit for bit, however it is cut, and a snapshot mid-way continues it (property)', () => {
    // Our own behaviour: the arm step spreads an update over samples (src/core/belief.ts).
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 64 }),
        fc.array(fc.double({ min: -40, max: 5, noNaN: true }), { minLength: 64, maxLength: 64 }),
        fc.double({ min: 0, max: 0.1, noNaN: true }),
        fc.array(fc.integer({ min: 1, max: 20 }), { minLength: 1, maxLength: 5 }),
        fc.boolean(),
        (n, ll, forgetting, cuts, midSnapshot) => {
          const bits = Math.max(1, Math.floor(Math.log2(n)));
          const loglik = Float64Array.from(ll.slice(0, n));
          const one = new Belief(n);
          one.setPrior(Array.from({ length: n }, (_, k) => 1 + ((k * 7) % 5)));
          let staged = new Belief(n);
          staged.restore(one.snapshot());
          one.update(loglik, forgetting);
          const m1 = new Float64Array(bits);
          one.marginals(bits, m1);
          staged.stageBegin(forgetting);
          let c = 0;
          const pass = (f: (a: number, b: number) => void) => {
            for (let a = 0; a < n; ) {
              const b = Math.min(n, a + cuts[c++ % cuts.length]!);
              f(a, b);
              a = b;
            }
          };
          pass((a, b) => { staged.stageAdd(loglik, a, b); staged.stageMax(a, b); });
          if (midSnapshot) {
            const copy = new Belief(n);
            copy.restore(staged.snapshot());
            staged = copy;
          }
          pass((a, b) => staged.stageSum(a, b));
          pass((a, b) => staged.stageNormalise(a, b));
          pass((a, b) => staged.stageMarginals(bits, a, b));
          const m2 = new Float64Array(bits);
          staged.stagedMarginals(bits, m2);
          staged.stageCommit();
          expect(Array.from(staged.logp)).toEqual(Array.from(one.logp));
          expect(Array.from(staged.p)).toEqual(Array.from(one.p));
          expect([staged.entropy, staged.mostLikely, staged.updates]).toEqual([one.entropy, one.mostLikely, one.updates]);
          expect(Array.from(m2)).toEqual(Array.from(m1));
        },
      ),
      { numRuns: 200, seed: 8 },
    );
  });
});
