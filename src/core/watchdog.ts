/**
 * The watchdog: the last word on every recommended twist.
 *
 * It latches a safe hold when any check fails, records machine-readable reasons (check,
 * input, measured value, limit, time), keeps the recommended twist exactly zero while held,
 * and releases only on an explicit reset after every condition has been clear for
 * `release_clear_s`. It is a software monitor, not a safety-rated function (see SAFETY.md).
 *
 * Per-sample work allocates nothing: trip records are preallocated and reused.
 */
import type { WatchdogParams } from '../params/config.js';

/** Check identifiers, as published in antiphon/msg/WatchdogTrip.check. */
export const CHECKS = [
  'force_raw',
  'torque_raw',
  'force_correction',
  'torque_correction',
  'joint_velocity',
  'twist_linear',
  'twist_angular',
  'stale_input',
  'non_finite',
  'time_backwards',
  'impact',
  'force_untared',
  'torque_untared',
  'time_future',
  'quaternion_norm',
  'joint_velocity_absent',
  'partner_stop',
  'partner_hold',
] as const;
export type CheckName = (typeof CHECKS)[number];
export const CHECK = Object.fromEntries(CHECKS.map((c, k) => [c, k])) as { readonly [K in CheckName]: number };

/** Input streams whose freshness is watched. */
export const INPUTS = ['wrench', 'joint_states', 'tool_pose', 'zone_view', 'hold_link'] as const;
export type InputName = (typeof INPUTS)[number];
export const INPUT = { wrench: 0, joint_states: 1, tool_pose: 2, zone_view: 3, hold_link: 4 } as const;

export interface Trip {
  check: number;
  /** Input or channel, e.g. `wrench`, `joint_states[2]`. */
  input: string;
  /** The worst value seen while the hold lasts (what the WatchdogTrip message carries); the value at t_s is `tripFirst(k)`. */
  value: number;
  limit: number;
  t_s: number;
}

const MAX_TRIPS = CHECKS.length * 2;
const JOINT_LABELS = Array.from({ length: 64 }, (_, k) => `joint_states[${k}]`);

/** What the watchdog looks at on each wrench sample. Filled by the arm step; never reallocated. */
export interface WatchdogInputs {
  t_s: number;
  compensated: Float64Array;
  correction: Float64Array;
  impactFlag: boolean;
  impactScore: number;
  /** The torque ratio, not the force ratio, sets the impact score. */
  impactByTorque: boolean;
  jointVelocity: Float64Array;
  jointCount: number;
  /** Whether the non-wrench inputs hold non-finite values (checked where they arrive). */
  jointFinite: boolean;
  poseFinite: boolean;
  /** False when the last zone view came with a non-finite time. */
  zoneFinite: boolean;
  /**
   * Whether the sensor has been tared. Before the first tare the bias is unknown (the held
   * object's weight reads as force), so the correction-band checks are skipped; the raw and
   * untared limits still apply.
   */
  tared: boolean;
  /** Current bias and its change from the start-up tare (sensor frame), from the filter. */
  bias: Float64Array;
  biasChange: Float64Array;
  /** |norm − 1| of the last tool-pose quaternion (0 when none arrived; NaN for a non-finite one). */
  quaternionNormError: number;
  /** The last JointState carried no velocities while the cell requires them. */
  jointVelocityAbsent: boolean;
  /** The partner-stop detector's verdict and its partner-to-own speed ratio. */
  partnerStopped: boolean;
  partnerSpeedRatio: number;
  /** The hold link reports the partner held (only with watchdog.hold_link.enabled). */
  partnerHeld: boolean;
  /** Last arrival time per input (s), NaN when never received. */
  lastSeen: Float64Array;
  /** Which inputs are required (1) or ignored (0), per INPUTS order. */
  required: Uint8Array;
}

/** A WatchdogInputs with nothing wrong and nothing seen, then `fields` on top (set-up time, not per sample). */
export function watchdogInputs(fields: Partial<WatchdogInputs> = {}): WatchdogInputs {
  return {
    t_s: 0,
    compensated: new Float64Array(6),
    correction: new Float64Array(6),
    impactFlag: false,
    impactScore: 0,
    impactByTorque: false,
    jointVelocity: new Float64Array(0),
    jointCount: 0,
    jointFinite: true,
    poseFinite: true,
    zoneFinite: true,
    tared: true,
    bias: new Float64Array(6),
    biasChange: new Float64Array(6),
    quaternionNormError: 0,
    jointVelocityAbsent: false,
    partnerStopped: false,
    partnerSpeedRatio: Number.NaN,
    partnerHeld: false,
    lastSeen: new Float64Array(INPUTS.length).fill(Number.NaN),
    required: new Uint8Array(INPUTS.length),
    ...fields,
  };
}

/** Bounds the tare works within: the untared checks allow the largest bias on top of the tared limits. */
export interface UntaredLimits {
  readonly max_bias_n: number;
  readonly max_bias_nm: number;
}

export class Watchdog {
  private readonly p: WatchdogParams;
  private readonly staleLimit: Float64Array;
  private readonly untaredForceLimit: number;
  private readonly untaredTorqueLimit: number;
  /** Inputs whose arrival was recorded at least once (an input cannot go back to "never seen"). */
  private readonly everSeen = new Uint8Array(INPUTS.length);
  private readonly tripPool: Trip[];
  private readonly firstValue = new Float64Array(MAX_TRIPS);
  private tripCount = 0;
  private readonly seen = new Uint8Array(CHECKS.length);
  private lastT = Number.NEGATIVE_INFINITY;
  private lastBadT = Number.NaN;
  private firstT = Number.NaN;
  /** True while the latched safe hold is in force. */
  held = false;
  /** Seconds every condition has been clear (0 while any fails). */
  clearFor_s = 0;
  /** True until every required input has arrived once; the twist is zero meanwhile (not latched). */
  waitingForInputs = true;

  constructor(p: WatchdogParams, untared: UntaredLimits = { max_bias_n: Number.POSITIVE_INFINITY, max_bias_nm: Number.POSITIVE_INFINITY }) {
    this.p = p;
    this.staleLimit = Float64Array.of(p.stale_after_s.wrench, p.stale_after_s.joint_states, p.stale_after_s.tool_pose, p.stale_after_s.zone_view, p.stale_after_s.hold_link);
    this.untaredForceLimit = p.force_limit_n + untared.max_bias_n;
    this.untaredTorqueLimit = p.torque_limit_nm + untared.max_bias_nm;
    this.tripPool = Array.from({ length: MAX_TRIPS }, () => ({ check: 0, input: '', value: 0, limit: 0, t_s: 0 }));
  }

  /** Current reasons (oldest first); the array is reused, copy it to keep it. */
  get trips(): readonly Trip[] {
    return this.tripPool.slice(0, this.tripCount);
  }
  /** The value trip k had when it tripped (its record's `value` is the worst since). */
  tripFirst(k: number): number {
    return this.firstValue[k]!;
  }

  tripAt(k: number): Trip {
    return this.tripPool[k]!;
  }
  get tripsLength(): number {
    return this.tripCount;
  }

  /**
   * Held for a reason of its own: some trip other than partner_hold and partner_stop. This is
   * what the hold link publishes, so two linked arms never keep each other held for ever.
   */
  get heldForOwnReasons(): boolean {
    if (!this.held) return false;
    for (let k = 0; k < this.tripCount; k++) {
      const c = this.tripPool[k]!.check;
      if (c !== CHECK.partner_hold && c !== CHECK.partner_stop) return true;
    }
    return false;
  }

  /** True when a reset would release the hold now. */
  get readyToRelease(): boolean {
    return this.held && this.clearFor_s >= this.p.release_clear_s;
  }

  private trip(check: number, input: string, value: number, limit: number, t: number): void {
    this.held = true;
    // Never earlier than a dating already made (updateClear dates it on the clock's high-water).
    if (!(this.lastBadT >= t)) this.lastBadT = t;
    if (this.seen[check] === 1) {
      // Keep the first occurrence, but raise the recorded value to the worst seen.
      for (let k = 0; k < this.tripCount; k++) {
        const r = this.tripPool[k]!;
        if (r.check === check && Math.abs(value) > Math.abs(r.value)) {
          r.value = value;
          r.input = input;
          r.limit = limit;
        }
      }
      return;
    }
    this.seen[check] = 1;
    if (this.tripCount >= MAX_TRIPS) return;
    const r = this.tripPool[this.tripCount++]!;
    r.check = check;
    r.input = input;
    r.value = value;
    this.firstValue[this.tripCount - 1] = value;
    r.limit = limit;
    r.t_s = t;
  }

  /** Check the inputs of one sample. Returns true when the twist must be zero. */
  checkInputs(x: WatchdogInputs): boolean {
    const t = x.t_s;
    const p = this.p;
    let bad = false;
    if (!Number.isFinite(t)) {
      this.trip(CHECK.non_finite, 'time', t, 0, this.lastT);
      // No time to date the fault: the clear timer restarts at the next sample with a valid time.
      this.clearFor_s = 0;
      this.lastBadT = Number.NaN;
      this.firstT = Number.NaN;
      return true;
    }
    if (t < this.lastT) {
      this.trip(CHECK.time_backwards, 'time', t - this.lastT, 0, t);
      bad = true;
    } else {
      this.lastT = t;
    }
    // Non-finite values anywhere in the wrench or the other inputs.
    let finite = true;
    for (let k = 0; k < 6; k++) if (!Number.isFinite(x.compensated[k]!)) finite = false;
    if (!finite) {
      this.trip(CHECK.non_finite, 'wrench', Number.NaN, 0, t);
      bad = true;
    }
    if (!x.jointFinite) {
      this.trip(CHECK.non_finite, 'joint_states', Number.NaN, 0, t);
      bad = true;
    }
    if (!x.poseFinite) {
      this.trip(CHECK.non_finite, 'tool_pose', Number.NaN, 0, t);
      bad = true;
    }
    if (!x.zoneFinite) {
      this.trip(CHECK.non_finite, 'zone_view', Number.NaN, 0, t);
      bad = true;
    }
    if (finite) {
      const w = x.compensated;
      const c = x.correction;
      const b = x.bias;
      const d = x.biasChange;
      // Tared force, and the same force referred to the start-up bias (a later tare moves the
      // bias by at most max_change: it must not hide a squeeze either way): the larger counts.
      const f = Math.max(norm3(w[0]!, w[1]!, w[2]!), norm3(w[0]! + d[0]!, w[1]! + d[1]!, w[2]! + d[2]!));
      const tq = Math.max(norm3(w[3]!, w[4]!, w[5]!), norm3(w[3]! + d[3]!, w[4]! + d[4]!, w[5]! + d[5]!));
      // Untared: raw minus the payload model, whatever the tare.
      const fu = norm3(w[0]! + b[0]!, w[1]! + b[1]!, w[2]! + b[2]!);
      const tu = norm3(w[3]! + b[3]!, w[4]! + b[4]!, w[5]! + b[5]!);
      if (f > p.force_limit_n) { this.trip(CHECK.force_raw, 'wrench', f, p.force_limit_n, t); bad = true; }
      if (tq > p.torque_limit_nm) { this.trip(CHECK.torque_raw, 'wrench', tq, p.torque_limit_nm, t); bad = true; }
      if (fu > this.untaredForceLimit) { this.trip(CHECK.force_untared, 'wrench', fu, this.untaredForceLimit, t); bad = true; }
      if (tu > this.untaredTorqueLimit) { this.trip(CHECK.torque_untared, 'wrench', tu, this.untaredTorqueLimit, t); bad = true; }
      if (x.tared) {
        const fc = Math.max(norm3(c[0]!, c[1]!, c[2]!), norm3(c[0]! + d[0]!, c[1]! + d[1]!, c[2]! + d[2]!));
        const tc = Math.max(norm3(c[3]!, c[4]!, c[5]!), norm3(c[3]! + d[3]!, c[4]! + d[4]!, c[5]! + d[5]!));
        if (fc > p.correction_force_limit_n) { this.trip(CHECK.force_correction, 'wrench', fc, p.correction_force_limit_n, t); bad = true; }
        if (tc > p.correction_torque_limit_nm) { this.trip(CHECK.torque_correction, 'wrench', tc, p.correction_torque_limit_nm, t); bad = true; }
      }
      if (x.impactFlag && p.on_impact === 'hold') { this.trip(CHECK.impact, x.impactByTorque ? 'wrench.torque' : 'wrench.force', x.impactScore, 1, t); bad = true; }
    }
    const qe = x.quaternionNormError;
    if (!(qe <= p.quaternion_norm_tolerance)) {
      this.trip(CHECK.quaternion_norm, 'tool_pose', qe, p.quaternion_norm_tolerance, t);
      bad = true;
    }
    if (x.jointVelocityAbsent) {
      this.trip(CHECK.joint_velocity_absent, 'joint_states', 0, 0, t);
      bad = true;
    }
    if (x.partnerStopped) {
      this.trip(CHECK.partner_stop, 'wrench', x.partnerSpeedRatio, p.partner_stop.speed_ratio, t);
      bad = true;
    }
    if (x.partnerHeld) {
      this.trip(CHECK.partner_hold, 'hold_link', 1, 0, t);
      bad = true;
    }
    for (let j = 0; j < x.jointCount; j++) {
      const qd = Math.abs(x.jointVelocity[j]!);
      if (qd > p.joint_velocity_limit_rad_s) {
        this.trip(CHECK.joint_velocity, JOINT_LABELS[j] ?? 'joint_states', qd, p.joint_velocity_limit_rad_s, t);
        bad = true;
      }
    }
    if (this.checkFreshness(t, x.lastSeen, x.required)) bad = true;
    this.updateClear(t, bad);
    return this.held || this.waitingForInputs;
  }

  /**
   * Freshness of every required input at time t: one never seen keeps the arm waiting (not
   * latched); once seen, a gap longer than its limit trips `stale_input`, an arrival later than
   * t + future_tolerance_s trips `time_future` (its age would be negative and never grow), and
   * a non-finite arrival time trips `non_finite`. Sets `waitingForInputs`; true when one tripped.
   */
  private checkFreshness(t: number, lastSeen: Float64Array, required: Uint8Array): boolean {
    let bad = false;
    let waiting = false;
    for (let k = 0; k < INPUTS.length; k++) {
      if (required[k] !== 1) continue;
      const last = lastSeen[k]!;
      if (Number.isNaN(last)) {
        if (this.everSeen[k] === 1) {
          // Seen before and now unknown: the arrival was lost, which is as stale as it gets.
          this.trip(CHECK.stale_input, INPUTS[k]!, Number.POSITIVE_INFINITY, this.staleLimit[k]!, t);
          bad = true;
        } else {
          waiting = true;
        }
        continue;
      }
      this.everSeen[k] = 1;
      if (!Number.isFinite(last)) {
        // An input stamped at infinity would never look old: a non-finite time trips.
        this.trip(CHECK.non_finite, INPUTS[k]!, last, 0, t);
        bad = true;
        continue;
      }
      const age = t - last;
      if (age > this.staleLimit[k]!) {
        this.trip(CHECK.stale_input, INPUTS[k]!, age, this.staleLimit[k]!, t);
        bad = true;
      } else if (-age > this.p.future_tolerance_s) {
        this.trip(CHECK.time_future, INPUTS[k]!, -age, this.p.future_tolerance_s, t);
        bad = true;
      }
    }
    this.waitingForInputs = waiting;
    return bad;
  }

  /**
   * Check the recommended twist and clamp it: zero while held or waiting. A twist above its
   * limit trips the hold (the policy saturates below the limits, so this catches faults).
   */
  checkOutput(t: number, twist: Float64Array): void {
    const p = this.p;
    const lin = Math.sqrt(twist[0]! * twist[0]! + twist[1]! * twist[1]! + twist[2]! * twist[2]!);
    const ang = Math.sqrt(twist[3]! * twist[3]! + twist[4]! * twist[4]! + twist[5]! * twist[5]!);
    let bad = false;
    if (!(lin <= p.linear_speed_limit_m_s)) { this.trip(CHECK.twist_linear, 'recommended_twist', lin, p.linear_speed_limit_m_s, t); bad = true; }
    if (!(ang <= p.angular_speed_limit_rad_s)) { this.trip(CHECK.twist_angular, 'recommended_twist', ang, p.angular_speed_limit_rad_s, t); bad = true; }
    if (bad) this.updateClear(t, true);
    if (this.held || this.waitingForInputs) twist.fill(0);
  }

  /** Ticks without a new wrench sample (live node timer): staleness and the clear timer. */
  tick(t: number, lastSeen: Float64Array, required: Uint8Array): boolean {
    // A non-finite time cannot date anything: it must not reach the clear timer (NaN there would pass the reset check).
    if (!Number.isFinite(t) || t < this.lastT) return this.held || this.waitingForInputs;
    const bad = this.checkFreshness(t, lastSeen, required);
    this.updateClear(t, bad);
    return this.held || this.waitingForInputs;
  }

  private updateClear(t: number, bad: boolean): void {
    if (bad) {
      // On the latest time seen: a sample from the past must not date the fault earlier, nor move
      // back a dating a tick made later (a delayed burst after a stale gap shortened the clear time).
      const at = Math.max(t, this.lastT);
      this.lastBadT = at > this.lastBadT ? at : Number.isNaN(this.lastBadT) ? at : this.lastBadT;
      this.clearFor_s = 0;
    } else {
      if (Number.isNaN(this.firstT)) this.firstT = t;
      this.clearFor_s = Math.max(0, t - (Number.isNaN(this.lastBadT) ? this.firstT : this.lastBadT));
    }
  }

  /**
   * Explicit reset. Releases the hold only when every condition has been clear for
   * `release_clear_s`; otherwise the hold stays and the reason says how long is left.
   */
  requestReset(): { released: boolean; reason: string } {
    if (!this.held) return { released: true, reason: 'not held' };
    if (!(this.clearFor_s >= this.p.release_clear_s)) {
      return { released: false, reason: `conditions clear for ${this.clearFor_s.toFixed(3)} s of the ${this.p.release_clear_s} s required` };
    }
    const partnerStopped = this.seen[CHECK.partner_stop] === 1;
    this.held = false;
    this.tripCount = 0;
    this.seen.fill(0);
    // A stopped partner cannot be seen from here while this arm stands still: released, but say so.
    if (partnerStopped) {
      return { released: true, reason: 'released; partner_stop was a reason: reset the partner first, or this arm drags it for up to watchdog.partner_stop.window_s before it holds again' };
    }
    return { released: true, reason: 'released' };
  }

  snapshot(): WatchdogSnapshot {
    return {
      held: this.held,
      clearFor_s: this.clearFor_s,
      waiting: this.waitingForInputs,
      lastT: this.lastT,
      lastBadT: this.lastBadT,
      firstT: this.firstT,
      seen: Array.from(this.seen),
      everSeen: Array.from(this.everSeen),
      trips: this.trips.map((r) => ({ ...r })),
      tripFirst: Array.from(this.firstValue.subarray(0, this.tripCount)),
    };
  }

  restore(s: WatchdogSnapshot): void {
    this.held = s.held;
    this.clearFor_s = s.clearFor_s;
    this.waitingForInputs = s.waiting;
    this.lastT = s.lastT;
    this.lastBadT = s.lastBadT;
    this.firstT = s.firstT;
    this.seen.set(s.seen);
    this.everSeen.set(s.everSeen);
    this.tripCount = s.trips.length;
    s.trips.forEach((r, k) => {
      Object.assign(this.tripPool[k]!, r);
      this.firstValue[k] = s.tripFirst?.[k] ?? r.value;
    });
  }
}

export interface WatchdogSnapshot {
  held: boolean;
  clearFor_s: number;
  waiting: boolean;
  lastT: number;
  lastBadT: number;
  firstT: number;
  seen: number[];
  everSeen: number[];
  trips: Trip[];
  /** Each trip's value when it tripped (absent in snapshots of older code: then its worst). */
  tripFirst?: number[];
}

function norm3(x: number, y: number, z: number): number {
  return Math.sqrt(x * x + y * y + z * z);
}
