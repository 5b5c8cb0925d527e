/**
 * Calibration of a belief against the truth: from pairs (predicted marginal p that a zone is
 * occupied, truth 0 or 1), a reliability diagram over 10 equal bins of p, the expected
 * calibration error
 *
 *   ECE = sum_b (n_b / N) |freq_b - conf_b|
 *
 * (conf_b the mean predicted p in bin b, freq_b the observed frequency of occupied in it),
 * and the rate of pairs where the belief gave the truth less than 5 %: P(truth) = p when the
 * zone is occupied, 1 - p when it is free. Both are common practice for probabilistic
 * classifiers (equal-width reliability bins, ECE weighted by bin count).
 *
 * Pure: an accumulator of sums per bin (no allocation per pair), mergeable exactly, so a batch
 * pools the pairs of every episode by adding the sums.
 */

export const CALIBRATION_BINS = 10;
/** P(truth) below this counts as a confident mistake. */
export const P_TRUTH_FLOOR = 0.05;

export interface ReliabilityBin {
  /** Bin edges in predicted p: [lo, hi), the last bin [0.9, 1]. */
  readonly lo: number;
  readonly hi: number;
  readonly count: number;
  /** Mean predicted p of the pairs in the bin; null when empty. */
  readonly mean_predicted: number | null;
  /** Fraction of the pairs in the bin whose zone was occupied; null when empty. */
  readonly observed_frequency: number | null;
}

export interface CalibrationSummary {
  /** Number of (marginal, truth) pairs: one per hidden zone per listener belief update. */
  readonly updates: number;
  /** Expected calibration error; null with no pairs. */
  readonly ece: number | null;
  /** Fraction of pairs with P(truth) < 0.05; null with no pairs. */
  readonly p_truth_below_0_05_rate: number | null;
  readonly bins: readonly ReliabilityBin[];
}

/** The raw sums (what a run hands to a batch for pooling). */
export interface CalibrationSums {
  readonly count: readonly number[];
  readonly sum_p: readonly number[];
  readonly sum_truth: readonly number[];
  readonly below_floor: number;
}

/** Bin of a predicted probability (p outside [0, 1] is clamped; NaN is never added). */
export function binOf(p: number): number {
  const b = Math.floor(p * CALIBRATION_BINS);
  return b < 0 ? 0 : b >= CALIBRATION_BINS ? CALIBRATION_BINS - 1 : b;
}

export class CalibrationAccumulator {
  readonly count = new Float64Array(CALIBRATION_BINS);
  readonly sumP = new Float64Array(CALIBRATION_BINS);
  readonly sumTruth = new Float64Array(CALIBRATION_BINS);
  belowFloor = 0;
  /** Pairs refused because p was not a finite number (never counted in the metrics). */
  nonFinite = 0;

  /** One pair: predicted probability of occupied, and whether it was occupied. */
  add(p: number, occupied: boolean): void {
    if (!Number.isFinite(p)) {
      this.nonFinite++;
      return;
    }
    const b = binOf(p);
    this.count[b]!++;
    this.sumP[b]! += p;
    if (occupied) this.sumTruth[b]!++;
    const pTruth = occupied ? p : 1 - p;
    if (pTruth < P_TRUTH_FLOOR) this.belowFloor++;
  }

  merge(s: CalibrationSums): void {
    for (let b = 0; b < CALIBRATION_BINS; b++) {
      this.count[b]! += s.count[b]!;
      this.sumP[b]! += s.sum_p[b]!;
      this.sumTruth[b]! += s.sum_truth[b]!;
    }
    this.belowFloor += s.below_floor;
  }

  sums(): CalibrationSums {
    return { count: Array.from(this.count), sum_p: Array.from(this.sumP), sum_truth: Array.from(this.sumTruth), below_floor: this.belowFloor };
  }

  get total(): number {
    let n = 0;
    for (let b = 0; b < CALIBRATION_BINS; b++) n += this.count[b]!;
    return n;
  }

  summary(): CalibrationSummary {
    const n = this.total;
    let ece = 0;
    const bins: ReliabilityBin[] = [];
    for (let b = 0; b < CALIBRATION_BINS; b++) {
      const c = this.count[b]!;
      const conf = c > 0 ? this.sumP[b]! / c : null;
      const freq = c > 0 ? this.sumTruth[b]! / c : null;
      if (c > 0) ece += (c / n) * Math.abs(freq! - conf!);
      bins.push({ lo: b / CALIBRATION_BINS, hi: (b + 1) / CALIBRATION_BINS, count: c, mean_predicted: conf, observed_frequency: freq });
    }
    return { updates: n, ece: n > 0 ? ece : null, p_truth_below_0_05_rate: n > 0 ? this.belowFloor / n : null, bins };
  }
}

/** Summary of one stream of pairs (tests, scripts). */
export function calibrationOf(pairs: Iterable<readonly [number, boolean]>): CalibrationSummary {
  const a = new CalibrationAccumulator();
  for (const [p, y] of pairs) a.add(p, y);
  return a.summary();
}

/** Pool the sums of several runs. */
export function pooledCalibration(all: readonly CalibrationSums[]): CalibrationSummary {
  const a = new CalibrationAccumulator();
  for (const s of all) a.merge(s);
  return a.summary();
}
