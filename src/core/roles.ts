/**
 * Role scheduling on the shared clock, without messages.
 *
 * - fixed: always the configured role.
 * - alternating: slots of `period_s` on the shared clock (ROS, bag or sim time); this arm
 *   speaks in slots where (slot + phase) is even, so arms with opposite phases hold opposite
 *   roles.
 * - adaptive: both arms compute the same assignment from common knowledge only: the arm that
 *   observes the zone nearest ahead of the object speaks (with hysteresis and a minimum
 *   dwell); with no such zone ahead it falls back to the alternating clock.
 *
 * A switch is never made during an impact or a hold: the role is kept and the switch deferred.
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
  /** Adaptive: index of the zone that holds the turn (-1: none, clock fall-back). */
  private turnZone = -1;
  private started = false;

  constructor(
    readonly p: RolesParams,
    readonly arm: ArmName,
    private readonly task: TaskModel,
  ) {
    this.role = p.scheduler === 'fixed' ? (p.fixed_role === 'speaker' ? SPEAKER : LISTENER) : SPEAKER;
  }

  private clockRole(t: number): Role {
    const slot = Math.floor(t / this.p.period_s);
    this.slot = slot;
    this.timeToSwitch_s = (slot + 1) * this.p.period_s - t;
    return ((slot + this.p.phase) & 1) === 0 ? SPEAKER : LISTENER;
  }

  /**
   * Update the role at time t for object position (px, py). `hold` defers any switch.
   */
  update(t: number, px: number, hold: boolean): Role {
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
        want = this.adaptiveRole(t, px);
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

  private adaptiveRole(t: number, px: number): Role {
    const a = this.p.adaptive;
    const best = this.task.nearestAheadPrivate(px);
    let zone = this.turnZone;
    if (zone === -1 || best === -1 || this.task.passed(zone, px)) {
      zone = best;
    } else if (best !== zone && this.task.gapAhead(best, px) + a.hysteresis_m < this.task.gapAhead(zone, px)) {
      zone = best;
    }
    if (zone !== this.turnZone && t - this.lastSwitchT < a.min_dwell_s && this.started) zone = this.turnZone;
    this.turnZone = zone;
    if (zone === -1) return this.clockRole(t);
    this.slot = zone;
    this.timeToSwitch_s = -1;
    return this.task.zones[zone]!.observed_by === this.arm ? SPEAKER : LISTENER;
  }

  snapshot(): number[] {
    return [this.role, this.slot, this.timeToSwitch_s, this.switchDeferred ? 1 : 0, this.switches, this.lastSwitchT, this.turnZone, this.started ? 1 : 0];
  }
  restore(s: readonly number[]): void {
    this.role = s[0] as Role;
    this.slot = s[1]!;
    this.timeToSwitch_s = s[2]!;
    this.switchDeferred = s[3] === 1;
    this.switches = s[4]!;
    this.lastSwitchT = s[5]!;
    this.turnZone = s[6]!;
    this.started = s[7] === 1;
  }
}
