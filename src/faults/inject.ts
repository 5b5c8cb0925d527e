/**
 * Fault injection between a cell and one arm step: `FaultedArm` takes what the cell would feed
 * the arm (on the true, shared clock) and feeds the arm what a faulty cell would deliver (on the
 * arm's own, possibly skewed or jumping clock), and tells the invariant monitor about every
 * call. A wrench that does not arrive is a timer tick, as in the live node.
 *
 * The shells call it exactly like an ArmStep (setJointState, setToolPose, setZoneView, step),
 * so the same injector wraps the kinematic cell here and the MuJoCo episode (src/sim/episode.ts
 * `feed`). Buffers are preallocated; nothing is allocated per sample outside a delayed burst's
 * release.
 */
import { ZONE_FREE, ZONE_OCCUPIED, type ArmOutputs, type ArmStep } from '../core/arm-step.js';
import type { Fault } from './kinds.js';
import type { InvariantMonitor } from './invariants.js';

const MAX_QUEUE = 8192;

export class FaultedArm {
  /** The partner's pipeline died: nothing is fed any more and the driver stops the arm. */
  dead = false;
  private lastNow = 0;
  /** Samples whose wrench was withheld (dropout, delay) or altered. */
  faultedSamples = 0;
  private readonly faults: readonly Fault[];
  private readonly w = new Float64Array(6);
  private readonly stuck = new Float64Array(6);
  private stuckSet = false;
  private readonly jv = new Float64Array(16);
  private readonly zones = new Uint8Array(64);
  // Delayed burst queues (stamp + values).
  private readonly qW = new Float64Array(MAX_QUEUE * 7);
  private nW = 0;
  private readonly qJ = new Float64Array(MAX_QUEUE * 17);
  private nJ = 0;
  private readonly qP = new Float64Array(MAX_QUEUE * 8);
  private nP = 0;

  constructor(
    readonly arm: ArmStep,
    readonly side: 'left' | 'right',
    faults: readonly Fault[],
    readonly monitor: InvariantMonitor | null,
  ) {
    this.faults = faults.filter((f) => f.arm === side);
  }

  private active(kind: Fault['kind'], now: number, stream?: string): Fault | null {
    for (const f of this.faults) {
      if (f.kind === kind && now >= f.start_s && now < f.start_s + f.duration_s && (stream === undefined || f.stream === stream)) return f;
    }
    return null;
  }

  /** The arm's own clock at true time `now`: skew plus any time jump that has happened. */
  clock(now: number): number {
    let t = now;
    for (const f of this.faults) {
      if (f.kind === 'clock_skew' || ((f.kind === 'time_jump_back' || f.kind === 'time_jump_forward') && now >= f.start_s)) t += f.magnitude;
    }
    return t;
  }

  private checkDeath(now: number): boolean {
    if (!this.dead && this.active('partner_death', now)) {
      this.dead = true;
      this.arm.out.twist.fill(0);
    }
    return this.dead;
  }

  /** A delayed burst on `stream` ended: true once at the first sample after it. */
  private burstEnded(now: number, stream: string): boolean {
    for (const f of this.faults) if (f.kind === 'delayed_burst' && f.stream === stream && now >= f.start_s + f.duration_s) return true;
    return false;
  }

  setJointState(now: number, velocity: ArrayLike<number>, count: number): void {
    if (this.checkDeath(now)) return;
    const t = this.clock(now);
    if (this.active('dropout', now, 'joint_states')) return;
    const n = Math.min(count, 16);
    for (let j = 0; j < n; j++) this.jv[j] = velocity[j]!;
    if (this.active('nan_burst', now, 'joint_states')) this.jv.fill(Number.NaN, 0, n);
    if (this.active('delayed_burst', now, 'joint_states')) {
      if (this.nJ < MAX_QUEUE) {
        const b = this.nJ++ * 17;
        this.qJ[b] = t;
        this.qJ[b + 1] = n;
        for (let j = 0; j < n; j++) this.qJ[b + 2 + j] = this.jv[j]!;
      }
      return;
    }
    if (this.nJ > 0 && this.burstEnded(now, 'joint_states')) {
      const v = new Float64Array(16);
      for (let i = 0; i < this.nJ; i++) {
        const b = i * 17;
        const m = this.qJ[b + 1]!;
        for (let j = 0; j < m; j++) v[j] = this.qJ[b + 2 + j]!;
        this.arm.setJointState(this.qJ[b]!, v, m);
        this.monitor?.fedJointState(this.qJ[b]!, v, m);
      }
      this.nJ = 0;
    }
    this.arm.setJointState(t, this.jv, n);
    this.monitor?.fedJointState(t, this.jv, n);
  }

  setToolPose(now: number, x: number, y: number, z: number, qx: number, qy: number, qz: number, qw: number): void {
    if (this.checkDeath(now)) return;
    const t = this.clock(now);
    if (this.active('dropout', now, 'tool_pose')) return;
    if (this.active('nan_burst', now, 'tool_pose')) x = Number.NaN;
    if (this.active('delayed_burst', now, 'tool_pose')) {
      if (this.nP < MAX_QUEUE) this.qP.set([t, x, y, z, qx, qy, qz, qw], this.nP++ * 8);
      return;
    }
    if (this.nP > 0 && this.burstEnded(now, 'tool_pose')) {
      const q = this.qP;
      for (let i = 0; i < this.nP; i++) {
        const b = i * 8;
        this.arm.setToolPose(q[b]!, q[b + 1]!, q[b + 2]!, q[b + 3]!, q[b + 4]!, q[b + 5]!, q[b + 6]!, q[b + 7]!);
        this.monitor?.fedToolPose(q[b]!, q[b + 1]!, q[b + 2]!, q[b + 3]!, q[b + 4]!, q[b + 5]!, q[b + 6]!, q[b + 7]!);
      }
      this.nP = 0;
    }
    this.arm.setToolPose(t, x, y, z, qx, qy, qz, qw);
    this.monitor?.fedToolPose(t, x, y, z, qx, qy, qz, qw);
  }

  setZoneView(now: number, states: ArrayLike<number>): void {
    if (this.checkDeath(now)) return;
    const t = this.clock(now);
    if (this.active('dropout', now, 'zone_view')) return;
    const n = Math.min(states.length, 64);
    for (let z = 0; z < n; z++) this.zones[z] = states[z]!;
    const miss = this.active('area_miss', now);
    if (miss && miss.axis < n && this.zones[miss.axis] === ZONE_OCCUPIED) this.zones[miss.axis] = ZONE_FREE;
    const fa = this.active('area_false_alarm', now);
    if (fa && fa.axis < n && this.zones[fa.axis] === ZONE_FREE) this.zones[fa.axis] = ZONE_OCCUPIED;
    const view = this.zones.subarray(0, n);
    this.arm.setZoneView(t, view);
    this.monitor?.fedZoneView(t);
  }

  /** One wrench sample at true time `now`. */
  step(now: number, wrench: Float64Array): ArmOutputs {
    const arm = this.arm;
    this.lastNow = now;
    if (this.checkDeath(now)) return arm.out;
    const t = this.clock(now);
    const w = this.w;
    w.set(wrench);
    let altered = false;
    const stuck = this.active('stuck_sensor', now);
    if (stuck) {
      if (!this.stuckSet) {
        this.stuck.set(w);
        this.stuckSet = true;
      }
      w.set(this.stuck);
      altered = true;
    }
    for (const f of this.faults) {
      if (now < f.start_s || now >= f.start_s + f.duration_s) {
        if (f.kind === 'payload_slip' && now >= f.start_s + f.duration_s) {
          // The slipped grasp stays where it ended: the load share stays shifted.
          w[2] = w[2]! - f.magnitude;
          w[3] = w[3]! + 0.02 * f.magnitude;
        }
        continue;
      }
      const a = now - f.start_s;
      if (f.kind === 'bias_drift') { w[f.axis] = w[f.axis]! + f.magnitude * a; altered = true; }
      else if (f.kind === 'spike') { w[f.axis] = w[f.axis]! + f.magnitude; altered = true; }
      else if (f.kind === 'payload_slip') {
        const r = a / f.duration_s;
        // A slide with stick-slip ripple: the share of weight on this wrist grows, with jerks.
        w[2] = w[2]! - f.magnitude * r - 0.2 * f.magnitude * Math.sin(40 * a) * (1 - r);
        w[3] = w[3]! + 0.02 * f.magnitude * r;
        altered = true;
      } else if (f.kind === 'nan_burst' && f.stream === 'wrench') { w.fill(Number.NaN); altered = true; }
    }
    if (altered) this.faultedSamples++;
    if (this.active('dropout', now, 'wrench')) {
      this.faultedSamples++;
      const out = arm.tick(t);
      this.monitor?.afterTick(now, t, out);
      return out;
    }
    if (this.active('delayed_burst', now, 'wrench')) {
      this.faultedSamples++;
      if (this.nW < MAX_QUEUE) {
        const b = this.nW++ * 7;
        this.qW[b] = t;
        for (let k = 0; k < 6; k++) this.qW[b + 1 + k] = w[k]!;
      }
      const out = arm.tick(t);
      this.monitor?.afterTick(now, t, out);
      return out;
    }
    if (this.nW > 0) {
      // The delayed samples arrive together, in order, with their own stamps.
      const old = new Float64Array(6);
      for (let i = 0; i < this.nW; i++) {
        const b = i * 7;
        for (let k = 0; k < 6; k++) old[k] = this.qW[b + 1 + k]!;
        const o = arm.step(this.qW[b]!, old);
        this.monitor?.afterStep(now, this.qW[b]!, old, arm, o);
      }
      this.nW = 0;
    }
    const out = arm.step(t, w);
    this.monitor?.afterStep(now, t, w, arm, out);
    return out;
  }

  get watchdog(): ArmStep['watchdog'] {
    return this.arm.watchdog;
  }

  /** A reset request as the shells make it, checked by the monitor at the current true time. */
  requestReset(): { released: boolean; reason: string } {
    if (this.dead) return { released: false, reason: 'the pipeline is dead' };
    const was = this.arm.watchdog.held;
    const r = this.arm.requestReset();
    this.monitor?.afterReset(this.lastNow, was, r.released);
    return r;
  }

  /** The operator presses reset (the monitor checks what it released). */
  reset(now: number): boolean {
    if (this.dead) return false;
    const was = this.arm.watchdog.held;
    const r = this.arm.requestReset();
    this.monitor?.afterReset(now, was, r.released);
    return was && r.released;
  }
}
