/** Small statistics for the strategy comparison. */
import { Rng } from '../util/rng.js';

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

/** Nearest-rank quantile of sorted values (q in [0, 1]). */
function quantileSorted(s: readonly number[], q: number): number {
  const rank = Math.max(1, Math.ceil(q * s.length));
  return s[Math.min(s.length, rank) - 1]!;
}

/**
 * Percentile bootstrap interval of the mean: `resamples` resamples with replacement drawn from a
 * seeded xoshiro stream (src/util/rng.ts), the 2.5 % and 97.5 % nearest-rank quantiles of their
 * means. null for no values; [x, x] for one.
 */
export function bootstrapMeanInterval(xs: readonly number[], seed = 1, resamples = 2000): [number, number] | null {
  const n = xs.length;
  if (n === 0) return null;
  if (n === 1) return [xs[0]!, xs[0]!];
  const rng = new Rng(seed >>> 0);
  const means = new Float64Array(resamples);
  for (let b = 0; b < resamples; b++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += xs[rng.int(n)]!;
    means[b] = s / n;
  }
  means.sort();
  const m = Array.from(means);
  return [quantileSorted(m, 0.025), quantileSorted(m, 0.975)];
}

function logChoose(n: number, k: number): number {
  return logGamma(n + 1) - logGamma(k + 1) - logGamma(n - k + 1);
}

/** ln Γ(x) for x > 0 (Lanczos, g = 7, n = 9: about 15 significant digits). */
export function logGamma(x: number): number {
  const c = [0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7];
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - logGamma(1 - x);
  x -= 1;
  let a = c[0]!;
  const t = x + 7.5;
  for (let i = 1; i < 9; i++) a += c[i]! / (x + i);
  return 0.5 * Math.log(2 * Math.PI) + (x + 0.5) * Math.log(t) - t + Math.log(a);
}

/**
 * Two-sided exact sign test: `k` wins of `n` non-tied pairs against Binomial(n, 1/2), p the sum
 * of the probabilities of every outcome no more likely than k (SciPy's `binomtest` two-sided
 * rule, with its relative tolerance 1e-7). 1 for n = 0.
 */
export function signTest(k: number, n: number): number {
  if (n === 0) return 1;
  const lp = (i: number) => logChoose(n, i) - n * Math.LN2;
  const d = lp(k);
  let p = 0;
  for (let i = 0; i <= n; i++) {
    const l = lp(i);
    if (l <= d + Math.log1p(1e-7)) p += Math.exp(l);
  }
  return Math.min(1, p);
}

/** Standard normal survival function Q(z) = P(Z > z), from erfc (W. J. Cody's rational approximations via the complementary error function). */
export function normalSf(z: number): number {
  return 0.5 * erfc(z / Math.SQRT2);
}

/** Complementary error function (Numerical Recipes' erfcc Chebyshev fit, relative error below 1.2e-7). */
function erfc(x: number): number {
  const z = Math.abs(x);
  const t = 1 / (1 + 0.5 * z);
  const r = t * Math.exp(-z * z - 1.26551223 + t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806 + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))));
  return x >= 0 ? r : 2 - r;
}

export interface WilcoxonResult {
  /** Pairs with a non-zero difference (zeros are dropped: the 'wilcox' rule). */
  readonly n: number;
  /** Sum of the ranks of the positive differences. */
  readonly r_plus: number;
  /** min(R+, R−), what SciPy reports as the two-sided statistic. */
  readonly statistic: number;
  readonly p: number;
  /** 'exact' (n ≤ 50, no tied |d|) or 'normal' (the normal approximation with the tie correction, no continuity correction). */
  readonly method: 'exact' | 'normal';
}

/**
 * Two-sided Wilcoxon signed-rank test of paired differences `d`: zeros dropped, average ranks
 * of |d| for ties; exact null distribution of R+ when n ≤ 50 without ties (p = 2 min(P(R+ ≤ r),
 * P(R+ ≥ r)), at most 1), else the normal approximation z = (R+ − n(n+1)/4) / σ with σ² =
 * n(n+1)(2n+1)/24 − Σ(t³ − t)/48. Checked against SciPy's `scipy.stats.wilcoxon` with
 * `method='exact'` and `method='asymptotic'` (test/reference/paired-scipy.test.ts).
 */
export function wilcoxonSignedRank(d: readonly number[]): WilcoxonResult {
  const nz = d.filter((x) => x !== 0 && Number.isFinite(x));
  const n = nz.length;
  if (n === 0) return { n: 0, r_plus: 0, statistic: 0, p: 1, method: 'exact' };
  const idx = nz.map((x, i) => [Math.abs(x), i] as const).sort((a, b) => a[0] - b[0]);
  const rank = new Float64Array(n);
  let ties = false;
  let tieTerm = 0;
  for (let i = 0; i < n; ) {
    let j = i;
    while (j + 1 < n && idx[j + 1]![0] === idx[i]![0]) j++;
    const r = (i + j + 2) / 2;
    for (let k = i; k <= j; k++) rank[idx[k]![1]] = r;
    const t = j - i + 1;
    if (t > 1) {
      ties = true;
      tieTerm += t * t * t - t;
    }
    i = j + 1;
  }
  let rPlus = 0;
  for (let i = 0; i < n; i++) if (nz[i]! > 0) rPlus += rank[i]!;
  const total = (n * (n + 1)) / 2;
  const statistic = Math.min(rPlus, total - rPlus);
  if (n <= 50 && !ties) {
    // counts[s]: subsets of {1..n} with rank sum s.
    const counts = new Float64Array(total + 1);
    counts[0] = 1;
    for (let r = 1; r <= n; r++) for (let s = total; s >= r; s--) counts[s] = counts[s]! + counts[s - r]!;
    const all = 2 ** n;
    let cdf = 0;
    for (let s = 0; s <= Math.floor(rPlus); s++) cdf += counts[s]!;
    let sf = 0;
    for (let s = Math.ceil(rPlus); s <= total; s++) sf += counts[s]!;
    return { n, r_plus: rPlus, statistic, p: Math.min(1, (2 * Math.min(cdf, sf)) / all), method: 'exact' };
  }
  const mean = total / 2;
  const sd = Math.sqrt((n * (n + 1) * (2 * n + 1)) / 24 - tieTerm / 48);
  const z = sd > 0 ? (rPlus - mean) / sd : 0;
  return { n, r_plus: rPlus, statistic, p: Math.min(1, 2 * normalSf(Math.abs(z))), method: 'normal' };
}
