/**
 * The partner-stop detector on its own (src/core/partner-stop.ts), against its formula: with
 * the coupling f = c (v_partner − v_own) (a linear damper between the two grasps, common
 * practice for a stiff shared object), the partner's velocity is v̂ = v_own + f / c, and over
 * the last n windows ρ = |Σ v̂| / Σ |v_own|; stopped once the ring is full and ρ ≤ speed_ratio.
 * The reference below recomputes ρ by brute force over the windows since the last restart.
 * Values are chosen exactly representable in binary so the edges (= speed_ratio, = min speed)
 * are tested exactly.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { PartnerStopDetector, type PartnerStopParams } from '../../src/core/partner-stop.js';

const P: PartnerStopParams = { enabled: true, speed_ratio: 0.25, window_s: 0.02, min_speed_m_s: 0.125 };
/** c = 4 N·s/m (1/c = 0.25 exactly), 100 windows per second: n = 2. */
const make = (p: Partial<PartnerStopParams> = {}, c = 4, wps = 100) => new PartnerStopDetector({ ...P, ...p }, c, wps);

describe('a new detector', () => {
  it('is not stopped and has no ratio', () => {
    const d = make();
    expect([d.stopped, d.ratio]).toEqual([false, Number.NaN]);
  });
});

describe('the ring length', () => {
  it('round(window_s × windows per second), at least 2', () => {
    expect(make({ window_s: 1 }).length).toBe(100);
    expect(make({ window_s: 0.025 }).length).toBe(3); // 2.5 rounds up
    expect(make({ window_s: 0.024 }).length).toBe(2);
    expect(make({ window_s: 0.01 }).length).toBe(2); // 1 window would be no average
    expect(make({ window_s: 0.05 }, 4, 10).length).toBe(2);
  });
});

describe('the verdict', () => {
  it('a stopped partner (f = −c v_own): stopped once the ring is full, not before', () => {
    const d = make({ window_s: 0.03 }); // n = 3
    expect(d.update(-2, 0, 0.5, 0)).toBe(false);
    expect([d.stopped, d.ratio]).toEqual([false, Number.NaN]);
    expect(d.update(-2, 0, 0.5, 0)).toBe(false);
    expect(Number.isNaN(d.ratio)).toBe(true);
    expect(d.update(-2, 0, 0.5, 0)).toBe(true);
    expect([d.stopped, d.ratio]).toEqual([true, 0]);
  });

  it('a cooperating partner (f = 0) moves with this arm: ρ = 1, not stopped', () => {
    const d = make();
    d.update(0, 0, 0.5, 0);
    expect(d.update(0, 0, 0.5, 0)).toBe(false);
    expect([d.stopped, d.ratio]).toEqual([false, 1]);
  });

  it('ρ exactly at speed_ratio is stopped; just above is not', () => {
    // v̂ = 0.5 + (−1.5)(0.25) = 0.125 → ρ = 0.25.
    const at = make();
    at.update(-1.5, 0, 0.5, 0);
    expect(at.update(-1.5, 0, 0.5, 0)).toBe(true);
    expect(at.ratio).toBe(0.25);
    const above = make({ speed_ratio: 0.2499 });
    above.update(-1.5, 0, 0.5, 0);
    expect(above.update(-1.5, 0, 0.5, 0)).toBe(false);
  });

  it('the y axis counts: a partner stepping sideways still moves (ρ = 1); a y-only stop is seen', () => {
    const side = make();
    side.update(-2, 2, 0.5, 0); // v̂ = (0, 0.5)
    side.update(-2, 2, 0.5, 0);
    expect([side.stopped, side.ratio]).toEqual([false, 1]);
    const y = make();
    y.update(0, -2, 0, 0.5);
    expect(y.update(0, -2, 0, 0.5)).toBe(true);
    expect(y.ratio).toBe(0);
  });

  it('own speed is the vector norm: (0.3, 0.4) is 0.5', () => {
    const d = make({ min_speed_m_s: 0.5 });
    d.update(0, 0, 0.3, 0.4);
    d.update(0, 0, 0.3, 0.4);
    expect(d.ratio).toBeCloseTo(1, 15);
  });
});

describe('restarts', () => {
  it('a window at exactly min_speed counts; a slower one empties the ring', () => {
    const d = make({ min_speed_m_s: 0.5 });
    d.update(-2, 0, 0.5, 0);
    expect(d.update(-2, 0, 0.5, 0)).toBe(true);
    expect(d.update(-2, 0, 0.499, 0)).toBe(false);
    expect([d.stopped, d.ratio]).toEqual([false, Number.NaN]);
    // The ring starts over: one window is not enough.
    expect(d.update(-2, 0, 0.5, 0)).toBe(false);
    expect(d.update(-2, 0, 0.5, 0)).toBe(true);
  });

  it('a non-finite force (x or y) or own velocity empties the ring', () => {
    for (const [fx, fy, vx] of [[Number.NaN, 0, 0.5], [0, Number.POSITIVE_INFINITY, 0.5], [0, 0, Number.NaN], [Number.NEGATIVE_INFINITY, 0, 0.5]] as const) {
      const d = make();
      d.update(-2, 0, 0.5, 0);
      d.update(-2, 0, 0.5, 0);
      expect(d.stopped).toBe(true);
      expect(d.update(fx, fy, vx, 0), `${fx} ${fy} ${vx}`).toBe(false);
      expect(d.stopped).toBe(false);
      expect(d.update(-2, 0, 0.5, 0)).toBe(false);
    }
  });

  it('disabled: never stopped, nothing kept', () => {
    const d = make({ enabled: false });
    for (let k = 0; k < 5; k++) expect(d.update(-2, 0, 0.5, 0)).toBe(false);
    expect([d.stopped, d.ratio]).toEqual([false, Number.NaN]);
  });

  it('reset empties the ring and the verdict', () => {
    const d = make();
    d.update(-2, 0, 0.5, 0);
    d.update(-2, 0, 0.5, 0);
    d.reset();
    expect([d.stopped, d.ratio]).toEqual([false, Number.NaN]);
    expect(d.update(0, 0, 0.5, 0)).toBe(false);
    expect(Number.isNaN(d.ratio)).toBe(true);
    d.update(0, 0, 0.5, 0);
    expect(d.ratio).toBe(1); // no trace of the windows before the reset
  });
});

describe('property: ρ and the verdict follow the formula over the last n windows', () => {
  // Own velocity mostly above min_speed (fast-check's doubles lean towards 0, which would
  // keep the ring from ever filling); about one window in ten is slow and restarts it.
  const win = fc
    .record({
      fx: fc.double({ min: -40, max: 40, noNaN: true }),
      fy: fc.double({ min: -40, max: 40, noNaN: true }),
      vx: fc.double({ min: 0.06, max: 0.4, noNaN: true }),
      vy: fc.double({ min: -0.4, max: 0.4, noNaN: true }),
      sign: fc.constantFrom(1, -1),
      slow: fc.integer({ min: 0, max: 9 }),
    })
    .map(({ fx, fy, vx, vy, sign, slow }) => (slow === 0 ? { fx, fy, vx: 0.01, vy: 0 } : { fx, fy, vx: sign * vx, vy }));
  it('for random windows, ring lengths, damping and thresholds', () => {
    fc.assert(
      fc.property(
        fc.array(win, { minLength: 1, maxLength: 80 }),
        fc.integer({ min: 2, max: 9 }),
        fc.double({ min: 20, max: 400, noNaN: true }),
        fc.double({ min: 0.01, max: 0.9, noNaN: true }),
        (ws, n, c, ratio) => {
          const p: PartnerStopParams = { enabled: true, speed_ratio: ratio, window_s: n / 100, min_speed_m_s: 0.05 };
          const d = new PartnerStopDetector(p, c, 100);
          expect(d.length).toBe(n);
          let since: { pvx: number; pvy: number; s: number }[] = [];
          for (const w of ws) {
            const got = d.update(w.fx, w.fy, w.vx, w.vy);
            const s = Math.hypot(w.vx, w.vy);
            if (!(s >= p.min_speed_m_s)) since = [];
            else since.push({ pvx: w.vx + w.fx / c, pvy: w.vy + w.fy / c, s });
            if (since.length < n) {
              expect(got).toBe(false);
              expect(Number.isNaN(d.ratio)).toBe(true);
              continue;
            }
            const last = since.slice(-n);
            const sx = last.reduce((a, x) => a + x.pvx, 0);
            const sy = last.reduce((a, x) => a + x.pvy, 0);
            const ss = last.reduce((a, x) => a + x.s, 0);
            const want = Math.hypot(sx, sy) / ss;
            expect(Math.abs(d.ratio - want)).toBeLessThanOrEqual(1e-9 * Math.max(1, want));
            if (Math.abs(want - ratio) > 1e-9) expect(got).toBe(want <= ratio);
            expect(d.stopped).toBe(got);
          }
        },
      ),
    );
  });
});

describe('snapshot and restore', () => {
  it('a restored detector continues bit-identically, across the ring wrap', () => {
    const a = make({ window_s: 0.03 }, 7);
    const seq: [number, number, number, number][] = [[-1, 0.2, 0.3, 0.1], [-2, 0.1, 0.35, 0], [0.5, -0.3, 0.2, 0.2], [-1.4, 0, 0.3, 0], [-2.1, 0.6, 0.3, -0.1]];
    for (const s of seq.slice(0, 4)) a.update(...s);
    const snap = a.snapshot();
    expect(snap.length).toBe(7 + 3 * 3);
    const b = make({ window_s: 0.03 }, 7);
    b.restore(snap);
    expect([b.stopped, b.ratio]).toEqual([a.stopped, a.ratio]);
    for (const s of [...seq, ...seq]) {
      expect(b.update(...s)).toBe(a.update(...s));
      expect(b.ratio).toBe(a.ratio);
    }
    // The stopped flag travels too.
    const c = make();
    c.update(-2, 0, 0.5, 0);
    c.update(-2, 0, 0.5, 0);
    const d = make();
    d.restore(c.snapshot());
    expect(d.stopped).toBe(true);
    expect(d.snapshot()).toEqual(c.snapshot());
  });
});
