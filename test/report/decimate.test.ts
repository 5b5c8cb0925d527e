/**
 * Display decimation: the min/max envelope keeps the global extremes and every one-sample
 * spike; change points keep every change of a step series (our own behaviour, invented data).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { changePoints, columnOf, envelope, envelopeStrided, onIntervals } from '../../src/report/html.js';

/** Value of a step series at sample i, rebuilt from its change points. */
function valueAt(steps: ReturnType<typeof changePoints>, ti: number): number {
  let v = Number.NaN;
  for (let k = 0; k < steps.t.length && steps.t[k]! <= ti; k++) v = steps.y[k]!;
  return v;
}

const series = fc
  .record({
    n: fc.integer({ min: 1, max: 3000 }),
    columns: fc.integer({ min: 1, max: 400 }),
    seed: fc.integer({ min: 1, max: 2 ** 30 }),
    spikes: fc.array(fc.record({ at: fc.double({ min: 0, max: 1, noNaN: true }), h: fc.double({ min: -1e4, max: 1e4, noNaN: true }) }), {
      maxLength: 12,
    }),
  })
  .map(({ n, columns, seed, spikes }) => {
    const t = new Float64Array(n);
    const y = new Float64Array(n);
    let s = seed;
    for (let i = 0; i < n; i++) {
      s = (Math.imul(s, 1103515245) + 12345) >>> 0;
      t[i] = 5 + i * 0.001;
      y[i] = Math.sin(i / 50) + ((s / 2 ** 32) - 0.5) * 0.1;
    }
    const at = spikes.map((p) => Math.min(n - 1, Math.floor(p.at * n)));
    spikes.forEach((p, k) => (y[at[k]!] = p.h));
    return { t, y, columns, at };
  });

describe('envelope', () => {
  it('keeps the global min and max, and every one-sample spike is its column’s min or max', () => {
    fc.assert(
      fc.property(series, ({ t, y, columns, at }) => {
        const t0 = t[0]!;
        const t1 = t[t.length - 1]!;
        const env = envelope(t, y, t0, t1, columns);
        expect(env.min.length).toBe(columns);
        let gmin = Infinity;
        let gmax = -Infinity;
        for (const v of y) (gmin = Math.min(gmin, v)), (gmax = Math.max(gmax, v));
        const emin = Math.min(...Array.from(env.min).filter(Number.isFinite));
        const emax = Math.max(...Array.from(env.max).filter(Number.isFinite));
        expect(emin).toBe(gmin);
        expect(emax).toBe(gmax);
        // Every sample lies within its column's [min, max], so a spike is that column's extreme
        // whenever it is the extreme of its own neighbourhood: check it directly.
        const span = t1 - t0;
        const outside: number[] = [];
        for (let i = 0; i < t.length; i++) {
          const c = span > 0 ? columnOf(t[i]!, t0, t1, columns) : 0;
          // The column is the ideal one up to rounding at a boundary, and holds the sample.
          const ideal = span > 0 ? Math.min(columns - 1, ((t[i]! - t0) / span) * columns) : 0;
          if (Math.abs(c - ideal) > 1 || y[i]! < env.min[c]! || y[i]! > env.max[c]!) outside.push(i);
        }
        expect(outside).toEqual([]);
        // A spike stands out of the base signal (|base| < 1.1): in its column the highest spike
        // is the max and the lowest the min, exactly.
        const hiSpike = new Map<number, number>();
        const loSpike = new Map<number, number>();
        for (const i of at) {
          const c = span > 0 ? columnOf(t[i]!, t0, t1, columns) : 0;
          const v = y[i]!;
          if (v > 2) hiSpike.set(c, Math.max(hiSpike.get(c) ?? -Infinity, v));
          if (v < -2) loSpike.set(c, Math.min(loSpike.get(c) ?? Infinity, v));
        }
        for (const [c, v] of hiSpike) expect(env.max[c]).toBe(v);
        for (const [c, v] of loSpike) expect(env.min[c]).toBe(v);
        const total = env.count.reduce((a, b) => a + b, 0);
        expect(total).toBe(t.length);
      }),
      { numRuns: 150, seed: 20240611 },
    );
  });

  it('keeps a one-sample impact in an hour at 1 kHz over 2000 columns', () => {
    const n = 3_600_000;
    const t = new Float64Array(n);
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) (t[i] = i / 1000), (y[i] = 10 + Math.sin(i / 700));
    y[1_234_567] = 180; // one sample
    y[2_000_001] = -3; // one sample, downwards
    const env = envelope(t, y, 0, t[n - 1]!, 2000);
    const c = columnOf(1234.567, 0, 3599.999, 2000);
    expect(c).toBe(Math.floor((1234.567 / 3599.999) * 2000));
    expect(env.max[c]).toBe(180);
    const d = columnOf(2000.001, 0, 3599.999, 2000);
    expect(env.min[d]).toBe(-3);
    expect(Math.max(...env.max)).toBe(180);
    expect(Math.min(...env.min)).toBe(-3);
  });

  it('skips samples outside the span and non-finite ones, leaves empty columns NaN, and accepts unsorted times', () => {
    const t = Float64Array.from([3, 0, 1, 2, 9, Number.NaN, 1.5]);
    const y = Float64Array.from([30, 0, 10, Number.NaN, 90, 5, 15]);
    const env = envelope(t, y, 0, 4, 4);
    expect(Array.from(env.min)).toEqual([0, 10, Number.NaN, 30]);
    expect(Array.from(env.max)).toEqual([0, 15, Number.NaN, 30]);
    expect(Array.from(env.count)).toEqual([1, 2, 0, 1]);
  });

  it('puts a sample at t1 in the last column', () => {
    const env = envelope([0, 1, 2], [1, 2, 3], 0, 2, 2);
    expect(Array.from(env.max)).toEqual([1, 3]);
    expect(Array.from(env.min)).toEqual([1, 2]);
  });

  it('reads one column of a row-major table (the belief marginals)', () => {
    const t = [0, 1, 2, 3];
    const table = [0.1, 0.9, 0.2, 0.8, 0.3, 0.7, 0.4, 0.6];
    const z0 = envelopeStrided(t, table, 0, 2, 0, 3, 2);
    const z1 = envelopeStrided(t, table, 1, 2, 0, 3, 2);
    expect(Array.from(z0.min)).toEqual([0.1, 0.3]);
    expect(Array.from(z0.max)).toEqual([0.2, 0.4]);
    expect(Array.from(z1.min)).toEqual([0.8, 0.6]);
    expect(Array.from(z1.max)).toEqual([0.9, 0.7]);
  });
});

describe('changePoints', () => {
  const steps = fc
    .array(fc.record({ v: fc.constantFrom(0, 1, 2, Number.NaN), len: fc.integer({ min: 1, max: 5 }) }), { minLength: 1, maxLength: 200 })
    .map((runs) => {
      const y: number[] = [];
      for (const r of runs) for (let i = 0; i < r.len; i++) y.push(r.v);
      return { t: Float64Array.from(y, (_, i) => 0.001 * i), y: Float64Array.from(y) };
    });

  it('keeps every change: the value at every sample is rebuilt exactly from the change points', () => {
    fc.assert(
      fc.property(steps, ({ t, y }) => {
        const s = changePoints(t, y);
        let changes = 0;
        for (let i = 1; i < y.length; i++) if (!(y[i] === y[i - 1] || (Number.isNaN(y[i]!) && Number.isNaN(y[i - 1]!)))) changes++;
        expect(s.t.length).toBe(changes + 1);
        expect(s.end).toBe(t[t.length - 1]);
        const rebuilt = Array.from(t, (ti) => valueAt(s, ti));
        expect(rebuilt).toEqual(Array.from(y));
        for (let k = 1; k < s.t.length; k++) expect(Object.is(s.y[k], s.y[k - 1])).toBe(false);
      }),
      { numRuns: 200, seed: 7 },
    );
  });

  it('keeps a hold of one sample in an hour at 1 kHz as two change points and one interval', () => {
    const n = 3_600_000;
    const t = new Float64Array(n);
    for (let i = 0; i < n; i++) t[i] = i / 1000;
    const held = new Float64Array(n);
    held[2_500_000] = 1;
    const s = changePoints(t, held);
    expect(Array.from(s.t)).toEqual([0, 2500, 2500.001]);
    expect(Array.from(s.y)).toEqual([0, 1, 0]);
    expect(Array.from(onIntervals(s))).toEqual([2500, 2500.001]);
  });

  it('a hold on the last sample is an interval of zero length, still present', () => {
    const s = changePoints([0, 1, 2], [0, 0, 1]);
    expect(Array.from(onIntervals(s))).toEqual([2, 2]);
  });

  it('is empty for an empty series', () => {
    const s = changePoints([], []);
    expect(s.t.length).toBe(0);
    expect(onIntervals(s).length).toBe(0);
  });
});
