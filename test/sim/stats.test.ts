import { describe, expect, it } from 'vitest';
import { wilsonInterval, Z95 } from '../../src/sim/stats.js';

describe('Wilson score interval', () => {
  it('matches textbook worked values of the 95 % Wilson interval', () => {
    // Textbook worked examples (the standard comparison of binomial interval methods):
    // 81/263 -> 0.2553..0.3662, 15/148 -> 0.0624..0.1605, 0/20 -> 0..0.1611, 1/29 -> 0.0061..0.1718.
    const cases: Array<[number, number, number, number]> = [
      [81, 263, 0.2553, 0.3662],
      [15, 148, 0.0624, 0.1605],
      [0, 20, 0.0, 0.1611],
      [1, 29, 0.0061, 0.1718],
    ];
    for (const [x, n, lo, hi] of cases) {
      const [a, b] = wilsonInterval(x, n);
      expect(a).toBeCloseTo(lo, 4);
      expect(b).toBeCloseTo(hi, 4);
    }
  });

  it('has the closed form z^2 / (n + z^2) for the upper bound at zero successes (handbook algebra)', () => {
    for (const n of [1, 5, 20, 1000]) expect(wilsonInterval(0, n)[1]).toBeCloseTo((Z95 * Z95) / (n + Z95 * Z95), 12);
    for (const n of [1, 5, 20, 1000]) expect(wilsonInterval(n, n)[0]).toBeCloseTo(n / (n + Z95 * Z95), 12);
  });

  it('uses the 97.5 % normal quantile (statistical tables: 1.959964)', () => {
    expect(Z95).toBeCloseTo(1.959964, 6);
  });

  it('is symmetric under swapping successes and failures, and knows nothing at n = 0', () => {
    const [a, b] = wilsonInterval(7, 19);
    const [c, d] = wilsonInterval(12, 19);
    expect(a).toBeCloseTo(1 - d, 12);
    expect(b).toBeCloseTo(1 - c, 12);
    expect(wilsonInterval(0, 0)).toEqual([0, 1]);
  });
});
