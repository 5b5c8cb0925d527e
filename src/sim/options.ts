/**
 * Settings of the simulated cell that are not parameters of the arm step: the physics of the
 * two tool-point arms and the beam, the sensors' imperfections, world sampling and when an
 * episode ends. A typed object with defaults, validated here (never read from the ROS
 * parameters file: the real cell has no such settings).
 */
import { InputError, type Problem } from '../util/errors.js';

export interface SensorNoiseOptions {
  /** White noise standard deviation per force axis, N. */
  readonly noise_force_n: number;
  /** White noise standard deviation per torque axis, N*m. */
  readonly noise_torque_nm: number;
  /** Each world draws a constant bias per force axis uniformly in +-this, N. */
  readonly bias_force_n: number;
  /** Each world draws a constant bias per torque axis uniformly in +-this, N*m. */
  readonly bias_torque_nm: number;
  /** Each world draws a linear drift rate per force axis uniformly in +-this, N/s. */
  readonly drift_force_n_s: number;
  /** Each world draws a linear drift rate per torque axis uniformly in +-this, N*m/s. */
  readonly drift_torque_nm_s: number;
}

/** Settings of the six-joint arm (used when `arm_model` is `six_joint`). */
export interface SixJointOptions {
  /** Orientation hold of the tool: stiffness and damping, N*m/rad and N*m*s/rad. */
  readonly rotational_stiffness_nm_rad: number;
  readonly rotational_damping_nms_rad: number;
  /** Vertical hold damping (the apparent mass is larger than the tool point's), N*s/m. */
  readonly z_damping_n_s_m: number;
  /** Motor torque limits: shoulder and elbow joints (1-3), wrist joints (4-6), N*m. */
  readonly torque_limit_arm_nm: number;
  readonly torque_limit_wrist_nm: number;
}

export type ArmModel = 'tool_point' | 'six_joint';

/** A fault injection: one NaN wrench sample on `arm` at the first sample at or after `t_s` (s). */
export interface InjectHold {
  readonly arm: 'left' | 'right';
  readonly t_s: number;
}
export const ARM_MODELS: readonly ArmModel[] = ['tool_point', 'six_joint'];

export interface SimOptions {
  /**
   * tool_point: three carriages on slide joints (x, y, z) with velocity servos.
   * six_joint: an articulated arm of six revolute joints under Cartesian damping control.
   */
  readonly arm_model: ArmModel;
  readonly six_joint: SixJointOptions;
  /** Physics step, s. The wrench is sampled every round(1 / (rate * timestep)) steps. */
  readonly timestep_s: number;
  /** Height of the beam's centre line above the floor, m. */
  readonly beam_height_m: number;
  /** Side of the beam's square section, m. */
  readonly beam_section_m: number;
  /**
   * Admittance damping D of each arm's motion stack in x and y, N*s/m: the velocity servo
   * force is D (v_cmd - v), so the tool obeys M dv/dt + D (v - v_cmd) = f_ext. Two equal arms
   * on a rigid beam give the coupling constant c = D / 2.
   */
  readonly admittance_damping_n_s_m: number;
  /** Mass of each carriage stage (x, y, z), kg: the apparent mass of the admittance. */
  readonly carriage_mass_kg: number;
  /** Gripper mass below the force-torque sensor, kg (the sensor sees its weight; the tare removes it). */
  readonly tool_mass_kg: number;
  /** Vertical position hold of each tool (a stiff PD servo with gravity feed-forward), N/m. */
  readonly z_stiffness_n_m: number;
  readonly z_damping_n_s_m: number;
  /**
   * Tasks with waypoints: the wrist yaw joint of each tool point (a hinge about the vertical
   * under a velocity servo, so the gripper follows the path's orientation): the servo's gain,
   * N*m*s/rad (torque D_r (w_cmd - w); the grasp lever makes the x and y admittances resist a
   * turn with about D g^2, 24 N*m*s/rad on the demo beam), its speed and torque saturation.
   */
  readonly wrist_yaw_damping_nms_rad: number;
  readonly wrist_yaw_speed_limit_rad_s: number;
  readonly wrist_yaw_torque_limit_nm: number;
  /** Viscous friction of every slide joint, N*s/m. */
  readonly joint_damping_n_s_m: number;
  /** Servo force saturation per axis, N. */
  readonly servo_force_limit_n: number;
  /** Commanded speed saturation per axis, m/s. */
  readonly servo_speed_limit_m_s: number;
  /** Time constant of the grasp welds, s (MuJoCo solref; at least twice the timestep). */
  readonly grasp_timeconst_s: number;
  /** Time constant of beam-obstacle contacts, s (MuJoCo solref). */
  readonly contact_timeconst_s: number;
  /** Beam-obstacle friction coefficient. */
  readonly contact_friction: number;
  /** Force-torque sensor imperfections (the same model for both wrists, drawn per world). */
  readonly sensor: SensorNoiseOptions;
  /** Rate of each arm's area sensor (zone views), Hz. */
  readonly zone_sensor_rate_hz: number;
  /** An arm's area sensor sees a zone only when the object is within this x distance of it, m. */
  readonly zone_sensor_range_m: number;
  /** Explicit baseline: latency of each zone message, s. */
  readonly message_latency_s: number;
  /** Probability that a zone is occupied in a sampled world. */
  readonly occupancy_probability: number;
  /** Uniform jitter of the start and goal positions per axis, m. */
  readonly start_jitter_m: number;
  readonly goal_jitter_m: number;
  /**
   * The motion stacks ignore the recommendation for this long, s: the arms hold still for the
   * tare's still window (the steps themselves also recommend zero until they have tared).
   */
  readonly settle_s: number;
  /** Success: the beam centre is within goal tolerance and slower than this, m/s. */
  readonly success_speed_m_s: number;
  /** End the episode (failure) when the beam has moved less than 5 mm for this long after the start, s (0: never). */
  readonly stall_s: number;
  /**
   * The operator presses reset as soon as the watchdog would release a hold. Off by default:
   * a latched hold stops the autonomous transfer, as in the real cell.
   */
  readonly auto_reset: boolean;
  /** End the episode (failure) when a hold has not cleared after this long, s (0: never). */
  readonly hold_timeout_s: number;
  /** A new contact with an obstacle counts as a collision only after this long out of contact, s. */
  readonly contact_debounce_s: number;
  /** Reachable cell extent in x and y, m (the beam, start, goal and zones must fit inside). */
  readonly cell_x_m: readonly [number, number];
  readonly cell_y_m: readonly [number, number];
  /**
   * A low-frequency force disturbance in the correction band on each wrist sensor (force x and y,
   * sensor frame): Ornstein-Uhlenbeck with this stationary standard deviation, N, and a time
   * constant of 0.2 s, seeded per world and arm, starting after that arm's start-up tare. 0: off.
   */
  readonly disturbance_n: number;
  /** Fault injection for the partner-hold measurement (undefined: none). */
  readonly inject_hold: InjectHold | undefined;
  /** Record every sample of both arms' inputs and outputs (off for batch comparisons). */
  readonly record: boolean;
  /** Let MuJoCo compute the mechanical energy each step (for checks; costs a little). */
  readonly energy: boolean;
}

export const DEFAULT_SENSOR_NOISE: SensorNoiseOptions = Object.freeze({
  noise_force_n: 0.2,
  noise_torque_nm: 0.01,
  bias_force_n: 2.0,
  bias_torque_nm: 0.1,
  drift_force_n_s: 0.01,
  drift_torque_nm_s: 0.0005,
});

export const DEFAULT_SIX_JOINT: SixJointOptions = Object.freeze({
  rotational_stiffness_nm_rad: 300,
  rotational_damping_nms_rad: 12,
  z_damping_n_s_m: 900,
  torque_limit_arm_nm: 200,
  torque_limit_wrist_nm: 50,
});

export const DEFAULT_SIM_OPTIONS: SimOptions = Object.freeze({
  arm_model: 'tool_point',
  six_joint: DEFAULT_SIX_JOINT,
  timestep_s: 0.001,
  beam_height_m: 0.8,
  beam_section_m: 0.04,
  admittance_damping_n_s_m: 80,
  carriage_mass_kg: 1.0,
  tool_mass_kg: 0.1,
  z_stiffness_n_m: 20000,
  z_damping_n_s_m: 400,
  joint_damping_n_s_m: 1.0,
  wrist_yaw_damping_nms_rad: 50,
  wrist_yaw_speed_limit_rad_s: 1.0,
  wrist_yaw_torque_limit_nm: 30,
  servo_force_limit_n: 200,
  servo_speed_limit_m_s: 0.5,
  grasp_timeconst_s: 0.004,
  contact_timeconst_s: 0.004,
  contact_friction: 0.3,
  sensor: DEFAULT_SENSOR_NOISE,
  zone_sensor_rate_hz: 10,
  zone_sensor_range_m: Number.POSITIVE_INFINITY,
  message_latency_s: 0.02,
  occupancy_probability: 0.5,
  start_jitter_m: 0.03,
  goal_jitter_m: 0.03,
  settle_s: 0.5,
  success_speed_m_s: 0.03,
  stall_s: 8,
  auto_reset: false,
  hold_timeout_s: 2,
  contact_debounce_s: 0.05,
  cell_x_m: Object.freeze([-1.0, 3.0]) as readonly [number, number],
  cell_y_m: Object.freeze([-1.5, 1.5]) as readonly [number, number],
  disturbance_n: 0,
  inject_hold: undefined,
  record: true,
  energy: false,
}) as SimOptions;

/** Time constant of the correction-band disturbance, s (the kinematic cell's too). */
export const DISTURBANCE_TAU_S = 0.2;

export type SimOptionsOverrides = Partial<Omit<SimOptions, 'sensor' | 'six_joint'>> & { sensor?: Partial<SensorNoiseOptions>; six_joint?: Partial<SixJointOptions> };

/** Defaults with overrides, validated. Throws InputError naming each bad key and its allowed range. */
export function simOptions(overrides: SimOptionsOverrides = {}): SimOptions {
  const o: SimOptions = { ...DEFAULT_SIM_OPTIONS, ...overrides, sensor: { ...DEFAULT_SENSOR_NOISE, ...overrides.sensor }, six_joint: { ...DEFAULT_SIX_JOINT, ...overrides.six_joint } };
  const problems = checkSimOptions(o);
  if (problems.length) throw new InputError(problems);
  return o;
}

const RANGES: ReadonlyArray<[string, number, number]> = [
  ['timestep_s', 0.0001, 0.005],
  ['beam_height_m', 0.2, 2.0],
  ['beam_section_m', 0.005, 0.3],
  ['admittance_damping_n_s_m', 1, 10000],
  ['carriage_mass_kg', 0.05, 100],
  ['tool_mass_kg', 0.001, 20],
  ['z_stiffness_n_m', 10, 1e7],
  ['z_damping_n_s_m', 0, 1e5],
  ['joint_damping_n_s_m', 0, 1e4],
  ['wrist_yaw_damping_nms_rad', 0.1, 1e5],
  ['wrist_yaw_speed_limit_rad_s', 0.01, 10],
  ['wrist_yaw_torque_limit_nm', 0.1, 1e4],
  ['servo_force_limit_n', 1, 1e5],
  ['servo_speed_limit_m_s', 0.01, 10],
  ['grasp_timeconst_s', 0.0002, 0.1],
  ['contact_timeconst_s', 0.0002, 0.1],
  ['contact_friction', 0, 2],
  ['zone_sensor_rate_hz', 0.1, 1000],
  ['zone_sensor_range_m', 0, Number.POSITIVE_INFINITY],
  ['message_latency_s', 0, 10],
  ['occupancy_probability', 0, 1],
  ['start_jitter_m', 0, 0.5],
  ['goal_jitter_m', 0, 0.5],
  ['settle_s', 0, 10],
  ['success_speed_m_s', 0.0001, 1],
  ['stall_s', 0, 3600],
  ['hold_timeout_s', 0, 3600],
  ['contact_debounce_s', 0, 10],
  ['disturbance_n', 0, 100],
];
const SENSOR_RANGES: ReadonlyArray<[string, number, number]> = [
  ['noise_force_n', 0, 50],
  ['noise_torque_nm', 0, 5],
  ['bias_force_n', 0, 500],
  ['bias_torque_nm', 0, 50],
  ['drift_force_n_s', 0, 10],
  ['drift_torque_nm_s', 0, 1],
];

const SIX_JOINT_RANGES: ReadonlyArray<[string, number, number]> = [
  ['rotational_stiffness_nm_rad', 1, 1e5],
  ['rotational_damping_nms_rad', 0.01, 1e4],
  ['z_damping_n_s_m', 0, 1e5],
  ['torque_limit_arm_nm', 1, 1e4],
  ['torque_limit_wrist_nm', 0.1, 1e4],
];

export function checkSimOptions(o: SimOptions): Problem[] {
  const out: Problem[] = [];
  const check = (key: string, v: unknown, lo: number, hi: number): void => {
    if (typeof v !== 'number' || Number.isNaN(v) || v < lo || v > hi) {
      out.push({ code: 'sim.out_of_range', message: `sim.${key} = ${String(v)} is not allowed`, where: { key: `sim.${key}` }, hint: `from ${lo} to ${hi}` });
    }
  };
  for (const [k, lo, hi] of RANGES) check(k, (o as unknown as Record<string, unknown>)[k], lo, hi);
  for (const [k, lo, hi] of SENSOR_RANGES) check(`sensor.${k}`, (o.sensor as unknown as Record<string, unknown>)[k], lo, hi);
  for (const [k, lo, hi] of SIX_JOINT_RANGES) check(`six_joint.${k}`, (o.six_joint as unknown as Record<string, unknown>)[k], lo, hi);
  if (!ARM_MODELS.includes(o.arm_model)) {
    out.push({ code: 'sim.bad_arm_model', message: `sim.arm_model = ${String(o.arm_model)} is not allowed`, where: { key: 'sim.arm_model' }, hint: ARM_MODELS.join(' or ') });
  }
  if (o.grasp_timeconst_s < 2 * o.timestep_s) {
    out.push({ code: 'sim.weld_too_stiff', message: `sim.grasp_timeconst_s = ${o.grasp_timeconst_s} s is below twice the timestep`, where: { key: 'sim.grasp_timeconst_s' }, hint: `at least ${2 * o.timestep_s} s` });
  }
  if (o.contact_timeconst_s < 2 * o.timestep_s) {
    out.push({ code: 'sim.contact_too_stiff', message: `sim.contact_timeconst_s = ${o.contact_timeconst_s} s is below twice the timestep`, where: { key: 'sim.contact_timeconst_s' }, hint: `at least ${2 * o.timestep_s} s` });
  }
  for (const key of ['cell_x_m', 'cell_y_m'] as const) {
    const r = o[key];
    if (!Array.isArray(r) || r.length !== 2 || !(Number.isFinite(r[0]) && Number.isFinite(r[1]) && r[0] < r[1])) {
      out.push({ code: 'sim.bad_extent', message: `sim.${key} must be [min, max] with min < max`, where: { key: `sim.${key}` } });
    }
  }
  const ih = o.inject_hold;
  if (ih !== undefined) {
    if (typeof ih !== 'object' || ih === null || (ih.arm !== 'left' && ih.arm !== 'right') || typeof ih.t_s !== 'number' || !Number.isFinite(ih.t_s) || ih.t_s < 0) {
      out.push({ code: 'sim.bad_inject_hold', message: `sim.inject_hold = ${JSON.stringify(ih)} is not allowed`, where: { key: 'sim.inject_hold' }, hint: "{ arm: 'left' | 'right', t_s: a time >= 0 s }" });
    }
  }
  if (typeof o.auto_reset !== 'boolean') out.push({ code: 'sim.bad_bool', message: 'sim.auto_reset must be true or false', where: { key: 'sim.auto_reset' } });
  if (typeof o.energy !== 'boolean') out.push({ code: 'sim.bad_bool', message: 'sim.energy must be true or false', where: { key: 'sim.energy' } });
  if (typeof o.record !== 'boolean') out.push({ code: 'sim.bad_bool', message: 'sim.record must be true or false', where: { key: 'sim.record' } });
  return out;
}
