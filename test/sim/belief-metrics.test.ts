/**
 * Calibration metrics on constructed streams with a known answer.
 *
 * - A perfectly calibrated belief: exactly 0 on a stream built so every bin's frequency equals
 *   its mean prediction; within its sampling error on p ~ U(0, 1), truth ~ Bernoulli(p).
 * - A Gaussian-mean belief that sums its log-likelihood with 9x too much weight: the expected
 *   calibration error and the rate of P(truth) < 0.05 from the distribution of the log-likelihood
 *   ratio, computed here by numerical integration (Simpson's rule, independent of the metric
 *   code) and, where Debian's SciPy is present, by scipy.integrate.quad and scipy.stats.norm.
 *
 * The model (handbook fact of equal-variance Gaussian detection): m samples x_i ~ N(+-d/2, sigma^2)
 * under occupied / free, prior 1/2. The true log-likelihood ratio Lambda = (d / sigma^2) sum x_i is
 * Gaussian with mean +-s^2/2 and variance s^2, where s^2 = m d^2 / sigma^2; the true posterior is
 * logistic(Lambda). The over-counted belief is p = logistic(9 Lambda). For a bin [a, b) of p, Lambda
 * lies in [logit(a) / 9, logit(b) / 9), so
 *   P(bin) conf_b = E[p 1_bin] = integral of logistic(9 l) f(l) dl,
 *   P(bin) freq_b = E[y 1_bin] = 1/2 integral of N(l; s^2/2, s^2) dl,
 * and ECE = sum_b |E[y 1_bin] - E[p 1_bin]|. P(truth) < 0.05 happens when 9 Lambda is on the wrong
 * side of logit(0.05): probability Phi((logit(0.05)/9 - s^2/2) / s) for either truth, by symmetry.
 */
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { binOf, CALIBRATION_BINS, CalibrationAccumulator, calibrationOf, pooledCalibration } from '../../src/sim/belief-metrics.js';
import { Rng } from '../../src/util/rng.js';

const PYTHON = '/usr/bin/python3';
const MISSING = '.ci/run must install python3-scipy (apt-get install -y python3-scipy) for /usr/bin/python3';
const scipyAvailable = spawnSync(PYTHON, ['-c', 'import scipy.integrate, scipy.stats, scipy.special'], { encoding: 'utf8' }).status === 0;

const OVERCOUNT = 9;
// Four samples of unit noise per update, mean separation 0.75: s^2 = 4 * 0.75^2 = 2.25.
const M_SAMPLES = 4;
const SEP = 0.75;
const SIGMA = 1;
const S2 = (M_SAMPLES * SEP * SEP) / (SIGMA * SIGMA);

const logistic = (x: number) => 1 / (1 + Math.exp(-x));
const logit = (p: number) => Math.log(p / (1 - p));
const normPdf = (x: number, mu: number, v: number) => Math.exp(-((x - mu) ** 2) / (2 * v)) / Math.sqrt(2 * Math.PI * v);

/** Simpson's rule on [a, b] with n (even) intervals; infinite ends cut at +-mu +- 14 sd. */
function simpson(f: (x: number) => number, a: number, b: number, n = 20000): number {
  const lo = Math.max(a, -S2 / 2 - 14 * Math.sqrt(S2));
  const hi = Math.min(b, S2 / 2 + 14 * Math.sqrt(S2));
  if (!(hi > lo)) return 0;
  const h = (hi - lo) / n;
  let s = f(lo) + f(hi);
  for (let i = 1; i < n; i++) s += (i % 2 ? 4 : 2) * f(lo + i * h);
  return (s * h) / 3;
}

/** The reference by integration: per bin E[y 1_b], E[p 1_b], P(b); ECE; P(truth) < 0.05. */
function overcountReference(): { ece: number; pb: number[]; eyb: number[]; epb: number[]; vb: number[]; tail: number } {
  const mix = (l: number) => 0.5 * normPdf(l, S2 / 2, S2) + 0.5 * normPdf(l, -S2 / 2, S2);
  const pb: number[] = [], eyb: number[] = [], epb: number[] = [], vb: number[] = [];
  let ece = 0;
  for (let b = 0; b < CALIBRATION_BINS; b++) {
    const lo = b === 0 ? Number.NEGATIVE_INFINITY : logit(b / CALIBRATION_BINS) / OVERCOUNT;
    const hi = b === CALIBRATION_BINS - 1 ? Number.POSITIVE_INFINITY : logit((b + 1) / CALIBRATION_BINS) / OVERCOUNT;
    pb.push(simpson(mix, lo, hi));
    eyb.push(simpson((l) => 0.5 * normPdf(l, S2 / 2, S2), lo, hi));
    epb.push(simpson((l) => logistic(OVERCOUNT * l) * mix(l), lo, hi));
    // E[(y - p)^2 1_b]: the second moment of one pair's contribution to the bin's term.
    vb.push(simpson((l) => 0.5 * normPdf(l, S2 / 2, S2) * (1 - logistic(OVERCOUNT * l)) ** 2 + 0.5 * normPdf(l, -S2 / 2, S2) * logistic(OVERCOUNT * l) ** 2, lo, hi));
    ece += Math.abs(eyb[b]! - epb[b]!);
  }
  const cut = logit(0.05) / OVERCOUNT;
  const tail = simpson((l) => normPdf(l, S2 / 2, S2), Number.NEGATIVE_INFINITY, cut);
  return { ece, pb, eyb, epb, vb, tail };
}

/** The over-counted Gaussian-mean belief, one pair per update of M_SAMPLES samples. */
function overcountStream(n: number, seed: number): Array<[number, boolean]> {
  const rng = new Rng(seed);
  const out: Array<[number, boolean]> = [];
  const logN = (x: number, mu: number) => -((x - mu) ** 2) / (2 * SIGMA * SIGMA);
  for (let i = 0; i < n; i++) {
    const occupied = rng.uniform() < 0.5;
    const mu = occupied ? SEP / 2 : -SEP / 2;
    let llr = 0;
    for (let k = 0; k < M_SAMPLES; k++) {
      const x = mu + SIGMA * rng.normal();
      llr += logN(x, SEP / 2) - logN(x, -SEP / 2); // the Gaussian log-likelihood of each hypothesis
    }
    out.push([logistic(OVERCOUNT * llr), occupied]); // summed with 9x the weight
  }
  return out;
}

describe('calibration metrics', () => {
  it('bins p in ten equal bins, p = 1 in the last one', () => {
    expect([0, 0.0999, 0.1, 0.55, 0.9, 0.99, 1].map(binOf)).toEqual([0, 0, 1, 5, 9, 9, 9]);
    const s = calibrationOf([[0.05, false], [0.05, true], [0.95, true], [Number.NaN, true]]);
    expect(s.updates).toBe(3);
    expect(s.bins[0]).toEqual({ lo: 0, hi: 0.1, count: 2, mean_predicted: 0.05, observed_frequency: 0.5 });
    expect(s.bins[5]).toEqual({ lo: 0.5, hi: 0.6, count: 0, mean_predicted: null, observed_frequency: null });
    // ECE by hand: (2/3) |0.5 - 0.05| + (1/3) |1 - 0.95|; P(truth) < 0.05: none (0.05 and 0.95 are not below).
    expect(s.ece).toBeCloseTo((2 / 3) * 0.45 + (1 / 3) * 0.05, 12);
    expect(s.p_truth_below_0_05_rate).toBe(0);
    expect(calibrationOf([[0.01, true], [0.99, false], [0.5, true], [0.97, true]]).p_truth_below_0_05_rate).toBe(0.5);
    expect(calibrationOf([]).ece).toBeNull();
  });

  it('gives exactly 0 for a belief whose frequency equals its prediction in every bin', () => {
    // In bin b, 20 pairs at p = (b + 0.5) / 10 with exactly 2b + 1 occupied: frequency = p.
    const pairs: Array<[number, boolean]> = [];
    for (let b = 0; b < 10; b++) for (let i = 0; i < 20; i++) pairs.push([(b + 0.5) / 10, i < 2 * b + 1]);
    const s = calibrationOf(pairs);
    expect(s.updates).toBe(200);
    expect(s.ece).toBeCloseTo(0, 12);
  });

  it('gives 0 within its sampling error for a perfectly calibrated random belief (seed 8101, N = 1e6)', () => {
    // p ~ U(0, 1), truth ~ Bernoulli(p). Per bin, n_b/N (freq_b - conf_b) = mean of (y - p) 1_b has
    // mean 0 and variance E[p (1 - p) 1_b] / N (Bernoulli variance, handbook fact); |.| summed over
    // the bins is the ECE. Bound: 5 standard deviations per bin (a Gaussian 5-sigma excursion has
    // probability 6e-7; over 10 bins under 1e-5).
    const N = 1_000_000;
    const rng = new Rng(8101);
    const a = new CalibrationAccumulator();
    for (let i = 0; i < N; i++) {
      const p = rng.uniform();
      a.add(p, rng.uniform() < p);
    }
    const s = a.summary();
    // E[p (1-p) 1_b] for p uniform on [b/10, (b+1)/10): integral of p - p^2.
    const F = (x: number) => x * x / 2 - x * x * x / 3;
    let bound = 0;
    for (let b = 0; b < 10; b++) bound += 5 * Math.sqrt((F((b + 1) / 10) - F(b / 10)) / N);
    expect(s.updates).toBe(N);
    expect(s.ece!).toBeLessThan(bound);
    expect(bound).toBeLessThan(0.007);
    // Every bin holds about a tenth of the pairs and its frequency is near its mean prediction.
    for (const bin of s.bins) {
      expect(bin.count / N).toBeCloseTo(0.1, 2);
      expect(Math.abs(bin.observed_frequency! - bin.mean_predicted!)).toBeLessThan(5 * Math.sqrt(0.25 / bin.count));
    }
    // p is never below 0.05 for the truth more often than the belief says: P(p_truth < 0.05) = 2 * 0.05^2 / 2 = 0.0025
    // for p ~ U(0, 1) (P(y=1, p < .05) + P(y=0, p > .95) = 2 * integral_0^.05 p dp).
    expect(s.p_truth_below_0_05_rate!).toBeCloseTo(0.0025, 3);
  });

  it('reproduces the expected calibration error of a 9x over-count computed by integration (seed 8102, N = 4e5)', () => {
    const ref = overcountReference();
    // The integral's own check: bin probabilities sum to 1 and E[y] = 1/2.
    expect(ref.pb.reduce((x, y) => x + y, 0)).toBeCloseTo(1, 8);
    expect(ref.eyb.reduce((x, y) => x + y, 0)).toBeCloseTo(0.5, 8);
    const N = 400_000;
    const s = calibrationOf(overcountStream(N, 8102));
    // Sampling error: each bin's n_b/N (freq_b - conf_b) is a mean of N independent copies of (y - p) 1_b,
    // so its standard deviation is at most sqrt(E[(y - p)^2 1_b] / N); 5 of them per bin (as above).
    const tol = ref.vb.reduce((acc, v) => acc + 5 * Math.sqrt(v / N), 0);
    expect(tol).toBeLessThan(0.01);
    expect(Math.abs(s.ece! - ref.ece)).toBeLessThan(tol);
    expect(ref.ece).toBeGreaterThan(0.1); // far from calibrated: the test tells the two apart
    // The rate of P(truth) < 0.05 (binomial standard deviation sqrt(q (1 - q) / N), 5 of them).
    expect(Math.abs(s.p_truth_below_0_05_rate! - ref.tail)).toBeLessThan(5 * Math.sqrt((ref.tail * (1 - ref.tail)) / N));
    // Per bin: the share of the pairs.
    s.bins.forEach((bin, b) => expect(Math.abs(bin.count / N - ref.pb[b]!)).toBeLessThan(5 * Math.sqrt(ref.pb[b]! / N)));
  });

  it('pools runs exactly: merged sums give the summary of the concatenated stream', () => {
    const x = overcountStream(3000, 1);
    const y = overcountStream(5000, 2);
    const ax = new CalibrationAccumulator();
    const ay = new CalibrationAccumulator();
    for (const [p, t] of x) ax.add(p, t);
    for (const [p, t] of y) ay.add(p, t);
    const pooled = pooledCalibration([ax.sums(), ay.sums()]);
    const direct = calibrationOf([...x, ...y]);
    expect(pooled.updates).toBe(direct.updates);
    expect(pooled.ece!).toBeCloseTo(direct.ece!, 12);
    expect(pooled.p_truth_below_0_05_rate).toBe(direct.p_truth_below_0_05_rate);
  });
});

if (!scipyAvailable && process.env['CI']) {
  describe('9x over-count reference vs SciPy', () => {
    it('needs SciPy', () => {
      throw new Error(MISSING);
    });
  });
}

describe.skipIf(!scipyAvailable)(`9x over-count reference vs SciPy${scipyAvailable ? '' : ` (skipped: ${MISSING})`}`, () => {
  it('the integrated ECE and tail rate match scipy.integrate.quad and scipy.stats.norm to 1e-7', () => {
    const script = `
import json, math
from scipy.integrate import quad
from scipy.stats import norm
from scipy.special import expit, logit
k, s2 = ${OVERCOUNT}, ${S2}
s = math.sqrt(s2)
mix = lambda l: 0.5 * norm.pdf(l, s2 / 2, s) + 0.5 * norm.pdf(l, -s2 / 2, s)
ece = 0.0
for b in range(10):
    lo = -math.inf if b == 0 else logit(b / 10) / k
    hi = math.inf if b == 9 else logit((b + 1) / 10) / k
    ey = 0.5 * (norm.cdf(hi, s2 / 2, s) - norm.cdf(lo, s2 / 2, s))
    ep = quad(lambda l: expit(k * l) * mix(l), max(lo, -40), min(hi, 40), epsabs=1e-13, limit=200)[0]
    ece += abs(ey - ep)
print(json.dumps({'ece': ece, 'tail': norm.cdf(logit(0.05) / k, s2 / 2, s)}))
`;
    const r = spawnSync(PYTHON, ['-c', script], { encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const sp = JSON.parse(r.stdout) as { ece: number; tail: number };
    const ref = overcountReference();
    expect(Math.abs(ref.ece - sp.ece)).toBeLessThan(1e-7);
    expect(Math.abs(ref.tail - sp.tail)).toBeLessThan(1e-7);
  });
});
