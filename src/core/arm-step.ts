/**
 * The arm step: one call per wrench sample composing
 *   wrench filter -> watchdog (inputs) -> roles -> belief -> policy -> watchdog (output).
 *
 * Pure and deterministic: time comes in with each sample, configuration once at
 * construction. The live node, bag replay and the simulated cell all drive this class.
 * Nothing is allocated per sample; outputs live in one reused object.
 *
 * Frames: the recommended twist and the task geometry are in the cell frame (x from the pick
 * stand to the fixture, z up, REP 103); the wrench is in the sensor frame, rotated into the
 * cell frame with the tool orientation for inference.
 */
import type { ArmConfig } from '../params/config.js';
import { WrenchFilter, type WrenchFilterConfig } from './filter/index.js';
import { Belief } from './belief.js';
import { LISTENER, RoleScheduler, SPEAKER, type Role } from './roles.js';
import { SubsetTable, TaskModel } from './task-model.js';
import { INPUT, INPUTS, Watchdog, type InputName, type WatchdogInputs, type WatchdogSnapshot } from './watchdog.js';

/** Zone states as in antiphon/msg/ZoneView. */
export const ZONE_FREE = 0;
export const ZONE_OCCUPIED = 1;
export const ZONE_UNKNOWN = 2;

export interface ArmStepOptions {
  /** Joints reported in JointState (0 when no joint states are fed). */
  readonly jointCount?: number;
  /** Which inputs must be fresh; defaults: wrench, tool_pose, zone_view, and joint_states when jointCount > 0. */
  readonly required?: Partial<Record<InputName, boolean>>;
}

/** Everything one step produces. One object, overwritten each sample. */
export interface ArmOutputs {
  t_s: number;
  role: Role;
  slot: number;
  timeToSwitch_s: number;
  switchDeferred: boolean;
  /** Probability per hypothesis over the hidden zones (bit j of the index: hidden zone j occupied). */
  readonly belief: Float64Array;
  /** Marginal probability that each hidden zone is occupied. */
  readonly hiddenOccupied: Float64Array;
  entropy_nats: number;
  mostLikely: number;
  beliefUpdated: boolean;
  /** Recommended twist (vx, vy, vz, wx, wy, wz) in the cell frame; exactly zero while held. */
  readonly twist: Float64Array;
  /** Correction-band and impact-band wrench (sensor frame). */
  readonly correction: Float64Array;
  readonly impact: Float64Array;
  impactFlag: boolean;
  impactScore: number;
  held: boolean;
  /** Not latched: waiting for the first samples of every input or for the tare. */
  inhibited: boolean;
  tared: boolean;
  /** Object centre estimated from this arm's tool pose (cell frame). */
  objectX: number;
  objectY: number;
  /**
   * Common knowledge committed at the last role switches, as zone-index bit masks (bit z:
   * zone z committed occupied). `committedHidden`: the partner's zones this arm committed when
   * it turned speaker; `committedOwn`: this arm's zones it holds the partner committed (from
   * the replica) when it turned listener. Across the two arms, left.committedHidden should equal
   * right.committedOwn and vice versa; a difference is a disagreeing commitment.
   */
  committedHidden: number;
  committedOwn: number;
}

export interface ArmStepSnapshot {
  filter: Float64Array;
  watchdog: WatchdogSnapshot;
  roles: number[];
  belief: Float64Array;
  replica: Float64Array;
  numbers: Float64Array;
  lastSeen: Float64Array;
  joint: Float64Array;
  pose: Float64Array;
  zones: Uint8Array;
}

export class ArmStep {
  readonly config: ArmConfig;
  readonly task: TaskModel;
  readonly filter: WrenchFilter;
  readonly watchdog: Watchdog;
  readonly roles: RoleScheduler;
  readonly belief: Belief;
  /**
   * Replica of the partner's belief about this arm's own zones, reproduced from this arm's
   * own speaking actions (what the partner's listener update would conclude from them).
   */
  readonly replica: Belief;
  readonly out: ArmOutputs;
  readonly hypotheses: number;

  // Latest inputs.
  private readonly jointVel: Float64Array;
  private jointCount: number;
  private jointFinite = true;
  private poseFinite = true;
  private zoneFinite = true;
  private readonly pose = Float64Array.of(0, 0, 0, 0, 0, 0, 1);
  private readonly zoneState: Uint8Array;
  private readonly lastSeen = new Float64Array(INPUTS.length).fill(Number.NaN);
  private readonly required = new Uint8Array(INPUTS.length);
  private readonly wdIn: WatchdogInputs;

  // Decimation of belief and policy.
  private readonly beliefEvery: number;
  private readonly policyEvery: number;
  private beliefCount = 0;
  private policyCount = 0;
  private accFx = 0;
  private accFy = 0;
  private accVx = 0;
  private accVy = 0;
  private windowClean = true;
  private windowRole = -1;
  // Policy state.
  private targetVx = 0;
  private targetVy = 0;
  private cmdVx = 0;
  private cmdVy = 0;
  private lastT = Number.NaN;
  private lastRole = -1;
  /**
   * Common knowledge, committed at role switches on the shared clock:
   * - committedHidden: partner-private zones this arm learned as listener (occupied mask),
   *   committed when it turns speaker; the partner reproduces it from its replica.
   * - committedOwn: this arm's zones the partner learned (from the replica), committed when
   *   this arm turns listener; the partner's speaking uses exactly that knowledge.
   */
  private committedHidden = 0;
  private committedOwn = 0;

  // Scratch, preallocated.
  private readonly loglik: Float64Array;
  private readonly v2 = new Float64Array(2);
  private readonly obj = new Float64Array(2);
  private readonly rawFinite = new Float64Array(6);
  private readonly marg: Float64Array;
  private readonly hiddenTable: SubsetTable;
  private readonly ownTable: SubsetTable;

  constructor(config: ArmConfig, options: ArmStepOptions = {}) {
    this.config = config;
    this.task = new TaskModel(config.task, config.policy, config.arm);
    this.filter = new WrenchFilter(config.wrench_filter as unknown as WrenchFilterConfig);
    this.watchdog = new Watchdog(config.watchdog);
    this.roles = new RoleScheduler(config.roles, config.arm, this.task);
    this.hypotheses = 1 << this.task.hidden.length;
    this.belief = new Belief(this.hypotheses);
    this.replica = new Belief(1 << this.task.own.length);
    this.loglik = new Float64Array(Math.max(this.hypotheses, this.replica.n));
    this.marg = new Float64Array(Math.max(this.task.hidden.length, this.task.own.length, 1));
    this.hiddenTable = new SubsetTable(this.task.hidden.length);
    this.ownTable = new SubsetTable(this.task.own.length);
    this.jointCount = options.jointCount ?? 0;
    this.jointVel = new Float64Array(Math.max(64, this.jointCount));
    this.zoneState = new Uint8Array(this.task.n).fill(ZONE_UNKNOWN);
    const req = options.required ?? {};
    this.required[INPUT.wrench] = req.wrench === false ? 0 : 1;
    this.required[INPUT.joint_states] = (req.joint_states ?? this.jointCount > 0) ? 1 : 0;
    this.required[INPUT.tool_pose] = req.tool_pose === false ? 0 : 1;
    this.required[INPUT.zone_view] = (req.zone_view ?? this.task.n > 0) ? 1 : 0;
    const fs = config.wrench_filter.sample_rate_hz;
    this.beliefEvery = Math.max(1, Math.round(fs / config.belief.update_rate_hz));
    this.policyEvery = Math.max(1, Math.round(fs / config.policy.update_rate_hz));
    // Stagger the policy update half a period after the belief update: a lower worst case per sample.
    this.policyCount = Math.floor(this.policyEvery / 2);
    this.wdIn = {
      t_s: 0,
      compensated: this.filter.compensated,
      correction: this.filter.correction,
      impactFlag: false,
      impactScore: 0,
      jointVelocity: this.jointVel,
      jointCount: this.jointCount,
      jointFinite: true,
      poseFinite: true,
      zoneFinite: true,
      lastSeen: this.lastSeen,
      required: this.required,
    };
    this.out = {
      t_s: 0,
      role: this.roles.role,
      slot: 0,
      timeToSwitch_s: -1,
      switchDeferred: false,
      belief: this.belief.p,
      hiddenOccupied: new Float64Array(this.task.hidden.length),
      entropy_nats: this.belief.entropy,
      mostLikely: 0,
      beliefUpdated: false,
      twist: new Float64Array(6),
      correction: this.filter.correction,
      impact: this.filter.impact,
      impactFlag: false,
      impactScore: 0,
      held: false,
      inhibited: true,
      tared: false,
      objectX: 0,
      objectY: 0,
      committedHidden: 0,
      committedOwn: 0,
    };
    this.belief.marginals(this.task.hidden.length, this.out.hiddenOccupied);
  }

  /** Latest joint velocities (rad/s). */
  setJointState(t: number, velocity: ArrayLike<number>, count: number): void {
    const n = Math.min(count, this.jointVel.length);
    let finite = Number.isFinite(t);
    for (let j = 0; j < n; j++) {
      const v = velocity[j]!;
      this.jointVel[j] = v;
      if (!Number.isFinite(v)) finite = false;
    }
    this.jointCount = n;
    this.wdIn.jointCount = n;
    this.jointFinite = finite;
    this.lastSeen[INPUT.joint_states] = t;
  }

  /** Latest tool pose: position (m) and orientation quaternion in the cell frame. */
  setToolPose(t: number, x: number, y: number, z: number, qx: number, qy: number, qz: number, qw: number): void {
    const p = this.pose;
    p[0] = x; p[1] = y; p[2] = z; p[3] = qx; p[4] = qy; p[5] = qz; p[6] = qw;
    let finite = Number.isFinite(t);
    for (let k = 0; k < 7; k++) if (!Number.isFinite(p[k]!)) finite = false;
    this.poseFinite = finite;
    if (finite) this.filter.setOrientation(qx, qy, qz, qw);
    this.lastSeen[INPUT.tool_pose] = t;
  }

  /** What this arm's own area sensor reports, one state per zone in task order. */
  setZoneView(t: number, states: ArrayLike<number>): void {
    for (let z = 0; z < this.task.n; z++) {
      // Anything but exactly FREE or OCCUPIED is UNKNOWN (a Uint8Array would turn NaN or 256 into FREE).
      const v = states[z];
      this.zoneState[z] = v === ZONE_FREE || v === ZONE_OCCUPIED ? v : ZONE_UNKNOWN;
    }
    this.lastSeen[INPUT.zone_view] = t;
    this.zoneFinite = Number.isFinite(t);
  }

  requestTare(): void {
    this.filter.requestTare();
  }

  requestReset(): { released: boolean; reason: string } {
    return this.watchdog.requestReset();
  }

  /** Live-node timer tick with no new wrench: staleness and the clear timer; twist zero if held. */
  tick(t: number): ArmOutputs {
    const stop = this.watchdog.tick(t, this.lastSeen, this.required);
    if (stop) this.stopTwist();
    this.out.held = this.watchdog.held;
    return this.out;
  }

  /** One wrench sample (sensor frame, N and N*m) at time t (s, shared clock). */
  step(t: number, wrench: Float64Array): ArmOutputs {
    const out = this.out;
    let finite = true;
    for (let k = 0; k < 6; k++) {
      const v = wrench[k]!;
      this.rawFinite[k] = v;
      if (!Number.isFinite(v)) finite = false;
    }
    if (finite) this.filter.step(wrench);
    const f = this.filter;
    const wd = this.wdIn;
    wd.t_s = t;
    wd.impactFlag = f.impactFlag;
    wd.impactScore = f.impactScore;
    wd.jointFinite = this.jointFinite;
    wd.poseFinite = this.poseFinite;
    wd.zoneFinite = this.zoneFinite;
    // A non-finite raw sample must trip even though the filter skipped it.
    wd.compensated = finite ? f.compensated : this.rawFinite;
    let stop = this.watchdog.checkInputs(wd);
    // Only after the check: it sees the wrench's age as the gap since the previous sample, which
    // replay and the simulated cell (no timer tick) would otherwise never see.
    this.lastSeen[INPUT.wrench] = t;
    stop = stop || !f.tared;
    const dt = Number.isNaN(this.lastT) ? 0 : Math.min(Math.max(t - this.lastT, 0), 0.1);
    if (t >= this.lastT || Number.isNaN(this.lastT)) this.lastT = t;

    // Object position from this arm's own tool pose.
    this.task.objectFromTool(this.config.arm, this.pose[0]!, this.pose[1]!, this.obj);
    const px = this.obj[0]!;
    const py = this.obj[1]!;
    const role = this.roles.update(t, px, this.watchdog.held || f.impactFlag);
    if (role !== this.lastRole) {
      this.commitAtSwitch(role);
      this.lastRole = role;
    }

    // Belief: accumulate the correction force (cell frame) and this arm's own command.
    this.accumulate();
    if (this.beliefCount === 0) this.windowRole = role;
    if (role !== this.windowRole || f.impactFlag || this.watchdog.held || !f.tared || !finite) this.windowClean = false;
    out.beliefUpdated = false;
    if (++this.beliefCount >= this.beliefEvery) {
      if (this.windowClean) {
        if (role === LISTENER && this.task.hidden.length > 0) {
          this.updateBelief(px, py);
          out.beliefUpdated = true;
        } else if (role === SPEAKER && this.task.own.length > 0) {
          this.updateReplica(px, py);
        }
      }
      this.beliefCount = 0;
      this.accFx = this.accFy = this.accVx = this.accVy = 0;
      this.windowClean = true;
    }

    // Policy at its own rate; the command follows the target within the acceleration limit.
    if (++this.policyCount >= this.policyEvery) {
      this.policyCount = 0;
      this.updateTarget(role, px, py);
    }
    const dv = this.config.policy.accel_limit_m_s2 * dt;
    const ex = this.targetVx - this.cmdVx;
    const ey = this.targetVy - this.cmdVy;
    const e = Math.sqrt(ex * ex + ey * ey);
    if (e <= dv) {
      this.cmdVx = this.targetVx;
      this.cmdVy = this.targetVy;
    } else if (e > 0) {
      this.cmdVx += (ex * dv) / e;
      this.cmdVy += (ey * dv) / e;
    }
    const tw = out.twist;
    tw[0] = this.cmdVx;
    tw[1] = this.cmdVy;
    tw[2] = tw[3] = tw[4] = tw[5] = 0;
    this.watchdog.checkOutput(t, tw);
    if (stop || this.watchdog.held) this.stopTwist();

    out.t_s = t;
    out.role = role;
    out.slot = this.roles.slot;
    out.timeToSwitch_s = this.roles.timeToSwitch_s;
    out.switchDeferred = this.roles.switchDeferred;
    out.entropy_nats = this.belief.entropy;
    out.mostLikely = this.belief.mostLikely;
    out.impactFlag = f.impactFlag;
    out.impactScore = f.impactScore;
    out.held = this.watchdog.held;
    out.inhibited = !this.watchdog.held && stop;
    out.tared = f.tared;
    out.objectX = px;
    out.objectY = py;
    out.committedHidden = this.committedHidden;
    out.committedOwn = this.committedOwn;
    return out;
  }

  private stopTwist(): void {
    this.out.twist.fill(0);
    this.cmdVx = this.cmdVy = 0;
  }

  private accumulate(): void {
    const c = this.filter.correction;
    const q = this.pose;
    const qx = q[3]!, qy = q[4]!, qz = q[5]!, qw = q[6]!;
    const fx = c[0]!, fy = c[1]!, fz = c[2]!;
    // Rotate the sensor-frame force into the cell frame: f' = R(q) f.
    const r00 = 1 - 2 * (qy * qy + qz * qz), r01 = 2 * (qx * qy - qz * qw), r02 = 2 * (qx * qz + qy * qw);
    const r10 = 2 * (qx * qy + qz * qw), r11 = 1 - 2 * (qx * qx + qz * qz), r12 = 2 * (qy * qz - qx * qw);
    this.accFx += r00 * fx + r01 * fy + r02 * fz;
    this.accFy += r10 * fx + r11 * fy + r12 * fz;
    // This arm's own command of the previous sample (equal to the published twist).
    this.accVx += this.cmdVx;
    this.accVy += this.cmdVy;
  }

  /** Mask of observed zones currently occupied (unknown counts as occupied: the cautious reading). */
  private observedMask(indices: Int32Array): number {
    let m = 0;
    for (let k = 0; k < indices.length; k++) {
      const z = indices[k]!;
      if (this.zoneState[z] !== ZONE_FREE) m |= 1 << z;
    }
    return m;
  }

  /**
   * The speaker's legible velocity for private hypothesis `hyp` of a table tabulated over
   * the speaker's private zones (with what it knows as the base); `mean` is its velocity
   * averaged over all those hypotheses (what an uninformed listener expects). Writes v2.
   */
  private legible(table: SubsetTable, hyp: number, meanX: number, meanY: number): void {
    this.task.velocityOf(table, hyp, this.v2);
    const lam = this.config.policy.legibility_gain;
    let vx = this.v2[0]! + lam * (this.v2[0]! - meanX);
    let vy = this.v2[1]! + lam * (this.v2[1]! - meanY);
    const s = Math.sqrt(vx * vx + vy * vy);
    const vmax = this.config.policy.speed_m_s;
    if (s > vmax) {
      vx *= vmax / s;
      vy *= vmax / s;
    }
    this.v2[0] = vx;
    this.v2[1] = vy;
  }

  /** Mean velocity over every hypothesis of a table. Writes v2. */
  private meanOver(table: SubsetTable): void {
    const n = table.size;
    let sx = 0, sy = 0;
    for (let h = 0; h < n; h++) {
      this.task.velocityOf(table, h, this.v2);
      sx += this.v2[0]!;
      sy += this.v2[1]!;
    }
    this.v2[0] = sx / n;
    this.v2[1] = sy / n;
  }

  private updateBelief(px: number, py: number): void {
    const task = this.task;
    task.prepare(px, py);
    const n = this.beliefEvery;
    const fx = this.accFx / n, fy = this.accFy / n, vx = this.accVx / n, vy = this.accVy / n;
    const c = this.config.coupling.damping_n_s_m;
    const inv2s2 = 1 / (2 * this.config.belief.noise_force_n ** 2);
    // The partner (speaker) knows the shared zones as this arm sees them, its own (our hidden)
    // zones, and what it learned of ours in its last listening slot (reproduced here).
    const known = this.observedMask(task.shared) | this.committedOwn;
    task.tabulate(task.hidden, known, this.hiddenTable);
    this.meanOver(this.hiddenTable);
    const mx = this.v2[0]!, my = this.v2[1]!;
    for (let h = 0; h < this.hypotheses; h++) {
      this.legible(this.hiddenTable, h, mx, my);
      const rx = fx - c * (this.v2[0]! - vx);
      const ry = fy - c * (this.v2[1]! - vy);
      this.loglik[h] = -(rx * rx + ry * ry) * inv2s2;
    }
    this.belief.update(this.loglik, this.config.belief.forgetting);
    this.belief.marginals(task.hidden.length, this.out.hiddenOccupied);
  }

  /**
   * The partner's listener update, reproduced: it feels f = c (v_own - v_partner) + noise and
   * compares with c (speaker policy(h) - v_partner), so its expected log-likelihood of our
   * private hypothesis h is -c^2 |v_own - policy(h)|^2 / (2 sigma^2).
   */
  private updateReplica(px: number, py: number): void {
    const task = this.task;
    task.prepare(px, py);
    const n = this.beliefEvery;
    const vx = this.accVx / n, vy = this.accVy / n;
    const c = this.config.coupling.damping_n_s_m;
    const inv2s2 = 1 / (2 * this.config.belief.noise_force_n ** 2);
    const known = this.observedMask(task.shared) | this.committedHidden;
    task.tabulate(task.own, known, this.ownTable);
    this.meanOver(this.ownTable);
    const mx = this.v2[0]!, my = this.v2[1]!;
    for (let h = 0; h < this.replica.n; h++) {
      this.legible(this.ownTable, h, mx, my);
      const rx = c * (vx - this.v2[0]!);
      const ry = c * (vy - this.v2[1]!);
      this.loglik[h] = -(rx * rx + ry * ry) * inv2s2;
    }
    this.replica.update(this.loglik, this.config.belief.forgetting);
  }

  /** Commit what was learned into common knowledge when the role changes. */
  private commitAtSwitch(role: Role): void {
    const th = this.config.belief.commit_probability;
    if (role === SPEAKER) {
      // Turning speaker: what I inferred of the partner's zones while listening.
      this.belief.marginals(this.task.hidden.length, this.marg);
      this.committedHidden = 0;
      for (let b = 0; b < this.task.hidden.length; b++) if (this.marg[b]! >= th) this.committedHidden |= 1 << this.task.hidden[b]!;
    } else {
      // Turning listener: what the partner inferred of my zones while I spoke.
      this.replica.marginals(this.task.own.length, this.marg);
      this.committedOwn = 0;
      for (let b = 0; b < this.task.own.length; b++) if (this.marg[b]! >= th) this.committedOwn |= 1 << this.task.own[b]!;
    }
  }

  private updateTarget(role: Role, px: number, py: number): void {
    const task = this.task;
    task.prepare(px, py);
    const shared = this.observedMask(task.shared);
    const own = this.observedMask(task.own);
    if (role === SPEAKER) {
      // Act on my own view and common knowledge only; exaggerate what tells my view from
      // the alternatives the partner still holds.
      const known = shared | this.committedHidden;
      task.tabulate(task.own, known, this.ownTable);
      this.meanOver(this.ownTable);
      const mx = this.v2[0]!, my = this.v2[1]!;
      let hyp = 0;
      for (let b = 0; b < task.own.length; b++) if ((own >>> task.own[b]!) & 1) hyp |= 1 << b;
      this.legible(this.ownTable, hyp, mx, my);
      this.targetVx = this.v2[0]!;
      this.targetVy = this.v2[1]!;
      return;
    }
    // Listener: the centralized policy in expectation over the belief, slowed while the
    // hypotheses it still holds disagree about what to do (uncertainty that matters here).
    let sx = 0, sy = 0, sxx = 0;
    const p = this.belief.p;
    task.tabulate(task.hidden, shared | own, this.hiddenTable);
    for (let h = 0; h < this.hypotheses; h++) {
      task.velocityOf(this.hiddenTable, h, this.v2);
      const ph = p[h]!;
      sx += ph * this.v2[0]!;
      sy += ph * this.v2[1]!;
      sxx += ph * (this.v2[0]! * this.v2[0]! + this.v2[1]! * this.v2[1]!);
    }
    const spread = Math.sqrt(Math.max(0, sxx - sx * sx - sy * sy));
    const floor = this.config.policy.confidence_floor;
    const conf = Math.max(0, 1 - spread / this.config.policy.speed_m_s);
    const scale = floor + (1 - floor) * conf;
    this.targetVx = sx * scale;
    this.targetVy = sy * scale;
  }

  snapshot(): ArmStepSnapshot {
    return {
      filter: this.filter.snapshot(),
      watchdog: this.watchdog.snapshot(),
      roles: this.roles.snapshot(),
      belief: this.belief.snapshot(),
      replica: this.replica.snapshot(),
      numbers: Float64Array.of(this.beliefCount, this.policyCount, this.accFx, this.accFy, this.accVx, this.accVy, this.windowClean ? 1 : 0,
        this.targetVx, this.targetVy, this.cmdVx, this.cmdVy, this.lastT, this.jointCount, this.jointFinite ? 1 : 0, this.poseFinite ? 1 : 0, this.zoneFinite ? 1 : 0,
        this.lastRole, this.committedHidden, this.committedOwn, this.windowRole),
      lastSeen: Float64Array.from(this.lastSeen),
      joint: Float64Array.from(this.jointVel),
      pose: Float64Array.from(this.pose),
      zones: Uint8Array.from(this.zoneState),
    };
  }

  restore(s: ArmStepSnapshot): void {
    this.filter.restore(s.filter);
    this.watchdog.restore(s.watchdog);
    this.roles.restore(s.roles);
    this.belief.restore(s.belief);
    this.replica.restore(s.replica);
    const n = s.numbers;
    [this.beliefCount, this.policyCount, this.accFx, this.accFy, this.accVx, this.accVy] = [n[0]!, n[1]!, n[2]!, n[3]!, n[4]!, n[5]!];
    this.windowClean = n[6] === 1;
    [this.targetVx, this.targetVy, this.cmdVx, this.cmdVy, this.lastT] = [n[7]!, n[8]!, n[9]!, n[10]!, n[11]!];
    this.jointCount = n[12]!;
    this.wdIn.jointCount = this.jointCount;
    this.jointFinite = n[13] === 1;
    this.poseFinite = n[14] === 1;
    this.zoneFinite = n[15] === 1;
    [this.lastRole, this.committedHidden, this.committedOwn, this.windowRole] = [n[16]!, n[17]!, n[18]!, n[19]!];
    this.lastSeen.set(s.lastSeen);
    this.jointVel.set(s.joint);
    this.pose.set(s.pose);
    this.zoneState.set(s.zones);
  }

  /**
   * Run-time parameter change, at a sample boundary (call it between two steps): from the next
   * sample on, every component works with `next`, and every piece of state carries over (the
   * filter's history and bias, the hold and its trips, the roles, both beliefs, the policy).
   * It builds the components afresh from `next` and restores a snapshot of the current state
   * into them, so it works whatever a component copies out of its configuration at
   * construction. Only keys that change no buffer size or filter design may differ (the ROS
   * adapter declares all others read-only: src/ros/live-params.ts); `next` is checked against
   * the schema by the caller. Allocates: not for the hot path.
   */
  applyParams(next: ArmConfig): void {
    const req = this.required;
    const required: Partial<Record<InputName, boolean>> = {};
    INPUTS.forEach((name, k) => (required[name] = req[k] === 1));
    const fresh = new ArmStep(next, { jointCount: this.jointCount, required });
    fresh.restore(this.snapshot());
    const oldOut = this.out as unknown as Record<string, unknown>;
    const newOut = fresh.out as unknown as Record<string, unknown>;
    for (const key of Object.keys(oldOut)) {
      const a = oldOut[key];
      const b = newOut[key];
      if (a instanceof Float64Array && b instanceof Float64Array) {
        if (a !== b && a.length === b.length) b.set(a);
      } else if (typeof a !== 'object') {
        newOut[key] = a;
      }
    }
    const self = this as unknown as Record<string, unknown>;
    for (const key of Object.keys(fresh)) self[key] = (fresh as unknown as Record<string, unknown>)[key];
  }
}
