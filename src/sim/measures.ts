/**
 * Measurements of one simulated episode that look at both arms at once (either cell: MuJoCo or
 * kinematic). Fed once per wrench sample after both arms stepped; nothing is allocated per
 * sample.
 *
 * - Belief calibration: at every listener belief update of each arm, one pair (marginal, truth)
 *   per hidden zone, the truth from the world's occupancy (see belief-metrics.ts).
 * - Commitment agreement: the k-th role switch of the pair is evaluated once both arms have made
 *   k switches (they switch on the shared clock, possibly a sample apart). After it the pair
 *   agrees when left.committedHidden = right.committedOwn and right.committedHidden =
 *   left.committedOwn. A disagreement is repaired at the first later evaluated switch where the
 *   pair agrees again (commitments change only at switches); repair time and slots counted from
 *   the switch where it began.
 * - Same role: total time, sampled per wrench sample, with both arms in the same role.
 * - Partner hold: an injected fault (one NaN wrench sample on one arm at a set time) and the time
 *   until the partner's recommended twist is zero and stays zero to the end of the episode.
 */
import type { ArmOutputs, ArmStep } from '../core/arm-step.js';
import { SPEAKER } from '../core/roles.js';
import { CalibrationAccumulator, pooledCalibration, type CalibrationSummary, type CalibrationSums } from './belief-metrics.js';
import type { ArmSide } from './world.js';

import type { InjectHold } from './options.js';

export type { InjectHold } from './options.js';

export interface CommitmentSummary {
  /** Switches of the pair evaluated (the k-th switch of both arms). */
  readonly switches: number;
  /** Evaluated switches after which the pair's commitments differ. */
  readonly disagreeing: number;
  /** disagreeing / switches; null with no switch. */
  readonly rate: number | null;
  /**
   * Evaluated switches where the pair committed at that switch disagrees (the new speaker's
   * committedHidden against the new listener's committedOwn; both pairs when the roles are
   * equal): a disagreement that persists counts at every other switch here, at every switch in
   * `disagreeing`.
   */
  readonly fresh_disagreeing: number;
  readonly fresh_rate: number | null;
  /** Disagreements that began (a switch that disagrees after one that agreed). */
  readonly onsets: number;
  /** Time from the switch where a disagreement began to the switch that repaired it, s. */
  readonly repair_s: { readonly max: number | null; readonly p95: number | null };
  /** The same in evaluated switches (slots). */
  readonly repair_slots_max: number | null;
  /** Disagreements still open at the end of the episode. */
  readonly unrepaired: number;
}

export interface CommitmentSums {
  readonly switches: number;
  readonly disagreeing: number;
  readonly fresh_disagreeing: number;
  readonly onsets: number;
  readonly repairs_s: readonly number[];
  readonly repair_slots: readonly number[];
  readonly unrepaired: number;
}

export interface SameRoleSummary {
  /** Time with both arms in the same role, s (one sample period per sample). */
  readonly total_s: number;
  readonly both_speaker_s: number;
  readonly both_listener_s: number;
  /** total_s over the episode's sampled time. */
  readonly fraction: number;
  /** The episode's sampled time: samples x sample period, s. */
  readonly sampled_s: number;
}

export interface PartnerHoldSummary {
  readonly arm: ArmSide;
  readonly partner: ArmSide;
  /** Time of the NaN sample; null when the episode ended first. */
  readonly injected_at_s: number | null;
  /** Roles at the injection. */
  readonly role_at_injection: 'speaker' | 'listener' | null;
  readonly partner_role_at_injection: 'speaker' | 'listener' | null;
  /** When the faulted arm's watchdog held (first held sample at or after the injection). */
  readonly held_at_s: number | null;
  /** When the partner's watchdog held, if it did. */
  readonly partner_held_at_s: number | null;
  /** Start of the partner's final run of exactly zero twist (to the end); null: it never stopped. */
  readonly partner_stopped_at_s: number | null;
  /** partner_stopped_at_s - injected_at_s; null: never. */
  readonly detection_s: number | null;
  /** How long the episode ran after the partner stopped (how long "stays zero" was watched), s. */
  readonly watched_after_stop_s: number | null;
  /** Object centre: straight-line distance and path length from the injection to the end, m. */
  readonly object_moved_m: number;
  readonly object_path_m: number;
}

export interface EpisodeMeasureSummary {
  readonly calibration: CalibrationSummary;
  readonly calibration_sums: CalibrationSums;
  readonly commitments: CommitmentSummary;
  readonly commitment_sums: CommitmentSums;
  readonly same_role: SameRoleSummary;
  readonly partner_hold: PartnerHoldSummary | null;
}

/** Nearest-rank percentile (common practice); null for an empty list. */
export function percentile(xs: readonly number[], q: number): number | null {
  if (xs.length === 0) return null;
  const s = [...xs].sort((a, b) => a - b);
  const rank = Math.max(1, Math.ceil(q * s.length));
  return s[Math.min(s.length, rank) - 1]!;
}

export function commitmentSummary(all: readonly CommitmentSums[]): CommitmentSummary {
  let switches = 0, disagreeing = 0, fresh = 0, onsets = 0, unrepaired = 0;
  const rep: number[] = [];
  const slots: number[] = [];
  for (const c of all) {
    switches += c.switches;
    disagreeing += c.disagreeing;
    fresh += c.fresh_disagreeing;
    onsets += c.onsets;
    unrepaired += c.unrepaired;
    rep.push(...c.repairs_s);
    slots.push(...c.repair_slots);
  }
  return {
    switches,
    disagreeing,
    rate: switches > 0 ? disagreeing / switches : null,
    fresh_disagreeing: fresh,
    fresh_rate: switches > 0 ? fresh / switches : null,
    onsets,
    repair_s: { max: rep.length ? Math.max(...rep) : null, p95: percentile(rep, 0.95) },
    repair_slots_max: slots.length ? Math.max(...slots) : null,
    unrepaired,
  };
}

const roleName = (r: number): 'speaker' | 'listener' => (r === SPEAKER ? 'speaker' : 'listener');

export class EpisodeMeasures {
  private readonly calib = new CalibrationAccumulator();
  private readonly truth: { left: Uint8Array; right: Uint8Array };
  // Commitments.
  private readonly lastRole = { left: -1, right: -1 };
  private readonly prevRole = { left: -1, right: -1 };
  private readonly nSwitch = { left: 0, right: 0 };
  private evaluated = 0;
  private disagreeing = 0;
  private freshDisagreeing = 0;
  private onsets = 0;
  private openAt = Number.NaN;
  private openK = 0;
  private readonly repairs: number[] = [];
  private readonly repairSlots: number[] = [];
  // Same role.
  private same = 0;
  private bothSpeaker = 0;
  private bothListener = 0;
  private samples = 0;
  // Partner hold.
  private injectedAt = Number.NaN;
  private roleAtInjection = -1;
  private partnerRoleAtInjection = -1;
  private heldAt = Number.NaN;
  private partnerHeldAt = Number.NaN;
  private zeroSince = Number.NaN;
  private lastT = Number.NaN;
  private objX0 = 0;
  private objY0 = 0;
  private objX = 0;
  private objY = 0;
  private path = 0;

  constructor(
    left: ArmStep,
    right: ArmStep,
    occupied: readonly boolean[],
    /** Wrench sample period, s. */
    private readonly period_s: number,
    readonly inject: InjectHold | undefined,
  ) {
    const t = (a: ArmStep) => Uint8Array.from(a.task.hidden, (z) => (occupied[z] ? 1 : 0));
    this.truth = { left: t(left), right: t(right) };
    this.hidden = { left: left.task.hidden, right: right.task.hidden };
  }

  private readonly hidden: { left: Int32Array; right: Int32Array };

  /** Scenario families: zone `zone` (task order) changed state; later belief pairs score against the new truth. */
  zoneChanged(zone: number, occupied: boolean): void {
    for (const s of ['left', 'right'] as const) {
      const b = this.hidden[s].indexOf(zone);
      if (b >= 0) this.truth[s][b] = occupied ? 1 : 0;
    }
  }

  /** Call with each arm's measured wrench before its step: writes the injected NaN sample. */
  wrench(side: ArmSide, t: number, w: Float64Array): void {
    const inj = this.inject;
    if (inj && side === inj.arm && Number.isNaN(this.injectedAt) && t >= inj.t_s - 1e-12) {
      w.fill(Number.NaN);
      this.injectedAt = t;
    }
  }

  /** Call once per sample after both arms stepped, with the object centre (cell frame, m). */
  sample(t: number, l: ArmOutputs, r: ArmOutputs, objX: number, objY: number): void {
    this.samples++;
    this.lastT = t;
    this.prevRole.left = this.lastRole.left;
    this.prevRole.right = this.lastRole.right;
    this.beliefPairs(l, this.truth.left);
    this.beliefPairs(r, this.truth.right);
    if (l.role === r.role) {
      this.same++;
      if (l.role === SPEAKER) this.bothSpeaker++;
      else this.bothListener++;
    }
    this.switchesOf(t, l, r);
    if (this.inject && !Number.isNaN(this.injectedAt)) {
      const x = this.inject.arm === 'left' ? l : r;
      const p = this.inject.arm === 'left' ? r : l;
      if (this.roleAtInjection < 0) {
        // The roles held just before the faulty sample (a hold defers the switch due at it).
        const left = this.inject.arm === 'left';
        const rx = left ? this.prevRole.left : this.prevRole.right;
        const rp = left ? this.prevRole.right : this.prevRole.left;
        this.roleAtInjection = rx >= 0 ? rx : x.role;
        this.partnerRoleAtInjection = rp >= 0 ? rp : p.role;
        this.objX0 = this.objX = objX;
        this.objY0 = this.objY = objY;
      }
      if (x.held && Number.isNaN(this.heldAt)) this.heldAt = t;
      if (p.held && Number.isNaN(this.partnerHeldAt)) this.partnerHeldAt = t;
      const tw = p.twist;
      const zero = tw[0] === 0 && tw[1] === 0 && tw[2] === 0 && tw[3] === 0 && tw[4] === 0 && tw[5] === 0;
      if (!zero) this.zeroSince = Number.NaN;
      else if (Number.isNaN(this.zeroSince)) this.zeroSince = t;
      this.path += Math.hypot(objX - this.objX, objY - this.objY);
      this.objX = objX;
      this.objY = objY;
    }
  }

  private beliefPairs(out: ArmOutputs, truth: Uint8Array): void {
    if (!out.beliefUpdated) return;
    const m = out.hiddenOccupied;
    for (let b = 0; b < truth.length; b++) this.calib.add(m[b]!, truth[b] === 1);
  }

  private switchesOf(t: number, l: ArmOutputs, r: ArmOutputs): void {
    if (this.lastRole.left >= 0 && l.role !== this.lastRole.left) this.nSwitch.left++;
    if (this.lastRole.right >= 0 && r.role !== this.lastRole.right) this.nSwitch.right++;
    this.lastRole.left = l.role;
    this.lastRole.right = r.role;
    const k = Math.min(this.nSwitch.left, this.nSwitch.right);
    if (k <= this.evaluated) return;
    this.evaluated = k;
    const leftPair = l.committedHidden === r.committedOwn;
    const rightPair = r.committedHidden === l.committedOwn;
    const agree = leftPair && rightPair;
    const lSpeaks = l.role === SPEAKER;
    const rSpeaks = r.role === SPEAKER;
    const freshAgree = lSpeaks && !rSpeaks ? leftPair : rSpeaks && !lSpeaks ? rightPair : agree;
    if (!freshAgree) this.freshDisagreeing++;
    if (!agree) {
      this.disagreeing++;
      if (Number.isNaN(this.openAt)) {
        this.openAt = t;
        this.openK = k;
        this.onsets++;
      }
    } else if (!Number.isNaN(this.openAt)) {
      this.repairs.push(t - this.openAt);
      this.repairSlots.push(k - this.openK);
      this.openAt = Number.NaN;
    }
  }

  finish(): EpisodeMeasureSummary {
    const commitment_sums: CommitmentSums = {
      switches: this.evaluated,
      disagreeing: this.disagreeing,
      fresh_disagreeing: this.freshDisagreeing,
      onsets: this.onsets,
      repairs_s: [...this.repairs],
      repair_slots: [...this.repairSlots],
      unrepaired: Number.isNaN(this.openAt) ? 0 : 1,
    };
    const calibration_sums = this.calib.sums();
    const dt = this.period_s;
    const same_role: SameRoleSummary = {
      total_s: this.same * dt,
      both_speaker_s: this.bothSpeaker * dt,
      both_listener_s: this.bothListener * dt,
      fraction: this.samples > 0 ? this.same / this.samples : 0,
      sampled_s: this.samples * dt,
    };
    let partner_hold: PartnerHoldSummary | null = null;
    if (this.inject) {
      const inj = this.inject;
      const injected = !Number.isNaN(this.injectedAt);
      const stopped = injected && !Number.isNaN(this.zeroSince);
      const nn = (v: number) => (Number.isNaN(v) ? null : v);
      partner_hold = {
        arm: inj.arm,
        partner: inj.arm === 'left' ? 'right' : 'left',
        injected_at_s: nn(this.injectedAt),
        role_at_injection: this.roleAtInjection >= 0 ? roleName(this.roleAtInjection) : null,
        partner_role_at_injection: this.partnerRoleAtInjection >= 0 ? roleName(this.partnerRoleAtInjection) : null,
        held_at_s: nn(this.heldAt),
        partner_held_at_s: nn(this.partnerHeldAt),
        partner_stopped_at_s: stopped ? this.zeroSince : null,
        detection_s: stopped ? this.zeroSince - this.injectedAt : null,
        watched_after_stop_s: stopped ? this.lastT - this.zeroSince : null,
        object_moved_m: injected ? Math.hypot(this.objX - this.objX0, this.objY - this.objY0) : 0,
        object_path_m: this.path,
      };
    }
    return {
      calibration: pooledCalibration([calibration_sums]),
      calibration_sums,
      commitments: commitmentSummary([commitment_sums]),
      commitment_sums,
      same_role,
      partner_hold,
    };
  }
}
