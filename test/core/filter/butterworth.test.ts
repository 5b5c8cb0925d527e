import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { SosCascade, butterworthSos, sosToTf } from '../../../src/core/filter/butterworth.js';
import { InputError } from '../../../src/util/errors.js';

function problemOf(fn: () => unknown): { code: string; key: string | undefined; hint: string | undefined; message: string } {
  try {
    fn();
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    const p = (e as InputError).problems[0]!;
    return { code: p.code, key: p.where?.key, hint: p.hint, message: p.message };
  }
  throw new Error('expected an InputError');
}

/** Direct-form difference equation from the polynomial form (from memory: a0·y[n] = Σ b_k x[n−k] − Σ_{k≥1} a_k y[n−k]). */
function directForm(b: Float64Array, a: Float64Array, x: readonly number[]): number[] {
  const y: number[] = [];
  for (let n = 0; n < x.length; n++) {
    let acc = 0;
    for (let k = 0; k < b.length; k++) if (n - k >= 0) acc += b[k]! * x[n - k]!;
    for (let k = 1; k < a.length; k++) if (n - k >= 0) acc -= a[k]! * y[n - k]!;
    y.push(acc / a[0]!);
  }
  return y;
}

describe('butterworthSos validation', () => {
  it('rejects orders outside 1..8 and non-integers, naming the key and what is allowed', () => {
    for (const bad of [0, 9, 2.5, Number.NaN]) {
      const p = problemOf(() => butterworthSos(bad, 10, 1000));
      expect(p.key).toBe('order');
      expect(p.hint).toMatch(/1 to 8/);
    }
    expect(problemOf(() => butterworthSos(2.5, 10, 1000)).code).toBe('param.not_integer');
    expect(problemOf(() => butterworthSos(9, 10, 1000)).code).toBe('param.out_of_range');
  });

  it('rejects cutoffs outside (0, fs/2)', () => {
    for (const bad of [0, -1, 500, 600, Number.POSITIVE_INFINITY, Number.NaN]) {
      const p = problemOf(() => butterworthSos(2, bad, 1000));
      expect(p.key).toBe('cutoff_hz');
      expect(p.hint).toMatch(/500 Hz/);
    }
  });

  it('rejects sample rates outside 50..8000 Hz', () => {
    for (const bad of [49.9, 8001, 0, Number.NaN]) {
      const p = problemOf(() => butterworthSos(2, 1, bad));
      expect(p.key).toBe('sample_rate_hz');
      expect(p.hint).toMatch(/50 to 8000/);
    }
    expect(butterworthSos(2, 1, 50).length).toBe(6);
    expect(butterworthSos(8, 3999, 8000).length).toBe(24);
  });

  it('uses caller keys for dotted parameter names', () => {
    const p = problemOf(() => butterworthSos(2, 10, 1000 * 10, { order: 'x.order', cutoffHz: 'x.cutoff_hz', sampleRateHz: 'x.sample_rate_hz' }));
    expect(p.key).toBe('x.sample_rate_hz');
  });

  it('has ceil(n/2) sections with a0 = 1', () => {
    for (let n = 1; n <= 8; n++) {
      const sos = butterworthSos(n, 7, 1000);
      expect(sos.length).toBe(6 * Math.ceil(n / 2));
      for (let s = 0; s < sos.length / 6; s++) expect(sos[s * 6 + 3]).toBe(1);
    }
  });
});

describe('SosCascade', () => {
  it('matches the direct-form difference equation of the same transfer function', () => {
    // Reference: the textbook difference equation (from memory), run on the tf form.
    for (const n of [1, 2, 3, 4, 5]) {
      const sos = butterworthSos(n, 40, 1000);
      const { b, a } = sosToTf(sos);
      const x: number[] = [];
      for (let i = 0; i < 300; i++) x.push(Math.sin(i * 0.37) + (i % 17 === 0 ? 3 : 0));
      const ref = directForm(b, a, x);
      const c = new SosCascade(sos, 1);
      const inp = new Float64Array(1);
      const out = new Float64Array(1);
      for (let i = 0; i < x.length; i++) {
        inp[0] = x[i]!;
        c.process(inp, out);
        expect(Math.abs(out[0]! - ref[i]!), `order ${n} sample ${i}`).toBeLessThan(1e-10);
      }
    }
  });

  it('filters channels independently, the same as one cascade per channel, also in place', () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(fc.double({ min: -100, max: 100, noNaN: true }), fc.double({ min: -100, max: 100, noNaN: true }), fc.double({ min: -100, max: 100, noNaN: true })), { minLength: 1, maxLength: 60 }), (rows) => {
        const sos = butterworthSos(4, 25, 1000);
        const multi = new SosCascade(sos, 3);
        const singles = [0, 1, 2].map(() => new SosCascade(sos, 1));
        const buf = new Float64Array(3);
        const one = new Float64Array(1);
        const oneOut = new Float64Array(1);
        for (const r of rows) {
          buf.set(r);
          multi.process(buf, buf); // in place
          for (let c = 0; c < 3; c++) {
            one[0] = r[c]!;
            singles[c]!.process(one, oneOut);
            expect(buf[c]).toBe(oneOut[0]);
          }
        }
      }),
      { numRuns: 50 },
    );
  });

  it('resetTo(dc) starts in the steady state: a constant input gives a constant output at once', () => {
    for (let n = 1; n <= 8; n++) {
      const c = new SosCascade(butterworthSos(n, 5, 1000), 2);
      const dc = new Float64Array([12.5, -3]);
      c.resetTo(dc);
      const out = new Float64Array(2);
      for (let i = 0; i < 200; i++) {
        c.process(dc, out);
        expect(Math.abs(out[0]! - 12.5), `order ${n}`).toBeLessThan(1e-9);
        expect(Math.abs(out[1]! + 3), `order ${n}`).toBeLessThan(1e-9);
      }
    }
  });

  it('snapshot/restore continues bit-identically', () => {
    const c = new SosCascade(butterworthSos(6, 30, 2000), 2);
    const x = new Float64Array(2);
    const y = new Float64Array(2);
    for (let i = 0; i < 100; i++) {
      x[0] = Math.sin(i);
      x[1] = Math.cos(3 * i);
      c.process(x, y);
    }
    const snap = c.snapshot();
    const first: number[] = [];
    for (let i = 0; i < 50; i++) {
      x[0] = i;
      x[1] = -i;
      c.process(x, y);
      first.push(y[0]!, y[1]!);
    }
    c.restore(snap);
    for (let i = 0; i < 50; i++) {
      x[0] = i;
      x[1] = -i;
      c.process(x, y);
      expect(y[0]).toBe(first[2 * i]);
      expect(y[1]).toBe(first[2 * i + 1]);
    }
    expect(() => c.restore(new Float64Array(3))).toThrow(InputError);
  });

  it('rejects malformed sections and channel counts', () => {
    expect(() => new SosCascade(new Float64Array(5), 1)).toThrow(InputError);
    expect(() => new SosCascade(new Float64Array([1, 0, 0, 0, 0, 0]), 1)).toThrow(/a0/);
    expect(() => new SosCascade(new Float64Array([1, 0, 0, 1, Number.NaN, 0]), 1)).toThrow(InputError);
    expect(() => new SosCascade(butterworthSos(2, 5, 1000), 0)).toThrow(InputError);
  });

  it('normalises a0 ≠ 1', () => {
    const c = new SosCascade(new Float64Array([2, 2, 0, 2, -1, 0]), 1);
    const ref = new SosCascade(new Float64Array([1, 1, 0, 1, -0.5, 0]), 1);
    const x = new Float64Array([1]);
    const y1 = new Float64Array(1);
    const y2 = new Float64Array(1);
    for (let i = 0; i < 10; i++) {
      c.process(x, y1);
      ref.process(x, y2);
      expect(y1[0]).toBe(y2[0]);
    }
  });
});
