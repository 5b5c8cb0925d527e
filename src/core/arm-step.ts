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
import { TARE_REFUSAL_TEXT, TARE_REFUSED, TARE_REFUSED_MOVING, TARE_TAKEN, WrenchFilter, noiseCorrelationSamples, type WrenchFilterConfig } from './filter/index.js';
import { Belief, disturbanceTempering } from './belief.js';
import { PartnerStopDetector } from './partner-stop.js';
import { LISTENER, RoleScheduler, SPEAKER, type Role } from './roles.js';
import { Policy } from './policy.js';
import { SubsetTable, TaskModel } from './task-model.js';
import { INPUT, INPUTS, Watchdog, type InputName, type WatchdogInputs, type WatchdogSnapshot } from './watchdog.js';

/** Zone states as in antiphon/msg/ZoneView. */
export const ZONE_FREE = 0;
export const ZONE_OCCUPIED = 1;
export const ZONE_UNKNOWN = 2;

/**
 * The 100 Hz job (ArmStep.startJob): its kinds, its stages in order, and the cost of each
 * stage per hypothesis in units of about a nanosecond (measured on the development machine,
 * 256 hypotheses: `node dist/bench/run.js arm-step` and `arm-step-dense`; only their ratios
 * matter). The tabulation, score and mixture stages cost JOB_COST per hypothesis plus
 * JOB_ENTRY_COST per entry they compute (a subset of the acting zones); a tabulation, which
 * cannot be split, starts only in a sample with room for its worst case (every zone acting).
 * Each sample gives the job JOB_BUDGET units, except the samples of a policy update, which
 * carry none.
 */
const JOB_NONE = 0;
const JOB_BELIEF = 1;
const JOB_REPLICA = 2;
const JOB_TAB_A = 0;
const JOB_MEAN_A = 1;
const JOB_SCORE_A = 2;
const JOB_TAB_B = 3;
const JOB_MEAN_B = 4;
const JOB_SCORE_B = 5;
const JOB_MIX_TOP = 6;
const JOB_MIX = 7;
const JOB_ADD = 8;
const JOB_SUM = 9;
const JOB_NORM = 10;
const JOB_MARG = 11;
const JOB_COMMIT = 12;
const JOB_COST = Float64Array.of(3, 2, 3, 3, 2, 3, 1, 3, 5, 13, 15, 6, 1);
/** Per computed entry: tabulate A, -, score A, tabulate B, -, score B, -, mixture (the rest: none). */
const JOB_ENTRY_COST = Float64Array.of(13, 0, 22, 13, 0, 22, 0, 25, 0, 0, 0, 0, 0);
/**
 * Cost units per sample for the job: with 256 hypotheses and two acting zones a replica update
 * (about 11 000 units) or a belief update (12 500) lands in two or three samples, a hedged
 * belief update (15 500) in three.
 */
export const JOB_BUDGET = 6_000;

function popcount(m: number): number {
  let n = 0;
  for (let x = m; x !== 0; x &= x - 1) n++;
  return n;
}

/** `ArmOutputs.tareOutcome`: nothing happened, a tare was taken, a tare was refused. */
/** Largest |wrench component| taken as a measurement, N or N·m; beyond it a sample is skipped by the filter and holds. */
export const WRENCH_ABS_MAX = 1e6;

export const TARE_OUTCOME_NONE = 0;
export const TARE_OUTCOME_TAKEN = 1;
export const TARE_OUTCOME_REFUSED = 2;

/** What `requestTare` answers at once; a pending tare ends later in `tareOutcome`. */
export interface TareRequestResult {
  readonly status: 'pending' | 'refused';
  readonly reason: string;
}

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
  /** This sample: TARE_OUTCOME_NONE, _TAKEN or _REFUSED (a pending tare ended). */
  tareOutcome: number;
  /** Why the last tare was refused (empty when the last tare was taken or none ended). */
  tareReason: string;
  /** Held for a reason of its own (not only partner_hold / partner_stop): what the hold link publishes. */
  heldOwn: boolean;
  /** The last JointState carried velocities, so the joint-speed check runs. */
  jointVelocityAvailable: boolean;
  /** Partner-stop detector: the partner's speed over this arm's, over its window (NaN while not armed). */
  partnerSpeedRatio: number;
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
  partnerStop: Float64Array;
  commitWeight: Float64Array;
  /** The 100 Hz job in flight: its numbers, then its two log-likelihood buffers. */
  job: Float64Array;
  tareReason: string;
}

export class ArmStep {
  readonly config: ArmConfig;
  readonly task: TaskModel;
  readonly filter: WrenchFilter;
  readonly watchdog: Watchdog;
  readonly roles: RoleScheduler;
  readonly belief: Belief;
  /** The policy stage (speaker, listener, legibility): src/core/policy.ts. */
  readonly policy: Policy;
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
  private quatError = 0;
  private jointVelAvailable = false;
  private partnerHeldFlag = false;
  private outputEnabled = true;
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
  private accFz = 0;
  private accVz = 0;
  private windowClean = true;
  private windowRole = -1;
  /** Window usable for the partner-stop detector (no impact, hold, tare or NaN; any role). */
  private dragClean = true;
  /** Belief windows are not independent: each window's log-likelihood counts this much (≤ 1). */
  readonly likelihoodScale: number;
  readonly partnerStop: PartnerStopDetector;
  // Policy state.
  private targetVx = 0;
  private targetVy = 0;
  private targetVz = 0;
  private cmdVx = 0;
  private cmdVy = 0;
  private cmdVz = 0;
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
  /**
   * Per own zone (task.own order): the probability that the partner did commit it, from the
   * replica at the last switch to listener. The listener's likelihood hedges over the most
   * doubtful one (a mixture of "committed" and "not committed").
   */
  private readonly commitWeight: Float64Array;

  // Scratch, preallocated.
  private readonly loglik: Float64Array;
  /** The policy's scratch velocity (what legible / legMean write). */
  private readonly v2: Float64Array;
  private readonly f3 = new Float64Array(3);
  private readonly obj = new Float64Array(3);
  private readonly rawFinite = new Float64Array(6);
  private readonly marg: Float64Array;
  private readonly hiddenTable: SubsetTable;
  private readonly ownTable: SubsetTable;
  private readonly hiddenTable2: SubsetTable;
  private readonly loglik2: Float64Array;
  /** The hedged job's mixture: each acting-zone entry's two exponentials. */
  private readonly mixA: Float64Array;
  private readonly mixB: Float64Array;

  // The 100 Hz job in flight (startJob, runJob).
  private jobKind = JOB_NONE;
  private jobRole = -1;
  private jobStage = 0;
  private jobH = 0;
  private jobN = 0;
  private jobPx = 0;
  private jobPy = 0;
  private jobPz = 0;
  /** The job's window in the moving frame at its position: force (t, l, v), own velocity (t, l, v). */
  private readonly jobW = new Float64Array(6);
  private jobKnownA = 0;
  private jobKnownB = 0;
  private jobNeed = 0;
  private jobDoubt = -1;
  /** The mean stage's running sums (t, l, v, count) and its result. */
  private readonly jobSum = new Float64Array(4);
  private jobMx = 0;
  private jobMy = 0;
  private jobMz = 0;
  private jobTop = 0;
  private jobE1 = 0;
  private jobE0 = 0;

  constructor(config: ArmConfig, options: ArmStepOptions = {}) {
    this.config = config;
    this.task = new TaskModel(config.task, config.policy, config.arm);
    this.filter = new WrenchFilter(config.wrench_filter as unknown as WrenchFilterConfig);
    this.watchdog = new Watchdog(config.watchdog, config.wrench_filter.tare);
    this.roles = new RoleScheduler(config.roles, config.arm, this.task);
    this.hypotheses = 1 << this.task.hidden.length;
    this.policy = new Policy(this.task, config.policy);
    this.v2 = this.policy.v;
    this.belief = new Belief(this.hypotheses);
    this.replica = new Belief(1 << this.task.own.length);
    this.loglik = new Float64Array(Math.max(this.hypotheses, this.replica.n));
    this.marg = new Float64Array(Math.max(this.task.hidden.length, this.task.own.length, 1));
    this.hiddenTable = new SubsetTable(this.task.hidden.length);
    this.ownTable = new SubsetTable(this.task.own.length);
    this.hiddenTable2 = new SubsetTable(this.task.hidden.length);
    this.loglik2 = new Float64Array(this.loglik.length);
    this.mixA = new Float64Array(this.hypotheses);
    this.mixB = new Float64Array(this.hypotheses);
    this.commitWeight = new Float64Array(Math.max(1, this.task.own.length));
    this.jointCount = options.jointCount ?? 0;
    this.jointVel = new Float64Array(Math.max(64, this.jointCount));
    this.zoneState = new Uint8Array(this.task.n).fill(ZONE_UNKNOWN);
    const req = options.required ?? {};
    this.required[INPUT.wrench] = req.wrench === false ? 0 : 1;
    this.required[INPUT.joint_states] = (req.joint_states ?? this.jointCount > 0) ? 1 : 0;
    this.required[INPUT.tool_pose] = req.tool_pose === false ? 0 : 1;
    this.required[INPUT.zone_view] = (req.zone_view ?? this.task.n > 0) ? 1 : 0;
    this.required[INPUT.hold_link] = (req.hold_link ?? config.watchdog.hold_link.enabled) ? 1 : 0;
    const fs = config.wrench_filter.sample_rate_hz;
    this.beliefEvery = Math.max(1, Math.round(fs / config.belief.update_rate_hz));
    // Successive windows of the correction band share most of their noise: a window of n
    // samples holds n / L independent ones, L the band's noise correlation length in samples.
    // A slow disturbance the cell declares (belief.disturbance_force_n) is correlated longer
    // still: each window counts less again (exactly as before without one).
    const noiseL = noiseCorrelationSamples(this.filter.sos);
    const bp = config.belief;
    this.likelihoodScale = Math.min(1, this.beliefEvery / noiseL) * disturbanceTempering(bp.noise_force_n, noiseL, bp.disturbance_force_n, bp.disturbance_time_s, fs, this.beliefEvery);
    this.partnerStop = new PartnerStopDetector(config.watchdog.partner_stop, config.coupling.damping_n_s_m, fs / this.beliefEvery);
    this.policyEvery = Math.max(1, Math.round(fs / config.policy.update_rate_hz));
    // Stagger the policy update half a period after the belief update: a lower worst case per sample.
    this.policyCount = Math.floor(this.policyEvery / 2);
    this.wdIn = {
      t_s: 0,
      compensated: this.filter.compensated,
      correction: this.filter.correction,
      impactFlag: false,
      impactScore: 0,
      impactByTorque: false,
      jointVelocity: this.jointVel,
      jointCount: this.jointCount,
      jointFinite: true,
      poseFinite: true,
      zoneFinite: true,
      tared: false,
      bias: this.filter.bias,
      biasChange: this.filter.biasChange,
      quaternionNormError: 0,
      jointVelocityAbsent: false,
      partnerStopped: false,
      partnerSpeedRatio: Number.NaN,
      partnerHeld: false,
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
      tareOutcome: TARE_OUTCOME_NONE,
      tareReason: '',
      heldOwn: false,
      jointVelocityAvailable: false,
      partnerSpeedRatio: Number.NaN,
    };
    this.belief.marginals(this.task.hidden.length, this.out.hiddenOccupied);
  }

  /**
   * Latest joint velocities (rad/s). `count` is the number of velocities the message carried:
   * 0 when it carried none, which leaves the joint-speed check unavailable (a hold with
   * `joint_velocity_absent` when watchdog.require_joint_velocity is set).
   */
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
    this.jointVelAvailable = n > 0;
    // Only finite arrival times are kept: a NaN must not erase when the input last arrived.
    if (Number.isFinite(t)) this.lastSeen[INPUT.joint_states] = t;
  }

  /**
   * Latest tool pose: position (m) and orientation quaternion in the cell frame. The quaternion
   * is normalised here, once, and the filter's payload model and the inference use that same
   * rotation; a norm off 1 by more than watchdog.quaternion_norm_tolerance is an input fault
   * (the previous orientation is kept).
   */
  setToolPose(t: number, x: number, y: number, z: number, qx: number, qy: number, qz: number, qw: number): void {
    const p = this.pose;
    let finite = Number.isFinite(t) && Number.isFinite(x) && Number.isFinite(y) && Number.isFinite(z);
    const nn = Math.sqrt(qx * qx + qy * qy + qz * qz + qw * qw);
    if (!Number.isFinite(nn)) finite = false;
    this.poseFinite = finite;
    this.quatError = Number.isFinite(nn) ? Math.abs(nn - 1) : Number.NaN;
    if (finite) {
      p[0] = x; p[1] = y; p[2] = z;
      if (nn > 1e-9) {
        const inv = 1 / nn;
        p[3] = qx * inv; p[4] = qy * inv; p[5] = qz * inv; p[6] = qw * inv;
        this.filter.setOrientation(p[3]!, p[4]!, p[5]!, p[6]!);
      }
    }
    if (Number.isFinite(t)) this.lastSeen[INPUT.tool_pose] = t;
  }

  /**
   * Whether the recommended twist reaches the arm (default true). A shell that withholds it
   * (the live node's lifecycle while inactive) says so: the step then keeps its command at zero
   * (not latched), so the tare gate, the likelihood's own velocity and the partner-stop check all
   * see the arm as standing, as it does.
   */
  setOutputEnabled(enabled: boolean): void {
    this.outputEnabled = enabled === true;
  }

  /** The partner's one-bit hold signal (only used with watchdog.hold_link.enabled). */
  setPartnerHold(t: number, held: boolean): void {
    this.partnerHeldFlag = held === true;
    if (Number.isFinite(t)) this.lastSeen[INPUT.hold_link] = t;
  }

  /** What this arm's own area sensor reports, one state per zone in task order. */
  setZoneView(t: number, states: ArrayLike<number>): void {
    for (let z = 0; z < this.task.n; z++) {
      // Anything but exactly FREE or OCCUPIED is UNKNOWN (a Uint8Array would turn NaN or 256 into FREE).
      const v = states[z];
      this.zoneState[z] = v === ZONE_FREE || v === ZONE_OCCUPIED ? v : ZONE_UNKNOWN;
    }
    if (Number.isFinite(t)) this.lastSeen[INPUT.zone_view] = t;
    this.zoneFinite = Number.isFinite(t);
  }

  /**
   * Ask for a new tare. Accepted only while held or inhibited, or while the recommended twist
   * and every measured joint speed are near zero (wrench_filter.tare.still_*); the still
   * window's mean must then stay within the bias bounds, or the tare ends refused
   * (`out.tareOutcome`, `out.tareReason`). Allocates only the answer (not a per-sample call).
   */
  requestTare(): TareRequestResult {
    const f = this.filter;
    if (f.tarePending) return { status: 'pending', reason: 'a tare is already waiting for a still window' };
    const why = this.moving();
    if (why !== '') return { status: 'refused', reason: why };
    f.requestTare();
    return { status: 'pending', reason: 'waiting for a still window' };
  }

  /**
   * Why a tare may not run now ('' when it may): allowed while held or inhibited (from internal
   * state, so a restored arm answers the same), or with the commanded speed and every joint
   * speed near zero. Allocates only on a refusal.
   */
  private moving(): string {
    if (this.watchdog.held || this.watchdog.waitingForInputs || !this.filter.tared) return '';
    {
      const lin = Math.sqrt(this.cmdVx * this.cmdVx + this.cmdVy * this.cmdVy + this.cmdVz * this.cmdVz);
      const tp = this.config.wrench_filter.tare;
      if (lin > tp.still_twist_m_s) {
        return `the arm is moving: recommended speed ${lin.toPrecision(3)} m/s exceeds wrench_filter.tare.still_twist_m_s = ${tp.still_twist_m_s} m/s; hold the arm first`;
      }
      if (this.required[INPUT.joint_states] === 1 && !this.jointVelAvailable) {
        return 'joint speeds are unknown (JointState carries no velocities), so the arm cannot be shown still; hold the arm first';
      }
      for (let j = 0; j < this.jointCount; j++) {
        const qd = Math.abs(this.jointVel[j]!);
        if (qd > tp.still_joint_rad_s) {
          return `joint ${j} moves at ${qd.toPrecision(3)} rad/s, above wrench_filter.tare.still_joint_rad_s = ${tp.still_joint_rad_s} rad/s; hold the arm first`;
        }
      }
    }
    return '';
  }

  /** Cheap per-sample form of moving(): true when a pending re-tare must end (no strings built). */
  private movingNow(): boolean {
    if (this.watchdog.held || this.watchdog.waitingForInputs || !this.filter.tared) return false;
    const tp = this.config.wrench_filter.tare;
    if (this.cmdVx * this.cmdVx + this.cmdVy * this.cmdVy + this.cmdVz * this.cmdVz > tp.still_twist_m_s * tp.still_twist_m_s) return true;
    if (this.required[INPUT.joint_states] === 1 && !this.jointVelAvailable) return true;
    for (let j = 0; j < this.jointCount; j++) if (Math.abs(this.jointVel[j]!) > tp.still_joint_rad_s) return true;
    return false;
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
      // Beyond any wrist sensor's range is no measurement: kept out of the filter like a NaN (1e300 overflowed its state).
      if (!(Math.abs(v) <= WRENCH_ABS_MAX)) finite = false;
    }
    const f = this.filter;
    // A re-tare accepted while held or still ends, refused, once the arm moves again.
    const cancelled = f.tarePending && f.tared && this.movingNow();
    if (cancelled) f.cancelTare(TARE_REFUSED_MOVING);
    else f.tareOutcome = 0;
    if (finite) f.step(wrench);
    // The filter's step starts its outcome afresh: a refusal for motion is this sample's outcome.
    if (cancelled) f.tareOutcome = TARE_REFUSED;
    out.tareOutcome = TARE_OUTCOME_NONE;
    if (f.tareOutcome === TARE_TAKEN) {
      out.tareOutcome = TARE_OUTCOME_TAKEN;
      out.tareReason = '';
    } else if (f.tareOutcome === TARE_REFUSED) {
      out.tareOutcome = TARE_OUTCOME_REFUSED;
      out.tareReason = f.tareRefusedWhy === TARE_REFUSED_MOVING ? TARE_REFUSAL_TEXT[f.tareRefusedWhy]! : `${TARE_REFUSAL_TEXT[f.tareRefusedWhy]} (${f.tareRefusedValue.toPrecision(4)} > ${f.tareRefusedLimit})`;
    }
    const wd = this.wdIn;
    const wp = this.config.watchdog;
    wd.t_s = t;
    wd.impactFlag = f.impactFlag;
    wd.impactScore = f.impactScore;
    wd.impactByTorque = f.impactByTorque;
    wd.jointFinite = this.jointFinite;
    wd.poseFinite = this.poseFinite;
    wd.zoneFinite = this.zoneFinite;
    wd.tared = f.tared;
    wd.quaternionNormError = this.required[INPUT.tool_pose] === 1 ? this.quatError : 0;
    wd.jointVelocityAbsent = wp.require_joint_velocity && this.required[INPUT.joint_states] === 1 && !Number.isNaN(this.lastSeen[INPUT.joint_states]!) && !this.jointVelAvailable;
    wd.partnerStopped = this.partnerStop.stopped;
    wd.partnerSpeedRatio = this.partnerStop.ratio;
    wd.partnerHeld = this.required[INPUT.hold_link] === 1 && this.partnerHeldFlag;
    // A non-finite raw sample must trip even though the filter skipped it.
    wd.compensated = finite ? f.compensated : this.rawFinite;
    let stop = this.watchdog.checkInputs(wd);
    // Only after the check: it sees the wrench's age as the gap since the previous sample, which
    // replay and the simulated cell (no timer tick) would otherwise never see. Only finite times
    // are kept: a NaN-stamped sample must not erase the last arrival.
    if (Number.isFinite(t)) this.lastSeen[INPUT.wrench] = t;
    stop = stop || !f.tared || !this.outputEnabled;
    // No time, no dynamics: a NaN time must not turn the command into NaN (it trips non_finite anyway).
    const dt = Number.isNaN(this.lastT) || !Number.isFinite(t) ? 0 : Math.min(Math.max(t - this.lastT, 0), 0.1);
    if (t >= this.lastT || Number.isNaN(this.lastT)) this.lastT = t;

    // Object position from this arm's own tool pose.
    this.task.objectFromTool(this.config.arm, this.pose[0]!, this.pose[1]!, this.obj, this.pose[2]!);
    const px = this.obj[0]!;
    const py = this.obj[1]!;
    const pz = this.obj[2]!;
    this.task.objectZ = pz;
    const role = this.roles.update(t, this.watchdog.held);
    if (role !== this.lastRole) {
      this.task.locate(px, py, pz);
      this.commitAtSwitch(role);
      this.lastRole = role;
    }
    // A window's evidence lands only in the role it was gathered in.
    if (this.jobKind !== JOB_NONE && role !== this.jobRole) this.jobKind = JOB_NONE;

    // Belief: accumulate the correction force (cell frame) and this arm's own command.
    this.accumulate();
    if (this.beliefCount === 0) this.windowRole = role;
    const unusable = f.impactFlag || this.watchdog.held || !f.tared || !finite || stop;
    if (role !== this.windowRole || unusable) this.windowClean = false;
    if (unusable) this.dragClean = false;
    out.beliefUpdated = false;
    const policyNow = ++this.policyCount >= this.policyEvery;
    if (++this.beliefCount >= this.beliefEvery) {
      const n = this.beliefEvery;
      if (this.dragClean) this.partnerStop.update(this.accFx / n, this.accFy / n, this.accVx / n, this.accVy / n);
      else this.partnerStop.reset();
      this.dragClean = true;
      // The previous window's job lands within this window whatever: finish it if it has not.
      if (this.jobKind !== JOB_NONE) this.runJob(Number.POSITIVE_INFINITY);
      if (this.windowClean) {
        if (role === LISTENER && this.task.hidden.length > 0) this.startJob(role, px, py, pz);
        else if (role === SPEAKER && this.task.own.length > 0) this.startJob(role, px, py, pz);
      }
      this.beliefCount = 0;
      this.accFx = this.accFy = this.accVx = this.accVy = this.accFz = this.accVz = 0;
      this.windowClean = true;
    }
    // The job's part of this sample; a sample of a policy update carries none.
    if (this.jobKind !== JOB_NONE && !policyNow) this.runJob(JOB_BUDGET);

    // Policy at its own rate; the command follows the target within the acceleration limit.
    if (policyNow) {
      this.policyCount = 0;
      this.updateTarget(role, px, py);
    }
    const dv = this.config.policy.accel_limit_m_s2 * dt;
    const ex = this.targetVx - this.cmdVx;
    const ey = this.targetVy - this.cmdVy;
    const ez = this.targetVz - this.cmdVz;
    const e = Math.sqrt(ex * ex + ey * ey + ez * ez);
    if (e <= dv) {
      this.cmdVx = this.targetVx;
      this.cmdVy = this.targetVy;
      this.cmdVz = this.targetVz;
    } else if (e > 0) {
      this.cmdVx += (ex * dv) / e;
      this.cmdVy += (ey * dv) / e;
      this.cmdVz += (ez * dv) / e;
    }
    const tw = out.twist;
    tw[0] = this.cmdVx;
    tw[1] = this.cmdVy;
    tw[2] = this.cmdVz;
    // The angular part follows the path's orientation: its turn rate per metre times the
    // commanded progress along the tangent (zero on a path without orientations).
    const task = this.task;
    const T = task.T;
    const progress = this.cmdVx * T[0]! + this.cmdVy * T[1]! + this.cmdVz * T[2]!;
    if (task.turns) {
      const w = task.angularRate;
      tw[3] = w[0]! * progress;
      tw[4] = w[1]! * progress;
      tw[5] = w[2]! * progress;
    } else tw[3] = tw[4] = tw[5] = 0;
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
    out.heldOwn = this.watchdog.heldForOwnReasons;
    out.inhibited = !this.watchdog.held && stop;
    out.tared = f.tared;
    out.objectX = px;
    out.objectY = py;
    out.committedHidden = this.committedHidden;
    out.committedOwn = this.committedOwn;
    out.jointVelocityAvailable = this.jointVelAvailable;
    out.partnerSpeedRatio = this.partnerStop.ratio;
    return out;
  }

  private stopTwist(): void {
    this.out.twist.fill(0);
    this.cmdVx = this.cmdVy = this.cmdVz = 0;
  }

  /**
   * The correction-band force rotated into the cell frame with the tool orientation (the
   * normalised quaternion the payload model uses too): f' = R(q) f. Writes out[0..2].
   */
  cellCorrection(out: Float64Array): void {
    const c = this.filter.correction;
    const q = this.pose;
    const qx = q[3]!, qy = q[4]!, qz = q[5]!, qw = q[6]!;
    const fx = c[0]!, fy = c[1]!, fz = c[2]!;
    out[0] = (1 - 2 * (qy * qy + qz * qz)) * fx + 2 * (qx * qy - qz * qw) * fy + 2 * (qx * qz + qy * qw) * fz;
    out[1] = 2 * (qx * qy + qz * qw) * fx + (1 - 2 * (qx * qx + qz * qz)) * fy + 2 * (qy * qz - qx * qw) * fz;
    out[2] = 2 * (qx * qz - qy * qw) * fx + 2 * (qy * qz + qx * qw) * fy + (1 - 2 * (qx * qx + qy * qy)) * fz;
  }

  private accumulate(): void {
    const f = this.f3;
    this.cellCorrection(f);
    this.accFx += f[0]!;
    this.accFy += f[1]!;
    this.accFz += f[2]!;
    // This arm's own command of the previous sample (equal to the published twist).
    this.accVx += this.cmdVx;
    this.accVy += this.cmdVy;
    this.accVz += this.cmdVz;
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
   * The window's mean correction force and own velocity in the moving frame of the last
   * locate (tangent, lateral, vertical) into the job's snapshot (jobW). On a planar task the
   * vertical is not the policy's: it is left out (0).
   */
  private windowInFrame(): void {
    const n = this.beliefEvery;
    const w = this.jobW;
    const planar = this.task.planar;
    this.task.toFrame(this.accFx / n, this.accFy / n, planar ? 0 : this.accFz / n, w, 0);
    this.task.toFrame(this.accVx / n, this.accVy / n, planar ? 0 : this.accVz / n, w, 3);
    if (planar) w[2] = w[5] = 0;
  }

  /**
   * Start the 100 Hz job for the window that just ended, on a snapshot of its inputs: the
   * window's means taken into the path's moving frame at this arm's object position at its last
   * sample (`windowInFrame`), that position, and the common knowledge and zone view of that
   * moment. The listener's job is the Bayes update of the belief (hedged
   * over the most doubtful commitment of the partner), the speaker's the replica's update. The
   * job runs over the next samples (runJob) and lands within the next window; a role switch
   * before it lands discards it (on both arms alike: the belief and the replica each lose the
   * last window of a slot). Its result equals the one-shot computation bit for bit.
   */
  private startJob(role: Role, px: number, py: number, pz: number): void {
    const task = this.task;
    this.jobRole = role;
    this.jobPx = px;
    this.jobPy = py;
    this.jobPz = pz;
    // The window in the moving frame at the job's position, kept in the job (a later prepare by
    // the policy moves the task's frame; the job's stages read only the snapshot and its tables).
    task.locate(px, py, pz);
    this.windowInFrame();
    this.jobStage = JOB_TAB_A;
    this.jobH = 0;
    this.jobDoubt = -1;
    if (role === SPEAKER) {
      // The partner's listener update, reproduced (see the replica's stage in jobPart).
      this.jobKind = JOB_REPLICA;
      this.jobN = this.replica.n;
      this.jobKnownA = this.observedMask(task.shared) | this.committedHidden;
      this.jobNeed = Policy.toListBits(task.own, this.committedOwn);
      this.replica.stageBegin(this.config.belief.forgetting);
      return;
    }
    this.jobKind = JOB_BELIEF;
    this.jobN = this.hypotheses;
    // The partner (speaker) knows the shared zones as this arm sees them, its own (our hidden)
    // zones, and what it learned of ours in its last listening slot (reproduced here).
    const known = this.observedMask(task.shared) | this.committedOwn;
    this.jobNeed = Policy.toListBits(task.hidden, this.committedHidden);
    // Whether the partner really committed an own zone is not common knowledge: hedge over the
    // most doubtful one, scoring the speaker both with and without it.
    let doubt = -1;
    let doubtU = 0.0196; // w (1 - w) at w = 0.02 or 0.98: surer than that counts as certain
    for (let b = 0; b < task.own.length; b++) {
      const w = this.commitWeight[b]!;
      const u = w * (1 - w);
      if (u > doubtU) {
        doubtU = u;
        doubt = b;
      }
    }
    this.jobDoubt = doubt;
    if (doubt === -1) {
      this.jobKnownA = known;
    } else {
      const bit = 1 << task.own[doubt]!;
      this.jobKnownA = known | bit;
      this.jobKnownB = known & ~bit;
    }
    this.belief.stageBegin(this.config.belief.forgetting);
  }

  /** Run the job in flight for at most `budget` cost units (JOB_COST); Infinity finishes it. */
  private runJob(budget: number): void {
    let left = budget;
    let first = true;
    while (this.jobKind !== JOB_NONE) {
      const used = this.jobPart(left, first);
      if (used === 0) return;
      left -= used;
      first = false;
      if (left <= 0) return;
    }
  }

  /**
   * One part of the job's current stage within `budget` cost units (at least one hypothesis
   * when `first`); returns the units used, 0 when nothing fits. Stages, in order (a hedged
   * belief job has the B stages and the mixture, a replica job no mixture and no marginals):
   * tabulate A, mean A, score A, [tabulate B, mean B, score B, mixture maximum, mixture],
   * add and maximum, sum, normalise, [marginals], commit.
   */
  private jobPart(budget: number, first: boolean): number {
    const stage = this.jobStage;
    const nH = this.jobN;
    const task = this.task;
    const replicaJob = this.jobKind === JOB_REPLICA;
    const bel = replicaJob ? this.replica : this.belief;
    const cost = JOB_COST[stage]!;
    if (stage === JOB_TAB_A || stage === JOB_TAB_B || stage === JOB_COMMIT) {
      const entry = JOB_ENTRY_COST[stage]!;
      if (!first && (cost + entry) * nH > budget) return 0;
      if (stage === JOB_COMMIT) {
        this.commitJob();
        return cost * nH;
      }
      task.prepare(this.jobPx, this.jobPy, this.jobPz);
      const list = replicaJob ? task.own : task.hidden;
      const table = replicaJob ? this.ownTable : stage === JOB_TAB_A ? this.hiddenTable : this.hiddenTable2;
      task.tabulate(list, stage === JOB_TAB_A ? this.jobKnownA : this.jobKnownB, table);
      this.jobSum.fill(0);
      this.jobStage = stage + 1;
      this.jobH = 0;
      return cost * nH + entry * (1 << popcount(table.active));
    }
    const table = replicaJob ? this.ownTable : stage <= JOB_SCORE_A ? this.hiddenTable : this.hiddenTable2;
    let count = Math.floor(budget / cost);
    if (count < 1) {
      if (!first) return 0;
      count = 1;
    }
    const from = this.jobH;
    let to = Math.min(nH, from + count);
    // A score or mixture stage computes an entry per subset of the acting zones and copies the
    // rest: its range ends where the budget does (at least one hypothesis when `first`).
    let scoreUnits = 0;
    if (stage === JOB_SCORE_A || stage === JOB_SCORE_B || stage === JOB_MIX) {
      const act = stage === JOB_MIX ? this.hiddenTable.active : table.active;
      const entry = JOB_ENTRY_COST[stage]!;
      let h = from;
      while (h < nH) {
        const u = (h & act) === h ? cost + entry : cost;
        if (scoreUnits + u > budget && (h > from || !first)) break;
        scoreUnits += u;
        h++;
      }
      if (h === from) return 0;
      to = h;
    }
    switch (stage) {
      case JOB_MEAN_A:
      case JOB_MEAN_B: {
        // consistentMean, over a range.
        const sum = this.jobSum;
        this.policy.meanPart(table, this.jobNeed, from, to, sum);
        if (to === nH) {
          this.jobMx = sum[0]! / sum[3]!;
          this.jobMy = sum[1]! / sum[3]!;
          this.jobMz = sum[2]! / sum[3]!;
        }
        break;
      }
      case JOB_SCORE_A:
      case JOB_SCORE_B: {
        const c = this.config.coupling.damping_n_s_m;
        const k = this.likelihoodScale / (2 * this.config.belief.noise_force_n ** 2);
        const mx = this.jobMx, my = this.jobMy, mz = this.jobMz;
        const w = this.jobW;
        const vt = w[3]!, vl = w[4]!, vv = w[5]!;
        const v = this.v2;
        // A hypothesis scores as the entry of its acting zones (h & active, never above h: it
        // was scored first), so the speaker's velocity is computed once per subset of them.
        const act = table.active;
        if (replicaJob) {
          // It feels f = c (v_own - v_partner) + noise and compares with c (speaker policy(h) -
          // v_partner), so its expected log-likelihood of our private hypothesis h is
          // -c^2 |v_own - policy(h)|^2 / (2 sigma^2), at the same scale.
          const into = this.loglik;
          for (let h = from; h < to; h++) {
            const e = h & act;
            if (e !== h) {
              into[h] = into[e]!;
              continue;
            }
            this.policy.legible(table, h, mx, my, mz);
            const rx = c * (vt - v[0]!);
            const ry = c * (vl - v[1]!);
            const rz = c * (vv - v[2]!);
            into[h] = -(rx * rx + ry * ry + rz * rz) * k;
          }
        } else {
          // Log-likelihood of each hidden hypothesis for the window's mean correction force and
          // own velocity (moving frame), against the speaker's predicted velocity (tangent,
          // lateral, vertical) with the speaker acting on the table's known zones.
          const into = stage === JOB_SCORE_A ? this.loglik : this.loglik2;
          const ft = w[0]!, fl = w[1]!, fv = w[2]!;
          for (let h = from; h < to; h++) {
            const e = h & act;
            if (e !== h) {
              into[h] = into[e]!;
              continue;
            }
            this.policy.legible(table, h, mx, my, mz);
            const rx = ft - c * (v[0]! - vt);
            const ry = fl - c * (v[1]! - vl);
            const rz = fv - c * (v[2]! - vv);
            into[h] = -(rx * rx + ry * ry + rz * rz) * k;
          }
        }
        break;
      }
      case JOB_MIX_TOP: {
        const w = this.commitWeight[this.jobDoubt]!;
        const lw = Math.log(w), lw0 = Math.log(1 - w);
        let top = from === 0 ? Number.NEGATIVE_INFINITY : this.jobTop;
        for (let h = from; h < to; h++) {
          const a = lw + this.loglik[h]!, b = lw0 + this.loglik2[h]!;
          if (a > top) top = a;
          if (b > top) top = b;
        }
        this.jobTop = top;
        if (from === 0) this.jobE1 = this.jobE0 = 0;
        break;
      }
      case JOB_MIX: {
        // The commitment is a hidden variable too: what the speaker does tells whether it
        // committed the zone. Its posterior, P(c | window) ∝ w Σ_h p(h) L1(h) against
        // (1 − w) Σ_h p(h) L0(h), becomes the weight of the next window (and, rounded, this
        // arm's view of the partner's commitment), so a disagreement repairs itself while
        // listening. One common maximum serves the mixture and the posterior.
        const w = this.commitWeight[this.jobDoubt]!;
        const lw = Math.log(w), lw0 = Math.log(1 - w);
        const top = this.jobTop;
        const p = this.belief.p;
        // Both scores are those of the hypothesis's acting zones (the tables share them): the
        // exponentials are taken once per entry (mixA, mixB) and read by the rest.
        const act = this.hiddenTable.active;
        const mixA = this.mixA, mixB = this.mixB;
        let e1 = this.jobE1, e0 = this.jobE0;
        for (let h = from; h < to; h++) {
          const e = h & act;
          if (e !== h) {
            e1 += p[h]! * mixA[e]!;
            e0 += p[h]! * mixB[e]!;
            this.loglik[h] = this.loglik[e]!;
            continue;
          }
          const ea = Math.exp(lw + this.loglik[h]! - top);
          const eb = Math.exp(lw0 + this.loglik2[h]! - top);
          mixA[h] = ea;
          mixB[h] = eb;
          e1 += p[h]! * ea;
          e0 += p[h]! * eb;
          this.loglik[h] = top + Math.log(ea + eb);
        }
        this.jobE1 = e1;
        this.jobE0 = e0;
        break;
      }
      case JOB_ADD:
        bel.stageAdd(this.loglik, from, to);
        bel.stageMax(from, to);
        break;
      case JOB_SUM:
        bel.stageSum(from, to);
        break;
      case JOB_NORM:
        bel.stageNormalise(from, to);
        break;
      case JOB_MARG:
        bel.stageMarginals(task.hidden.length, from, to);
        break;
    }
    this.jobH = to;
    if (to === nH) {
      this.jobH = 0;
      this.jobStage = this.nextStage(stage);
    }
    return scoreUnits > 0 ? scoreUnits : (to - from) * cost;
  }

  private nextStage(stage: number): number {
    const hedged = this.jobDoubt !== -1;
    const replicaJob = this.jobKind === JOB_REPLICA;
    if (stage === JOB_SCORE_A && !hedged) return JOB_ADD;
    if (stage === JOB_NORM && replicaJob) return JOB_COMMIT;
    return stage + 1;
  }

  /** The job lands: the staged belief (or replica) becomes current, with what it concluded. */
  private commitJob(): void {
    if (this.jobKind === JOB_REPLICA) {
      this.replica.stageCommit();
      this.jobKind = JOB_NONE;
      return;
    }
    const task = this.task;
    if (this.jobDoubt !== -1) {
      const post = this.jobE1 / (this.jobE1 + this.jobE0);
      if (Number.isFinite(post)) {
        const bit = 1 << task.own[this.jobDoubt]!;
        const wp = Math.min(Math.max(post, 1e-9), 1 - 1e-9);
        this.commitWeight[this.jobDoubt] = wp;
        this.committedOwn = wp >= 0.5 ? this.committedOwn | bit : this.committedOwn & ~bit;
      }
    }
    const degenerate = this.belief.stageDegenerate;
    this.belief.stageCommit();
    if (degenerate) this.belief.marginals(task.hidden.length, this.out.hiddenOccupied);
    else this.belief.stagedMarginals(task.hidden.length, this.out.hiddenOccupied);
    this.out.beliefUpdated = true;
    this.jobKind = JOB_NONE;
  }

  /** Tables a restored job in the middle of a mean or score stage reads (tabulation is deterministic). */
  private retabulateJob(): void {
    if (this.jobKind === JOB_NONE) return;
    const task = this.task;
    const st = this.jobStage;
    if (this.jobKind === JOB_REPLICA) {
      if (st === JOB_MEAN_A || st === JOB_SCORE_A) {
        task.prepare(this.jobPx, this.jobPy, this.jobPz);
        task.tabulate(task.own, this.jobKnownA, this.ownTable);
      }
      return;
    }
    if (st === JOB_MEAN_A || st === JOB_SCORE_A) {
      task.prepare(this.jobPx, this.jobPy, this.jobPz);
      task.tabulate(task.hidden, this.jobKnownA, this.hiddenTable);
    } else if (st === JOB_MEAN_B || st === JOB_SCORE_B) {
      task.prepare(this.jobPx, this.jobPy, this.jobPz);
      task.tabulate(task.hidden, this.jobKnownB, this.hiddenTable2);
    }
  }

  /**
   * Commit what was learned into common knowledge when the role changes. Commitments are
   * sticky: a zone is committed once its marginal reaches commit_probability and stays so
   * while it holds release_probability, on both arms by the same rule (belief and replica).
   * A zone the object has passed is dropped on both arms: no action depends on it any more, so
   * nothing could repair a disagreement about it (and none can matter).
   */
  private commitAtSwitch(role: Role): void {
    const bp = this.config.belief;
    if (role === SPEAKER) {
      // Turning speaker: what I inferred of the partner's zones while listening.
      this.belief.marginals(this.task.hidden.length, this.marg);
      let m = 0;
      for (let b = 0; b < this.task.hidden.length; b++) {
        const bit = 1 << this.task.hidden[b]!;
        const th = (this.committedHidden & bit) !== 0 ? bp.release_probability : bp.commit_probability;
        if (this.marg[b]! >= th && !this.task.passed(this.task.hidden[b]!)) m |= bit;
      }
      this.committedHidden = m;
    } else {
      // Turning listener: what the partner inferred of my zones while I spoke, from the replica.
      // The partner's belief is the replica plus noise: with a calibrated likelihood its log-odds
      // spread with a variance about twice their size (a Gaussian log-likelihood ratio's
      // variance is twice its mean), which gives the chance that it crossed the threshold.
      this.replica.marginals(this.task.own.length, this.marg);
      let m = 0;
      for (let b = 0; b < this.task.own.length; b++) {
        const bit = 1 << this.task.own[b]!;
        const th = (this.committedOwn & bit) !== 0 ? bp.release_probability : bp.commit_probability;
        const lo = logit(this.marg[b]!);
        const spread = Math.sqrt(Math.max(2 * Math.abs(lo), 0.25));
        const passed = this.task.passed(this.task.own[b]!);
        const w = passed ? 0 : normalCdf((lo - logit(th)) / spread);
        this.commitWeight[b] = w;
        if (this.marg[b]! >= th && !passed) m |= bit;
      }
      this.committedOwn = m;
    }
  }

  private updateTarget(role: Role, px: number, py: number): void {
    const task = this.task;
    this.policy.updateTarget(role, px, py, this.task.objectZ, this.observedMask(task.shared), this.observedMask(task.own), this.committedHidden, this.committedOwn, this.belief.p);
    this.targetVx = this.policy.target[0]!;
    this.targetVy = this.policy.target[1]!;
    this.targetVz = this.policy.target[2]!;
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
        this.lastRole, this.committedHidden, this.committedOwn, this.windowRole,
        this.dragClean ? 1 : 0, this.quatError, this.jointVelAvailable ? 1 : 0, this.partnerHeldFlag ? 1 : 0,
        this.accFz, this.accVz, this.targetVz, this.cmdVz),
      lastSeen: Float64Array.from(this.lastSeen),
      joint: Float64Array.from(this.jointVel),
      pose: Float64Array.from(this.pose),
      zones: Uint8Array.from(this.zoneState),
      partnerStop: this.partnerStop.snapshot(),
      commitWeight: Float64Array.from(this.commitWeight),
      job: this.jobSnapshot(),
      tareReason: this.out.tareReason,
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
    this.dragClean = n[20] === 1;
    this.quatError = n[21]!;
    this.jointVelAvailable = n[22] === 1;
    this.partnerHeldFlag = n[23] === 1;
    if (n.length >= 28) [this.accFz, this.accVz, this.targetVz, this.cmdVz] = [n[24]!, n[25]!, n[26]!, n[27]!];
    this.partnerStop.restore(s.partnerStop);
    this.commitWeight.set(s.commitWeight);
    this.jobRestore(s.job);
    // Outputs a caller may read before the next step: as they were.
    this.belief.marginals(this.task.hidden.length, this.out.hiddenOccupied);
    this.out.held = this.watchdog.held;
    this.out.heldOwn = this.watchdog.heldForOwnReasons;
    this.out.tared = this.filter.tared;
    this.out.tareReason = s.tareReason;
    this.lastSeen.set(s.lastSeen);
    this.jointVel.set(s.joint);
    this.pose.set(s.pose);
    this.zoneState.set(s.zones);
  }

  /**
   * The job's numbers (JOB_HEAD), then its two log-likelihood buffers. The first JOB_HEAD_2D
   * numbers keep the layout of the planar job (slots 7-10: the window's force and own velocity,
   * now tangent and lateral in the moving frame; 15-17: the mean's sums and count); the
   * moving-frame additions follow.
   */
  private jobSnapshot(): Float64Array {
    const w = this.jobW, sum = this.jobSum;
    const head = Float64Array.of(this.jobKind, this.jobRole, this.jobStage, this.jobH, this.jobN, this.jobPx, this.jobPy, w[0]!, w[1]!,
      w[3]!, w[4]!, this.jobKnownA, this.jobKnownB, this.jobNeed, this.jobDoubt, sum[0]!, sum[1]!, sum[3]!, this.jobMx, this.jobMy,
      this.jobTop, this.jobE1, this.jobE0,
      this.jobPz, w[2]!, w[5]!, sum[2]!, this.jobMz);
    const s = new Float64Array(JOB_HEAD + 2 * this.loglik.length);
    s.set(head, 0);
    s.set(this.loglik, JOB_HEAD);
    s.set(this.loglik2, JOB_HEAD + this.loglik.length);
    return s;
  }

  /**
   * Restore a job snapshot; an older one of the planar job (JOB_HEAD_2D numbers, its window and
   * mean in the cell frame) is taken into the moving frame at the job's position (the identity
   * on the demo cell, whose frame is the cell's).
   */
  private jobRestore(s: Float64Array | undefined): void {
    const nl = this.loglik.length;
    const head = s === undefined ? 0 : s.length === JOB_HEAD + 2 * nl ? JOB_HEAD : s.length === JOB_HEAD_2D + 2 * nl ? JOB_HEAD_2D : 0;
    if (s === undefined || head === 0) {
      this.jobKind = JOB_NONE;
      return;
    }
    const j = Array.from(s.subarray(0, head));
    const w = this.jobW, sum = this.jobSum;
    [this.jobKind, this.jobRole, this.jobStage, this.jobH, this.jobN, this.jobPx, this.jobPy] = [j[0]!, j[1]!, j[2]!, j[3]!, j[4]!, j[5]!, j[6]!];
    [w[0], w[1], w[3], w[4]] = [j[7]!, j[8]!, j[9]!, j[10]!];
    [this.jobKnownA, this.jobKnownB, this.jobNeed, this.jobDoubt] = [j[11]!, j[12]!, j[13]!, j[14]!];
    [sum[0], sum[1], sum[3], this.jobMx, this.jobMy, this.jobTop, this.jobE1, this.jobE0] = [j[15]!, j[16]!, j[17]!, j[18]!, j[19]!, j[20]!, j[21]!, j[22]!];
    if (head === JOB_HEAD) {
      [this.jobPz, w[2], w[5], sum[2], this.jobMz] = [j[23]!, j[24]!, j[25]!, j[26]!, j[27]!];
    } else {
      const task = this.task, f = this.f3;
      this.jobPz = 0;
      task.locate(this.jobPx, this.jobPy, 0);
      task.toFrame(w[0]!, w[1]!, 0, w, 0);
      task.toFrame(w[3]!, w[4]!, 0, w, 3);
      if (task.planar) w[2] = w[5] = 0;
      task.toFrame(sum[0]!, sum[1]!, 0, f);
      [sum[0], sum[1], sum[2]] = [f[0]!, f[1]!, f[2]!];
      task.toFrame(this.jobMx, this.jobMy, 0, f);
      [this.jobMx, this.jobMy, this.jobMz] = [f[0]!, f[1]!, f[2]!];
    }
    this.loglik.set(s.subarray(head, head + nl));
    this.loglik2.set(s.subarray(head + nl, head + 2 * nl));
    this.retabulateJob();
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
    fresh.setOutputEnabled(this.outputEnabled); // not part of a snapshot: the shell's setting stays
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

/** Numbers at the head of a job snapshot; of the planar job's older snapshots. */
const JOB_HEAD = 28;
const JOB_HEAD_2D = 23;

function logit(p: number): number {
  const q = Math.min(Math.max(p, 1e-12), 1 - 1e-12);
  return Math.log(q / (1 - q));
}

/** Standard normal distribution function (erf by Abramowitz & Stegun 7.1.26, |error| < 1.5e-7). */
function normalCdf(x: number): number {
  if (x === Number.POSITIVE_INFINITY) return 1;
  if (x === Number.NEGATIVE_INFINITY) return 0;
  const z = Math.abs(x) / Math.SQRT2;
  const t = 1 / (1 + 0.3275911 * z);
  const y = 1 - ((((1.061405429 * t - 1.453152027) * t + 1.421413741) * t - 0.284496736) * t + 0.254829592) * t * Math.exp(-z * z);
  return x >= 0 ? 0.5 * (1 + y) : 0.5 * (1 - y);
}
