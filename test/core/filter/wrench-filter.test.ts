/**
 * Wrench filter: band split, impact detector, tare, payload compensation, snapshots.
 * Scenario: two arms carrying a 1.2 m aluminium extrusion beam (2.4 kg) from a pick stand to
 * a fixture; this is one arm's wrist sensor at 1 kHz.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  DEFAULT_WRENCH_FILTER,
  STANDARD_GRAVITY,
  WrenchFilter,
  checkWrenchFilterConfig,
  wrenchFilterConfig,
  type WrenchFilterConfig,
  type WrenchFilterOverrides,
} from '../../../src/core/filter/index.js';
import { InputError } from '../../../src/util/errors.js';
import { Rng } from '../../../src/util/rng.js';

const EPS = Number.EPSILON;

function make(o: WrenchFilterOverrides = {}): WrenchFilter {
  return new WrenchFilter(wrenchFilterConfig(o));
}

const sample = new Float64Array(6);
function feed(f: WrenchFilter, fx: number, fy = 0, fz = 0, tx = 0, ty = 0, tz = 0): void {
  sample[0] = fx;
  sample[1] = fy;
  sample[2] = fz;
  sample[3] = tx;
  sample[4] = ty;
  sample[5] = tz;
  f.step(sample);
}

const finite6 = fc.tuple(
  fc.double({ min: -2000, max: 2000, noNaN: true }),
  fc.double({ min: -2000, max: 2000, noNaN: true }),
  fc.double({ min: -2000, max: 2000, noNaN: true }),
  fc.double({ min: -200, max: 200, noNaN: true }),
  fc.double({ min: -200, max: 200, noNaN: true }),
  fc.double({ min: -200, max: 200, noNaN: true }),
);

describe('configuration', () => {
  it('defaults are valid and describe a 1 kHz, order-4, 5 Hz split', () => {
    expect(checkWrenchFilterConfig(DEFAULT_WRENCH_FILTER)).toEqual([]);
    expect(DEFAULT_WRENCH_FILTER.sample_rate_hz).toBe(1000);
    expect(DEFAULT_WRENCH_FILTER.order).toBe(4);
    expect(DEFAULT_WRENCH_FILTER.cutoff_hz).toBe(5);
    const f = new WrenchFilter();
    expect(f.sos.length).toBe(12);
    expect(f.tarePending).toBe(true);
    expect(f.riseSamples).toBe(3);
    expect(f.holdSamples).toBe(100);
  });

  it('rejects bad values with InputError naming the dotted key and what is allowed', () => {
    const cases: [WrenchFilterOverrides, string, RegExp][] = [
      [{ order: 9 }, 'wrench_filter.order', /1 to 8/],
      [{ order: 1.5 }, 'wrench_filter.order', /integer/],
      [{ cutoff_hz: 500 }, 'wrench_filter.cutoff_hz', /half the sample rate \(500 Hz/],
      [{ cutoff_hz: 0 }, 'wrench_filter.cutoff_hz', /0 < cutoff/],
      [{ sample_rate_hz: 10_000 }, 'wrench_filter.sample_rate_hz', /50 to 8000/],
      [{ tare: { window_s: 0.001 } }, 'wrench_filter.tare.window_s', /two samples/],
      [{ tare: { still_force_n: 0 } }, 'wrench_filter.tare.still_force_n', /greater than 0/],
      [{ tare: { still_torque_nm: -1 } }, 'wrench_filter.tare.still_torque_nm', /greater than 0/],
      [{ tare: { on_start: 'yes' as unknown as boolean } }, 'wrench_filter.tare.on_start', /true or false/],
      [{ payload: { enabled: 1 as unknown as boolean } }, 'wrench_filter.payload.enabled', /true or false/],
      [{ payload: { mass_kg: -2.4 } }, 'wrench_filter.payload.mass_kg', /0 to 500/],
      [{ payload: { com_m: [0, 0] as unknown as [number, number, number] } }, 'wrench_filter.payload.com_m', /three/],
      [{ payload: { com_m: [0, 0, 60] } }, 'wrench_filter.payload.com_m', /±5 m/],
      [{ impact: { force_n: 0 } }, 'wrench_filter.impact.force_n', /greater than 0/],
      [{ impact: { torque_nm: Number.NaN } }, 'wrench_filter.impact.torque_nm', /greater than 0/],
      [{ impact: { release_ratio: 1.5 } }, 'wrench_filter.impact.release_ratio', /≤ 1/],
      [{ impact: { min_duration_s: -0.001 } }, 'wrench_filter.impact.min_duration_s', /seconds/],
      [{ impact: { hold_s: 11 } }, 'wrench_filter.impact.hold_s', /seconds/],
    ];
    for (const [o, key, hint] of cases) {
      let err: unknown;
      try {
        make(o);
      } catch (e) {
        err = e;
      }
      expect(err, key).toBeInstanceOf(InputError);
      const p = (err as InputError).problems;
      expect(p.length, key).toBe(1);
      expect(p[0]!.where?.key).toBe(key);
      expect(p[0]!.hint).toMatch(hint);
      expect(p[0]!.message).toContain(key);
      expect(p[0]!.code).toMatch(/^param\./);
    }
  });

  it('reports every bad key at once', () => {
    const cfg: WrenchFilterConfig = wrenchFilterConfig({ order: 0, impact: { hold_s: -1 }, tare: { window_s: 0 } });
    const keys = checkWrenchFilterConfig(cfg).map((p) => p.where?.key);
    expect(keys).toEqual(['wrench_filter.order', 'wrench_filter.tare.window_s', 'wrench_filter.impact.hold_s']);
  });

  it('keeps its own frozen copy of the configuration', () => {
    const cfg = wrenchFilterConfig();
    const f = new WrenchFilter(cfg);
    cfg.cutoff_hz = 100;
    expect(f.config.cutoff_hz).toBe(5);
    expect(Object.isFrozen(f.config.tare)).toBe(true);
  });
});

describe('band split (properties)', () => {
  it('correction + impact = compensated to rounding for any finite input', () => {
    // Common practice: a complementary split defined as x − lowpass(x) is exact up to one rounding.
    fc.assert(
      fc.property(fc.array(finite6, { minLength: 1, maxLength: 120 }), fc.boolean(), fc.boolean(), (rows, onStart, payload) => {
        const f = make({
          tare: { on_start: onStart, window_s: 0.01 },
          payload: { enabled: payload, mass_kg: 1.2, com_m: [0.01, 0.02, 0.6] },
        });
        f.setOrientation(0.1, -0.3, 0.2, 0.9);
        const raw = new Float64Array(6);
        for (const r of rows) {
          raw.set(r);
          f.step(raw);
          for (let i = 0; i < 6; i++) {
            const c = f.correction[i]!;
            const m = f.impact[i]!;
            const s = f.compensated[i]!;
            expect(Math.abs(c + m - s)).toBeLessThanOrEqual(2 * EPS * Math.max(Math.abs(c), Math.abs(m), Math.abs(s)));
            expect(s).toBe(raw[i]! - f.payloadWrench[i]! - f.bias[i]!);
          }
        }
      }),
      { numRuns: 60 },
    );
  });

  it('a constant input after tare gives a zero impact band in steady state', () => {
    // Common practice: a high-pass (x − lowpass x) of a unity-DC-gain low-pass rejects DC.
    fc.assert(
      fc.property(finite6, finite6, (before, after) => {
        const f = make({ tare: { window_s: 0.05 } });
        const raw = new Float64Array(before);
        for (let i = 0; i < 60; i++) f.step(raw);
        expect(f.tared).toBe(true);
        for (let i = 0; i < 6; i++) expect(Math.abs(f.bias[i]! - before[i]!)).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(before[i]!)));
        raw.set(after);
        for (let i = 0; i < 2500; i++) f.step(raw);
        for (let i = 0; i < 6; i++) {
          const step = Math.abs(after[i]! - before[i]!);
          expect(Math.abs(f.impact[i]!)).toBeLessThanOrEqual(1e-8 * Math.max(1, step));
          expect(Math.abs(f.correction[i]! - (after[i]! - f.bias[i]!))).toBeLessThanOrEqual(1e-8 * Math.max(1, step));
        }
      }),
      { numRuns: 25 },
    );
  });

  it('is linear: scaling the input scales correction, impact and score', () => {
    // Common practice: an LTI filter (no tare, no payload) is homogeneous.
    fc.assert(
      fc.property(fc.array(finite6, { minLength: 1, maxLength: 80 }), fc.double({ min: -50, max: 50, noNaN: true }), (rows, k) => {
        const a = make({ tare: { on_start: false } });
        const b = make({ tare: { on_start: false } });
        const ra = new Float64Array(6);
        const rb = new Float64Array(6);
        let scale = 1;
        for (const r of rows) for (const v of r) scale = Math.max(scale, Math.abs(v));
        for (const r of rows) {
          for (let i = 0; i < 6; i++) {
            ra[i] = r[i]!;
            rb[i] = k * r[i]!;
          }
          a.step(ra);
          b.step(rb);
          const tol = 1e-12 * scale * Math.max(1, Math.abs(k));
          for (let i = 0; i < 6; i++) {
            expect(Math.abs(b.correction[i]! - k * a.correction[i]!)).toBeLessThanOrEqual(tol);
            expect(Math.abs(b.impact[i]! - k * a.impact[i]!)).toBeLessThanOrEqual(tol);
          }
          expect(Math.abs(b.impactScore - Math.abs(k) * a.impactScore)).toBeLessThanOrEqual(tol);
        }
      }),
      { numRuns: 60 },
    );
  });

  it('starts without ringing: the first sample sets the low-pass steady state', () => {
    const f = make({ tare: { on_start: false } });
    for (let i = 0; i < 50; i++) {
      feed(f, 50, -3, 24, 0.2, 0, -0.1);
      expect(Math.abs(f.correction[0]! - 50)).toBeLessThan(1e-9);
      expect(Math.abs(f.impact[2]!)).toBeLessThan(1e-9);
      expect(f.impactFlag).toBe(false);
    }
  });

  it('ignores samples with NaN or infinity and counts them', () => {
    const f = make({ tare: { on_start: false } });
    feed(f, 1, 2, 3);
    const before = Array.from(f.correction);
    feed(f, Number.NaN, 0, 0);
    feed(f, 0, Number.POSITIVE_INFINITY, 0);
    expect(f.nonFiniteSamples).toBe(2);
    expect(f.samples).toBe(1);
    expect(Array.from(f.correction)).toEqual(before);
    feed(f, 1, 2, 3);
    expect(Number.isFinite(f.correction[0]!)).toBe(true);
  });
});

describe('impact detector', () => {
  // 15 N / 1.5 N·m thresholds, 3 ms rise, 0.5 release ratio, 100 ms hold (the defaults).
  function noisyFilter(): { f: WrenchFilter; rng: Rng; run: (n: number, fx?: (i: number) => number) => boolean } {
    const f = make({ tare: { on_start: false } });
    const rng = new Rng(20240607);
    const run = (n: number, fx: (i: number) => number = () => 0): boolean => {
      let tripped = false;
      for (let i = 0; i < n; i++) {
        // 1 N rms per force axis, 0.02 N·m rms per torque axis.
        feed(f, fx(i) + rng.normal(), rng.normal(), rng.normal(), 0.02 * rng.normal(), 0.02 * rng.normal(), 0.02 * rng.normal());
        tripped ||= f.impactFlag;
      }
      return tripped;
    };
    return { f, rng, run };
  }

  it('a single-sample 25 N spike over 1 N rms noise does not trip', () => {
    const { f, run } = noisyFilter();
    expect(run(1000)).toBe(false); // the noise floor alone never trips
    expect(run(300, (i) => (i === 0 ? 25 : 0))).toBe(false);
    expect(f.samples).toBe(1300);
  });

  it('the spike does score above 1 for one sample (it is the duration rule that rejects it)', () => {
    const f = make({ tare: { on_start: false } });
    for (let i = 0; i < 100; i++) feed(f, 0);
    feed(f, 25);
    expect(f.impactScore).toBeGreaterThan(1);
    expect(f.impactFlag).toBe(false);
    feed(f, 0);
    expect(f.impactScore).toBeLessThan(1);
  });

  it('a 40 N contact step trips within the 3 ms rise time', () => {
    const { f, run } = noisyFilter();
    run(1000);
    let firstFlag = -1;
    for (let i = 0; i < 200 && firstFlag < 0; i++) {
      run(1, () => 40);
      if (f.impactFlag) firstFlag = i;
    }
    expect(firstFlag).toBeGreaterThanOrEqual(2); // needs 3 samples ≥ threshold
    expect(firstFlag).toBeLessThanOrEqual(5);
  });

  it('a 10 ms half-sine knock of 60 N trips', () => {
    const { run } = noisyFilter();
    run(1000);
    expect(run(300, (i) => (i < 10 ? 60 * Math.sin((Math.PI * (i + 0.5)) / 10) : 0))).toBe(true);
  });

  it('a torque knock alone trips (1.5 N·m threshold)', () => {
    const f = make({ tare: { on_start: false } });
    for (let i = 0; i < 100; i++) feed(f, 0);
    let tripped = false;
    for (let i = 0; i < 20; i++) {
      feed(f, 0, 0, 0, 0, 0, i < 8 ? 3 : 0);
      tripped ||= f.impactFlag;
    }
    expect(tripped).toBe(true);
  });

  it('hysteresis: clears only once the score has stayed below release_ratio for hold_s', () => {
    const f = make({ tare: { on_start: false } });
    for (let i = 0; i < 100; i++) feed(f, 0);
    for (let i = 0; i < 10; i++) feed(f, 60 * Math.sin((Math.PI * (i + 0.5)) / 10));
    expect(f.impactFlag).toBe(true);
    let belowRun = 0;
    let clearedAt = -1;
    let bumpScore = 0;
    for (let i = 0; i < 1000 && clearedAt < 0; i++) {
      // A second, smaller bump between release (7.5 N) and threshold (15 N) at 40 ms must
      // restart the hold without re-triggering.
      feed(f, i >= 40 && i < 45 ? 10 : 0);
      if (i >= 40 && i < 45) bumpScore = Math.max(bumpScore, f.impactScore);
      belowRun = f.impactScore < 0.5 ? belowRun + 1 : 0;
      if (f.impactFlag) expect(belowRun).toBeLessThan(f.holdSamples);
      else clearedAt = i;
    }
    expect(bumpScore).toBeGreaterThan(0.5);
    expect(bumpScore).toBeLessThan(1);
    expect(clearedAt).toBeGreaterThanOrEqual(45 + f.holdSamples - 1); // 100 samples below release after the bump
    expect(belowRun).toBe(f.holdSamples);
  });

  it('min_duration_s = 0 still needs one sample, rounded to samples otherwise', () => {
    expect(make({ impact: { min_duration_s: 0 } }).riseSamples).toBe(1);
    expect(make({ impact: { min_duration_s: 0.0034 } }).riseSamples).toBe(3);
    expect(make({ impact: { hold_s: 0 } }).holdSamples).toBe(1);
    expect(make({ sample_rate_hz: 8000, impact: { min_duration_s: 0.003 } }).riseSamples).toBe(24);
  });
});

describe('tare', () => {
  it('refuses on a ramping signal and succeeds once it settles, without ringing', () => {
    const f = make(); // tare on start, 0.5 s window, 1.5 N still limit
    const rng = new Rng(7);
    // The gripper closes on the beam: fx ramps 0 → 20 N over 2 s (5 N per window).
    for (let i = 0; i < 2000; i++) feed(f, 0.01 * i + 0.2 * rng.normal(), 3 + 0.2 * rng.normal(), -11.8 + 0.2 * rng.normal());
    expect(f.tared).toBe(false);
    expect(f.tarePending).toBe(true);
    expect(f.tareRefusals).toBe(4); // one per 500-sample window that was not still: at 500, 1000, 1500, 2000
    // Settled: it tares within one window (500 samples) after the ramp ends; the window may
    // start in the ramp's last 1.5 N (150 samples at 0.01 N per sample), which is still enough.
    let taredAt = -1;
    for (let i = 0; i < 1000 && taredAt < 0; i++) {
      feed(f, 20 + 0.2 * rng.normal(), 3 + 0.2 * rng.normal(), -11.8 + 0.2 * rng.normal());
      if (f.tared) taredAt = i;
    }
    expect(taredAt).toBeGreaterThanOrEqual(350);
    expect(taredAt).toBeLessThanOrEqual(499);
    expect(f.tarePending).toBe(false);
    expect(Math.abs(f.bias[0]! - 20)).toBeLessThan(0.15);
    expect(Math.abs(f.bias[1]! - 3)).toBeLessThan(0.05);
    expect(Math.abs(f.bias[2]! + 11.8)).toBeLessThan(0.05);
    // No ringing: the correction band starts at the new steady state (zero) instead of
    // decaying from the 20 N it had before the tare; it only follows the small bias error.
    expect(Math.abs(f.correction[0]!)).toBeLessThan(0.01);
    const truth = [20, 3, -11.8];
    let worst = 0;
    for (let i = 0; i < 500; i++) {
      feed(f, 20 + 0.2 * rng.normal(), 3 + 0.2 * rng.normal(), -11.8 + 0.2 * rng.normal());
      for (let a = 0; a < 3; a++) worst = Math.max(worst, Math.abs(f.correction[a]! - (truth[a]! - f.bias[a]!)));
    }
    expect(worst).toBeLessThan(0.1);
  });

  it('refuses while a torque axis moves', () => {
    const f = make({ tare: { window_s: 0.1 } });
    for (let i = 0; i < 1000; i++) feed(f, 1, 1, 1, 0, 0, 0.3 * Math.sin(i / 20));
    expect(f.tared).toBe(false);
    expect(f.tareRefusals).toBe(10);
  });

  it('requestTare() re-estimates the bias from samples after the request', () => {
    const f = make({ tare: { on_start: false, window_s: 0.1 } });
    for (let i = 0; i < 300; i++) feed(f, 5, 0, -2);
    expect(f.tared).toBe(false);
    expect(f.compensated[0]).toBe(5);
    f.requestTare();
    f.requestTare(); // a second request while pending changes nothing
    for (let i = 0; i < 99; i++) feed(f, 5, 0, -2);
    expect(f.tared).toBe(false);
    feed(f, 5, 0, -2);
    expect(f.tared).toBe(true);
    expect(f.compensated[0]).toBe(0);
    expect(f.correction[0]).toBe(0);
  });

  it('sliding window peak-to-peak matches a brute-force scan', () => {
    // Reference: brute force max − min over the last N samples (common practice check of a
    // monotonic-deque running extremum).
    fc.assert(
      fc.property(fc.array(fc.double({ min: -100, max: 100, noNaN: true }), { minLength: 1, maxLength: 200 }), (xs) => {
        const f = make({ tare: { window_s: 0.01, still_force_n: 1e-9, still_torque_nm: 1e-9 } });
        const n = f.tareWindowSamples;
        const hist: number[] = [];
        for (const x of xs) {
          feed(f, x, -x, 0.5 * x, x / 10, 0, 0);
          if (f.tared) return; // a constant run can be still; stop there
          hist.push(x);
          const w = hist.slice(-n);
          const ptp = Math.max(...w) - Math.min(...w);
          expect(f.windowPeakToPeak(0)).toBe(ptp);
          expect(f.windowPeakToPeak(1)).toBe(ptp);
          expect(Math.abs(f.windowPeakToPeak(3) - ptp / 10)).toBeLessThanOrEqual(1e-12 * Math.max(1, ptp));
        }
      }),
      { numRuns: 80 },
    );
  });
});

describe('payload gravity compensation', () => {
  // Half of the 2.4 kg beam is carried by each arm, but here the whole beam hangs on this
  // sensor (the partner has let go) so the numbers are easy to check by hand.
  const mass = 2.4;
  const com: [number, number, number] = [0.05, 0, 0.6];
  const mg = mass * STANDARD_GRAVITY; // 23.53596 N (standard gravity 9.80665 m/s², ISO 80000-3)
  const s45 = Math.SQRT1_2;
  // Hand-computed sensor-frame wrench of the payload, F = m·Rᵀ·(0,0,−g), τ = com × F:
  const cases: { name: string; q: [number, number, number, number]; w: number[] }[] = [
    // Identity: F = (0, 0, −mg); τ = (cy·Fz − cz·Fy, cz·Fx − cx·Fz, cx·Fy − cy·Fx) = (0, 0.05·mg, 0).
    { name: 'identity', q: [0, 0, 0, 1], w: [0, 0, -mg, 0, 0.05 * mg, 0] },
    // 90° about x: sensor y points up, so F = (0, −mg, 0); τ = (−0.6·(−mg), 0, 0.05·(−mg)).
    { name: '90° about x', q: [s45, 0, 0, s45], w: [0, -mg, 0, 0.6 * mg, 0, -0.05 * mg] },
    // 90° about y: sensor x points down, so F = (mg, 0, 0); τ = (0, 0.6·mg, 0).
    { name: '90° about y', q: [0, s45, 0, s45], w: [mg, 0, 0, 0, 0.6 * mg, 0] },
  ];

  it('models the payload wrench as hand-computed for several orientations', () => {
    expect(mg).toBeCloseTo(23.53596, 10);
    const f = make({ payload: { enabled: true, mass_kg: mass, com_m: com } });
    for (const c of cases) {
      expect(f.setOrientation(...c.q)).toBe(true);
      for (let i = 0; i < 6; i++) expect(Math.abs(f.payloadWrench[i]! - c.w[i]!), `${c.name} axis ${i}`).toBeLessThan(1e-12);
    }
  });

  it('a static 2.4 kg payload gives zero compensated wrench after tare, also when the sensor turns', () => {
    const bias = [1.7, -0.4, 3.2, 0.05, -0.02, 0.11]; // sensor offset, unknown to the filter
    const f = make({ tare: { window_s: 0.1 }, payload: { enabled: true, mass_kg: mass, com_m: com } });
    const raw = new Float64Array(6);
    const at = (w: number[]): void => {
      for (let i = 0; i < 6; i++) raw[i] = bias[i]! + w[i]!;
    };
    f.setOrientation(...cases[0]!.q);
    at(cases[0]!.w);
    for (let i = 0; i < 100; i++) f.step(raw);
    expect(f.tared).toBe(true);
    for (let i = 0; i < 6; i++) expect(Math.abs(f.bias[i]! - bias[i]!)).toBeLessThan(1e-12);
    for (const c of cases.slice(1)) {
      f.setOrientation(...c.q);
      at(c.w);
      f.step(raw);
      for (let i = 0; i < 6; i++) expect(Math.abs(f.compensated[i]!), `${c.name} axis ${i}`).toBeLessThan(1e-12);
    }
  });

  it('matches gravity rotated by q*·v·q for any orientation (property)', () => {
    // Reference: rotating a vector into the sensor frame with the quaternion conjugate,
    // v_s = q* ⊗ v_w ⊗ q (common practice; independent of the rotation-matrix formula used).
    const f = make({ payload: { enabled: true, mass_kg: mass, com_m: com } });
    const mul = (a: number[], b: number[]): number[] => [
      a[3]! * b[0]! + a[0]! * b[3]! + a[1]! * b[2]! - a[2]! * b[1]!,
      a[3]! * b[1]! - a[0]! * b[2]! + a[1]! * b[3]! + a[2]! * b[0]!,
      a[3]! * b[2]! + a[0]! * b[1]! - a[1]! * b[0]! + a[2]! * b[3]!,
      a[3]! * b[3]! - a[0]! * b[0]! - a[1]! * b[1]! - a[2]! * b[2]!,
    ];
    const q4 = fc.tuple(fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }));
    fc.assert(
      fc.property(q4, ([x, y, z, w]) => {
        const n = Math.hypot(x, y, z, w);
        fc.pre(n > 0.1);
        expect(f.setOrientation(x, y, z, w)).toBe(true);
        const q = [x / n, y / n, z / n, w / n];
        const qc = [-q[0]!, -q[1]!, -q[2]!, q[3]!];
        const v = mul(mul(qc, [0, 0, -mg, 0]), q);
        const F = [v[0]!, v[1]!, v[2]!];
        const tau = [com[1] * F[2]! - com[2] * F[1]!, com[2] * F[0]! - com[0] * F[2]!, com[0] * F[1]! - com[1] * F[0]!];
        for (let i = 0; i < 3; i++) {
          expect(Math.abs(f.payloadWrench[i]! - F[i]!)).toBeLessThan(1e-12 * mg * 10);
          expect(Math.abs(f.payloadWrench[3 + i]! - tau[i]!)).toBeLessThan(1e-12 * mg * 10);
        }
        expect(Math.abs(Math.hypot(f.payloadWrench[0]!, f.payloadWrench[1]!, f.payloadWrench[2]!) - mg)).toBeLessThan(1e-12 * mg * 10);
      }),
      { numRuns: 200 },
    );
  });

  it('keeps the previous orientation for a zero or non-finite quaternion; zero wrench when disabled', () => {
    const f = make({ payload: { enabled: true, mass_kg: mass, com_m: com } });
    f.setOrientation(0, s45, 0, s45);
    const before = Array.from(f.payloadWrench);
    expect(f.setOrientation(0, 0, 0, 0)).toBe(false);
    expect(f.setOrientation(Number.NaN, 0, 0, 1)).toBe(false);
    expect(Array.from(f.payloadWrench)).toEqual(before);
    const off = make({ payload: { enabled: false, mass_kg: mass, com_m: com } });
    off.setOrientation(0, s45, 0, s45);
    expect(Array.from(off.payloadWrench)).toEqual([0, 0, 0, 0, 0, 0]);
  });
});

describe('snapshot, restore and reset', () => {
  function drive(f: WrenchFilter, rng: Rng, n: number, out: number[] | null, t0: number): void {
    const raw = new Float64Array(6);
    for (let i = 0; i < n; i++) {
      const t = t0 + i;
      // A still stretch (tare), a ramp, a knock, noise throughout; orientation wobbles.
      raw[0] = 2 + (t > 150 ? 0.02 * (t - 150) : 0) + (t % 97 < 6 ? 40 : 0) + 0.3 * rng.normal();
      raw[1] = -1 + 0.3 * rng.normal();
      raw[2] = -12 + 0.3 * rng.normal();
      raw[3] = 0.01 * rng.normal();
      raw[4] = 0.3 + 0.01 * rng.normal();
      raw[5] = 0.01 * rng.normal();
      if (t % 50 === 0) f.setOrientation(0.01 * Math.sin(t), 0.02, 0, 1);
      if (t === 260) f.requestTare();
      f.step(raw);
      if (out) {
        out.push(...f.compensated, ...f.correction, ...f.impact, ...f.bias, f.impactScore, f.impactFlag ? 1 : 0, f.tared ? 1 : 0, f.tarePending ? 1 : 0, f.tareRefusals, f.windowPeakToPeak(0));
      }
    }
  }

  const cfg: WrenchFilterOverrides = { tare: { window_s: 0.08, still_force_n: 2.5 }, payload: { enabled: true, mass_kg: 1.2, com_m: [0, 0, 0.3] } };

  for (const cut of [40, 120, 270, 400]) {
    it(`continues bit-identically after restore (snapshot at sample ${cut})`, () => {
      const f = make(cfg);
      drive(f, new Rng(99), cut, null, 0);
      const snap = f.snapshot();
      const a: number[] = [];
      drive(f, new Rng(5), 300, a, cut);
      f.restore(snap);
      const b: number[] = [];
      drive(f, new Rng(5), 300, b, cut);
      expect(b.length).toBe(a.length);
      for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) expect(b[i], `value ${i}`).toBe(a[i]);
      // Another instance with the same configuration continues identically too.
      const g = make(cfg);
      g.restore(snap);
      const c: number[] = [];
      drive(g, new Rng(5), 300, c, cut);
      for (let i = 0; i < a.length; i++) if (!Object.is(a[i], c[i])) expect(c[i], `value ${i}`).toBe(a[i]);
    });
  }

  it('the snapshot runs exercise tare and the impact flag', () => {
    const f = make(cfg);
    const out: number[] = [];
    drive(f, new Rng(99), 700, out, 0);
    const stride = 30;
    let sawFlag = false;
    let sawTared = false;
    for (let i = 0; i < out.length; i += stride) {
      sawFlag ||= out[i + 25] === 1;
      sawTared ||= out[i + 26] === 1;
    }
    expect(sawFlag).toBe(true);
    expect(sawTared).toBe(true);
  });

  it('refuses a snapshot from a differently configured filter', () => {
    const snap = make(cfg).snapshot();
    expect(() => make({ tare: { window_s: 0.2 } }).restore(snap)).toThrow(InputError);
    expect(() => make(cfg).restore(new Float64Array(snap.length))).toThrow(InputError);
  });

  it('reset() returns to the freshly constructed behaviour', () => {
    const f = make(cfg);
    drive(f, new Rng(1), 400, null, 0);
    f.reset();
    expect(f.tared).toBe(false);
    expect(f.tarePending).toBe(true);
    const a: number[] = [];
    drive(f, new Rng(2), 300, a, 0);
    const g = make(cfg);
    const b: number[] = [];
    drive(g, new Rng(2), 300, b, 0);
    expect(a).toEqual(b);
  });
});
