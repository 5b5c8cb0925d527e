/**
 * The MJCF of the simulated cell, generated from the task parameters and one world.
 *
 * Frames: the cell frame is MuJoCo's world frame (x from the pick stand to the fixture, z up).
 * The beam lies along y at `beam_height_m`, centred at the world's start pose.
 *
 * Each arm is an admittance-controlled tool point: three stacked carriages on slide joints
 * x, y, z. In x and y a velocity servo with gain D (MuJoCo `velocity` actuator, force
 * D (u - qdot), saturated) makes the tool obey M dv/dt + D (v - u) = f_ext: an admittance
 * with damping D and the carriages' apparent mass M. In z a stiff spring-damper with a
 * gravity feed-forward (joint stiffness with its rest position raised by the carried weight)
 * holds the height. The left tool frame is aligned with the cell frame; the right arm faces
 * the left one, so its tool (and sensor) frame is turned 180 degrees about z.
 *
 * The six-axis force-torque sensor sits between the last carriage and the gripper (MuJoCo
 * `force` and `torque` sensors at the wrist site). MuJoCo reports the wrench the parent (the
 * arm) exerts on the child subtree (gripper and, through the weld, the beam); the cell
 * negates it so that the sensor reports the wrench the beam side exerts on the arm.
 *
 * The beam (a free body) is welded to both grippers: the welds carry every internal force
 * and moment. Each weld's anchor is its grasp point on the beam's centre line (MuJoCo's
 * default, the beam's origin, would make the soft welds carry a spurious internal moment
 * pair of the half weight times the grasp offset). Only the beam and the obstacles collide (contype/conaffinity 1); the floor,
 * the stand, the fixture and the arms are visual only.
 */
import type { TaskParams, ZoneConfig } from '../params/config.js';
import { STANDARD_GRAVITY } from '../core/filter/index.js';
import { isPlanar, taskPath } from '../params/task-geometry.js';
import type { SimOptions } from './options.js';
import type { World } from './world.js';
import { sixJointActuators, sixJointBodies, sixJointWeld } from './six-joint.js';
import { quatTilts, zxyFromQuat } from './wrist.js';

/** Height of the ceiling the cable trays hang from, m. */
export const CEILING_M = 2.2;
/** How far an obstacle reaches past the beam's centre line, m (so the beam meets it whatever its sag). */
export const OBSTACLE_OVERLAP_M = 0.15;

export interface CellNames {
  /** Geom names of the obstacles, per zone in task order ('' where the zone is free). */
  readonly obstacleGeoms: readonly string[];
}

const f = (v: number): string => {
  const s = Number(v.toPrecision(12)).toString();
  return s === '-0' ? '0' : s;
};
const v3 = (a: number, b: number, c: number): string => `${f(a)} ${f(b)} ${f(c)}`;

/** Whether an obstacle stands on the floor (a post) or hangs from the ceiling (a tray drop). */
export function hangsFromCeiling(z: ZoneConfig): boolean {
  return z.kind === 'cable_tray';
}

function obstacle(z: ZoneConfig, options: SimOptions): string {
  const h = options.beam_height_m;
  const lo = hangsFromCeiling(z) ? h - OBSTACLE_OVERLAP_M : 0;
  const hi = hangsFromCeiling(z) ? CEILING_M : h + OBSTACLE_OVERLAP_M;
  const mid = (lo + hi) / 2;
  const hz = (hi - lo) / 2;
  const [cx, cy] = z.center_m;
  const common = `contype="1" conaffinity="1" condim="3" friction="${f(options.contact_friction)} 0.005 0.0001" solref="${f(options.contact_timeconst_s)} 1" rgba="0.85 0.35 0.1 1"`;
  if (z.shape === 'circle') {
    return `    <geom name="zone_${z.name}" type="cylinder" pos="${v3(cx, cy, mid)}" size="${f(z.radius_m)} ${f(hz)}" ${common}/>`;
  }
  return `    <geom name="zone_${z.name}" type="box" pos="${v3(cx, cy, mid)}" size="${v3(z.size_m[0] / 2, z.size_m[1] / 2, hz)}" ${common}/>`;
}

function arm(side: 'left' | 'right', task: TaskParams, world: World, o: SimOptions): string {
  const g = task.object.grasp_offset_m;
  const [sx, sy] = world.start_m;
  const y = side === 'left' ? sy + g : sy - g;
  const h = o.beam_height_m;
  const quat = side === 'left' ? '1 0 0 0' : '0 0 0 1';
  const m = o.carriage_mass_kg;
  // Weight carried by the z servo: its carriage, the gripper and half the beam.
  const carried = (m + o.tool_mass_kg + task.object.mass_kg / 2) * STANDARD_GRAVITY;
  const springref = carried / o.z_stiffness_n_m;
  const [x0, x1] = o.cell_x_m;
  const [y0, y1] = o.cell_y_m;
  const vis = 'contype="0" conaffinity="0"';
  const jd = f(o.joint_damping_n_s_m);
  return `
    <body name="${side}_cx" pos="${v3(sx, y, h)}">
      <joint name="${side}_x" type="slide" axis="1 0 0" limited="true" range="${f(x0 - sx)} ${f(x1 - sx)}" damping="${jd}"/>
      <geom type="box" size="0.03 0.03 0.03" mass="${f(m)}" ${vis} rgba="0.3 0.3 0.35 1"/>
      <body name="${side}_cy">
        <joint name="${side}_y" type="slide" axis="0 1 0" limited="true" range="${f(y0 - y)} ${f(y1 - y)}" damping="${jd}"/>
        <geom type="box" size="0.025 0.025 0.025" mass="${f(m)}" ${vis} rgba="0.35 0.35 0.4 1"/>
        <body name="${side}_cz">
          <joint name="${side}_z" type="slide" axis="0 0 1" limited="true" range="-0.3 0.3" stiffness="${f(o.z_stiffness_n_m)}" springref="${f(springref)}" damping="${f(o.z_damping_n_s_m + o.joint_damping_n_s_m)}"/>
          <geom type="cylinder" size="0.025 0.02" pos="0 0 0.04" mass="${f(m)}" ${vis} rgba="0.4 0.4 0.45 1"/>
          <body name="${side}_tool" quat="${quat}">
            <site name="${side}_ft" size="0.01"/>
            <geom type="box" size="0.03 0.015 0.03" mass="${f(o.tool_mass_kg)}" ${vis} rgba="0.2 0.5 0.8 1"/>
          </body>
        </body>
      </body>
    </body>`;
}

/** Room the z carriage has below the path's lowest and above its highest point, m (detours over a zone). */
export const Z_TRAVEL_BELOW_M = 0.3;
export const Z_TRAVEL_ABOVE_M = 0.5;
/**
 * On a task with waypoints the x and y carriages travel this far past the cell's extent
 * (`cell_x_m`, `cell_y_m`, which the nominal path must keep the object inside), so a sideways
 * detour off the path stays within reach, m.
 */
export const PATH_TRAVEL_MARGIN_M = 0.5;
/** The wrist yaw joint's own viscous friction, N*m*s/rad, and its rotor inertia, kg*m^2. */
const WRIST_YAW_FRICTION_NMS_RAD = 0.05;
const WRIST_YAW_ARMATURE_KG_M2 = 0.01;

/** The path's start and end pose, its height range and the beam's yaw there (a task with waypoints). */
export interface PathPoses {
  readonly start: readonly [number, number, number];
  readonly end: readonly [number, number, number];
  /** Yaw of the object about the vertical at the start and at the end, rad. */
  readonly startYaw: number;
  readonly endYaw: number;
  readonly zMin: number;
  readonly zMax: number;
  /** Some orientation of the path tilts the object: the wrists have pitch and roll hinges too (`src/sim/wrist.ts`). */
  readonly tilts: boolean;
  /** Orientation at the start (x, y, z, w, unit). */
  readonly startQ: readonly [number, number, number, number];
  /** Yaw, pitch, roll of the wrist chain (Rz Rx Ry) at the start and at the end, rad (a tilting path; the yaws equal startYaw, endYaw). */
  readonly startZxy: readonly [number, number, number];
  readonly endZxy: readonly [number, number, number];
}

/** Yaw about z of a quaternion (x, y, z, w) that turns about the vertical only. */
export function yawOf(q: ArrayLike<number>): number {
  return 2 * Math.atan2(q[2]!, q[3]!);
}

/** Poses of a task with waypoints (set-up time). */
export function pathPoses(task: TaskParams): PathPoses {
  const path = taskPath(task);
  const W = task.path!.waypoints_m;
  let zMin = Infinity, zMax = -Infinity;
  for (let k = 2; k < W.length; k += 3) {
    zMin = Math.min(zMin, W[k]!);
    zMax = Math.max(zMax, W[k]!);
  }
  const O = task.path!.orientations_xyzw ?? [];
  let tilts = false;
  for (let k = 0; 4 * k + 3 < O.length; k++) if (quatTilts(O, 4 * k)) tilts = true;
  const e = new Float64Array(3);
  path.locate(0);
  path.orientationAt(0);
  const start = [path.pos[0]!, path.pos[1]!, path.pos[2]!] as const;
  const startQ = [path.q[0]!, path.q[1]!, path.q[2]!, path.q[3]!] as const;
  zxyFromQuat(path.q, e);
  const startZxy = [e[0]!, e[1]!, e[2]!] as const;
  // A path that turns about the vertical only keeps its yaw as it always was (byte-identical scenes).
  const startYaw = tilts ? e[0]! : yawOf(path.q);
  path.locate(path.length);
  path.orientationAt(path.length);
  zxyFromQuat(path.q, e);
  const endYaw = tilts ? e[0]! : yawOf(path.q);
  return { start, end: [path.pos[0]!, path.pos[1]!, path.pos[2]!], startYaw, endYaw, zMin, zMax, tilts, startQ, startZxy, endZxy: [e[0]!, e[1]!, e[2]!] };
}

/** MJCF quaternion (w x y z) of a yaw about z. */
const yawQuat = (a: number): string => `${f(Math.cos(a / 2))} 0 0 ${f(Math.sin(a / 2))}`;

/** A zone as a 3-D obstacle at its heights: a yawed box, a vertical cylinder or a sphere. */
function obstacle3d(z: ZoneConfig, options: SimOptions): string {
  const [cx, cy] = z.center_m;
  const common = `contype="1" conaffinity="1" condim="3" friction="${f(options.contact_friction)} 0.005 0.0001" solref="${f(options.contact_timeconst_s)} 1" rgba="0.85 0.35 0.1 1"`;
  if (z.shape === 'sphere') return `    <geom name="zone_${z.name}" type="sphere" pos="${v3(cx, cy, z.center_z_m ?? 0)}" size="${f(z.radius_m)}" ${common}/>`;
  const [z0, z1] = z.height_m ?? [0, 10];
  const mid = (z0 + z1) / 2;
  const hz = (z1 - z0) / 2;
  if (z.shape === 'box') {
    return `    <geom name="zone_${z.name}" type="box" pos="${v3(cx, cy, mid)}" quat="${yawQuat(z.yaw_rad ?? 0)}" size="${v3(z.size_m[0] / 2, z.size_m[1] / 2, hz)}" ${common}/>`;
  }
  return `    <geom name="zone_${z.name}" type="cylinder" pos="${v3(cx, cy, mid)}" size="${f(z.radius_m)} ${f(hz)}" ${common}/>`;
}

/**
 * The x, y and z carriages of a 3-D tool-point arm at (x, y, z), each a slide joint within the
 * cell's travel (z from zlo to zhi about the start), with `wrist` (MJCF text) inside the z
 * carriage; shared by `arm3d` and `arm3dTilt`.
 */
function carriages3d(side: 'left' | 'right', o: SimOptions, x: number, y: number, z: number, zlo: number, zhi: number, wrist: string): string {
  const m = o.carriage_mass_kg;
  const M = PATH_TRAVEL_MARGIN_M;
  const [x0, x1] = [o.cell_x_m[0] - M, o.cell_x_m[1] + M];
  const [y0, y1] = [o.cell_y_m[0] - M, o.cell_y_m[1] + M];
  const vis = 'contype="0" conaffinity="0"';
  const jd = f(o.joint_damping_n_s_m);
  return `
    <body name="${side}_cx" pos="${v3(x, y, z)}">
      <joint name="${side}_x" type="slide" axis="1 0 0" limited="true" range="${f(x0 - x)} ${f(x1 - x)}" damping="${jd}"/>
      <geom type="box" size="0.03 0.03 0.03" mass="${f(m)}" ${vis} rgba="0.3 0.3 0.35 1"/>
      <body name="${side}_cy">
        <joint name="${side}_y" type="slide" axis="0 1 0" limited="true" range="${f(y0 - y)} ${f(y1 - y)}" damping="${jd}"/>
        <geom type="box" size="0.025 0.025 0.025" mass="${f(m)}" ${vis} rgba="0.35 0.35 0.4 1"/>
        <body name="${side}_cz">
          <joint name="${side}_z" type="slide" axis="0 0 1" limited="true" range="${f(zlo)} ${f(zhi)}" damping="${jd}"/>
          <geom type="cylinder" size="0.025 0.02" pos="0 0 0.04" mass="${f(m)}" ${vis} rgba="0.4 0.4 0.45 1"/>
${wrist}
        </body>
      </body>
    </body>`;
}

/**
 * A tool-point arm for a task with waypoints whose orientations turn about the vertical only
 * (a tilting path: `arm3dTilt`): the x and y carriages as on the plane, a z
 * carriage under a velocity servo with the carried weight as a constant feed-forward (so the
 * tool is an admittance vertically too, and follows the path's heights), and a wrist yaw
 * joint under a velocity servo, so the gripper follows the path's orientation about the
 * vertical and the beam turns as the two grasp points move.
 */
function arm3d(side: 'left' | 'right', task: TaskParams, world: World, o: SimOptions, poses: PathPoses): string {
  const g = task.object.grasp_offset_m;
  const [sx, sy] = world.start_m;
  const sz = poses.start[2];
  const yaw = poses.startYaw;
  // The grasp point: the beam's axis (its local y) turned by the start yaw.
  const sgn = side === 'left' ? 1 : -1;
  const x = sx - sgn * g * Math.sin(yaw);
  const y = sy + sgn * g * Math.cos(yaw);
  const quat = yawQuat(side === 'left' ? yaw : yaw + Math.PI);
  const vis = 'contype="0" conaffinity="0"';
  const zlo = poses.zMin - Z_TRAVEL_BELOW_M - sz;
  const zhi = poses.zMax + Z_TRAVEL_ABOVE_M - sz;
  return carriages3d(side, o, x, y, sz, zlo, zhi, `          <body name="${side}_tool" quat="${quat}">
            <joint name="${side}_yaw" type="hinge" axis="0 0 1" limited="false" damping="${f(WRIST_YAW_FRICTION_NMS_RAD)}" armature="${f(WRIST_YAW_ARMATURE_KG_M2)}"/>
            <site name="${side}_ft" size="0.01"/>
            <geom type="box" size="0.03 0.015 0.03" mass="${f(o.tool_mass_kg)}" ${vis} rgba="0.2 0.5 0.8 1"/>
          </body>`);
}

/** Mass of each of the wrist's three links on a tilting path (visual geoms; the z servo carries them), kg. */
export const WRIST_LINK_MASS_KG = 0.05;

/** MJCF quaternion (w x y z) of a quaternion (x, y, z, w). */
const mjQuat = (q: readonly [number, number, number, number]): string => `${f(q[3])} ${f(q[0])} ${f(q[1])} ${f(q[2])}`;

/**
 * A tool-point arm for a path whose orientations tilt the object: the carriages of `arm3d`, then
 * the wrist as three hinges in series (yaw about the vertical, pitch about the yawed x, roll
 * about the object's long axis; `src/sim/wrist.ts`), each under a velocity servo, all three
 * axes through the grasp point. The links' frames start at the path's start orientation (the
 * joints at zero there), so the chain's angles are the start's plus the joint positions. The
 * tool body after the roll link is fixed (turned half a turn about z on the right arm, which
 * faces the left one), so both chains share the object's angles.
 */
function arm3dTilt(side: 'left' | 'right', task: TaskParams, world: World, o: SimOptions, poses: PathPoses): string {
  const g = task.object.grasp_offset_m;
  const [sx, sy] = world.start_m;
  const sz = poses.start[2];
  const [yaw, pitch, roll] = poses.startZxy;
  // The grasp point: the centre plus or minus the grasp offset along the long axis, R ey.
  const sgn = side === 'left' ? 1 : -1;
  const x = sx - sgn * g * Math.sin(yaw) * Math.cos(pitch);
  const y = sy + sgn * g * Math.cos(yaw) * Math.cos(pitch);
  const z = sz + sgn * g * Math.sin(pitch);
  const vis = 'contype="0" conaffinity="0"';
  // A grasp point rises and falls by up to the grasp offset as the object pitches.
  const zlo = poses.zMin - Z_TRAVEL_BELOW_M - g - z;
  const zhi = poses.zMax + Z_TRAVEL_ABOVE_M + g - z;
  const hinge = (name: string, axis: string) =>
    `<joint name="${side}_${name}" type="hinge" axis="${axis}" limited="false" damping="${f(WRIST_YAW_FRICTION_NMS_RAD)}" armature="${f(WRIST_YAW_ARMATURE_KG_M2)}"/>`;
  const link = `<geom type="sphere" size="0.02" mass="${f(WRIST_LINK_MASS_KG)}" ${vis} rgba="0.45 0.45 0.5 1"/>`;
  return carriages3d(side, o, x, y, z, zlo, zhi, `          <body name="${side}_wyaw" quat="${yawQuat(yaw)}">
            ${hinge('yaw', '0 0 1')}
            ${link}
            <body name="${side}_wpitch" quat="${f(Math.cos(pitch / 2))} ${f(Math.sin(pitch / 2))} 0 0">
              ${hinge('pitch', '1 0 0')}
              ${link}
              <body name="${side}_wroll" quat="${f(Math.cos(roll / 2))} 0 ${f(Math.sin(roll / 2))} 0">
                ${hinge('roll', '0 1 0')}
                ${link}
                <body name="${side}_tool" quat="${side === 'left' ? '1 0 0 0' : '0 0 0 1'}">
                  <site name="${side}_ft" size="0.01"/>
                  <geom type="box" size="0.03 0.015 0.03" mass="${f(o.tool_mass_kg)}" ${vis} rgba="0.2 0.5 0.8 1"/>
                </body>
              </body>
            </body>
          </body>`);
}

/** The carriages' velocity servos (the admittance gain, speed and force limits), as MJCF text; shared by the planar and the 3-D scene. */
function carriageServos(o: SimOptions): { kv: string; vmax: string; fmax: string; servo: (side: string, axis: string) => string } {
  const kv = f(o.admittance_damping_n_s_m);
  const vmax = f(o.servo_speed_limit_m_s);
  const fmax = f(o.servo_force_limit_n);
  const servo = (side: string, axis: string) =>
    `    <velocity name="${side}_v${axis}" joint="${side}_${axis}" kv="${kv}" ctrllimited="true" ctrlrange="-${vmax} ${vmax}" forcelimited="true" forcerange="-${fmax} ${fmax}"/>`;
  return { kv, vmax, fmax, servo };
}

/** The cell's MJCF for a task with waypoints (tool-point arms only). */
function buildMjcf3d(task: TaskParams, world: World, o: SimOptions): { xml: string; names: CellNames } {
  const L = task.object.length_m;
  const r = task.object.radius_m ?? o.beam_section_m / 2;
  const poses = pathPoses(task);
  const [sx, sy] = world.start_m;
  const sz = poses.start[2];
  const [gx, gy, gz] = poses.end;
  const obstacles: string[] = [];
  const obstacleGeoms = task.zones.map((z, k) => {
    if (!world.occupied[k]) return '';
    obstacles.push(obstacle3d(z, o));
    return `zone_${z.name}`;
  });
  const vis = 'contype="0" conaffinity="0"';
  const { kv, vmax, fmax, servo } = carriageServos(o);
  const tilt = poses.tilts;
  const carried = (o.carriage_mass_kg + o.tool_mass_kg + (tilt ? 3 * WRIST_LINK_MASS_KG : 0) + task.object.mass_kg / 2) * STANDARD_GRAVITY;
  // z: D (u - qdot) + the carried weight (MuJoCo's general actuator, affine bias).
  const zservo = (side: string) =>
    `    <general name="${side}_vz" joint="${side}_z" gainprm="${kv}" biastype="affine" biasprm="${f(carried)} 0 -${kv}" ctrllimited="true" ctrlrange="-${vmax} ${vmax}" forcelimited="true" forcerange="-${fmax} ${fmax}"/>`;
  const wmax = f(o.wrist_yaw_speed_limit_rad_s);
  const tmax = f(o.wrist_yaw_torque_limit_nm);
  const wservo = (side: string, joint: string) =>
    `    <velocity name="${side}_v${joint}" joint="${side}_${joint}" kv="${f(o.wrist_yaw_damping_nms_rad)}" ctrllimited="true" ctrlrange="-${wmax} ${wmax}" forcelimited="true" forcerange="-${tmax} ${tmax}"/>`;
  // A tilting path: the pitch and roll hinges get the yaw's servo.
  const yservo = (side: string) => (tilt ? `${wservo(side, 'yaw')}\n${wservo(side, 'pitch')}\n${wservo(side, 'roll')}` : wservo(side, 'yaw'));
  const arm = tilt ? arm3dTilt : arm3d;
  const weld = (side: 'left' | 'right') =>
    `    <weld name="${side}_grasp" body1="${side}_tool" body2="beam" anchor="0 ${f(side === 'left' ? task.object.grasp_offset_m : -task.object.grasp_offset_m)} 0" solref="${f(o.grasp_timeconst_s)} 1"/>`;
  const standTop = (z: number) => Math.max(0.05, z - r - 0.01);
  const st = standTop(sz), ft = standTop(gz);
  const xml = `<mujoco model="antiphon_cell_path">
  <compiler angle="radian"/>
  <option timestep="${f(o.timestep_s)}" integrator="implicitfast" gravity="0 0 ${f(-STANDARD_GRAVITY)}">
    <flag island="disable"${o.energy ? ' energy="enable"' : ''}/>
  </option>
  <worldbody>
    <light pos="1.2 0 3" dir="0 0 -1"/>
    <geom name="floor" type="plane" size="5 5 0.1" ${vis} rgba="0.8 0.8 0.8 1"/>
    <geom name="pick_stand" type="box" pos="${v3(poses.start[0], poses.start[1], st / 2)}" quat="${yawQuat(poses.startYaw)}" size="${v3(0.1, L / 2 - 0.05, st / 2)}" ${vis} rgba="0.5 0.5 0.3 1"/>
    <geom name="fixture" type="box" pos="${v3(gx, gy, ft / 2)}" quat="${yawQuat(poses.endYaw)}" size="${v3(0.1, L / 2 - 0.05, ft / 2)}" ${vis} rgba="0.3 0.5 0.3 1"/>
${obstacles.join('\n')}
    <body name="beam" pos="${v3(sx, sy, sz)}" quat="${tilt ? mjQuat(poses.startQ) : yawQuat(poses.startYaw)}">
      <freejoint name="beam_free"/>
      <geom name="beam" type="capsule" fromto="0 ${f(-L / 2)} 0 0 ${f(L / 2)} 0" size="${f(r)}" mass="${f(task.object.mass_kg)}" contype="1" conaffinity="1" condim="3" rgba="0.75 0.75 0.8 1"/>
    </body>${arm('left', task, world, o, poses)}${arm('right', task, world, o, poses)}
  </worldbody>
  <equality>
${weld('left')}
${weld('right')}
  </equality>
  <actuator>
${servo('left', 'x')}
${servo('left', 'y')}
${zservo('left')}
${yservo('left')}
${servo('right', 'x')}
${servo('right', 'y')}
${zservo('right')}
${yservo('right')}
  </actuator>
  <sensor>
    <force name="left_force" site="left_ft"/>
    <torque name="left_torque" site="left_ft"/>
    <force name="right_force" site="right_ft"/>
    <torque name="right_torque" site="right_ft"/>
  </sensor>
</mujoco>
`;
  return { xml, names: { obstacleGeoms } };
}

/**
 * The cell's MJCF for one world. `task` is the nominal task (the arms' bases stand where the
 * cell was built); the world gives the jittered start and goal.
 */
export function buildMjcf(task: TaskParams, world: World, o: SimOptions): { xml: string; names: CellNames } {
  if (!isPlanar(task)) return buildMjcf3d(task, world, o);
  const L = task.object.length_m;
  const s = o.beam_section_m;
  const h = o.beam_height_m;
  const [sx, sy] = world.start_m;
  const [gx, gy] = world.goal_m;
  const standTop = h - s / 2 - 0.01;
  const obstacles: string[] = [];
  const obstacleGeoms = task.zones.map((z, k) => {
    if (!world.occupied[k]) return '';
    obstacles.push(obstacle(z, o));
    return `zone_${z.name}`;
  });
  const vis = 'contype="0" conaffinity="0"';
  const { kv, vmax, fmax, servo } = carriageServos(o);
  const six = o.arm_model === 'six_joint';
  const weld = (side: 'left' | 'right') =>
    six
      ? sixJointWeld(side, task, o)
      : `    <weld name="${side}_grasp" body1="${side}_tool" body2="beam" anchor="0 ${f(side === 'left' ? task.object.grasp_offset_m : -task.object.grasp_offset_m)} 0" solref="${f(o.grasp_timeconst_s)} 1"/>`;
  const arms = six ? sixJointBodies('left', task, o) + sixJointBodies('right', task, o) : arm('left', task, world, o) + arm('right', task, world, o);
  const actuators = six
    ? `${sixJointActuators('left', o)}
${sixJointActuators('right', o)}`
    : `${servo('left', 'x')}
${servo('left', 'y')}
${servo('right', 'x')}
${servo('right', 'y')}`;
  const xml = `<mujoco model="antiphon_cell">
  <compiler angle="radian"/>
  <option timestep="${f(o.timestep_s)}" integrator="implicitfast" gravity="0 0 ${f(-STANDARD_GRAVITY)}">
    <flag island="disable"${o.energy ? ' energy="enable"' : ''}/>
  </option>
  <worldbody>
    <light pos="0.8 0 3" dir="0 0 -1"/>
    <geom name="floor" type="plane" size="4 4 0.1" ${vis} rgba="0.8 0.8 0.8 1"/>
    <geom name="pick_stand" type="box" pos="${v3(sx, sy, standTop / 2)}" size="${v3(0.1, L / 2 - 0.05, standTop / 2)}" ${vis} rgba="0.5 0.5 0.3 1"/>
    <geom name="fixture" type="box" pos="${v3(gx, gy, standTop / 2)}" size="${v3(0.1, L / 2 - 0.05, standTop / 2)}" ${vis} rgba="0.3 0.5 0.3 1"/>
${obstacles.join('\n')}
    <body name="beam" pos="${v3(sx, sy, h)}">
      <freejoint name="beam_free"/>
      <geom name="beam" type="box" size="${v3(s / 2, L / 2, s / 2)}" mass="${f(task.object.mass_kg)}" contype="1" conaffinity="1" condim="3" rgba="0.75 0.75 0.8 1"/>
    </body>${arms}
  </worldbody>
  <equality>
${weld('left')}
${weld('right')}
  </equality>
  <actuator>
${actuators}
  </actuator>
  <sensor>
    <force name="left_force" site="left_ft"/>
    <torque name="left_torque" site="left_ft"/>
    <force name="right_force" site="right_ft"/>
    <torque name="right_torque" site="right_ft"/>
  </sensor>
</mujoco>
`;
  return { xml, names: { obstacleGeoms } };
}
