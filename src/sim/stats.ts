/** Small statistics for the strategy comparison. */

/** Two-sided 95 % standard normal quantile, Φ⁻¹(0.975). */
export const Z95 = 1.959963984540054;

/**
 * Wilson score interval for a binomial proportion: `successes` of `n` trials, normal quantile z.
 * Centre (p + z²/2n) / (1 + z²/n), half-width z / (1 + z²/n) · sqrt(p(1 − p)/n + z²/4n²).
 * Returns [0, 1] for n = 0 (nothing is known).
 */
export function wilsonInterval(successes: number, n: number, z = Z95): [number, number] {
  if (!(n > 0)) return [0, 1];
  if (successes < 0 || successes > n) throw new RangeError(`successes ${successes} outside 0..${n}`);
  const p = successes / n;
  const z2 = z * z;
  const d = 1 + z2 / n;
  const c = (p + z2 / (2 * n)) / d;
  const h = (z / d) * Math.sqrt((p * (1 - p)) / n + z2 / (4 * n * n));
  return [Math.max(0, c - h), Math.min(1, c + h)];
}

export function mean(xs: readonly number[]): number | null {
  if (xs.length === 0) return null;
  let s = 0;
  for (const x of xs) s += x;
  return s / xs.length;
}
