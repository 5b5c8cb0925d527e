/**
 * A generic six-joint arm of our own design, and its motion stack.
 *
 * Kinematics (base frame: x toward the beam's path, z up): base yaw j1 (z), shoulder pitch j2
 * (y), elbow pitch j3 (y), forearm roll j4 (x), wrist pitch j5 (y), flange roll j6 (x).
 * Upper arm 0.70 m, forearm 0.35 + 0.30 m, wrist 0.08 + 0.04 m to the flange. The gripper
 * (below the wrist force-torque sensor) grasps the beam from above: its z axis points down
 * and the beam's centre line lies `GRIP_LENGTH_M` below the flange. The links carry their own
 * gravity compensation (MuJoCo gravcomp), as an arm controller would.
 *
 * Motion stack: resolved-rate control whose servo is a Cartesian damper. With the tool
 * Jacobian J (from MuJoCo's joint anchors and axes) and the commanded tool twist V_cmd,
 *     tau = J^T W (V_cmd - J qdot) + J^T w_hold
 * where W = diag(D, D, D_z, D_r, D_r, D_r) and w_hold holds the height (stiffness K_z and the
 * beam's share of the weight) and the orientation (stiffness K_r). In x and y this makes the
 * tool an admittance, Lambda(q) dv/dt + D (v - u) = f_ext, with the arm's Cartesian inertia
 * Lambda(q) as apparent mass, so two equal arms on a rigid beam again give c = D / 2.
 */
import type { MjData, MjModel, MainModule } from 'mujoco-js';
import { STANDARD_GRAVITY } from '../core/filter/index.js';
import type { TaskParams } from '../params/config.js';
import type { SimOptions } from './options.js';
import type { ArmSide } from './world.js';

export const SIX_JOINTS = 6;
export const UPPER_ARM_M = 0.7;
export const FOREARM_M = [0.35, 0.3] as const;
export const WRIST_M = [0.08, 0.04] as const;
/** Flange to the beam's centre line, along the gripper's z axis (down), m. */
export const GRIP_LENGTH_M = 0.12;
/** Shoulder (j2 axis) above the beam's centre line, m. */
export const SHOULDER_ABOVE_BEAM_M = 0.35;
/** Base distance beyond the grasp point, across the path, m. */
export const BASE_OUTSIDE_M = 0.65;
const LINK_MASS = [6, 5, 3, 2, 1, 0.5] as const;
const ARMATURE = 0.1;

/** Desired tool (sensor) orientation, row-major: z down; left x along +x, right x along -x. */
export function toolRotation(side: ArmSide): Float64Array {
  return side === 'left' ? Float64Array.of(1, 0, 0, 0, -1, 0, 0, 0, -1) : Float64Array.of(-1, 0, 0, 0, 1, 0, 0, 0, -1);
}

/** Where the arm's base stands: beside the middle of the nominal path. */
export function basePosition(side: ArmSide, task: TaskParams): [number, number] {
  const bx = (task.start_m[0] + task.goal_m[0]) / 2;
  const out = task.object.grasp_offset_m + BASE_OUTSIDE_M;
  return [bx, side === 'left' ? task.start_m[1] + out : task.start_m[1] - out];
}

const f = (v: number): string => {
  const s = Number(v.toPrecision(12)).toString();
  return s === '-0' ? '0' : s;
};

/** The arm's bodies (under worldbody). */
export function sixJointBodies(side: ArmSide, task: TaskParams, o: SimOptions): string {
  const [bx, by] = basePosition(side, task);
  const zs = o.beam_height_m + SHOULDER_ABOVE_BEAM_M;
  const yaw = side === 'left' ? '0.70710678118654757 0 0 -0.70710678118654757' : '0.70710678118654757 0 0 0.70710678118654757';
  const vis = 'contype="0" conaffinity="0"';
  const jd = f(o.joint_damping_n_s_m);
  const j = (k: number, axis: string, range: number) =>
    `<joint name="${side}_j${k}" type="hinge" axis="${axis}" limited="true" range="${f(-range)} ${f(range)}" armature="${ARMATURE}" damping="${jd}"/>`;
  const m = LINK_MASS;
  return `
    <body name="${side}_base" pos="${f(bx)} ${f(by)} 0" quat="${yaw}">
      <geom type="cylinder" fromto="0 0 0 0 0 ${f(zs - 0.2)}" size="0.12" ${vis} rgba="0.3 0.3 0.35 1"/>
      <body name="${side}_l1" pos="0 0 ${f(zs - 0.2)}" gravcomp="1">
        ${j(1, '0 0 1', 3.05)}
        <geom type="cylinder" fromto="0 0 0 0 0 0.2" size="0.09" mass="${m[0]}" ${vis} rgba="0.85 0.55 0.1 1"/>
        <body name="${side}_l2" pos="0 0 0.2" gravcomp="1">
          ${j(2, '0 1 0', 2.1)}
          <geom type="capsule" fromto="0 0 0 ${UPPER_ARM_M} 0 0" size="0.06" mass="${m[1]}" ${vis} rgba="0.85 0.55 0.1 1"/>
          <body name="${side}_l3" pos="${UPPER_ARM_M} 0 0" gravcomp="1">
            ${j(3, '0 1 0', 2.6)}
            <geom type="capsule" fromto="0 0 0 ${FOREARM_M[0]} 0 0" size="0.05" mass="${m[2]}" ${vis} rgba="0.85 0.55 0.1 1"/>
            <body name="${side}_l4" pos="${FOREARM_M[0]} 0 0" gravcomp="1">
              ${j(4, '1 0 0', 3.05)}
              <geom type="capsule" fromto="0 0 0 ${FOREARM_M[1]} 0 0" size="0.045" mass="${m[3]}" ${vis} rgba="0.85 0.55 0.1 1"/>
              <body name="${side}_l5" pos="${FOREARM_M[1]} 0 0" gravcomp="1">
                ${j(5, '0 1 0', 2.1)}
                <geom type="cylinder" fromto="0 0 0 ${WRIST_M[0]} 0 0" size="0.04" mass="${m[4]}" ${vis} rgba="0.4 0.4 0.45 1"/>
                <body name="${side}_l6" pos="${WRIST_M[0]} 0 0" gravcomp="1">
                  ${j(6, '1 0 0', 3.05)}
                  <geom type="cylinder" fromto="0 0 0 ${WRIST_M[1]} 0 0" size="0.04" mass="${m[5]}" ${vis} rgba="0.4 0.4 0.45 1"/>
                  <body name="${side}_tool" pos="${WRIST_M[1]} 0 0" quat="0.70710678118654757 0 0.70710678118654757 0">
                    <site name="${side}_ft" size="0.01"/>
                    <geom type="box" pos="0 0 ${f(GRIP_LENGTH_M / 2)}" size="0.03 0.015 ${f(GRIP_LENGTH_M / 2)}" mass="${f(o.tool_mass_kg)}" ${vis} rgba="0.2 0.5 0.8 1"/>
                  </body>
                </body>
              </body>
            </body>
          </body>
        </body>
      </body>
    </body>`;
}

export function sixJointActuators(side: ArmSide, o: SimOptions): string {
  const lines: string[] = [];
  for (let k = 1; k <= SIX_JOINTS; k++) {
    const t = k <= 3 ? o.six_joint.torque_limit_arm_nm : o.six_joint.torque_limit_wrist_nm;
    lines.push(`    <motor name="${side}_m${k}" joint="${side}_j${k}" ctrllimited="true" ctrlrange="${f(-t)} ${f(t)}"/>`);
  }
  return lines.join('\n');
}

/**
 * The grasp weld, anchored at the grasp point on the beam's centre line, with its relative
 * pose given explicitly (the model's reference pose is not the grasp pose). With an anchor,
 * MuJoCo reads relpose as the anchor's position in the gripper frame, R_d^T (p_grasp -
 * p_flange) = (0, 0, GRIP_LENGTH) on both sides, and the beam's orientation in the gripper
 * frame, R_d^T (half a turn about x for the left gripper, about y for the right).
 */
export function sixJointWeld(side: ArmSide, task: TaskParams, o: SimOptions): string {
  const quat = side === 'left' ? '0 1 0 0' : '0 0 1 0';
  const y = side === 'left' ? task.object.grasp_offset_m : -task.object.grasp_offset_m;
  return `    <weld name="${side}_grasp" body1="${side}_tool" body2="beam" anchor="0 ${f(y)} 0" relpose="0 0 ${f(GRIP_LENGTH_M)} ${quat}" solref="${f(o.grasp_timeconst_s)} 1"/>`;
}

// ---- kinematics and control ------------------------------------------------------------

export interface SixJointIds {
  readonly qposAdr: number;
  readonly dofAdr: number;
  readonly jointId: number; // first of six consecutive joints
  readonly ctrlAdr: number;
  readonly site: number;
}

interface DataViews {
  qpos: Float64Array;
  qvel: Float64Array;
  ctrl: Float64Array;
  site_xpos: Float64Array;
  site_xmat: Float64Array;
  xanchor: Float64Array;
  xaxis: Float64Array;
}

/** Tool Jacobian (6 x 6, rows vx vy vz wx wy wz) from the joint anchors and axes. */
export function toolJacobian(v: DataViews, ids: SixJointIds, J: Float64Array): void {
  const s = 3 * ids.site;
  const px = v.site_xpos[s]!, py = v.site_xpos[s + 1]!, pz = v.site_xpos[s + 2]!;
  for (let k = 0; k < SIX_JOINTS; k++) {
    const a = 3 * (ids.jointId + k);
    const ax = v.xaxis[a]!, ay = v.xaxis[a + 1]!, az = v.xaxis[a + 2]!;
    const rx = px - v.xanchor[a]!, ry = py - v.xanchor[a + 1]!, rz = pz - v.xanchor[a + 2]!;
    J[k] = ay * rz - az * ry;
    J[6 + k] = az * rx - ax * rz;
    J[12 + k] = ax * ry - ay * rx;
    J[18 + k] = ax;
    J[24 + k] = ay;
    J[30 + k] = az;
  }
}

/** Axis-angle vector of R_d R^T (world frame): the rotation that takes R to R_d. */
const errScratch = new Float64Array(9);

export function orientationError(R: Float64Array, rb: number, Rd: Float64Array, out: Float64Array): void {
  // E = Rd * R^T
  const e = errScratch;
  for (let i = 0; i < 3; i++)
    for (let j = 0; j < 3; j++) {
      let s = 0;
      for (let k = 0; k < 3; k++) s += Rd[3 * i + k]! * R[rb + 3 * j + k]!;
      e[3 * i + j] = s;
    }
  const c = Math.min(1, Math.max(-1, (e[0]! + e[4]! + e[8]! - 1) / 2));
  const angle = Math.acos(c);
  let x = e[7]! - e[5]!, y = e[2]! - e[6]!, z = e[3]! - e[1]!;
  const n = Math.hypot(x, y, z);
  if (angle < 1e-9 || n < 1e-12) {
    if (c > 0) {
      out[0] = x / 2;
      out[1] = y / 2;
      out[2] = z / 2;
      return;
    }
    // Half a turn: the axis from the symmetric part.
    x = Math.sqrt(Math.max(0, (e[0]! + 1) / 2));
    y = Math.sqrt(Math.max(0, (e[4]! + 1) / 2)) * (e[1]! >= 0 ? 1 : -1);
    z = Math.sqrt(Math.max(0, (e[8]! + 1) / 2)) * (e[2]! >= 0 ? 1 : -1);
    out[0] = x * angle;
    out[1] = y * angle;
    out[2] = z * angle;
    return;
  }
  out[0] = (x / n) * angle;
  out[1] = (y / n) * angle;
  out[2] = (z / n) * angle;
}

/** Solve A x = b for a dense n x n system (A destroyed), partial pivoting. */
function solve(A: Float64Array, b: Float64Array, n: number): void {
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(A[r * n + c]!) > Math.abs(A[p * n + c]!)) p = r;
    if (p !== c) {
      for (let k = 0; k < n; k++) {
        const t = A[c * n + k]!;
        A[c * n + k] = A[p * n + k]!;
        A[p * n + k] = t;
      }
      const t = b[c]!;
      b[c] = b[p]!;
      b[p] = t;
    }
    const d = A[c * n + c]!;
    for (let r = c + 1; r < n; r++) {
      const m = A[r * n + c]! / d;
      if (m === 0) continue;
      for (let k = c; k < n; k++) A[r * n + k]! -= m * A[c * n + k]!;
      b[r]! -= m * b[c]!;
    }
  }
  for (let c = n - 1; c >= 0; c--) {
    let s = b[c]!;
    for (let k = c + 1; k < n; k++) s -= A[c * n + k]! * b[k]!;
    b[c] = s / A[c * n + c]!;
  }
}

function views(data: MjData): DataViews {
  const d = data as unknown as DataViews;
  return { qpos: d.qpos, qvel: d.qvel, ctrl: d.ctrl, site_xpos: d.site_xpos, site_xmat: d.site_xmat, xanchor: d.xanchor, xaxis: d.xaxis };
}

/**
 * Inverse kinematics for the start pose by damped least squares on MuJoCo's forward
 * kinematics. Writes the joint angles into qpos. Returns the final position and orientation
 * errors (m, rad).
 */
export function solveStartPose(mj: MainModule, model: MjModel, data: MjData, ids: SixJointIds, target: readonly number[], Rd: Float64Array): { position_m: number; orientation_rad: number } {
  let v = views(data);
  const q = ids.qposAdr;
  // Seed: shoulder up, elbow bent down, flange pointing down, toward the target.
  const seed = [0, -0.6, 1.4, 0, 0.77, 0];
  for (let k = 0; k < SIX_JOINTS; k++) v.qpos[q + k] = seed[k]!;
  const J = new Float64Array(36);
  const A = new Float64Array(36);
  const e = new Float64Array(6);
  const er = new Float64Array(3);
  let pe = Infinity, oe = Infinity;
  for (let it = 0; it < 200; it++) {
    mj.mj_kinematics(model, data);
    if (v.qpos.length === 0) v = views(data);
    const s = 3 * ids.site;
    e[0] = target[0]! - v.site_xpos[s]!;
    e[1] = target[1]! - v.site_xpos[s + 1]!;
    e[2] = target[2]! - v.site_xpos[s + 2]!;
    orientationError(v.site_xmat, 9 * ids.site, Rd, er);
    e[3] = er[0]!;
    e[4] = er[1]!;
    e[5] = er[2]!;
    pe = Math.hypot(e[0]!, e[1]!, e[2]!);
    oe = Math.hypot(er[0]!, er[1]!, er[2]!);
    if (pe < 1e-10 && oe < 1e-10) break;
    toolJacobian(v, ids, J);
    // dq = J^T (J J^T + l^2 I)^-1 e
    const lam2 = it < 20 ? 1e-2 : 1e-6;
    for (let i = 0; i < 6; i++)
      for (let j = 0; j < 6; j++) {
        let sum = i === j ? lam2 : 0;
        for (let k = 0; k < 6; k++) sum += J[6 * i + k]! * J[6 * j + k]!;
        A[6 * i + j] = sum;
      }
    const y = Float64Array.from(e);
    solve(A, y, 6);
    const step = it < 20 ? 0.5 : 1;
    for (let k = 0; k < 6; k++) {
      let dq = 0;
      for (let i = 0; i < 6; i++) dq += J[6 * i + k]! * y[i]!;
      v.qpos[q + k]! += step * dq;
    }
  }
  return { position_m: pe, orientation_rad: oe };
}

/** The Cartesian damping controller of one arm (state kept between steps: the references). */
export class SixJointController {
  private readonly J = new Float64Array(36);
  private readonly er = new Float64Array(3);
  private readonly w = new Float64Array(6);
  readonly Rd: Float64Array;
  zRef = 0;
  private readonly weight: number;
  private readonly limits: Float64Array;

  constructor(
    readonly ids: SixJointIds,
    readonly side: ArmSide,
    private readonly o: SimOptions,
    task: TaskParams,
  ) {
    this.Rd = toolRotation(side);
    this.weight = (task.object.mass_kg / 2 + o.tool_mass_kg) * STANDARD_GRAVITY;
    this.limits = Float64Array.from({ length: SIX_JOINTS }, (_, k) => (k < 3 ? o.six_joint.torque_limit_arm_nm : o.six_joint.torque_limit_wrist_nm));
  }

  /** Joint torques for the commanded tool velocity (ux, uy), written to ctrl. */
  apply(v: DataViews, ux: number, uy: number): void {
    const J = this.J;
    toolJacobian(v, this.ids, J);
    const qd = v.qvel;
    const d0 = this.ids.dofAdr;
    const tw = this.w;
    for (let r = 0; r < 6; r++) {
      let s = 0;
      for (let k = 0; k < 6; k++) s += J[6 * r + k]! * qd[d0 + k]!;
      tw[r] = s;
    }
    const o = this.o;
    const D = o.admittance_damping_n_s_m;
    const sj = o.six_joint;
    const pz = v.site_xpos[3 * this.ids.site + 2]!;
    orientationError(v.site_xmat, 9 * this.ids.site, this.Rd, this.er);
    const fx = D * (ux - tw[0]!);
    const fy = D * (uy - tw[1]!);
    const fz = o.z_stiffness_n_m * (this.zRef - pz) - sj.z_damping_n_s_m * tw[2]! + this.weight;
    const mx = sj.rotational_stiffness_nm_rad * this.er[0]! - sj.rotational_damping_nms_rad * tw[3]!;
    const my = sj.rotational_stiffness_nm_rad * this.er[1]! - sj.rotational_damping_nms_rad * tw[4]!;
    const mz = sj.rotational_stiffness_nm_rad * this.er[2]! - sj.rotational_damping_nms_rad * tw[5]!;
    const c = v.ctrl;
    const a = this.ids.ctrlAdr;
    for (let k = 0; k < 6; k++) {
      let t = J[k]! * fx + J[6 + k]! * fy + J[12 + k]! * fz + J[18 + k]! * mx + J[24 + k]! * my + J[30 + k]! * mz;
      const lim = this.limits[k]!;
      if (t > lim) t = lim;
      else if (t < -lim) t = -lim;
      c[a + k] = t;
    }
  }
}

export type { DataViews as SixJointViews };
