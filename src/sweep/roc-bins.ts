/**
 * One-second bins of a run for the ROC of the impact threshold, shared by sweeps over bags
 * (evaluate.ts) and over simulated worlds (world-truth.ts): a bin is negative when no labelled
 * impact window overlaps it, and it counts as a false alarm when a false hold starts in it.
 */

/** An impact flagged this long before the labelled time still counts (label clocks are coarse). */
export const EARLY_S = 0.02;

export interface RocBins {
  readonly bins: number;
  /** 1 where no impact window overlaps the bin. */
  readonly negative: Uint8Array;
  /** 1 where a false hold started in a negative bin. */
  readonly falseIn: Uint8Array;
}

/** Bins of a run of `duration_s`, with every bin overlapped by some [from, to] window marked positive. */
export function rocBins(duration_s: number, windows: Iterable<readonly [number, number]>): RocBins {
  const bins = Math.max(0, Math.floor(duration_s));
  const negative = new Uint8Array(bins).fill(1);
  for (const [a, b] of windows) for (let k = Math.max(0, Math.floor(a)); k < Math.min(bins, Math.ceil(b)); k++) if (k + 1 > a && k < b) negative[k] = 0;
  return { bins, negative, falseIn: new Uint8Array(bins) };
}

/** A false hold starting at t (s from the run's start). */
export function markFalseHold(r: RocBins, t: number): void {
  const k = Math.floor(t);
  if (k < r.bins && r.negative[k] === 1) r.falseIn[k] = 1;
}

/** The negative bins, and those with a false hold. */
export function rocCounts(r: RocBins): { negative_bins: number; false_bins: number } {
  let negative = 0, falseBins = 0;
  for (let k = 0; k < r.bins; k++) {
    negative += r.negative[k]!;
    falseBins += r.falseIn[k]!;
  }
  return { negative_bins: negative, false_bins: falseBins };
}
