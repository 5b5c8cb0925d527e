/**
 * Role scheduling on the shared clock, without messages.
 *
 * - fixed: always the configured role.
 * - alternating: slots of `period_s` on the shared clock (ROS, bag or sim time); this arm
 *   speaks in slots where (slot + phase) is even, so arms with opposite phases hold opposite
 *   roles.
 * - adaptive: slots of `period_s` on the shared clock, shared out by how much each arm has to
 *   say: the arm with n_own private zones (seen by it alone) speaks in n_own of every
 *   n_left + n_right slots, spread evenly; an arm with no private zone only listens. The role
 *   is a function of the clock and the shared task alone, so the two arms' roles are opposite
 *   by construction (no arm's own position estimate enters: two estimates a few millimetres
 *   apart would put both arms in the same role near every decision boundary). Without private
 *   zones it alternates like the alternating scheduler.
 * - lookahead: slots of `period_s` shared out, like adaptive, but only over the private zones
 *   *ahead*: a zone counts from lead_m before its near edge until it is surely passed, read
 *   off a progress estimate both arms compute identically from the shared clock and the task:
 *   the arc length s(u) = speed_fraction * policy.speed_m_s * u, u = t - t0 - start_delay_s,
 *   t0 the start of the slot of the first sample. A zone is surely passed once s(u - m *
 *   detour_s) has passed its far edge by the clearance, m the number of zones (shared ones
 *   too) up to it: the object may have waited at each. So the owner of the only zone ahead
 *   speaks in every slot, two owners with zones ahead share the slots, and with none ahead
 *   the arms alternate on the phase. The count is taken at each slot's start, so a slot's
 *   role never changes inside it. Neither arm's own position estimate, belief or commitments
 *   enter: the two roles are opposite at every instant, provided both arms' first samples
 *   fall in the same slot (the shells start both arms together; in the simulated cell both
 *   start at t = 0).
 *
 * A switch is never made during a hold (the twist is zero then): the role is kept and the
 * switch deferred until the hold is released.
 */
import type { RolesParams } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import { CLEARANCE_M, type TaskModel } from './task-model.js';

export const SPEAKER = 0;
export const LISTENER = 1;
export type Role = typeof SPEAKER | typeof LISTENER;

export class RoleScheduler {
  role: Role;
  slot = 0;
  timeToSwitch_s = -1;
  switchDeferred = false;
  switches = 0;
  private lastSwitchT = Number.NEGATIVE_INFINITY;
  private started = false;
  /** Adaptive: private zones of the left and the right arm (from the shared task). */
  private readonly nLeft: number;
  private readonly nRight: number;
  /** Lookahead: private zones in path order (by far edge): whether each is this arm's. */
  private readonly mine: Uint8Array;
  /**
   * Lookahead, per private zone (same order), times u after the start of the progress clock at
   * which it starts counting as ahead (lead_m before the near edge) and is surely passed (a
   * detour of detour_s at every zone up to it).
   */
  private readonly tOpen: Float64Array;
  private readonly tLate: Float64Array;
  /** Lookahead: the progress estimate's speed (m/s) and the start of its clock (NaN until the first sample). */
  private readonly speed: number;
  private t0 = Number.NaN;
  /** Lookahead: the progress estimate at the last update, m. */
  progress_m = 0;

  constructor(
    readonly p: RolesParams,
    readonly arm: ArmName,
    task: TaskModel,
  ) {
    this.role = p.scheduler === 'fixed' ? (p.fixed_role === 'speaker' ? SPEAKER : LISTENER) : SPEAKER;
    this.nLeft = task.zones.filter((z) => z.observed_by === 'left').length;
    this.nRight = task.zones.filter((z) => z.observed_by === 'right').length;
    // Lookahead: the private zones in path order, from the shared task (nothing for the others).
    const span = new Float64Array(2);
    const la = p.scheduler === 'lookahead' ? p.lookahead : undefined;
    const priv = la === undefined ? [] : task.zones
      .map((z, k) => {
        task.zoneSpan(k, span);
        return { k, near: span[0]!, at: span[1]! + CLEARANCE_M, mine: z.observed_by === arm };
      })
      .filter((z) => task.zones[z.k]!.observed_by !== 'both')
      // Path order; zones are sorted by name in the task, so ties break alike on both arms.
      .sort((a, b) => a.at - b.at || a.k - b.k);
    // Every zone (shared ones too) may cost a detour before a private zone is passed.
    const passAll = la === undefined ? [] : task.zones.map((_, k) => {
      task.zoneSpan(k, span);
      return span[1]! + CLEARANCE_M;
    });
    this.mine = Uint8Array.from(priv.map((z) => (z.mine ? 1 : 0)));
    this.speed = la === undefined ? 1 : la.speed_fraction * task.policy.speed_m_s;
    this.tOpen = Float64Array.from(priv.map((z) => (z.near - la!.lead_m) / this.speed));
    this.tLate = Float64Array.from(priv.map((z) => z.at / this.speed + la!.detour_s * passAll.filter((a) => a <= z.at).length));
  }

  private clockRole(t: number): Role {
    const slot = Math.floor(t / this.p.period_s);
    this.slot = slot;
    this.timeToSwitch_s = (slot + 1) * this.p.period_s - t;
    return ((slot + this.p.phase) & 1) === 0 ? SPEAKER : LISTENER;
  }

  /** Update the role at time t (s, shared clock). `hold` defers any switch. */
  update(t: number, hold: boolean): Role {
    let want: Role;
    switch (this.p.scheduler) {
      case 'fixed':
        this.slot = 0;
        this.timeToSwitch_s = -1;
        return this.role;
      case 'alternating':
        want = this.clockRole(t);
        break;
      case 'adaptive':
        want = this.adaptiveRole(t);
        break;
      case 'lookahead':
        want = this.lookaheadRole(t);
        break;
    }
    if (!this.started) {
      this.started = true;
      this.role = want;
      this.lastSwitchT = t;
      return this.role;
    }
    if (want !== this.role) {
      if (hold) {
        this.switchDeferred = true;
        return this.role;
      }
      this.role = want;
      this.switches++;
      this.lastSwitchT = t;
    }
    this.switchDeferred = false;
    return this.role;
  }

  private adaptiveRole(t: number): Role {
    const total = this.nLeft + this.nRight;
    if (total === 0) return this.clockRole(t);
    const slot = Math.floor(t / this.p.period_s);
    this.slot = slot;
    this.timeToSwitch_s = (slot + 1) * this.p.period_s - t;
    // The left arm speaks in slot k when ceil((k+1) nL / N) > ceil(k nL / N): nL of every N
    // slots, evenly spread (k taken modulo N, so the count never grows large).
    const k = ((slot % total) + total) % total;
    const leftSpeaks = Math.ceil(((k + 1) * this.nLeft) / total) > Math.ceil((k * this.nLeft) / total);
    return leftSpeaks === (this.arm === 'left') ? SPEAKER : LISTENER;
  }

  /**
   * Lookahead: the owner of the first private zone not yet passed by the common progress
   * estimate speaks. `slot` is that zone's index in the task (-1 once all are passed, then the
   * clock's alternation), `timeToSwitch_s` the time until the estimate passes it.
   */
  private lookaheadRole(t: number): Role {
    // A non-finite time leaves the clock unstarted and the role where the clock puts it.
    if (Number.isNaN(this.t0) && Number.isFinite(t)) this.t0 = Math.floor(t / this.p.period_s) * this.p.period_s;
    const period = this.p.period_s;
    const slot = Math.floor(t / period);
    this.slot = slot;
    this.timeToSwitch_s = (slot + 1) * period - t;
    const la = this.p.lookahead;
    // The zones ahead are counted at the start of the slot, so a slot's role never changes inside it.
    const u = Math.max(slot * period, this.t0) - this.t0 - la.start_delay_s;
    this.progress_m = this.speed * Math.max(0, t - this.t0 - la.start_delay_s);
    let nl = 0;
    let nr = 0;
    for (let j = 0; j < this.tOpen.length; j++) {
      if (u >= this.tOpen[j]! && u < this.tLate[j]!) {
        if ((this.mine[j] === 1) === (this.arm === 'left')) nl++;
        else nr++;
      }
    }
    const total = nl + nr;
    if (!(u === u) || total === 0) return ((slot + this.p.phase) & 1) === 0 ? SPEAKER : LISTENER;
    // nl of every nl + nr slots to the left arm, spread evenly (as the adaptive scheduler).
    const k = ((slot % total) + total) % total;
    const leftSpeaks = Math.ceil(((k + 1) * nl) / total) > Math.ceil((k * nl) / total);
    return leftSpeaks === (this.arm === 'left') ? SPEAKER : LISTENER;
  }

  snapshot(): number[] {
    return [this.role, this.slot, this.timeToSwitch_s, this.switchDeferred ? 1 : 0, this.switches, this.lastSwitchT, this.started ? 1 : 0, this.t0, this.progress_m];
  }
  restore(s: readonly number[]): void {
    this.role = s[0] as Role;
    this.slot = s[1]!;
    this.timeToSwitch_s = s[2]!;
    this.switchDeferred = s[3] === 1;
    this.switches = s[4]!;
    this.lastSwitchT = s[5]!;
    this.started = s[6] === 1;
    this.t0 = s[7] ?? Number.NaN;
    this.progress_m = s[8] ?? 0;
  }
}
