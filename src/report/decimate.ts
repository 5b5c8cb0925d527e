/**
 * Display decimation for the HTML report. Continuous series become min/max envelopes over a
 * fixed number of time columns, so a one-sample spike (an impact) survives as the column's
 * max; step series (role, watchdog hold) become exact change points, so no change is lost,
 * not even a one-sample hold. Both run in one pass over full-rate data (an hour at 1 kHz is
 * 3.6 M samples) and allocate only their outputs.
 */

/** Per column: the min and max of the samples whose time falls in it (NaN when none do). */
export interface Envelope {
  /** Time span covered, s; column i covers [t0 + i·w, t0 + (i+1)·w) with w = (t1 − t0)/columns, the last one closed. */
  readonly t0: number;
  readonly t1: number;
  readonly columns: number;
  readonly min: Float64Array;
  readonly max: Float64Array;
  /** Number of finite samples in each column. */
  readonly count: Uint32Array;
}

/**
 * Min/max envelope of `y` over `columns` equal time columns of [t0, t1]. Samples outside the
 * span or with a non-finite time or value are skipped; times need not be sorted.
 */
export function envelope(t: ArrayLike<number>, y: ArrayLike<number>, t0: number, t1: number, columns: number): Envelope {
  return envelopeStrided(t, y, 0, 1, t0, t1, columns);
}

/**
 * The same for a column of a row-major table: value i is `y[offset + i·stride]`
 * (the belief marginals are stored one row per time, one column per zone).
 */
export function envelopeStrided(
  t: ArrayLike<number>,
  y: ArrayLike<number>,
  offset: number,
  stride: number,
  t0: number,
  t1: number,
  columns: number,
): Envelope {
  const cols = Math.max(1, Math.floor(columns));
  const min = new Float64Array(cols).fill(Number.NaN);
  const max = new Float64Array(cols).fill(Number.NaN);
  const count = new Uint32Array(cols);
  const n = sampleCount(t.length, y.length, offset, stride);
  const span = t1 - t0;
  if (!(span > 0) || !Number.isFinite(span)) {
    // A degenerate span: everything at t0 goes into one column.
    for (let i = 0; i < n; i++) {
      const ti = t[i]!;
      const v = y[offset + i * stride]!;
      if (ti !== t0 || !Number.isFinite(v)) continue;
      accumulate(min, max, count, 0, v);
    }
    return { t0, t1, columns: cols, min, max, count };
  }
  for (let i = 0; i < n; i++) {
    const ti = t[i]!;
    const v = y[offset + i * stride]!;
    if (!(ti >= t0 && ti <= t1) || !Number.isFinite(v)) continue;
    accumulate(min, max, count, columnOf(ti, t0, t1, cols), v);
  }
  return { t0, t1, columns: cols, min, max, count };
}

/**
 * The column of time t in `columns` equal columns of [t0, t1] (t1 itself in the last one),
 * clamped to [0, columns − 1]. The envelope uses exactly this.
 */
export function columnOf(t: number, t0: number, t1: number, columns: number): number {
  const c = Math.floor((t - t0) * (columns / (t1 - t0)));
  return c < 0 ? 0 : c >= columns ? columns - 1 : c;
}

function accumulate(min: Float64Array, max: Float64Array, count: Uint32Array, c: number, v: number): void {
  if (count[c] === 0) {
    min[c] = v;
    max[c] = v;
  } else {
    if (v < min[c]!) min[c] = v;
    if (v > max[c]!) max[c] = v;
  }
  count[c]!++;
}

function sampleCount(tLen: number, yLen: number, offset: number, stride: number): number {
  const s = Math.max(1, Math.floor(stride));
  const fromY = yLen > offset ? Math.floor((yLen - offset - 1) / s) + 1 : 0;
  return Math.min(tLen, fromY);
}

/**
 * A step series as its change points: `y[k]` holds from `t[k]` until `t[k+1]`, the last one
 * until `end` (the last sample's time). The first sample is always a change point. Non-finite
 * values count as one value "unknown" (NaN), so a run of NaN is one step, not one per sample.
 */
export interface Steps {
  readonly t: Float64Array;
  readonly y: Float64Array;
  readonly end: number;
}

/** Every sample where the value differs from the previous one (and the first sample). */
export function changePoints(t: ArrayLike<number>, y: ArrayLike<number>): Steps {
  const n = Math.min(t.length, y.length);
  if (n === 0) return { t: new Float64Array(0), y: new Float64Array(0), end: Number.NaN };
  // First pass counts, second fills: no growing arrays for a 3.6 M sample series.
  let k = 1;
  let prev = y[0]!;
  for (let i = 1; i < n; i++) {
    const v = y[i]!;
    if (!sameStep(v, prev)) {
      k++;
      prev = v;
    }
  }
  const ct = new Float64Array(k);
  const cy = new Float64Array(k);
  ct[0] = t[0]!;
  cy[0] = Number.isFinite(y[0]!) ? y[0]! : Number.NaN;
  prev = y[0]!;
  let j = 1;
  for (let i = 1; i < n; i++) {
    const v = y[i]!;
    if (!sameStep(v, prev)) {
      ct[j] = t[i]!;
      cy[j] = Number.isFinite(v) ? v : Number.NaN;
      j++;
      prev = v;
    }
  }
  return { t: ct, y: cy, end: t[n - 1]! };
}

function sameStep(a: number, b: number): boolean {
  return a === b || (!Number.isFinite(a) && !Number.isFinite(b));
}

/** The intervals [start, end] where a step series is "on" (finite and non-zero), in time order of the input. */
export function onIntervals(steps: Steps): Float64Array {
  const out: number[] = [];
  const n = steps.t.length;
  for (let k = 0; k < n; k++) {
    const v = steps.y[k]!;
    if (!(Number.isFinite(v) && v !== 0)) continue;
    const start = steps.t[k]!;
    // Merge consecutive "on" steps of different non-zero values into one interval.
    let m = k + 1;
    while (m < n && Number.isFinite(steps.y[m]!) && steps.y[m]! !== 0) m++;
    const end = m < n ? steps.t[m]! : steps.end;
    out.push(start, end);
    k = m - 1;
  }
  return Float64Array.from(out);
}

/** Min and max finite value of an array (NaN, NaN when there is none). */
export function finiteRange(a: ArrayLike<number>): [number, number] {
  let lo = Number.POSITIVE_INFINITY;
  let hi = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < a.length; i++) {
    const v = a[i]!;
    if (!Number.isFinite(v)) continue;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return lo > hi ? [Number.NaN, Number.NaN] : [lo, hi];
}

/**
 * Typical sample spacing: the median of up to 1024 spacings taken evenly through the series
 * (NaN with fewer than two samples). Used to tell a recording gap from a sparse series.
 */
export function typicalSpacing(t: ArrayLike<number>): number {
  const n = t.length;
  if (n < 2) return Number.NaN;
  const k = Math.min(1024, n - 1);
  const d: number[] = [];
  for (let j = 0; j < k; j++) {
    const i = Math.floor((j * (n - 1)) / k);
    const v = t[i + 1]! - t[i]!;
    if (Number.isFinite(v) && v > 0) d.push(v);
  }
  if (d.length === 0) return Number.NaN;
  d.sort((a, b) => a - b);
  return d[Math.floor(d.length / 2)]!;
}
