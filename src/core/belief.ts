/**
 * A discrete Bayes belief kept in the log domain, so that long runs never underflow.
 *
 * update(): log p(h) += log-likelihood(h), then normalise with log-sum-exp, then mix toward
 * the uniform belief by the forgetting factor (a world that changes: no hypothesis is ever
 * ruled out for good). Outputs: probabilities, entropy (nats), most likely hypothesis.
 */
/** |max log p| beyond which the log-domain normalisation shifts to 0 first (exact to 1e-10 below it). */
const RECENTER = 1048576;

export class Belief {
  readonly n: number;
  readonly logp: Float64Array;
  readonly p: Float64Array;
  entropy = 0;
  mostLikely = 0;
  updates = 0;

  constructor(n: number) {
    if (!Number.isInteger(n) || n < 1) throw new RangeError('a belief needs at least one hypothesis');
    this.n = n;
    this.logp = new Float64Array(n);
    this.p = new Float64Array(n);
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
    if (max > RECENTER || max < -RECENTER) {
      // Far from 0, max + log(sum) rounds the log-sum away (1e308 + ln 2 = 1e308): shift first.
      for (let k = 0; k < n; k++) this.logp[k] = this.logp[k]! - max;
      max = 0;
    }
    let s = 0;
    for (let k = 0; k < n; k++) s += Math.exp(this.logp[k]! - max);
    const lse = max + Math.log(s);
    const u = forgetting / n;
    let h = 0;
    let best = 0;
    let bestP = -1;
    for (let k = 0; k < n; k++) {
      const pk = (1 - forgetting) * Math.exp(this.logp[k]! - lse) + u;
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

  /** Marginal probability that bit b of the hypothesis index is set, for each of `bits` bits. */
  marginals(bits: number, out: Float64Array): void {
    out.fill(0, 0, bits);
    for (let k = 0; k < this.n; k++) {
      const pk = this.p[k]!;
      for (let b = 0; b < bits; b++) if ((k >>> b) & 1) out[b]! += pk;
    }
  }

  /** Full state, for bit-identical continuation after restore(). */
  snapshot(): Float64Array {
    const s = new Float64Array(2 * this.n + 3);
    s.set(this.logp, 0);
    s.set(this.p, this.n);
    s[2 * this.n] = this.entropy;
    s[2 * this.n + 1] = this.mostLikely;
    s[2 * this.n + 2] = this.updates;
    return s;
  }

  restore(s: Float64Array): void {
    this.logp.set(s.subarray(0, this.n));
    this.p.set(s.subarray(this.n, 2 * this.n));
    this.entropy = s[2 * this.n]!;
    this.mostLikely = s[2 * this.n + 1]!;
    this.updates = s[2 * this.n + 2]!;
  }
}
