/**
 * Calibration from a recording: the wrist sensors' noise and bias from still periods, and the
 * coupling damping c of f = c (v_partner − v_own) from the partner's corrections, each with a
 * 95 % interval.
 *
 * - Still: windows of STILL_WINDOW_S in which the arm's tool pose moves less than
 *   STILL_MOTION_M; the start-up still period is the first run of such windows (the object
 *   resting in the grippers at the pick stand, where the tare takes its bias). Later still
 *   windows are not used: a partner or a person may lean on a standing object, which is force,
 *   not sensor noise. Noise: per axis, the pooled standard deviation about each window's mean
 *   (m − 1 degrees of freedom per window); interval from the chi-square distribution
 *   (Wilson–Hilferty quantiles). Bias: per axis, the mean; interval mean ± 1.96 sd / √n.
 * - Coupling: both arms replayed through the arm step with the given parameters (a recording
 *   of the cell replays to the commands the arms ran); the recommended twists are delayed one
 *   sample (the sensor's latency) and low-passed with the filter's own Butterworth, so the
 *   prediction lags as the correction band does, and the least-squares fit through the origin
 *   of src/sim/calibrate.ts (`fitCoupling`) runs on both arms' horizontal axes. Interval: a
 *   delete-one-block jackknife over CALIBRATION_BLOCKS contiguous blocks (the residuals are
 *   correlated over the filter's memory, so per-sample errors would be far too narrow),
 *   with Student's t at blocks − 1 degrees of freedom.
 * - Disturbance (belief.disturbance_force_n, belief.disturbance_time_s): the coupling fit's
 *   residual r = f − c Δv on the same usable samples, both arms' x and y (four series, each
 *   about its own mean: a constant offset such as the tare's own error is a bias, not a
 *   disturbance), pooled. White sensor noise after the correction band's low-pass is
 *   correlated only over the filter's memory; a first-order disturbance has the autocovariance
 *   σd² e^(−lag/τ) (time-series fact, from memory). So the autocovariance at lags past the
 *   band's noise correlation length (at least 0.1 s; 11 lags 0.05 s apart: 0.1–0.6 s on the
 *   demo cell) is fitted by least squares to s (e^(−lag/τ) − κ), κ the first-order low bias of
 *   an autocovariance about the mean; σd = √s extrapolates to lag 0. Least squares on the
 *   autocovariance itself, not its logarithm: the estimates' sampling errors at long lags are
 *   about equal in absolute size (Bartlett's formula, from memory), which is what unweighted
 *   least squares assumes (and the weighted log fit with weights γ² approximates), and the
 *   estimates at the longest lags may be ≤ 0 where a logarithm fails. Intervals: the same
 *   delete-one-block jackknife (σd directly, τ on a log scale), clamped to the schema's limits.
 *   A clean cell: when the mean autocovariance over the lags is not above zero by t(0.975, 19)
 *   jackknife errors, the estimate is 0 with an interval up to the residual's whole standard
 *   deviation at its upper limit (a disturbance cannot carry more than the whole residual), and
 *   no time is estimated (calibrate --out then leaves disturbance_time_s as it was: at 0 N it
 *   has no effect). The residual takes each arm's c from the parameters file, not the fitted
 *   c: the file's c is the one the belief scored the recording with, and a disturbance the arms
 *   answer pulls the fit (the commands then correlate with it; errors in variables): on our
 *   simulated demo bags at 1.5 N the fit scatters by ±30 % around its truth (kinematic cell)
 *   and on one of four MuJoCo bags fell to 3.3 N*s/m against 40.
 */
import { butterworthSos, noiseCorrelationSamples, SosCascade } from '../core/filter/butterworth.js';
import type { ArmConfig } from '../params/config.js';
import { fitCoupling } from '../sim/calibrate.js';
import type { EpisodeRecord } from '../sim/record.js';
import { SPEC_BY_KEY } from '../params/schema.js';
import { InputError } from '../util/errors.js';
import { KIND_JOINTS, KIND_POSE, KIND_WRENCH, KIND_ZONES, type DecodedBag } from './columns.js';
import { ArmStep } from '../core/arm-step.js';

export const STILL_WINDOW_S = 0.25;
export const STILL_MOTION_M = 1e-4;
export const CALIBRATION_BLOCKS = 20;
/** Student's t, 97.5 % quantile, 19 degrees of freedom (any t table; SciPy stats.t.ppf(0.975, 19) = 2.093). */
const T_975_19 = 2.093;
const Z_975 = 1.959964;
const AXES = ['fx', 'fy', 'fz', 'tx', 'ty', 'tz'] as const;

export interface Estimate {
  readonly value: number;
  readonly ci95: [number, number];
  readonly unit: string;
  readonly from: string;
}

/** The chi-square quantile by Wilson–Hilferty (relative error below 1e-3 from 30 degrees of freedom). */
function chi2Quantile(nu: number, z: number): number {
  const a = 2 / (9 * nu);
  return nu * (1 - a + z * Math.sqrt(a)) ** 3;
}

interface Trace {
  /** Per wrench sample: rel time, raw wrench (6), cell-frame correction (x, y), twist (x, y), usable flags. */
  readonly rel: number[];
  readonly raw: number[];
  readonly corr: number[];
  readonly twist: number[];
  readonly tared: number[];
  readonly held: number[];
  readonly impact: number[];
  /** Pose position at each wrench sample (latest). */
  readonly pos: number[];
  readonly q: number[];
}

function trace(bag: DecodedBag, left: ArmConfig, right: ArmConfig): { left: Trace; right: Trace } {
  const mk = (): Trace => ({ rel: [], raw: [], corr: [], twist: [], tared: [], held: [], impact: [], pos: [], q: [] });
  const tr = { left: mk(), right: mk() };
  const steps = ([['left', left], ['right', right]] as const).map(([arm, c]) => {
    const d = bag.arms[arm];
    return { d, t: tr[arm], step: new ArmStep(c, { jointCount: 0, required: { joint_states: d.present.joint_states, tool_pose: d.present.tool_pose, zone_view: d.present.zone_view && c.task.zones.length > 0 } }), row: new Float64Array(6), vel: new Float64Array(64), zones: new Uint8Array(bag.zoneCount), cell: new Float64Array(3), p: [Number.NaN, Number.NaN, Number.NaN], qq: [0, 0, 0, 1] };
  });
  for (let e = 0; e < bag.count; e++) {
    const code = bag.order[e]!;
    const s = steps[code < 4 ? 0 : 1]!;
    const i = bag.index[e]!;
    const d = s.d;
    switch (code & 3) {
      case KIND_WRENCH: {
        for (let k = 0; k < 6; k++) s.row[k] = d.wrench[6 * i + k]!;
        const o = s.step.step(bag.t0s + d.wrenchRel[i]!, s.row);
        s.step.cellCorrection(s.cell);
        s.t.rel.push(d.wrenchRel[i]!);
        for (let k = 0; k < 6; k++) s.t.raw.push(s.row[k]!);
        s.t.corr.push(s.cell[0]!, s.cell[1]!);
        s.t.twist.push(o.twist[0]!, o.twist[1]!);
        s.t.tared.push(o.tared ? 1 : 0);
        s.t.held.push(o.held ? 1 : 0);
        s.t.impact.push(o.impactFlag ? 1 : 0);
        s.t.pos.push(s.p[0]!, s.p[1]!, s.p[2]!);
        s.t.q.push(s.qq[0]!, s.qq[1]!, s.qq[2]!, s.qq[3]!);
        break;
      }
      case KIND_JOINTS: {
        const n = d.jointCount[i]!;
        for (let q = 0; q < n; q++) s.vel[q] = d.jointVel[d.jointOffset[i]! + q]!;
        s.step.setJointState(bag.t0s + d.jointRel[i]!, s.vel, n);
        break;
      }
      case KIND_POSE: {
        const p = d.pose;
        const o = 7 * i;
        s.p = [p[o]!, p[o + 1]!, p[o + 2]!];
        s.qq = [p[o + 3]!, p[o + 4]!, p[o + 5]!, p[o + 6]!];
        s.step.setToolPose(bag.t0s + d.poseRel[i]!, p[o]!, p[o + 1]!, p[o + 2]!, p[o + 3]!, p[o + 4]!, p[o + 5]!, p[o + 6]!);
        break;
      }
      case KIND_ZONES:
        for (let z = 0; z < bag.zoneCount; z++) s.zones[z] = d.zones[i * bag.zoneCount + z]!;
        s.step.setZoneView(bag.t0s + d.zoneRel[i]!, s.zones);
        break;
    }
  }
  return tr;
}

/** Still windows of one arm: [start, end) sample ranges. */
function stillWindows(t: Trace, rateHz: number): [number, number][] {
  const m = Math.max(4, Math.round(STILL_WINDOW_S * rateHz));
  const out: [number, number][] = [];
  const n = t.rel.length;
  for (let a = 0; a + m <= n; a += m) {
    let still = !Number.isNaN(t.pos[3 * a]!);
    for (let i = a + 1; i < a + m && still; i++) {
      for (let k = 0; k < 3; k++) if (!(Math.abs(t.pos[3 * i + k]! - t.pos[3 * a + k]!) < STILL_MOTION_M)) still = false;
    }
    if (still) out.push([a, a + m]);
  }
  return out;
}

function sensorEstimates(arm: 'left' | 'right', t: Trace, rateHz: number, out: Record<string, Estimate>): void {
  const wins = stillWindows(t, rateHz);
  if (wins.length === 0) return;
  // The start-up still period: the first run of adjacent still windows.
  let runEnd = 1;
  while (runEnd < wins.length && wins[runEnd]![0] === wins[runEnd - 1]![1]) runEnd++;
  const startup = wins.slice(0, runEnd);
  const n0 = startup.reduce((a, [s, e]) => a + e - s, 0);
  const t0 = t.rel[startup[0]![0]]!, t1 = t.rel[startup[runEnd - 1]![1] - 1]!;
  for (let k = 0; k < 6; k++) {
    let ss = 0, dof = 0;
    for (const [s, e] of startup) {
      let mean = 0;
      for (let i = s; i < e; i++) mean += t.raw[6 * i + k]!;
      mean /= e - s;
      for (let i = s; i < e; i++) ss += (t.raw[6 * i + k]! - mean) ** 2;
      dof += e - s - 1;
    }
    const sd = Math.sqrt(ss / dof);
    const unit = k < 3 ? 'N' : 'N*m';
    out[`sensor.${arm}.noise_sd.${AXES[k]}`] = {
      value: sd,
      ci95: [sd * Math.sqrt(dof / chi2Quantile(dof, Z_975)), sd * Math.sqrt(dof / chi2Quantile(dof, -Z_975))],
      unit,
      from: `start-up still period ${t0.toFixed(3)}-${t1.toFixed(3)} s: ${n0} samples in ${startup.length} windows of ${STILL_WINDOW_S} s (tool pose within ${STILL_MOTION_M} m); pooled about each window's mean, ${dof} degrees of freedom`,
    };
    let mean = 0;
    for (const [s, e] of startup) for (let i = s; i < e; i++) mean += t.raw[6 * i + k]!;
    mean /= n0;
    const half = (Z_975 * sd) / Math.sqrt(n0);
    out[`sensor.${arm}.bias.${AXES[k]}`] = { value: mean, ci95: [mean - half, mean + half], unit, from: `start-up still period ${t0.toFixed(3)}-${t1.toFixed(3)} s, ${n0} samples (sensor frame; includes the gripper's and the object's weight share)` };
  }
}

/** A record of the shape fitCoupling reads, from both arms' traces paired by time (left samples lead). */
function couplingRecord(L: Trace, R: Trace, config: ArmConfig, from: number, to: number, pairs: Int32Array): EpisodeRecord {
  const n = to - from;
  const sos = butterworthSos(config.wrench_filter.order, config.wrench_filter.cutoff_hz, config.wrench_filter.sample_rate_hz);
  const lp = new SosCascade(sos, 4);
  const x = new Float64Array(4), y = new Float64Array(4);
  const mk = () => ({ correction: new Float64Array(6 * n), toolPose: new Float64Array(7 * n), command: new Float64Array(2 * n), tared: new Uint8Array(n), held: new Uint8Array(n), impactFlag: new Uint8Array(n) });
  const a = mk(), b = mk();
  for (let k = 0; k < n; k++) {
    const i = from + k;
    const j = pairs[i]!;
    // Twist of the sample before (the wrench at i measures the motion commanded before it).
    const ip = Math.max(0, i - 1), jp = Math.max(0, j - 1);
    x[0] = L.twist[2 * ip]!; x[1] = L.twist[2 * ip + 1]!; x[2] = R.twist[2 * jp]!; x[3] = R.twist[2 * jp + 1]!;
    lp.process(x, y);
    a.command[2 * k] = y[0]!; a.command[2 * k + 1] = y[1]!;
    b.command[2 * k] = y[2]!; b.command[2 * k + 1] = y[3]!;
    // The correction already in the cell frame: identity orientation.
    a.correction[6 * k] = L.corr[2 * i]!; a.correction[6 * k + 1] = L.corr[2 * i + 1]!;
    b.correction[6 * k] = R.corr[2 * j]!; b.correction[6 * k + 1] = R.corr[2 * j + 1]!;
    a.toolPose[7 * k + 6] = 1; b.toolPose[7 * k + 6] = 1;
    a.tared[k] = L.tared[i]!; b.tared[k] = R.tared[j]!;
    a.held[k] = L.held[i]!; b.held[k] = R.held[j]!;
    a.impactFlag[k] = L.impact[i]!; b.impactFlag[k] = R.impact[j]!;
  }
  return { samples: n, left: a, right: b } as unknown as EpisodeRecord;
}

export function calibrateBag(bag: DecodedBag, left: ArmConfig, right: ArmConfig): Record<string, Estimate> {
  const tr = trace(bag, left, right);
  const out: Record<string, Estimate> = {};
  sensorEstimates('left', tr.left, left.wrench_filter.sample_rate_hz, out);
  sensorEstimates('right', tr.right, right.wrench_filter.sample_rate_hz, out);
  const L = tr.left, R = tr.right;
  const n = L.rel.length;
  if (n > 0 && R.rel.length > 0) {
    // Pair each left sample with the latest right sample at or before it.
    const pairs = new Int32Array(n);
    let j = 0;
    for (let i = 0; i < n; i++) {
      while (j + 1 < R.rel.length && R.rel[j + 1]! <= L.rel[i]!) j++;
      pairs[i] = j;
    }
    // The filter runs over the whole series once; blocks are views of it.
    const rec = couplingRecord(L, R, left, 0, n, pairs);
    const whole = fitCoupling(rec);
    const sxy: number[] = [], sxx: number[] = [];
    const B = CALIBRATION_BLOCKS;
    for (let k = 0; k < B; k++) {
      const a = Math.floor((k * n) / B), b = Math.floor(((k + 1) * n) / B);
      const part = sliceRecord(rec, a, b);
      const f = fitCoupling(part);
      const xx = f.points ? f.dv_rms_m_s * f.dv_rms_m_s * f.points : 0;
      sxx.push(xx);
      sxy.push(xx > 0 ? f.c_n_s_m * xx : 0);
    }
    const SXX = sxx.reduce((p, v) => p + v, 0), SXY = sxy.reduce((p, v) => p + v, 0);
    if (SXX > 0 && Number.isFinite(whole.c_n_s_m)) {
      const loo = sxx.map((xx, k) => (SXX - xx > 0 ? (SXY - sxy[k]!) / (SXX - xx) : whole.c_n_s_m));
      const m = loo.reduce((p, v) => p + v, 0) / B;
      const se = Math.sqrt(((B - 1) / B) * loo.reduce((p, v) => p + (v - m) ** 2, 0));
      out['coupling.damping_n_s_m'] = {
        value: whole.c_n_s_m,
        ci95: [whole.c_n_s_m - T_975_19 * se, whole.c_n_s_m + T_975_19 * se],
        unit: 'N*s/m',
        from: `partner corrections: least squares through the origin of the cell-frame correction force on the low-passed command difference, both arms' x and y, ${whole.points} points (skipping untared, held and impact samples), RMS command difference ${whole.dv_rms_m_s.toPrecision(3)} m/s, residual SD ${whole.residual_sd_n.toPrecision(3)} N; interval: jackknife over ${B} blocks`,
      };
      disturbanceEstimates(rec, left, right, whole.c_n_s_m, out);
    }
  }
  if (Object.keys(out).length === 0) throw new InputError({ code: 'calibrate.nothing', message: 'the bag has no still period and no partner corrections to calibrate from', where: { file: bag.path }, hint: 'record a still start (both arms holding the object) and a transfer' });
  return out;
}

function sliceRecord(rec: EpisodeRecord, a: number, b: number): EpisodeRecord {
  const cut = (r: Record<string, Float64Array | Uint8Array>) => ({
    correction: r['correction']!.subarray(6 * a, 6 * b),
    toolPose: r['toolPose']!.subarray(7 * a, 7 * b),
    command: r['command']!.subarray(2 * a, 2 * b),
    tared: r['tared']!.subarray(a, b),
    held: r['held']!.subarray(a, b),
    impactFlag: r['impactFlag']!.subarray(a, b),
  });
  return { samples: b - a, left: cut(rec.left as never), right: cut(rec.right as never) } as unknown as EpisodeRecord;
}

/** The disturbance fit's lags: from the band's noise correlation length, DISTURBANCE_LAG_COUNT lags DISTURBANCE_LAG_STEP_S apart. */
export const DISTURBANCE_LAG_COUNT = 11;
export const DISTURBANCE_LAG_STEP_S = 0.05;
/** The schema's limits of belief.disturbance_time_s and belief.disturbance_force_n: the fit and the intervals stay inside them. */
const TIME_MIN_S = SPEC_BY_KEY.get('belief.disturbance_time_s')!.min!;
const TIME_MAX_S = SPEC_BY_KEY.get('belief.disturbance_time_s')!.max!;
const FORCE_MAX_N = SPEC_BY_KEY.get('belief.disturbance_force_n')!.max!;

export interface DisturbanceFit {
  /** Standard deviation of the slow disturbance per axis, N (0 when not significant). */
  readonly sd_n: number;
  readonly sd_ci95: [number, number];
  /** Correlation time, s (NaN when sd_n is 0: nothing to time). */
  readonly time_s: number;
  readonly time_ci95: [number, number];
  /** The mean long-lag autocovariance is above zero by more than t(0.975, 19) jackknife errors. */
  readonly significant: boolean;
  /** The residual's variance at lag 0, N² (an upper bound on the disturbance's variance). */
  readonly variance_n2: number;
  /** Fit lags, s. */
  readonly lags_s: Float64Array;
  /** Autocovariance at those lags (pooled over the series), N². */
  readonly autocov_n2: Float64Array;
  /** Sample pairs at lag 0 (usable samples over all series). */
  readonly points: number;
}

/**
 * Least squares of γ(ℓ) ≈ s e^(−ℓ/τ) over the given lags (with `mean`: s (e^(−ℓ/τ) − κ), κ the
 * first-order bias of an autocovariance taken about the mean of that many samples): for each τ, s
 * has a closed form (Σ γ e / Σ e²); τ by a log-spaced scan over [0.001, 60] s refined by
 * golden-section search on log τ. Returns s ≤ 0 as 0 (no first-order process fits) with τ NaN.
 */
export function fitExponentialAutocov(lagsS: ArrayLike<number>, gamma: ArrayLike<number>, mean?: { readonly samples: number; readonly rateHz: number }): { variance: number; time_s: number } {
  const sse = (logTau: number): { sse: number; s: number } => {
    const tau = Math.exp(logTau);
    // About a series mean of m samples, every lag's estimate is low by the mean's variance,
    // to first order s (1 + a) / ((1 - a) m), a = e^(-1 / (tau f_s)) (the first-order process's
    // summed autocorrelation over m).
    let kappa = 0;
    if (mean) {
      const a = Math.exp(-1 / (tau * mean.rateHz));
      kappa = Math.min(1, (1 + a) / ((1 - a) * mean.samples));
    }
    let ge = 0, ee = 0, gg = 0;
    for (let k = 0; k < lagsS.length; k++) {
      const e = Math.exp(-lagsS[k]! / tau) - kappa;
      ge += gamma[k]! * e;
      ee += e * e;
      gg += gamma[k]! * gamma[k]!;
    }
    if (!(ee > 1e-300)) return { sse: gg, s: 0 };
    const s = ge / ee;
    return { sse: gg - s * ge, s };
  };
  const lo = Math.log(TIME_MIN_S), hi = Math.log(TIME_MAX_S);
  const N = 120;
  let best = 0, bestSse = Infinity;
  for (let k = 0; k <= N; k++) {
    const v = sse(lo + ((hi - lo) * k) / N);
    if (v.s > 0 && v.sse < bestSse) { bestSse = v.sse; best = k; }
  }
  if (!Number.isFinite(bestSse)) return { variance: 0, time_s: Number.NaN };
  // Golden section on the bracket around the best grid point.
  let a = lo + ((hi - lo) * Math.max(0, best - 1)) / N, b = lo + ((hi - lo) * Math.min(N, best + 1)) / N;
  const g = (Math.sqrt(5) - 1) / 2;
  let x1 = b - g * (b - a), x2 = a + g * (b - a);
  let f1 = sse(x1).sse, f2 = sse(x2).sse;
  for (let it = 0; it < 60; it++) {
    if (f1 < f2) { b = x2; x2 = x1; f2 = f1; x1 = b - g * (b - a); f1 = sse(x1).sse; }
    else { a = x1; x1 = x2; f1 = f2; x2 = a + g * (b - a); f2 = sse(x2).sse; }
  }
  const lt = (a + b) / 2;
  const s = sse(lt).s;
  return s > 0 ? { variance: s, time_s: Math.exp(lt) } : { variance: 0, time_s: Number.NaN };
}

/**
 * The slow disturbance in residual series (equal lengths, one usable mask for all): pooled
 * autocovariance about zero at lag 0 and at `lagsSamples`, over pairs whose two samples are
 * both usable; fitted by `fitExponentialAutocov`; delete-one-block jackknife over `blocks`
 * contiguous blocks (a pair belongs to the block of its first sample), Student's t at blocks − 1
 * degrees of freedom (`t975`). The disturbance counts as present when the mean autocovariance
 * over the lags exceeds t975 of its jackknife errors; else the estimate is 0 and its interval
 * runs up to the square root of the lag-0 variance's upper limit (the disturbance cannot
 * carry more variance than the whole residual). `aboutMean`: the caller has centred each series
 * on its own mean over the usable samples, and the fit allows for the low bias that gives.
 */
export function estimateDisturbance(series: readonly Float64Array[], usable: Uint8Array, rateHz: number, lagsSamples: readonly number[], blocks: number, t975: number, aboutMean = false): DisturbanceFit {
  const n = usable.length;
  for (const s of series) if (s.length !== n) throw new RangeError(`estimateDisturbance: every series needs ${n} samples (the usable mask's length), got ${s.length}`);
  const L = lagsSamples.length;
  const all = [0, ...lagsSamples];
  // sums[b][j], counts[b][j]: block b, lag all[j].
  const sums = Array.from({ length: blocks }, () => new Float64Array(L + 1));
  const counts = Array.from({ length: blocks }, () => new Float64Array(L + 1));
  for (let b = 0; b < blocks; b++) {
    const from = Math.floor((b * n) / blocks), to = Math.floor(((b + 1) * n) / blocks);
    const S = sums[b]!, C = counts[b]!;
    for (let j = 0; j <= L; j++) {
      const lag = all[j]!;
      let s = 0, c = 0;
      for (let i = from; i < to && i + lag < n; i++) {
        if (usable[i] !== 1 || usable[i + lag] !== 1) continue;
        for (const r of series) s += r[i]! * r[i + lag]!;
        c += series.length;
      }
      S[j] = s;
      C[j] = c;
    }
  }
  const total = (skip: number): Float64Array => {
    const g = new Float64Array(L + 1);
    for (let j = 0; j <= L; j++) {
      let s = 0, c = 0;
      for (let b = 0; b < blocks; b++) if (b !== skip) { s += sums[b]![j]!; c += counts[b]![j]!; }
      g[j] = c > 0 ? s / c : Number.NaN;
    }
    return g;
  };
  const lagsS = Float64Array.from(lagsSamples, (l) => l / rateHz);
  const whole = total(-1);
  const points = counts.reduce((a, c) => a + c[0]!, 0);
  const mean = (g: Float64Array) => { let s = 0; for (let j = 1; j <= L; j++) s += g[j]!; return s / L; };
  const jack = (vals: number[]) => {
    const m = vals.reduce((p, v) => p + v, 0) / vals.length;
    return Math.sqrt(((vals.length - 1) / vals.length) * vals.reduce((p, v) => p + (v - m) ** 2, 0));
  };
  const reps = Array.from({ length: blocks }, (_, b) => total(b));
  const gm = mean(whole);
  const seMean = jack(reps.map(mean));
  const var0 = whole[0]!;
  const seVar0 = jack(reps.map((g) => g[0]!));
  const autocov = whole.slice(1);
  let used = 0;
  for (let i = 0; i < n; i++) used += usable[i]!;
  const meanOf = aboutMean && used > 0 ? { samples: used, rateHz } : undefined;
  const fit = fitExponentialAutocov(lagsS, autocov, meanOf);
  const significant = gm - t975 * seMean > 0 && fit.variance > 0;
  if (!significant) {
    return { sd_n: 0, sd_ci95: [0, Math.min(FORCE_MAX_N, Math.sqrt(Math.max(0, var0 + t975 * seVar0)))], time_s: Number.NaN, time_ci95: [Number.NaN, Number.NaN], significant: false, variance_n2: var0, lags_s: lagsS, autocov_n2: autocov, points };
  }
  const sd = Math.sqrt(fit.variance);
  const repFits = reps.map((g) => fitExponentialAutocov(lagsS, g.subarray(1), meanOf));
  const seSd = jack(repFits.map((f) => Math.sqrt(f.variance)));
  // τ on a log scale (a positive ratio); a replicate with no fit takes the whole fit's τ.
  const logT = Math.log(fit.time_s);
  const seLogT = jack(repFits.map((f) => (f.variance > 0 ? Math.log(f.time_s) : logT)));
  const clampT = (t: number) => Math.min(TIME_MAX_S, Math.max(TIME_MIN_S, t));
  const clampF = (f: number) => Math.min(FORCE_MAX_N, Math.max(0, f));
  return {
    sd_n: clampF(sd),
    sd_ci95: [clampF(sd - t975 * seSd), clampF(sd + t975 * seSd)],
    time_s: clampT(fit.time_s),
    time_ci95: [clampT(Math.exp(logT - t975 * seLogT)), clampT(Math.exp(logT + t975 * seLogT))],
    significant: true,
    variance_n2: var0,
    lags_s: lagsS,
    autocov_n2: autocov,
    points,
  };
}

/** The disturbance fit's lags in samples: from the band's noise correlation length (at least 0.1 s), DISTURBANCE_LAG_COUNT lags DISTURBANCE_LAG_STEP_S apart. */
export function disturbanceLags(sos: Float64Array, rateHz: number): number[] {
  const first = Math.max(Math.round(0.1 * rateHz), Math.ceil(noiseCorrelationSamples(sos)));
  const step = Math.max(1, Math.round(DISTURBANCE_LAG_STEP_S * rateHz));
  return Array.from({ length: DISTURBANCE_LAG_COUNT }, (_, k) => first + k * step);
}

/** The correction band's slow disturbance from the coupling fit's residual (both arms' x and y; the usable samples of fitCoupling). */
function disturbanceEstimates(rec: EpisodeRecord, left: ArmConfig, right: ArmConfig, fitted: number, out: Record<string, Estimate>): void {
  const config = left;
  const n = rec.samples;
  const A = rec.left, Bm = rec.right;
  const usable = new Uint8Array(n);
  const ok = (a: EpisodeRecord['left'], i: number) => a.tared[i] === 1 && a.held[i] === 0 && a.impactFlag[i] === 0;
  for (let i = 0; i < n; i++) usable[i] = ok(A, i) && ok(Bm, i) ? 1 : 0;
  const series: Float64Array[] = [];
  // Each arm's residual with the c its own belief scores with (the parameters file's).
  for (const [own, other, c] of [[A, Bm, left.coupling.damping_n_s_m], [Bm, A, right.coupling.damping_n_s_m]] as const) {
    for (let a = 0; a < 2; a++) {
      const r = new Float64Array(n);
      let sum = 0, m = 0;
      for (let i = 0; i < n; i++) {
        r[i] = own.correction[6 * i + a]! - c * (other.command[2 * i + a]! - own.command[2 * i + a]!);
        if (usable[i] === 1) { sum += r[i]!; m++; }
      }
      // About the series' mean: a constant offset (the tare's own error, a steady lean) is a
      // bias, not a disturbance that comes and goes.
      const mean = m > 0 ? sum / m : 0;
      for (let i = 0; i < n; i++) r[i] = r[i]! - mean;
      series.push(r);
    }
  }
  const fs = config.wrench_filter.sample_rate_hz;
  const sos = butterworthSos(config.wrench_filter.order, config.wrench_filter.cutoff_hz, fs);
  const lags = disturbanceLags(sos, fs);
  if (n <= lags[lags.length - 1]! * 2) return;
  const d = estimateDisturbance(series, usable, fs, lags, CALIBRATION_BLOCKS, T_975_19, true);
  if (d.points === 0) return;
  const lagText = `${d.lags_s[0]!.toFixed(3)}-${d.lags_s[d.lags_s.length - 1]!.toFixed(3)} s`;
  const cs = left.coupling.damping_n_s_m === right.coupling.damping_n_s_m ? `${left.coupling.damping_n_s_m}` : `${left.coupling.damping_n_s_m} left, ${right.coupling.damping_n_s_m} right`;
  const basis = `autocovariance of the coupling residual at ${d.lags_s.length} lags ${lagText}: f - c dv with the parameters' c = ${cs} N*s/m (fitted ${fitted.toPrecision(4)}), both arms' x and y, ${d.points} points, each series about its mean; lags past the band's noise memory, fitted by s (e^(-lag/time) - bias of the mean)`;
  if (d.significant) {
    out['belief.disturbance_force_n'] = { value: d.sd_n, ci95: d.sd_ci95, unit: 'N', from: `${basis}; sd = sqrt(s); interval: jackknife over ${CALIBRATION_BLOCKS} blocks` };
    out['belief.disturbance_time_s'] = { value: d.time_s, ci95: d.time_ci95, unit: 's', from: `${basis}; interval: jackknife over ${CALIBRATION_BLOCKS} blocks on log time` };
  } else {
    out['belief.disturbance_force_n'] = { value: 0, ci95: d.sd_ci95, unit: 'N', from: `${basis}; none: the mean long-lag autocovariance ${(d.autocov_n2.reduce((p, v) => p + v, 0) / d.autocov_n2.length).toPrecision(3)} N^2 is not above zero (jackknife over ${CALIBRATION_BLOCKS} blocks); upper bound: the residual's whole variance ${d.variance_n2.toPrecision(3)} N^2 at its upper limit` };
  }
}
