/**
 * The wrench filter's tare gating through its public interface (WrenchFilter): the bounds on
 * the bias a tare may set (force, torque, horizontal part in the world frame) and on its change
 * from the start-up tare, each at its limit (taken) and just past it (refused, with the code,
 * value and limit), the order of the checks, the start-up tare that keeps trying, a re-tare that
 * ends with its refusal, cancelTare, and the count of windows that were not still.
 * Invented constant wrenches of our own scenario (a 1 kHz wrist sensor, 10-sample still window).
 * The horizontal part is checked against the rotation of the bias by q·v·q* (Hamilton
 * quaternion product, from memory).
 */
import { describe, expect, it } from 'vitest';
import {
  TARE_NONE,
  TARE_REFUSED,
  TARE_REFUSED_BIAS_FORCE,
  TARE_REFUSED_BIAS_TORQUE,
  TARE_REFUSED_CHANGE_FORCE,
  TARE_REFUSED_CHANGE_TORQUE,
  TARE_REFUSED_HORIZONTAL,
  TARE_REFUSED_MOVING,
  TARE_REFUSAL_TEXT,
  TARE_TAKEN,
  WrenchFilter,
  wrenchFilterConfig,
  type WrenchFilterConfig,
} from '../../../src/core/filter/wrench-filter.js';

const N = 10; // samples in the still window
const filter = (tare: Partial<WrenchFilterConfig['tare']> = {}) => new WrenchFilter(wrenchFilterConfig({ tare: { window_s: N / 1000, still_force_n: 1, still_torque_nm: 0.1, ...tare } }));

/** Feed `k` copies of a wrench; returns the outcome of each step. */
function feed(f: WrenchFilter, w: readonly number[], k: number): number[] {
  const x = Float64Array.from(w);
  const out: number[] = [];
  for (let i = 0; i < k; i++) {
    f.step(x);
    out.push(f.tareOutcome);
  }
  return out;
}

describe('tare bounds: the start-up tare', () => {
  it('takes a force bias at max_bias_n and refuses one just above, and keeps trying', () => {
    const at = filter({ max_bias_n: 13 });
    const outcomes = feed(at, [3, 4, -12, 0, 0, 0], N);
    expect(outcomes.slice(0, N - 1).every((o) => o === TARE_NONE)).toBe(true);
    expect(outcomes[N - 1]).toBe(TARE_TAKEN);
    expect(at.tared).toBe(true);
    expect([...at.bias]).toEqual([3, 4, -12, 0, 0, 0]);
    expect([...at.startBias]).toEqual([3, 4, -12, 0, 0, 0]);
    expect(at.tareRefusedWhy).toBe(0);
    feed(at, [3, 4, -12, 0, 0, 0], 1);
    expect(at.tareOutcome).toBe(TARE_NONE);

    const over = filter({ max_bias_n: 12.999 });
    expect(feed(over, [3, 4, -12, 0, 0, 0], N)[N - 1]).toBe(TARE_REFUSED);
    expect(over.tared).toBe(false);
    expect(over.tarePending).toBe(true); // the start-up tare tries again on the next window
    expect(over.tareRefusedWhy).toBe(TARE_REFUSED_BIAS_FORCE);
    expect(over.tareRefusedValue).toBe(13);
    expect(over.tareRefusedLimit).toBe(12.999);
    expect(over.tareRefusals).toBe(1);
    expect([...over.bias]).toEqual([0, 0, 0, 0, 0, 0]);
    // A smaller load on a later window is taken.
    const later = feed(over, [0, 0, -12, 0, 0, 0], 2 * N);
    expect(later.indexOf(TARE_TAKEN)).toBe(N - 1);
    expect(over.tared).toBe(true);
    expect(over.tareRefusedWhy).toBe(0);
    expect([...over.startBias]).toEqual([0, 0, -12, 0, 0, 0]);
  });

  it('takes a torque bias at max_bias_nm and refuses one just above', () => {
    const at = filter({ max_bias_nm: 13 });
    expect(feed(at, [0, 0, 0, 3, -4, 12], N)[N - 1]).toBe(TARE_TAKEN);
    const over = filter({ max_bias_nm: 12.999 });
    expect(feed(over, [0, 0, 0, 3, -4, 12], N)[N - 1]).toBe(TARE_REFUSED);
    expect(over.tareRefusedWhy).toBe(TARE_REFUSED_BIAS_TORQUE);
    expect(over.tareRefusedValue).toBe(13);
    expect(over.tareRefusedLimit).toBe(12.999);
  });

  it('takes a horizontal part at max_horizontal_bias_n and refuses one just above (identity orientation)', () => {
    const at = filter({ max_horizontal_bias_n: 5 });
    expect(feed(at, [3, -4, -12, 0, 0, 0], N)[N - 1]).toBe(TARE_TAKEN);
    const over = filter({ max_horizontal_bias_n: 4.999 });
    expect(feed(over, [3, -4, -12, 0, 0, 0], N)[N - 1]).toBe(TARE_REFUSED);
    expect(over.tareRefusedWhy).toBe(TARE_REFUSED_HORIZONTAL);
    expect(over.tareRefusedValue).toBe(5);
    // A purely vertical bias has no horizontal part.
    expect(feed(filter({ max_horizontal_bias_n: 1e-9 }), [0, 0, -40, 0, 0, 0], N)[N - 1]).toBe(TARE_TAKEN);
  });

  it('measures the horizontal part in the world frame of the sensor orientation', () => {
    // Reference: rotate the bias by q·v·q* and take the length of its x-y part.
    const rot = (q: readonly number[], v: readonly number[]): number[] => {
      const [x, y, z, w] = q as [number, number, number, number];
      const mul = (a: number[], b: number[]) => [
        a[3]! * b[0]! + a[0]! * b[3]! + a[1]! * b[2]! - a[2]! * b[1]!,
        a[3]! * b[1]! - a[0]! * b[2]! + a[1]! * b[3]! + a[2]! * b[0]!,
        a[3]! * b[2]! + a[0]! * b[1]! - a[1]! * b[0]! + a[2]! * b[3]!,
        a[3]! * b[3]! - a[0]! * b[0]! - a[1]! * b[1]! - a[2]! * b[2]!,
      ];
      const r = mul(mul([x, y, z, w], [v[0]!, v[1]!, v[2]!, 0]), [-x, -y, -z, w]);
      return [r[0]!, r[1]!, r[2]!];
    };
    const quats = [
      [Math.SQRT1_2, 0, 0, Math.SQRT1_2], // 90° about x
      [0, Math.SQRT1_2, 0, Math.SQRT1_2], // 90° about y
      [0, 0, Math.SQRT1_2, Math.SQRT1_2], // 90° about z
      [0.1826, 0.3651, 0.5477, 0.7303], // a general one
      [-0.5, 0.5, 0.5, 0.5],
    ];
    const bias = [2, -7, -11];
    for (const q of quats) {
      const n = Math.hypot(...q);
      const qn = q.map((c) => c / n);
      const wv = rot(qn, bias);
      const want = Math.hypot(wv[0]!, wv[1]!);
      const f = filter({ max_horizontal_bias_n: 1e-6 });
      f.setOrientation(q[0]!, q[1]!, q[2]!, q[3]!);
      feed(f, [...bias, 0, 0, 0], N);
      expect(f.tareRefusedWhy, `q = ${q}`).toBe(TARE_REFUSED_HORIZONTAL);
      expect(Math.abs(f.tareRefusedValue - want), `q = ${q}`).toBeLessThan(1e-9);
    }
  });

  it('checks the force bias first, then the horizontal part, then the torque', () => {
    const all = filter({ max_bias_n: 1, max_bias_nm: 1, max_horizontal_bias_n: 1 });
    feed(all, [3, 4, -12, 3, 4, 12], N);
    expect(all.tareRefusedWhy).toBe(TARE_REFUSED_BIAS_FORCE);
    const hz = filter({ max_bias_nm: 1, max_horizontal_bias_n: 1 });
    feed(hz, [3, 4, -12, 3, 4, 12], N);
    expect(hz.tareRefusedWhy).toBe(TARE_REFUSED_HORIZONTAL);
    const tq = filter({ max_bias_nm: 1 });
    feed(tq, [3, 4, -12, 3, 4, 12], N);
    expect(tq.tareRefusedWhy).toBe(TARE_REFUSED_BIAS_TORQUE);
  });

  it('does not apply the change bounds to the start-up tare', () => {
    const f = filter({ max_change_n: 0, max_change_nm: 0 });
    expect(feed(f, [1, 2, -30, 0.5, 0.2, 0.1], N)[N - 1]).toBe(TARE_TAKEN);
    expect([...f.biasChange]).toEqual([0, 0, 0, 0, 0, 0]);
  });
});

describe('tare bounds: a later tare', () => {
  const start = [1, 2, -10, 0.5, 0.25, 1]; // every axis non-zero, so a sum cannot pass for a difference
  it('takes a force change at max_change_n, refuses one just above, and ends with the refusal', () => {
    const at = filter({ max_change_n: 5 });
    feed(at, start, N);
    at.requestTare();
    expect(at.tarePending).toBe(true);
    expect(feed(at, [1, 5, -6, 0.5, 0.25, 1], N)[N - 1]).toBe(TARE_TAKEN);
    expect([...at.bias]).toEqual([1, 5, -6, 0.5, 0.25, 1]);
    expect([...at.startBias]).toEqual(start);
    expect([...at.biasChange]).toEqual([0, 3, 4, 0, 0, 0]);
    expect(at.tarePending).toBe(false);

    const over = filter({ max_change_n: 4.999 });
    feed(over, start, N);
    over.requestTare();
    expect(feed(over, [1, 5, -6, 0.5, 0.25, 1], N)[N - 1]).toBe(TARE_REFUSED);
    expect(over.tareRefusedWhy).toBe(TARE_REFUSED_CHANGE_FORCE);
    expect(over.tareRefusedValue).toBe(5);
    expect(over.tareRefusedLimit).toBe(4.999);
    expect(over.tarePending).toBe(false); // a requested re-tare ends with its refusal
    expect([...over.bias]).toEqual(start); // the old bias stays
    expect([...over.biasChange]).toEqual([0, 0, 0, 0, 0, 0]);
    expect(over.tareRefusals).toBe(1);
  });

  it('takes a torque change at max_change_nm and refuses one just above; force is checked first', () => {
    const at = filter({ max_change_nm: 5 });
    feed(at, start, N);
    at.requestTare();
    expect(feed(at, [1, 2, -10, 0.5, 3.25, 5], N)[N - 1]).toBe(TARE_TAKEN);
    expect([...at.biasChange]).toEqual([0, 0, 0, 0, 3, 4]);
    const over = filter({ max_change_nm: 4.999 });
    feed(over, start, N);
    over.requestTare();
    feed(over, [1, 2, -10, 0.5, 3.25, 5], N);
    expect(over.tareRefusedWhy).toBe(TARE_REFUSED_CHANGE_TORQUE);
    expect(over.tareRefusedValue).toBe(5);
    const both = filter({ max_change_n: 1, max_change_nm: 1 });
    feed(both, start, N);
    both.requestTare();
    feed(both, [1, 5, -6, 0.5, 3.25, 5], N);
    expect(both.tareRefusedWhy).toBe(TARE_REFUSED_CHANGE_FORCE);
  });

  it('measures the change from the start-up tare, not from the last one', () => {
    const f = filter({ max_change_n: 5 });
    feed(f, start, N);
    f.requestTare();
    feed(f, [1, 5, -6, 0.5, 0.25, 1], N); // change 5: taken
    f.requestTare();
    feed(f, [1, 5.1, -6, 0.5, 0.25, 1], N); // change from start > 5 (from the last only 0.1): refused
    expect(f.tareRefusedWhy).toBe(TARE_REFUSED_CHANGE_FORCE);
    expect([...f.bias]).toEqual([1, 5, -6, 0.5, 0.25, 1]);
  });
});

describe('tare requests and refusals', () => {
  it('requestTare while a tare is pending keeps the window it has', () => {
    const f = filter();
    feed(f, [0, 0, -5, 0, 0, 0], N / 2);
    f.requestTare();
    const out = feed(f, [0, 0, -5, 0, 0, 0], N / 2);
    expect(out[N / 2 - 1]).toBe(TARE_TAKEN);
  });

  it('requestTare after a tare starts a fresh window from the next sample', () => {
    const f = filter();
    feed(f, [0, 0, -5, 0, 0, 0], N);
    f.requestTare();
    const out = feed(f, [0, 0, -7, 0, 0, 0], N);
    expect(out.indexOf(TARE_TAKEN)).toBe(N - 1);
    expect(f.bias[2]).toBe(-7);
  });

  it('cancelTare ends a pending tare as refused with its code, and does nothing otherwise', () => {
    const f = filter();
    feed(f, [0, 0, -5, 0, 0, 0], N / 2);
    f.cancelTare(TARE_REFUSED_MOVING);
    expect(f.tarePending).toBe(false);
    expect(f.tareOutcome).toBe(TARE_REFUSED);
    expect(f.tareRefusedWhy).toBe(TARE_REFUSED_MOVING);
    expect(f.tareRefusedValue).toBe(0);
    expect(f.tareRefusedLimit).toBe(0);
    expect(f.tareRefusals).toBe(1);
    expect(f.tared).toBe(false);
    f.cancelTare(TARE_REFUSED_MOVING);
    expect(f.tareRefusals).toBe(1);
    // A new request starts from an empty window.
    f.requestTare();
    expect(feed(f, [0, 0, -5, 0, 0, 0], N).indexOf(TARE_TAKEN)).toBe(N - 1);
    expect(TARE_REFUSAL_TEXT[TARE_REFUSED_MOVING]).toMatch(/moving/);
    expect(TARE_REFUSAL_TEXT[TARE_REFUSED_HORIZONTAL]).toMatch(/max_horizontal_bias_n/);
  });

  it('counts one refusal per window length of samples that are not still', () => {
    const f = filter();
    const x = new Float64Array(6);
    for (let k = 0; k < 3.5 * N; k++) {
      x[0] = (k % 2) * 2; // 2 N peak-to-peak on fx: never still (limit 1 N)
      f.step(x);
    }
    expect(f.tareRefusals).toBe(3);
    expect(f.tared).toBe(false);
    expect(f.tarePending).toBe(true);
    // A torque axis that moves blocks it as well.
    const g = filter();
    for (let k = 0; k < 2 * N; k++) {
      x[0] = 0;
      x[4] = (k % 2) * 0.2;
      g.step(x);
    }
    expect(g.tared).toBe(false);
    expect(g.tareRefusals).toBe(2);
  });

  it('a still window at the edge of still_force_n is taken; just over is not', () => {
    const x = new Float64Array(6);
    const run = (ptp: number) => {
      const f = filter();
      for (let k = 0; k < N; k++) {
        x[1] = k === 3 ? ptp : 0;
        f.step(x);
      }
      return f.tared;
    };
    expect(run(1)).toBe(true);
    expect(run(1.000001)).toBe(false);
  });
});
