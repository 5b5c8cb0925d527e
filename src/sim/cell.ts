/**
 * The simulated cell on MuJoCo: two admittance-controlled tool points welded to one beam,
 * obstacles where this world's zones are occupied, and a six-axis force-torque sensor at
 * each wrist. This class is the "sim shell": it steps the physics and converts between
 * MuJoCo's conventions and what a real cell's drivers would publish.
 *
 * Step protocol (one physics step):
 *   step1()            positions and velocities of the current state (tool pose, joint states)
 *   read*()            wrench from the previous step's dynamics (a one-step sensor latency)
 *   setCommand(...)    each arm's motion stack command
 *   step2()            dynamics with the new commands (sensors), integration to the next state
 */
import type { MainModule, MjData, MjModel } from 'mujoco-js';
import type { TaskParams } from '../params/config.js';
import { Rng } from '../util/rng.js';
import { compileMjcf, objectId } from './mujoco.js';
import { buildMjcf, pathPoses } from './mjcf.js';
import { TILT_JOINT_NAMES } from './wrist.js';
import { isPlanar } from '../params/task-geometry.js';
import type { SimOptions } from './options.js';
import type { ArmSide, SensorDraw, World } from './world.js';
import { GRIP_LENGTH_M, SIX_JOINTS, SixJointController, solveStartPose, toolRotation, type SixJointViews } from './six-joint.js';

/** Joints per arm of the tool point: slide x, y, z (m, m/s). */
export const ARM_JOINTS = 3;
export const JOINT_NAMES = ['x', 'y', 'z'] as const;
/** A task with waypoints: the tool point's three slides and its wrist yaw (m, m/s; rad, rad/s). */
export const PATH_JOINT_NAMES = ['x', 'y', 'z', 'yaw'] as const;
export const SIX_JOINT_NAMES = ['j1', 'j2', 'j3', 'j4', 'j5', 'j6'] as const;

interface ArmIds {
  qposAdr: number; // first of the arm's consecutive joints
  dofAdr: number;
  jointId: number;
  ctrlAdr: number; // tool point: vx, vy; six joints: six motor torques
  site: number;
  sensorAdr: number; // force (3) then torque (3)
}

interface Views extends SixJointViews {
  qpos: Float64Array;
  qvel: Float64Array;
  ctrl: Float64Array;
  sensordata: Float64Array;
  site_xpos: Float64Array;
  site_xmat: Float64Array;
  xpos: Float64Array;
  xmat: Float64Array;
  energy: Float64Array;
}

/** A wrist sensor's imperfections: bias + drift t + white noise (sensor frame). */
export class SensorModel {
  private readonly rng: Rng;
  constructor(
    readonly draw: SensorDraw,
    private readonly noiseForce: number,
    private readonly noiseTorque: number,
  ) {
    this.rng = new Rng(draw.noiseSeed);
  }
  /** out = truth + bias + drift t + noise. */
  measure(t: number, truth: Float64Array, out: Float64Array): void {
    const b = this.draw.bias;
    const d = this.draw.drift;
    for (let a = 0; a < 6; a++) {
      const s = a < 3 ? this.noiseForce : this.noiseTorque;
      out[a] = truth[a]! + b[a]! + d[a]! * t + (s > 0 ? s * this.rng.normal() : 0);
    }
  }
}

export class SimCell {
  readonly model: MjModel;
  readonly data: MjData;
  readonly beamBody: number;
  readonly beamQpos: number;
  readonly beamDof: number;
  /** Geom id per zone (task order), -1 where the zone is free in this world. */
  readonly obstacleGeom: Int32Array;
  readonly xml: string;
  /** Joints per arm in joint states (3 slides or 6 revolute joints). */
  readonly jointCount: number;
  readonly jointNames: readonly string[];
  /** The task has waypoints: z and the wrist yaw are velocity-servoed too (`setCommand3d`). */
  readonly path: boolean;
  /** The path's orientations tilt the object: the wrist has pitch and roll hinges after the yaw (`src/sim/wrist.ts`). */
  readonly tilt: boolean;
  /** A tilting path: the wrist chain's yaw, pitch, roll at zero joint positions (the path's start), rad. */
  private readonly wrist0 = new Float64Array(3);
  private readonly arms: Record<ArmSide, ArmIds>;
  private readonly six: Record<ArmSide, SixJointController> | null;
  private readonly cmd = { left: new Float64Array(2), right: new Float64Array(2) };
  /** Six-joint arms: residual of the start-pose inverse kinematics, m and rad. */
  readonly startPoseError: { left: { position_m: number; orientation_rad: number }; right: { position_m: number; orientation_rad: number } } | null = null;
  private v!: Views;
  private disposed = false;

  constructor(
    private readonly mj: MainModule,
    /** The nominal task (the arms' bases stand where the cell was built); the world jitters start and goal. */
    readonly task: TaskParams,
    readonly world: World,
    readonly options: SimOptions,
  ) {
    const { xml, names } = buildMjcf(task, world, options);
    this.xml = xml;
    const { model, data } = compileMjcf(mj, xml);
    this.model = model;
    this.data = data;
    const m = model as unknown as { jnt_qposadr: Int32Array; jnt_dofadr: Int32Array; sensor_adr: Int32Array };
    const sixJoint = options.arm_model === 'six_joint';
    this.path = !isPlanar(task);
    const poses = this.path ? pathPoses(task) : null;
    this.tilt = poses !== null && poses.tilts;
    if (poses && this.tilt) this.wrist0.set(poses.startZxy);
    this.jointCount = sixJoint ? SIX_JOINTS : this.tilt ? TILT_JOINT_NAMES.length : this.path ? PATH_JOINT_NAMES.length : ARM_JOINTS;
    this.jointNames = sixJoint ? SIX_JOINT_NAMES : this.tilt ? TILT_JOINT_NAMES : this.path ? PATH_JOINT_NAMES : JOINT_NAMES;
    const ids = (side: ArmSide): ArmIds => {
      const j0 = objectId(mj, model, 'joint', sixJoint ? `${side}_j1` : `${side}_x`);
      return {
        qposAdr: m.jnt_qposadr[j0]!,
        dofAdr: m.jnt_dofadr[j0]!,
        jointId: j0,
        ctrlAdr: objectId(mj, model, 'actuator', sixJoint ? `${side}_m1` : `${side}_vx`),
        site: objectId(mj, model, 'site', `${side}_ft`),
        sensorAdr: m.sensor_adr[objectId(mj, model, 'sensor', `${side}_force`)]!,
      };
    };
    this.arms = { left: ids('left'), right: ids('right') };
    this.six = sixJoint
      ? { left: new SixJointController(this.arms.left, 'left', options, task), right: new SixJointController(this.arms.right, 'right', options, task) }
      : null;
    this.beamBody = objectId(mj, model, 'body', 'beam');
    const jb = objectId(mj, model, 'joint', 'beam_free');
    this.beamQpos = m.jnt_qposadr[jb]!;
    this.beamDof = m.jnt_dofadr[jb]!;
    this.obstacleGeom = Int32Array.from(names.obstacleGeoms, (n) => (n === '' ? -1 : objectId(mj, model, 'geom', n)));
    this.refreshViews();
    if (this.six) {
      // Put each arm at the start grasp pose (the beam's free joint already sits at the start).
      const errors = { left: { position_m: 0, orientation_rad: 0 }, right: { position_m: 0, orientation_rad: 0 } };
      for (const side of ['left', 'right'] as const) {
        const g = task.object.grasp_offset_m;
        const target = [world.start_m[0], world.start_m[1] + (side === 'left' ? g : -g), options.beam_height_m + GRIP_LENGTH_M];
        errors[side] = solveStartPose(mj, model, data, this.arms[side], target, toolRotation(side));
        if (!(errors[side].position_m < 1e-6 && errors[side].orientation_rad < 1e-6)) {
          this.dispose();
          throw new Error(`the ${side} six-joint arm cannot reach the start grasp pose (residual ${errors[side].position_m.toExponential(2)} m, ${errors[side].orientation_rad.toExponential(2)} rad)`);
        }
        this.six[side].zRef = target[2]!;
      }
      (this as { startPoseError: typeof errors }).startPoseError = errors;
      this.refreshViews();
    }
    // Positions of the initial state (tool poses valid before the first step).
    mj.mj_forward(model, data);
  }

  private refreshViews(): void {
    const d = this.data as unknown as Views;
    this.v = {
      qpos: d.qpos,
      qvel: d.qvel,
      ctrl: d.ctrl,
      sensordata: d.sensordata,
      site_xpos: d.site_xpos,
      site_xmat: d.site_xmat,
      xpos: d.xpos,
      xmat: d.xmat,
      energy: d.energy,
      xanchor: d.xanchor,
      xaxis: d.xaxis,
    };
  }

  /** The heap views, fetched again if the WebAssembly memory grew. */
  private get views(): Views {
    if (this.v.qpos.length === 0) this.refreshViews();
    return this.v;
  }

  get time(): number {
    return this.data.time;
  }

  step1(): void {
    this.mj.mj_step1(this.model, this.data);
  }

  step2(): void {
    this.mj.mj_step2(this.model, this.data);
  }

  /** Motion stack command of one arm: tool velocity in the cell frame (x, y), m/s. */
  setCommand(side: ArmSide, vx: number, vy: number): void {
    if (this.six) {
      const u = this.cmd[side];
      u[0] = vx;
      u[1] = vy;
      return;
    }
    const c = this.views.ctrl;
    const a = this.arms[side].ctrlAdr;
    c[a] = vx;
    c[a + 1] = vy;
  }

  /**
   * Motion stack command of one arm on a task with waypoints: tool velocity in the cell frame
   * (x, y, z, m/s) and the wrist's yaw rate (rad/s).
   */
  setCommand3d(side: ArmSide, vx: number, vy: number, vz: number, wz: number): void {
    const c = this.views.ctrl;
    const a = this.arms[side].ctrlAdr;
    c[a] = vx;
    c[a + 1] = vy;
    c[a + 2] = vz;
    c[a + 3] = wz;
  }

  /** A tilting path: the wrist's pitch and roll joint rates (rad/s), after `setCommand3d` gave the yaw rate. */
  setWristTiltRates(side: ArmSide, pitchRate: number, rollRate: number): void {
    const c = this.views.ctrl;
    const a = this.arms[side].ctrlAdr;
    c[a + 4] = pitchRate;
    c[a + 5] = rollRate;
  }

  /** A tilting path: the wrist chain's yaw, pitch, roll now (the start's plus the joint positions), rad. Writes out[0..2]. */
  wristAngles(side: ArmSide, out: Float64Array): void {
    const q = this.views.qpos;
    const a = this.arms[side].qposAdr + 3;
    out[0] = this.wrist0[0]! + q[a]!;
    out[1] = this.wrist0[1]! + q[a + 1]!;
    out[2] = this.wrist0[2]! + q[a + 2]!;
  }

  /** The tool's y axis in the cell frame (site orientation): along the beam, from its centre toward the grasp. */
  toolAxisY(side: ArmSide, out: Float64Array): void {
    const R = this.views.site_xmat;
    const b = 9 * this.arms[side].site;
    out[0] = R[b + 1]!;
    out[1] = R[b + 4]!;
    out[2] = R[b + 7]!;
  }

  /**
   * Run the motion stacks' servo laws for this step (after step1, before step2). The tool
   * point's servo is MuJoCo's velocity actuator; the six-joint arm's torques are computed here.
   */
  control(): void {
    if (!this.six) return;
    const v = this.views;
    this.six.left.apply(v, this.cmd.left[0]!, this.cmd.left[1]!);
    this.six.right.apply(v, this.cmd.right[0]!, this.cmd.right[1]!);
  }

  /**
   * The wrench the beam side exerts on this arm, in the sensor frame (fx fy fz tx ty tz),
   * noise-free, from the last dynamics evaluation.
   */
  wrenchTruth(side: ArmSide, out: Float64Array): void {
    const s = this.views.sensordata;
    const a = this.arms[side].sensorAdr;
    for (let k = 0; k < 6; k++) out[k] = -s[a + k]!;
  }

  /** Sensor-frame 3-vector rotated into the cell frame with the sensor site's orientation. */
  toCell(side: ArmSide, fx: number, fy: number, fz: number, out: Float64Array, offset = 0): void {
    const R = this.views.site_xmat;
    const b = 9 * this.arms[side].site;
    out[offset] = R[b]! * fx + R[b + 1]! * fy + R[b + 2]! * fz;
    out[offset + 1] = R[b + 3]! * fx + R[b + 4]! * fy + R[b + 5]! * fz;
    out[offset + 2] = R[b + 6]! * fx + R[b + 7]! * fy + R[b + 8]! * fz;
  }

  /** Tool (sensor site) pose in the cell frame: x y z qx qy qz qw. */
  toolPose(side: ArmSide, out: Float64Array, offset = 0): void {
    const v = this.views;
    const i = this.arms[side].site;
    out[offset] = v.site_xpos[3 * i]!;
    out[offset + 1] = v.site_xpos[3 * i + 1]!;
    out[offset + 2] = v.site_xpos[3 * i + 2]!;
    matToQuat(v.site_xmat, 9 * i, out, offset + 3);
  }

  /** Joint positions: slides x, y, z (m, from the start pose) or six angles (rad). */
  jointPositions(side: ArmSide, out: Float64Array, offset = 0): void {
    const q = this.views.qpos;
    const a = this.arms[side].qposAdr;
    for (let k = 0; k < this.jointCount; k++) out[offset + k] = q[a + k]!;
  }

  /** Joint velocities (m/s or rad/s). */
  jointVelocities(side: ArmSide, out: Float64Array, offset = 0): void {
    const q = this.views.qvel;
    const a = this.arms[side].dofAdr;
    for (let k = 0; k < this.jointCount; k++) out[offset + k] = q[a + k]!;
  }

  /** Beam pose (centre x y z, quaternion qx qy qz qw) from qpos. */
  beamPose(out: Float64Array, offset = 0): void {
    const q = this.views.qpos;
    const a = this.beamQpos;
    out[offset] = q[a]!;
    out[offset + 1] = q[a + 1]!;
    out[offset + 2] = q[a + 2]!;
    // MuJoCo stores w x y z.
    out[offset + 3] = q[a + 4]!;
    out[offset + 4] = q[a + 5]!;
    out[offset + 5] = q[a + 6]!;
    out[offset + 6] = q[a + 3]!;
  }

  /** Beam linear velocity (cell frame) and angular velocity (beam frame, MuJoCo's free joint convention). */
  beamVelocity(out: Float64Array, offset = 0): void {
    const q = this.views.qvel;
    const a = this.beamDof;
    for (let k = 0; k < 6; k++) out[offset + k] = q[a + k]!;
  }

  /** The beam's long axis (its local y) in the cell frame, from the last position evaluation. */
  beamAxis(out: Float64Array): void {
    const R = this.views.xmat;
    const b = 9 * this.beamBody;
    out[0] = R[b + 1]!;
    out[1] = R[b + 4]!;
    out[2] = R[b + 7]!;
  }

  /** Potential (gravity and springs) and kinetic energy, J, from the last evaluation. */
  energy(): { potential: number; kinetic: number } {
    const e = this.views.energy;
    return { potential: e[0]!, kinetic: e[1]! };
  }

  /**
   * Bitmask of zones whose obstacle touches the beam now (bit = zone index). Only the beam
   * and the obstacles collide, so any contact is one of them.
   */
  contactMask(): number {
    const n = this.data.ncon;
    if (n === 0) return 0;
    let mask = 0;
    const vec = this.data.contact;
    for (let k = 0; k < n; k++) {
      const c = vec.get(k);
      if (!c) continue;
      const g1 = c.geom1;
      const g2 = c.geom2;
      c.delete();
      for (let z = 0; z < this.obstacleGeom.length; z++) {
        const g = this.obstacleGeom[z]!;
        if (g >= 0 && (g === g1 || g === g2)) mask |= 1 << z;
      }
    }
    vec.delete();
    return mask;
  }

  /**
   * Scenario families: switch a zone's obstacle on or off (its contacts and its colour's alpha).
   * The MJCF holds an obstacle for every zone that is occupied at some time of the world.
   */
  setObstacleActive(zone: number, on: boolean): void {
    const g = this.obstacleGeom[zone] ?? -1;
    if (g < 0) return;
    const m = this.model as unknown as { geom_contype: Int32Array; geom_conaffinity: Int32Array; geom_rgba: Float32Array };
    m.geom_contype[g] = on ? 1 : 0;
    m.geom_conaffinity[g] = on ? 1 : 0;
    m.geom_rgba[4 * g + 3] = on ? 1 : 0.15;
  }

  /** Scenario families: an external force at the beam's centre of mass, cell frame, N (zero clears it). */
  setBeamForce(fx: number, fy: number, fz: number): void {
    const x = (this.data as unknown as { xfrc_applied: Float64Array }).xfrc_applied;
    const b = 6 * this.beamBody;
    x[b] = fx;
    x[b + 1] = fy;
    x[b + 2] = fz;
  }

  dispose(): void {
    if (this.disposed) return;
    this.disposed = true;
    this.data.delete();
    this.model.delete();
  }
}

/** Rotation matrix (row-major, at offset) to quaternion (qx qy qz qw) at out[o..o+3]. */
export function matToQuat(R: Float64Array, b: number, out: Float64Array, o: number): void {
  const m00 = R[b]!, m01 = R[b + 1]!, m02 = R[b + 2]!;
  const m10 = R[b + 3]!, m11 = R[b + 4]!, m12 = R[b + 5]!;
  const m20 = R[b + 6]!, m21 = R[b + 7]!, m22 = R[b + 8]!;
  const tr = m00 + m11 + m22;
  let qw: number, qx: number, qy: number, qz: number;
  if (tr > 0) {
    const s = Math.sqrt(tr + 1) * 2;
    qw = 0.25 * s;
    qx = (m21 - m12) / s;
    qy = (m02 - m20) / s;
    qz = (m10 - m01) / s;
  } else if (m00 > m11 && m00 > m22) {
    const s = Math.sqrt(1 + m00 - m11 - m22) * 2;
    qw = (m21 - m12) / s;
    qx = 0.25 * s;
    qy = (m01 + m10) / s;
    qz = (m02 + m20) / s;
  } else if (m11 > m22) {
    const s = Math.sqrt(1 + m11 - m00 - m22) * 2;
    qw = (m02 - m20) / s;
    qx = (m01 + m10) / s;
    qy = 0.25 * s;
    qz = (m12 + m21) / s;
  } else {
    const s = Math.sqrt(1 + m22 - m00 - m11) * 2;
    qw = (m10 - m01) / s;
    qx = (m02 + m20) / s;
    qy = (m12 + m21) / s;
    qz = 0.25 * s;
  }
  if (qw < 0) {
    qw = -qw; qx = -qx; qy = -qy; qz = -qz;
  }
  out[o] = qx;
  out[o + 1] = qy;
  out[o + 2] = qz;
  out[o + 3] = qw;
}
