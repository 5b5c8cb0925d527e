/**
 * One candidate on decoded bags: both arms' steps fed exactly as replay feeds them (same
 * order, same clock), and the sweep's counts against the labels.
 *
 * An operator reset is simulated: once an arm's hold may be released (every condition clear
 * for `watchdog.release_clear_s`), it is reset, so every later event of a long recording is
 * counted too (replay itself never resets). Counts:
 *   - a labelled impact is detected when either named arm flags an impact from EARLY_S before
 *     its time to `tolerance_s` after its end; the delay is from the labelled time;
 *   - a hold is explained when it starts inside such a window, or, held only for the partner
 *     (partner_stop, partner_hold), up to `watchdog.partner_stop.window_s` + PARTNER_MARGIN_S
 *     after it or after another explained hold (in the recording the knocked arm held and its
 *     partner felt it stop); every other
 *     hold (either arm) is a false hold, pushes included;
 *   - for the ROC: the bag is cut into 1 s bins; bins that overlap no impact window are the
 *     negatives, and those holding the start of a false hold are the false positives.
 * Peak internal force: (left − right correction force along the object axis) / 2 at the left
 * arm's samples once both arms are tared, as replay's internal force.
 */
import { ArmStep } from '../core/arm-step.js';
import { CHECK } from '../core/watchdog.js';
import type { ArmConfig } from '../params/config.js';
import { percentile } from '../sim/measures.js';
import { KIND_JOINTS, KIND_POSE, KIND_WRENCH, KIND_ZONES, type DecodedArm, type DecodedBag } from './columns.js';
import type { Label } from './labels.js';
import { EARLY_S, markFalseHold, rocBins, rocCounts } from './roc-bins.js';

export interface BagCounts {
  readonly duration_s: number;
  readonly labelled: number;
  readonly detected: number;
  readonly delays_s: readonly number[];
  readonly holds: number;
  readonly false_holds: number;
  readonly negative_bins: number;
  readonly false_bins: number;
  readonly impacts_flagged: number;
  readonly peak_internal_force_n: number;
  readonly peak_correction_force_n: number;
  /** The arms' impact and hold start times (for checks; not part of the metrics). */
  readonly events?: readonly ArmEvents[];
}

interface ArmState {
  readonly d: DecodedArm;
  readonly step: ArmStep;
  readonly row: Float64Array;
  readonly vel: Float64Array;
  readonly zones: Uint8Array;
  lastHeld: boolean;
  lastImpact: boolean;
  corrY: number;
  qx: number;
  qy: number;
  qz: number;
  qw: number;
  readonly impactOnsets: number[];
  readonly holdOnsets: number[];
  /** Per hold: 1 when its only reasons are partner_stop / partner_hold (the partner's hold, felt or told). */
  readonly holdPartner: number[];
  peakCorr: number;
}

function armState(d: DecodedArm, config: ArmConfig, zoneCount: number): ArmState {
  const step = new ArmStep(config, {
    jointCount: 0,
    required: { joint_states: d.present.joint_states, tool_pose: d.present.tool_pose, zone_view: d.present.zone_view && config.task.zones.length > 0 },
  });
  return { d, step, row: new Float64Array(6), vel: new Float64Array(64), zones: new Uint8Array(zoneCount), lastHeld: false, lastImpact: false, corrY: 0, qx: 0, qy: 0, qz: 0, qw: 1, impactOnsets: [], holdOnsets: [], holdPartner: [], peakCorr: 0 };
}

/** Correction-band force along the cell y axis (the object axis), as replay computes it. */
function corrAlongY(s: ArmState): number {
  const c = s.step.filter.correction;
  const qx = s.qx, qy = s.qy, qz = s.qz, qw = s.qw;
  const n = qx * qx + qy * qy + qz * qz + qw * qw;
  if (!(n > 0)) return c[1]!;
  const r10 = 2 * (qx * qy + qz * qw), r11 = 1 - 2 * (qx * qx + qz * qz), r12 = 2 * (qy * qz - qx * qw);
  return r10 * c[0]! + r11 * c[1]! + r12 * c[2]!;
}

export function evaluateBag(bag: DecodedBag, left: ArmConfig, right: ArmConfig, labels: readonly Label[], tolerance_s: number): BagCounts {
  const L = armState(bag.arms.left, left, bag.zoneCount);
  const R = armState(bag.arms.right, right, bag.zoneCount);
  const states = [L, R];
  const t0s = bag.t0s;
  let peakInternal = 0;
  const order = bag.order;
  const index = bag.index;
  for (let e = 0; e < bag.count; e++) {
    const code = order[e]!;
    const s = code < 4 ? L : R;
    const i = index[e]!;
    const d = s.d;
    switch (code & 3) {
      case KIND_WRENCH: {
        const rel = d.wrenchRel[i]!;
        const row = s.row;
        const w = d.wrench;
        const o6 = 6 * i;
        for (let k = 0; k < 6; k++) row[k] = w[o6 + k]!;
        const o = s.step.step(t0s + rel, row);
        if (o.impactFlag && !s.lastImpact) s.impactOnsets.push(rel);
        s.lastImpact = o.impactFlag;
        if (o.held && !s.lastHeld) {
          s.holdOnsets.push(rel);
          s.holdPartner.push(s.step.watchdog.heldForOwnReasons ? 0 : 1);
        }
        s.lastHeld = o.held;
        if (o.held && s.step.watchdog.readyToRelease) {
          s.step.requestReset();
          s.lastHeld = false;
        }
        s.corrY = corrAlongY(s);
        if (o.tared) {
          const k = o.correction;
          const m = Math.sqrt(k[0]! * k[0]! + k[1]! * k[1]! + k[2]! * k[2]!);
          if (m > s.peakCorr) s.peakCorr = m;
        }
        if (s === L && o.tared && R.step.out.tared) {
          const f = Math.abs((L.corrY - R.corrY) / 2);
          if (f > peakInternal) peakInternal = f;
        }
        break;
      }
      case KIND_JOINTS: {
        const n = d.jointCount[i]!;
        const off = d.jointOffset[i]!;
        for (let q = 0; q < n; q++) s.vel[q] = d.jointVel[off + q]!;
        s.step.setJointState(t0s + d.jointRel[i]!, s.vel, n);
        break;
      }
      case KIND_POSE: {
        const p = d.pose;
        const o7 = 7 * i;
        s.qx = p[o7 + 3]!;
        s.qy = p[o7 + 4]!;
        s.qz = p[o7 + 5]!;
        s.qw = p[o7 + 6]!;
        s.step.setToolPose(t0s + d.poseRel[i]!, p[o7]!, p[o7 + 1]!, p[o7 + 2]!, s.qx, s.qy, s.qz, s.qw);
        break;
      }
      case KIND_ZONES: {
        const nz = bag.zoneCount;
        for (let z = 0; z < nz; z++) s.zones[z] = d.zones[i * nz + z]!;
        s.step.setZoneView(t0s + d.zoneRel[i]!, s.zones);
        break;
      }
    }
  }
  const partnerWindow = left.watchdog.partner_stop.window_s + PARTNER_MARGIN_S;
  const events = states.map((s) => ({ arm: s.d.arm, impacts: s.impactOnsets, holds: s.holdOnsets, partnerHolds: s.holdPartner }));
  return { ...countAgainstLabels(bag.duration_s, events, labels, tolerance_s, peakInternal, Math.max(L.peakCorr, R.peakCorr), partnerWindow), events };
}

export interface ArmEvents {
  readonly arm: 'left' | 'right';
  /** Start times of flagged impacts, s from the bag start (ascending). */
  readonly impacts: readonly number[];
  /** Start times of holds, s from the bag start (ascending). */
  readonly holds: readonly number[];
  /** Per hold: 1 when held only for the partner (partner_stop, partner_hold). */
  readonly partnerHolds?: readonly number[];
}

/**
 * A partner-only hold up to `watchdog.partner_stop.window_s` plus this after a hold of the other
 * arm is that hold's consequence (the partner felt it stop). Measured on demo bags of the
 * kinematic cell with knocks: 1.1 to 3.0 s from the knocked arm's hold to its partner's.
 */
export const PARTNER_MARGIN_S = 3;

/** The counts of one bag from the arms' event times and the labels (pure; tested on its own). */
export function countAgainstLabels(duration_s: number, arms: readonly ArmEvents[], labels: readonly Label[], tolerance_s: number, peakInternal = 0, peakCorr = 0, partnerWindow_s = 0): BagCounts {
  const impacts = labels.filter((l) => l.kind === 'impact');
  const windows = impacts.map((l) => [l.t_s - EARLY_S, l.end_s + tolerance_s] as const);
  let detected = 0;
  const delays: number[] = [];
  for (const l of impacts) {
    const lo = l.t_s - EARLY_S, hi = l.end_s + tolerance_s;
    let first = Number.POSITIVE_INFINITY;
    for (const a of arms) {
      if (l.arm !== 'both' && l.arm !== a.arm) continue;
      for (const t of a.impacts) if (t >= lo && t <= hi && t < first) first = t;
    }
    if (first !== Number.POSITIVE_INFINITY) {
      detected++;
      delays.push(Math.max(0, first - l.t_s));
    }
  }
  const inWindow = (t: number) => windows.some(([a, b]) => t >= a && t <= b);
  let holds = 0, falseHolds = 0;
  const roc = rocBins(duration_s, windows);
  // Holds of both arms in time order. A partner-only hold (partner_stop, partner_hold) that
  // starts at most partnerWindow_s after a hold of the other arm is that hold's consequence:
  // explained with it, or, after a false hold, not counted a second time.
  const all = arms.flatMap((a) => a.holds.map((t, h) => ({ arm: a.arm, t, partner: a.partnerHolds?.[h] === 1 }))).sort((x, y) => x.t - y.t);
  const last = new Map<string, { t: number; explained: boolean }>();
  for (const h of all) {
    holds++;
    const other = last.get(h.arm === 'left' ? 'right' : 'left');
    let explained: boolean;
    if (inWindow(h.t)) explained = true;
    else if (h.partner && other && h.t - other.t <= partnerWindow_s) {
      last.set(h.arm, { t: h.t, explained: other.explained });
      continue;
    } else explained = false;
    last.set(h.arm, { t: h.t, explained });
    if (explained) continue;
    falseHolds++;
    markFalseHold(roc, h.t);
  }
  const { negative_bins: negativeBins, false_bins: falseBins } = rocCounts(roc);
  return {
    duration_s,
    labelled: impacts.length,
    detected,
    delays_s: delays,
    holds,
    false_holds: falseHolds,
    negative_bins: negativeBins,
    false_bins: falseBins,
    impacts_flagged: arms.reduce((n, a) => n + a.impacts.length, 0),
    peak_internal_force_n: peakInternal,
    peak_correction_force_n: peakCorr,
  };
}

/** Per-candidate metrics (the same fields over bags and over worlds; null where not measured). */
export interface CandidateMetrics {
  readonly duration_s: number;
  readonly labelled_impacts: number;
  readonly detected_impacts: number;
  readonly missed_impacts: number;
  readonly detection_rate: number | null;
  readonly holds: number;
  readonly false_holds: number;
  readonly false_holds_per_hour: number;
  readonly negative_bins: number;
  readonly false_hold_bins: number;
  readonly false_hold_bin_rate: number | null;
  readonly detection_delay_s: { readonly median: number | null; readonly p95: number | null };
  readonly peak_internal_force_n: number;
  readonly peak_correction_force_n: number | null;
  readonly success_rate: number | null;
  readonly collision_rate: number | null;
  readonly mean_time_to_goal_s: number | null;
  readonly belief_ece: number | null;
  readonly same_role_fraction: number | null;
}

export function metricsFromBags(all: readonly BagCounts[]): CandidateMetrics {
  let dur = 0, lab = 0, det = 0, holds = 0, fh = 0, nb = 0, fb = 0, pi = 0, pc = 0;
  const delays: number[] = [];
  for (const c of all) {
    dur += c.duration_s;
    lab += c.labelled;
    det += c.detected;
    holds += c.holds;
    fh += c.false_holds;
    nb += c.negative_bins;
    fb += c.false_bins;
    pi = Math.max(pi, c.peak_internal_force_n);
    pc = Math.max(pc, c.peak_correction_force_n);
    delays.push(...c.delays_s);
  }
  return {
    duration_s: dur,
    labelled_impacts: lab,
    detected_impacts: det,
    missed_impacts: lab - det,
    detection_rate: lab ? det / lab : null,
    holds,
    false_holds: fh,
    false_holds_per_hour: dur > 0 ? (3600 * fh) / dur : 0,
    negative_bins: nb,
    false_hold_bins: fb,
    false_hold_bin_rate: nb ? fb / nb : null,
    detection_delay_s: { median: percentile(delays, 0.5), p95: percentile(delays, 0.95) },
    peak_internal_force_n: pi,
    peak_correction_force_n: pc,
    success_rate: null,
    collision_rate: null,
    mean_time_to_goal_s: null,
    belief_ece: null,
    same_role_fraction: null,
  };
}
