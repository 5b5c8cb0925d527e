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
 *
 * A switch is never made during a hold (the twist is zero then): the role is kept and the
 * switch deferred until the hold is released.
 */
import type { RolesParams } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import type { TaskModel } from './task-model.js';

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

  constructor(
    readonly p: RolesParams,
    readonly arm: ArmName,
    task: TaskModel,
  ) {
    this.role = p.scheduler === 'fixed' ? (p.fixed_role === 'speaker' ? SPEAKER : LISTENER) : SPEAKER;
    this.nLeft = task.zones.filter((z) => z.observed_by === 'left').length;
    this.nRight = task.zones.filter((z) => z.observed_by === 'right').length;
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

  snapshot(): number[] {
    return [this.role, this.slot, this.timeToSwitch_s, this.switchDeferred ? 1 : 0, this.switches, this.lastSwitchT, this.started ? 1 : 0];
  }
  restore(s: readonly number[]): void {
    this.role = s[0] as Role;
    this.slot = s[1]!;
    this.timeToSwitch_s = s[2]!;
    this.switchDeferred = s[3] === 1;
    this.switches = s[4]!;
    this.lastSwitchT = s[5]!;
    this.started = s[6] === 1;
  }
}
