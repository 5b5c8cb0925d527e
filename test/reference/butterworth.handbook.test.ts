/**
 * Butterworth design checked against textbook facts about the filter family.
 */
import { describe, expect, it } from 'vitest';
import { SosCascade, analogPrototypePoles, butterworthSos, sosResponse } from '../../src/core/filter/butterworth.js';

const CASES: [number, number, number][] = [];
for (let order = 1; order <= 8; order++) {
  for (const [fc, fs] of [
    [5, 1000],
    [20, 1000],
    [0.5, 8000],
    [1000, 8000],
    [20, 50],
    [240, 500],
  ] as const) {
    CASES.push([order, fc, fs]);
  }
}

describe('Butterworth handbook facts', () => {
  it('magnitude is −3.01 dB (1/√2) at the cutoff for every order', () => {
    // Source: handbook value — |H(jωc)|² = 1/2 for any Butterworth order; with the cutoff
    // pre-warped before the bilinear transform the digital filter keeps it exactly at fc.
    const ref = 20 * Math.log10(Math.SQRT1_2); // −3.0103 dB
    for (const [n, fc, fs] of CASES) {
      const { magnitude } = sosResponse(butterworthSos(n, fc, fs), fc, fs);
      expect(Math.abs(20 * Math.log10(magnitude) - ref), `order ${n} ${fc} Hz @ ${fs} Hz`).toBeLessThan(1e-6);
    }
  });

  it('pass band is maximally flat: |H(0)| = 1 and the magnitude never rises from DC to Nyquist', () => {
    // Source: handbook — Butterworth magnitude is monotonic, unity at DC (no ripple).
    // |H(0)| to 1e-8: with fc/fs = 6e-5 the denominator sum 1 + a1 + a2 is ~1e-7, so the
    // rounding of a1, a2 (1e-16) shows up as ~1e-9 in the DC gain (SciPy's coefficients too).
    for (const [n, fc, fs] of CASES) {
      const sos = butterworthSos(n, fc, fs);
      expect(Math.abs(sosResponse(sos, 0, fs).magnitude - 1), `order ${n} ${fc} Hz @ ${fs} Hz DC`).toBeLessThan(1e-8);
      let prev = Number.POSITIVE_INFINITY;
      const steps = 400;
      for (let k = 0; k <= steps; k++) {
        const f = (0.5 * fs * k) / steps;
        const m = sosResponse(sos, f, fs).magnitude;
        expect(m, `order ${n} ${fc} Hz @ ${fs} Hz at ${f} Hz`).toBeLessThanOrEqual(prev * (1 + 1e-12) + 1e-15);
        prev = m;
      }
    }
  });

  it('the first 2n−1 derivatives of |H|² vanish at DC: near DC, 1 − |H|² ≈ (f/fc)^(2n)', () => {
    // Source: handbook — analog |H(jω)|² = 1/(1 + (ω/ωc)^(2n)); far below the cutoff the
    // digital response follows it (warping is negligible there). Checked for orders 1..4
    // at 1 kHz, fc = 20 Hz, f = 2 Hz, to 5 %.
    for (let n = 1; n <= 4; n++) {
      const sos = butterworthSos(n, 20, 1000);
      const m = sosResponse(sos, 2, 1000).magnitude;
      const droop = 1 - m * m;
      const analog = Math.pow(2 / 20, 2 * n) / (1 + Math.pow(2 / 20, 2 * n));
      expect(Math.abs(droop / analog - 1), `order ${n}`).toBeLessThan(0.05);
    }
  });

  it('analog prototype poles lie on the unit circle at angles π/2 + (2k+1)π/(2n)', () => {
    // Source: handbook — Butterworth poles s_k = exp(i(π/2 + (2k+1)π/(2n))), k = 0..n−1.
    for (let n = 1; n <= 8; n++) {
      const { re, im } = analogPrototypePoles(n);
      expect(re.length).toBe(n);
      for (let k = 0; k < n; k++) {
        const angle = Math.PI / 2 + ((2 * k + 1) * Math.PI) / (2 * n);
        expect(Math.abs(Math.hypot(re[k]!, im[k]!) - 1)).toBeLessThan(1e-15);
        expect(re[k]!).toBeLessThan(0); // stable: left half plane
        expect(Math.abs(re[k]! - Math.cos(angle))).toBeLessThan(1e-15);
        expect(Math.abs(im[k]! - Math.sin(angle))).toBeLessThan(1e-15);
      }
      if (n % 2 === 1) {
        // Odd orders have the real pole exactly at −1.
        expect(re[(n - 1) / 2]).toBe(-1);
        expect(im[(n - 1) / 2]).toBe(0);
      }
    }
  });

  it('order-2 step response overshoots by about 4.3 %', () => {
    // Source: handbook value — 2nd-order Butterworth has ζ = 1/√2, overshoot
    // exp(−πζ/√(1−ζ²)) = e^−π = 4.32 %; with fc = 5 Hz at 1 kHz (far below Nyquist) the
    // digital filter is within 0.1 % of it.
    const analog = Math.exp(-Math.PI);
    expect(Math.abs(analog - 0.0432)).toBeLessThan(1e-4);
    const cascade = new SosCascade(butterworthSos(2, 5, 1000), 1);
    const x = new Float64Array([1]);
    const y = new Float64Array(1);
    let peak = 0;
    for (let i = 0; i < 2000; i++) {
      cascade.process(x, y);
      peak = Math.max(peak, y[0]!);
    }
    expect(Math.abs(peak - 1 - analog)).toBeLessThan(0.001);
    expect(Math.abs(y[0]! - 1)).toBeLessThan(1e-6); // settles to unity DC gain
  });

  it('stop band falls at 20·n dB per decade well above the cutoff', () => {
    // Source: common practice / handbook — asymptotic roll-off of an n-th order low-pass is
    // 20n dB/decade (checked between 100 and 200 Hz for fc = 10 Hz at 8 kHz, where the
    // bilinear warping is still small: 6.02n dB per octave within 0.3 dB·n).
    for (let n = 1; n <= 8; n++) {
      const sos = butterworthSos(n, 10, 8000);
      const drop = 20 * Math.log10(sosResponse(sos, 100, 8000).magnitude / sosResponse(sos, 200, 8000).magnitude);
      expect(Math.abs(drop - 6.0206 * n), `order ${n}`).toBeLessThan(0.3 * n);
    }
  });
});
