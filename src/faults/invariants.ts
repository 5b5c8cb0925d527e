/**
 * The safety invariants of one arm step, checked from outside on every sample.
 *
 * The monitor keeps its own record of what the arm was fed (stamps, values) and derives a
 * deliberately small set of conditions from it that the watchdog must see: a non-finite value
 * or stamp, a stamp earlier than one already fed, a tared force or torque past its limit, a
 * correction-band force or torque past its limit after the tare, a joint speed past its limit,
 * an input older than its timeout. Each is a subset of what the watchdog checks, so the
 * monitor never reports a watchdog that did its job. On those it checks, per sample:
 *
 *  - `held_twist_zero`: while held, the recommended twist is exactly zero;
 *  - `limit_hold`: a limit violation (or a non-finite or backwards input) is held within one
 *    control period of its first sample, and the twist never exceeds its limits;
 *  - `stale_hold`: an input older than its timeout plus one period is held;
 *  - `reset_release`: a reset never releases a hold while a condition still holds or held
 *    within `release_clear_s` (on the latest stamp fed);
 *  - `non_finite_output`: no output the shells publish is ever non-finite.
 *
 * Times: `t` is the stamp the arm was fed (its own clock, which faults may skew or jump),
 * `now` the true time of the sample (monotonic, from the simulation's clock): deadlines and
 * reaction times run on `now`. Per-sample work allocates nothing.
 */
import type { ArmOutputs, ArmStep } from '../core/arm-step.js';
import { INPUT, INPUTS } from '../core/watchdog.js';
import type { ArmConfig } from '../params/config.js';

export const INVARIANTS = ['held_twist_zero', 'limit_hold', 'stale_hold', 'reset_release', 'non_finite_output'] as const;
export type InvariantName = (typeof INVARIANTS)[number];

export interface Violation {
  readonly invariant: InvariantName;
  /** True time of the sample, s. */
  readonly now_s: number;
  /** Stamp fed to the arm, s. */
  readonly t_s: number;
  readonly detail: string;
}

/** Kept violations per monitor (the counts go on). */
const KEEP = 8;
const EPS = 1e-9;

/** Which inputs an ArmStep built with these options requires (mirrors ArmStep's defaults). */
export function requiredInputs(config: ArmConfig, jointCount: number): Uint8Array {
  const r = new Uint8Array(INPUTS.length);
  r[INPUT.wrench] = 1;
  r[INPUT.joint_states] = jointCount > 0 ? 1 : 0;
  r[INPUT.tool_pose] = 1;
  r[INPUT.zone_view] = config.task.zones.length > 0 ? 1 : 0;
  r[INPUT.hold_link] = config.watchdog.hold_link.enabled ? 1 : 0;
  return r;
}

export class InvariantMonitor {
  readonly counts = new Int32Array(INVARIANTS.length);
  readonly violations: Violation[] = [];
  private readonly period: number;
  private readonly stale: Float64Array;
  private readonly required: Uint8Array;
  private readonly w: ArmConfig['watchdog'];
  /** Latest finite stamp fed per input (NaN: never). */
  private readonly lastFed = new Float64Array(INPUTS.length).fill(Number.NaN);
  /** Highest wrench stamp stepped (the watchdog's own clock high-water). */
  private hw = Number.NEGATIVE_INFINITY;
  /** High-water stamp of the last sample with a condition (NaN: none yet). */
  private lastBad = Number.NaN;
  /** The latest joint state / tool pose / zone view carried a non-finite value or stamp (as the step keeps it). */
  private jointNF = false;
  private poseNF = false;
  private zoneNF = false;
  private jointOver = false;
  /** Stamp of the last sample the watchdog's clear timer ran on (NaN: none). */
  private clearT = Number.NaN;
  /** True time of the first unserved limit condition (NaN: none pending). */
  private limitDue = Number.NaN;
  private staleDue = Number.NaN;
  /** Reaction: first time (true) the arm was held at or after `armedAt`. */
  firstHeldAt = Number.NaN;
  private armedAt = Number.POSITIVE_INFINITY;
  samples = 0;

  constructor(readonly label: string, config: ArmConfig, jointCount: number) {
    this.period = 1 / config.wrench_filter.sample_rate_hz;
    const s = config.watchdog.stale_after_s;
    this.stale = Float64Array.of(s.wrench, s.joint_states, s.tool_pose, s.zone_view, s.hold_link);
    this.required = requiredInputs(config, jointCount);
    this.w = config.watchdog;
  }

  get total(): number {
    let n = 0;
    for (let k = 0; k < this.counts.length; k++) n += this.counts[k]!;
    return n;
  }

  /** Start timing a reaction: `firstHeldAt` is the first held sample at or after `now`. */
  armReaction(now: number): void {
    if (now < this.armedAt) {
      this.armedAt = now;
      this.firstHeldAt = Number.NaN;
    }
  }

  private report(k: number, now: number, t: number, detail: string): void {
    this.counts[k]!++;
    if (this.violations.length < KEEP) this.violations.push({ invariant: INVARIANTS[k]!, now_s: now, t_s: t, detail: `${this.label}: ${detail}` });
  }

  private quiet(k: number, t: number): void {
    if (Number.isFinite(t)) {
      const prev = this.lastFed[k]!;
      if (!(prev >= t)) this.lastFed[k] = t;
    }
  }

  private get quietNonFinite(): boolean {
    return this.jointNF || this.poseNF || this.zoneNF;
  }

  // --- What the arm is fed (call alongside the ArmStep call) ----------------------------------
  fedJointState(t: number, velocity: ArrayLike<number>, count: number): void {
    this.quiet(INPUT.joint_states, t);
    let over = false;
    let nf = !Number.isFinite(t);
    for (let j = 0; j < count; j++) {
      const v = velocity[j]!;
      if (!Number.isFinite(v)) nf = true;
      else if (Math.abs(v) > this.w.joint_velocity_limit_rad_s) over = true;
    }
    this.jointOver = over;
    this.jointNF = nf;
  }
  fedToolPose(t: number, x: number, y: number, z: number, qx: number, qy: number, qz: number, qw: number): void {
    this.quiet(INPUT.tool_pose, t);
    this.poseNF = !(Number.isFinite(t) && Number.isFinite(x) && Number.isFinite(y) && Number.isFinite(z) && Number.isFinite(qx) && Number.isFinite(qy) && Number.isFinite(qz) && Number.isFinite(qw));
  }
  fedZoneView(t: number): void {
    this.quiet(INPUT.zone_view, t);
    this.zoneNF = !Number.isFinite(t);
  }
  fedHoldLink(t: number): void {
    this.quiet(INPUT.hold_link, t);
  }

  // --- After the arm ran ----------------------------------------------------------------------
  /** After `arm.step(t, wrench)` at true time `now`. */
  afterStep(now: number, t: number, wrench: Float64Array, arm: ArmStep, out: ArmOutputs): void {
    let limit = false;
    let detail = '';
    let finiteW = true;
    for (let k = 0; k < 6; k++) if (!Number.isFinite(wrench[k]!)) finiteW = false;
    if (!Number.isFinite(t) || !finiteW || this.quietNonFinite) {
      limit = true;
      detail = 'non-finite input';
    }
    if (Number.isFinite(t) && t < this.hw) {
      limit = true;
      detail = 'stamp earlier than one already fed';
    }
    if (finiteW && Number.isFinite(t)) {
      const c = arm.filter.compensated;
      const f = norm3(c[0]!, c[1]!, c[2]!);
      const tq = norm3(c[3]!, c[4]!, c[5]!);
      if (f > this.w.force_limit_n) { limit = true; detail = `force ${f.toFixed(1)} N > ${this.w.force_limit_n} N`; }
      if (tq > this.w.torque_limit_nm) { limit = true; detail = `torque ${tq.toFixed(1)} N·m > ${this.w.torque_limit_nm} N·m`; }
      if (arm.filter.tared) {
        const r = arm.filter.correction;
        const fc = norm3(r[0]!, r[1]!, r[2]!);
        const tc = norm3(r[3]!, r[4]!, r[5]!);
        if (fc > this.w.correction_force_limit_n) { limit = true; detail = `correction force ${fc.toFixed(1)} N > ${this.w.correction_force_limit_n} N`; }
        if (tc > this.w.correction_torque_limit_nm) { limit = true; detail = `correction torque ${tc.toFixed(1)} N·m > ${this.w.correction_torque_limit_nm} N·m`; }
      }
    }
    if (this.jointOver) { limit = true; detail = 'joint speed over its limit'; }
    // The wrench's age is the gap since the previous wrench, as the step sees it.
    const usable = Number.isFinite(t) && t >= this.hw;
    const stale = usable ? this.staleAt(t) : 0;
    // The watchdog dates a condition on its clock's high-water (a sample from the past cannot date it earlier).
    if (limit || stale > 0) this.lastBad = Number.isFinite(t) ? Math.max(t, this.hw) : this.hw;
    if (Number.isFinite(t)) {
      const prev = this.lastFed[INPUT.wrench]!;
      if (!(prev >= t)) this.lastFed[INPUT.wrench] = t;
      if (t > this.hw) this.hw = t;
      this.clearT = t;
    }
    this.finish(now, t, out, limit, detail, stale);
  }

  /** After `arm.tick(t)` (no wrench this sample) at true time `now`. */
  afterTick(now: number, t: number, out: ArmOutputs): void {
    // The watchdog's tick ignores a time that is not finite or behind its clock.
    const usable = Number.isFinite(t) && t >= this.hw;
    const stale = usable ? this.staleAt(t) : 0;
    if (usable) {
      if (stale > 0) this.lastBad = t;
      this.clearT = t;
    }
    this.finish(now, t, out, false, '', stale);
  }

  /** Largest age over its timeout of any required input seen once (0: none stale). */
  private staleAt(t: number): number {
    let worst = 0;
    for (let k = 0; k < INPUTS.length; k++) {
      if (this.required[k] !== 1) continue;
      const last = this.lastFed[k]!;
      if (Number.isNaN(last)) continue;
      const over = t - last - this.stale[k]!;
      if (over > worst) worst = over;
    }
    return worst;
  }

  private finish(now: number, t: number, out: ArmOutputs, limit: boolean, detail: string, staleOver: number): void {
    this.samples++;
    const tw = out.twist;
    if (out.held) {
      if (Number.isNaN(this.firstHeldAt) && now >= this.armedAt) this.firstHeldAt = now;
      for (let k = 0; k < 6; k++) {
        if (tw[k] !== 0) {
          this.report(0, now, t, `held with twist[${k}] = ${tw[k]}`);
          break;
        }
      }
    }
    // The twist itself within its limits (the watchdog clamps it by holding).
    const lin = Math.sqrt(tw[0]! * tw[0]! + tw[1]! * tw[1]! + tw[2]! * tw[2]!);
    const ang = Math.sqrt(tw[3]! * tw[3]! + tw[4]! * tw[4]! + tw[5]! * tw[5]!);
    if (lin > this.w.linear_speed_limit_m_s || ang > this.w.angular_speed_limit_rad_s) this.report(1, now, t, `twist ${lin.toFixed(3)} m/s, ${ang.toFixed(3)} rad/s past its limit`);
    if (limit && Number.isNaN(this.limitDue)) this.limitDue = now;
    if (staleOver > 0 && Number.isNaN(this.staleDue)) this.staleDue = now;
    if (out.held) {
      this.limitDue = Number.NaN;
      this.staleDue = Number.NaN;
    } else {
      if (!Number.isNaN(this.limitDue) && now - this.limitDue >= this.period - EPS) {
        this.report(1, now, t, `not held ${(now - this.limitDue).toFixed(4)} s after ${detail || 'a limit condition'}`);
        this.limitDue = Number.NaN;
      }
      // Stale past its timeout plus one period: held by now (the watchdog trips at the timeout).
      if (staleOver > this.period + EPS) {
        this.report(2, now, t, `an input ${(staleOver + 0).toFixed(4)} s past its timeout and not held`);
        this.staleDue = Number.NaN;
      }
    }
    // Outputs the shells publish.
    let finite = Number.isFinite(out.entropy_nats) && Number.isFinite(out.impactScore);
    for (let k = 0; k < 6 && finite; k++) if (!Number.isFinite(tw[k]!) || !Number.isFinite(out.correction[k]!) || !Number.isFinite(out.impact[k]!)) finite = false;
    for (let k = 0; k < out.belief.length && finite; k++) if (!Number.isFinite(out.belief[k]!)) finite = false;
    for (let k = 0; k < out.hiddenOccupied.length && finite; k++) if (!Number.isFinite(out.hiddenOccupied[k]!)) finite = false;
    if (!finite) this.report(4, now, t, 'a non-finite output (twist, bands, belief, marginals, entropy or impact score)');
  }

  /**
   * Call around `arm.requestReset()`: `wasHeld` before, `released` after. A release is a
   * violation when a condition held within `release_clear_s` of the latest stamp fed.
   */
  afterReset(now: number, wasHeld: boolean, released: boolean): void {
    if (!wasHeld || !released) return;
    if (this.quietNonFinite) {
      this.report(3, now, this.hw, 'released with a non-finite input pending');
      return;
    }
    const at = this.clearT;
    if (!Number.isNaN(this.lastBad) && !(at - this.lastBad >= this.w.release_clear_s - EPS)) {
      this.report(3, now, at, `released ${(at - this.lastBad).toFixed(4)} s after a condition (release_clear_s = ${this.w.release_clear_s} s)`);
    }
  }
}

function norm3(x: number, y: number, z: number): number {
  return Math.sqrt(x * x + y * y + z * z);
}
