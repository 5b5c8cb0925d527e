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
 */
import { butterworthSos, SosCascade } from '../core/filter/butterworth.js';
import type { ArmConfig } from '../params/config.js';
import { fitCoupling } from '../sim/calibrate.js';
import type { EpisodeRecord } from '../sim/record.js';
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
