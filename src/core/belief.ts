/**
 * A discrete Bayes belief kept in the log domain, so that long runs never underflow.
 *
 * update(): log p(h) += log-likelihood(h), then normalise (exponentials shifted by the maximum), then mix toward
 * the uniform belief by the forgetting factor (a world that changes: no hypothesis is ever
 * ruled out for good). Outputs: probabilities, entropy (nats), most likely hypothesis.
 *
 * The staged form (stageBegin, stageAdd, stageMax, stageSum, stageNormalise, stageMarginals,
 * stageCommit) does the same arithmetic in the same order over ranges of hypotheses, into
 * arrays of its own, so an update can be spread over several calls (the arm step does one part
 * per sample) while `p` and `logp` stay as they were until the commit. Its result equals
 * `update()` bit for bit.
 */

/**
 * s plus the sum of p[k] over k in [from, to) with bit b set, added in increasing k (the order
 * of a plain loop over k, so the same result bit for bit), over the runs of 2^b such k.
 */
function blockSum(p: Float64Array, b: number, from: number, to: number, s: number): number {
  const m = 1 << b;
  // The first k >= from with bit b set.
  let k = (from & m) !== 0 ? from : (from & ~(m - 1)) + m;
  while (k < to) {
    const end = Math.min(to, (k | (m - 1)) + 1);
    for (let j = k; j < end; j++) s += p[j]!;
    k = end + m;
  }
  return s;
}

export class Belief {
  readonly n: number;
  readonly logp: Float64Array;
  readonly p: Float64Array;
  entropy = 0;
  mostLikely = 0;
  updates = 0;
  // Staged update: the new log-probabilities and probabilities, and the running figures.
  private readonly stLogp: Float64Array;
  private readonly stP: Float64Array;
  private readonly stMarg: Float64Array;
  private stForgetting = 0;
  private stMax = -Infinity;
  private stSum = 0;
  private stEntropy = 0;
  private stBest = 0;
  private stBestP = -1;

  constructor(n: number) {
    if (!Number.isInteger(n) || n < 1) throw new RangeError('a belief needs at least one hypothesis');
    this.n = n;
    this.logp = new Float64Array(n);
    this.p = new Float64Array(n);
    this.stLogp = new Float64Array(n);
    this.stP = new Float64Array(n);
    this.stMarg = new Float64Array(32);
    this.reset();
  }

  /** The uniform belief. */
  reset(): void {
    const l = -Math.log(this.n);
    this.logp.fill(l);
    this.p.fill(1 / this.n);
    this.entropy = Math.log(this.n);
    this.mostLikely = 0;
    this.updates = 0;
  }

  /** Set an arbitrary prior (probabilities, normalised here). */
  setPrior(prior: ArrayLike<number>): void {
    let s = 0;
    for (let k = 0; k < this.n; k++) s += prior[k]!;
    for (let k = 0; k < this.n; k++) this.logp[k] = Math.log(prior[k]! / s);
    this.normalise(0);
  }

  /** Bayes update with a log-likelihood per hypothesis, then forgetting. */
  update(loglik: Float64Array, forgetting: number): void {
    for (let k = 0; k < this.n; k++) this.logp[k]! += loglik[k]!;
    this.normalise(forgetting);
    this.updates++;
  }

  private normalise(forgetting: number): void {
    const n = this.n;
    let max = -Infinity;
    let nan = false;
    for (let k = 0; k < n; k++) {
      const v = this.logp[k]!;
      if (v > max) max = v;
      else if (v !== v) nan = true;
    }
    if (nan || !Number.isFinite(max)) {
      // Every hypothesis was ruled out (or a NaN came in): start over rather than propagate.
      this.reset();
      return;
    }
    // p = (1 - f) exp(logp - max) / sum + f / n: no log-sum is formed, so nothing rounds away
    // however far from 0 the log-probabilities are (the exponentials are kept in p meanwhile).
    let s = 0;
    for (let k = 0; k < n; k++) {
      const q = Math.exp(this.logp[k]! - max);
      this.p[k] = q;
      s += q;
    }
    const scale = (1 - forgetting) / s;
    const u = forgetting / n;
    let h = 0;
    let best = 0;
    let bestP = -1;
    for (let k = 0; k < n; k++) {
      const pk = this.p[k]! * scale + u;
      this.p[k] = pk;
      this.logp[k] = Math.log(pk);
      if (pk > 0) h -= pk * this.logp[k]!;
      if (pk > bestP) {
        bestP = pk;
        best = k;
      }
    }
    this.entropy = h;
    this.mostLikely = best;
  }

  /** Start a staged update with this forgetting factor. */
  stageBegin(forgetting: number): void {
    this.stForgetting = forgetting;
    this.stMax = -Infinity;
    this.stSum = 0;
    this.stEntropy = 0;
    this.stBest = 0;
    this.stBestP = -1;
  }

  /** Staged logp + loglik for hypotheses [from, to). */
  stageAdd(loglik: Float64Array, from: number, to: number): void {
    for (let k = from; k < to; k++) this.stLogp[k] = this.logp[k]! + loglik[k]!;
  }

  /** The staged maximum over [from, to) (after stageAdd of the same range). */
  stageMax(from: number, to: number): void {
    let max = this.stMax;
    for (let k = from; k < to; k++) if (this.stLogp[k]! > max) max = this.stLogp[k]!;
    this.stMax = max;
  }

  /** Every hypothesis ruled out (or a NaN): the commit starts over, as update() does. */
  get stageDegenerate(): boolean {
    return !Number.isFinite(this.stMax);
  }

  /** The normaliser's sum over [from, to) (after the maximum over every hypothesis); keeps each exponential for stageNormalise. */
  stageSum(from: number, to: number): void {
    const max = this.stMax;
    const q = this.stP;
    let s = this.stSum;
    for (let k = from; k < to; k++) {
      const e = Math.exp(this.stLogp[k]! - max);
      q[k] = e;
      s += e;
    }
    this.stSum = s;
  }

  /** Normalise and forget over [from, to) (after the sum over every hypothesis). */
  stageNormalise(from: number, to: number): void {
    const n = this.n;
    const forgetting = this.stForgetting;
    const scale = (1 - forgetting) / this.stSum;
    const u = forgetting / n;
    let h = this.stEntropy;
    let best = this.stBest;
    let bestP = this.stBestP;
    for (let k = from; k < to; k++) {
      const pk = this.stP[k]! * scale + u;
      this.stP[k] = pk;
      this.stLogp[k] = Math.log(pk);
      if (pk > 0) h -= pk * this.stLogp[k]!;
      if (pk > bestP) {
        bestP = pk;
        best = k;
      }
    }
    this.stEntropy = h;
    this.stBest = best;
    this.stBestP = bestP;
  }

  /** Marginals of the staged probabilities over [from, to) (as marginals(); from = 0 clears). */
  stageMarginals(bits: number, from: number, to: number): void {
    const out = this.stMarg;
    if (from === 0) out.fill(0, 0, bits);
    for (let b = 0; b < bits; b++) out[b] = blockSum(this.stP, b, from, to, out[b]!);
  }

  /** Marginals of the last staged update (valid after stageMarginals over every hypothesis). */
  stagedMarginals(bits: number, out: Float64Array): void {
    for (let b = 0; b < bits; b++) out[b] = this.stMarg[b]!;
  }

  /** Make the staged update the belief (what update() would have left). */
  stageCommit(): void {
    if (!Number.isFinite(this.stMax)) {
      this.reset();
    } else {
      this.logp.set(this.stLogp);
      this.p.set(this.stP);
      this.entropy = this.stEntropy;
      this.mostLikely = this.stBest;
    }
    this.updates++;
  }

  /** Marginal probability that bit b of the hypothesis index is set, for each of `bits` bits. */
  marginals(bits: number, out: Float64Array): void {
    for (let b = 0; b < bits; b++) out[b] = blockSum(this.p, b, 0, this.n, 0);
  }

  /** Full state, a staged update in progress included, for bit-identical continuation after restore(). */
  snapshot(): Float64Array {
    const n = this.n;
    const s = new Float64Array(4 * n + 3 + 6 + this.stMarg.length);
    s.set(this.logp, 0);
    s.set(this.p, n);
    s[2 * n] = this.entropy;
    s[2 * n + 1] = this.mostLikely;
    s[2 * n + 2] = this.updates;
    s.set(this.stLogp, 2 * n + 3);
    s.set(this.stP, 3 * n + 3);
    const o = 4 * n + 3;
    s[o] = this.stForgetting;
    s[o + 1] = this.stMax;
    s[o + 2] = this.stSum;
    s[o + 3] = this.stEntropy;
    s[o + 4] = this.stBest;
    s[o + 5] = this.stBestP;
    s.set(this.stMarg, o + 6);
    return s;
  }

  /** Restore a snapshot (one without a staged part, from before staged updates, restores the belief only). */
  restore(s: Float64Array): void {
    const n = this.n;
    this.logp.set(s.subarray(0, n));
    this.p.set(s.subarray(n, 2 * n));
    this.entropy = s[2 * n]!;
    this.mostLikely = s[2 * n + 1]!;
    this.updates = s[2 * n + 2]!;
    if (s.length < 4 * n + 9 + this.stMarg.length) return;
    this.stLogp.set(s.subarray(2 * n + 3, 3 * n + 3));
    this.stP.set(s.subarray(3 * n + 3, 4 * n + 3));
    const o = 4 * n + 3;
    this.stForgetting = s[o]!;
    this.stMax = s[o + 1]!;
    this.stSum = s[o + 2]!;
    this.stEntropy = s[o + 3]!;
    this.stBest = s[o + 4]!;
    this.stBestP = s[o + 5]!;
    this.stMarg.set(s.subarray(o + 6, o + 6 + this.stMarg.length));
  }
}

/**
 * The factor (≤ 1, exactly 1 without a disturbance) by which a window's log-likelihood counts
 * less when the correction band carries, beside noise of standard deviation `noiseN`
 * correlated over `noiseSamples` samples, a slow disturbance of standard deviation
 * `disturbanceN` and correlation time `disturbanceTimeS` (a first-order process), sampled at
 * `rateHz` in windows of `windowSamples` samples.
 *
 * A window's log-likelihood ratio between two hypotheses whose predictions differ by Δ is
 * linear in the residual, Σ r·Δ over the window's samples; with independent windows assumed,
 * its variance is twice its mean (a calibrated likelihood) only when each window counts
 * n / L_eff, with the variance-weighted correlation length
 * L_eff = (σ_e² L_e + σ_d² L_d) / σ_e² (in units of the noise variance the score divides by),
 * L_d = (1 + a) / (1 − a), a = e^(−1 / (τ f_s)), the sum of the first-order process's
 * autocorrelation over every lag (about 2 τ f_s). Each length is at least one window (the
 * scale never exceeds one observation per window). Returns σ_e² L_e / (σ_e² L_e + σ_d² L_d).
 */
export function disturbanceTempering(noiseN: number, noiseSamples: number, disturbanceN: number, disturbanceTimeS: number, rateHz: number, windowSamples: number): number {
  if (!(disturbanceN > 0)) return 1;
  const a = Math.exp(-1 / (disturbanceTimeS * rateHz));
  const ld = Math.max((1 + a) / (1 - a), windowSamples);
  const e = noiseN * noiseN * Math.max(noiseSamples, windowSamples);
  return e / (e + disturbanceN * disturbanceN * ld);
}
