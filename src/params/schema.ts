/**
 * Every parameter of antiphon, in one list. Units are SI (REP 103). Safety limits carry a
 * hard `ceiling`. Defaults describe the demo cell: two arms carrying a 1.2 m aluminium
 * extrusion beam from a pick stand to a fixture, past keep-out zones.
 */
import type { ParamSpec } from './spec.js';

const d = (key: string, unit: string, def: number | undefined, min: number, max: number, description: string, ceiling?: number): ParamSpec => ({
  key, type: 'double', unit, default: def, min, max, description, ...(ceiling !== undefined ? { ceiling } : {}),
});
const i = (key: string, def: number, min: number, max: number, description: string): ParamSpec => ({
  key, type: 'integer', unit: '1', default: def, min, max, description,
});
const b = (key: string, def: boolean, description: string): ParamSpec => ({ key, type: 'bool', unit: '', default: def, description });
const e = (key: string, def: string | undefined, choices: readonly string[], description: string): ParamSpec => ({
  key, type: 'string', unit: '', default: def, choices, description,
});
const v = (key: string, unit: string, def: number[] | undefined, length: number, min: number, max: number, description: string): ParamSpec => ({
  key, type: 'double_array', unit, default: def, length, min, max, description,
});
/** A double array of any length (flat tuples: ROS 2 parameters have no nested arrays). */
const va = (key: string, unit: string, def: number[], min: number, max: number, description: string): ParamSpec => ({
  key, type: 'double_array', unit, default: def, min, max, description,
});

export const SCHEMA: readonly ParamSpec[] = [
  // ---- wrench filter -------------------------------------------------------------------
  d('wrench_filter.sample_rate_hz', 'Hz', 1000, 50, 8000, 'Nominal force-torque sample rate; the filter is designed for it.'),
  d('wrench_filter.cutoff_hz', 'Hz', 5, 0.1, 400, 'Butterworth cut-off between the correction band (below) and the impact band (above). Must be below 0.45 x sample rate.'),
  i('wrench_filter.order', 4, 1, 8, 'Butterworth order (cascaded second-order sections).'),
  d('wrench_filter.tare.window_s', 's', 0.5, 0.02, 10, 'Length of the still window averaged for bias removal.'),
  d('wrench_filter.tare.still_force_n', 'N', 2.0, 0.01, 50, 'Largest peak-to-peak force on any axis within the window for it to count as still.'),
  d('wrench_filter.tare.still_torque_nm', 'N*m', 0.2, 0.001, 10, 'Largest peak-to-peak torque on any axis within the window for it to count as still.'),
  b('wrench_filter.tare.on_start', true, 'Tare on the first still window after start. While untared the recommended twist is zero.'),
  d('wrench_filter.tare.max_bias_n', 'N', 40, 0.1, 500, 'Largest force bias a tare may set (sensor offset plus the gripper\'s and the held object\'s weight share when payload is off). A larger still-window mean is refused: a tare must never hide a load.', 100),
  d('wrench_filter.tare.max_bias_nm', 'N*m', 10, 0.01, 200, 'Largest torque bias a tare may set. A larger still-window mean is refused.', 50),
  d('wrench_filter.tare.max_change_n', 'N', 5, 0.01, 100, 'Largest change of the force bias from the start-up tare that a later tare may make (a re-tare corrects drift, not a squeeze).', 30),
  d('wrench_filter.tare.max_change_nm', 'N*m', 1, 0.001, 50, 'Largest change of the torque bias from the start-up tare that a later tare may make.', 10),
  d('wrench_filter.tare.max_horizontal_bias_n', 'N', 5, 0.01, 100, 'Largest horizontal part of the force bias in the cell frame a tare may set (the start-up tare too). Weight is vertical, so a horizontal bias is sensor offset or a squeeze already in the object: a larger one is refused.', 30),
  d('wrench_filter.tare.still_twist_m_s', 'm/s', 0.005, 0, 1, 'A tare requested while not held and not inhibited is accepted only while the recommended linear speed is at most this.'),
  d('wrench_filter.tare.still_joint_rad_s', 'rad/s', 0.02, 0, 5, 'A tare requested while not held and not inhibited is accepted only while every measured joint speed is at most this.'),
  b('wrench_filter.payload.enabled', false, 'Subtract the gravity wrench of a known payload (uses the tool orientation).'),
  d('wrench_filter.payload.mass_kg', 'kg', 0, 0, 50, 'Payload mass hanging below the sensor (gripper, not the shared object).'),
  v('wrench_filter.payload.com_m', 'm', [0, 0, 0], 3, -1, 1, 'Payload centre of mass in the sensor frame.'),
  d('wrench_filter.impact.force_n', 'N', 15, 0.1, 1000, 'Impact-band force magnitude that scores 1.'),
  d('wrench_filter.impact.torque_nm', 'N*m', 6, 0.01, 200, 'Impact-band torque magnitude that scores 1. Keep it near the force level times the grasp lever: partners disagreeing along a long object twist the wrists without any impact.'),
  d('wrench_filter.impact.release_ratio', '1', 0.5, 0.05, 1, 'Hysteresis: the flag falls once the score stays below this fraction of 1.'),
  d('wrench_filter.impact.min_duration_s', 's', 0.003, 0, 0.5, 'The score must stay at or above 1 this long before an impact is flagged.'),
  d('wrench_filter.correction_force_n', 'N', 2.0, 0, 1000, 'Correction-band force above which a sample counts as a partner correction (labels and reports).'),
  d('wrench_filter.correction_torque_nm', 'N*m', 0.3, 0, 200, 'Correction-band torque above which a sample counts as a partner correction (labels and reports).'),
  d('wrench_filter.impact.hold_s', 's', 0.05, 0, 5, 'The score must stay below the release level this long before the flag falls.'),

  // ---- watchdog --------------------------------------------------------------------------
  d('watchdog.force_limit_n', 'N', 150, 1, 2000, 'Largest tared force magnitude before a safe hold.', 500),
  d('watchdog.torque_limit_nm', 'N*m', 25, 0.1, 500, 'Largest tared torque magnitude before a safe hold.', 100),
  d('watchdog.correction_force_limit_n', 'N', 60, 1, 2000, 'Largest correction-band force (internal squeeze or pull) before a safe hold.', 300),
  d('watchdog.correction_torque_limit_nm', 'N*m', 15, 0.1, 500, 'Largest correction-band torque before a safe hold.', 100),
  d('watchdog.joint_velocity_limit_rad_s', 'rad/s', 1.0, 0.01, 10, 'Largest measured joint speed (any joint) before a safe hold.', 3.2),
  d('watchdog.linear_speed_limit_m_s', 'm/s', 0.25, 0.001, 5, 'Largest recommended tool linear speed. Default 0.25 m/s: the reduced speed of ISO 10218-1 (from memory); the cell risk assessment decides.', 1.0),
  d('watchdog.angular_speed_limit_rad_s', 'rad/s', 0.5, 0.001, 10, 'Largest recommended tool angular speed.', 2.0),
  d('watchdog.stale_after_s.wrench', 's', 0.02, 0.001, 5, 'Hold when no wrench sample arrived for this long.', 1.0),
  d('watchdog.stale_after_s.joint_states', 's', 0.05, 0.001, 5, 'Hold when no joint state arrived for this long.', 2.0),
  d('watchdog.stale_after_s.tool_pose', 's', 0.05, 0.001, 5, 'Hold when no tool pose arrived for this long.', 2.0),
  d('watchdog.stale_after_s.zone_view', 's', 0.5, 0.01, 30, 'Hold when the area sensor has not reported for this long.', 10.0),
  d('watchdog.stale_after_s.hold_link', 's', 0.5, 0.01, 30, 'With watchdog.hold_link.enabled: hold when the partner\'s hold signal has not arrived for this long.', 10.0),
  d('watchdog.future_tolerance_s', 's', 0.05, 0.0001, 5, 'Hold when an input\'s last arrival is later than the current sample time by more than this (an input stamped in the future never looks stale).', 1.0),
  d('watchdog.quaternion_norm_tolerance', '1', 0.01, 1e-6, 0.5, 'Hold when the tool pose quaternion\'s norm differs from 1 by more than this (the pose is normalised on arrival).', 0.1),
  b('watchdog.require_joint_velocity', false, 'Hold when JointState messages carry no velocities (the joint-speed check cannot run). When false, the check reports itself unavailable.'),
  b('watchdog.partner_stop.enabled', true, 'Hold when the correction force says the partner has stopped while this arm moves (the partner is held or has died): no message needed.'),
  d('watchdog.partner_stop.speed_ratio', '1', 0.15, 0.01, 0.9, 'The partner counts as stopped when its speed estimated from the correction force, |v_own + f / c| averaged over the window, is at most this fraction of this arm\'s mean speed. Keep it below policy.confidence_floor: a listener that slows while unsure still moves.'),
  d('watchdog.partner_stop.window_s', 's', 1.0, 0.05, 10, 'Window over which the partner\'s speed is averaged; the arm must have moved above min_speed_m_s throughout it. It bounds the detection time.', 3.0),
  d('watchdog.partner_stop.min_speed_m_s', 'm/s', 0.05, 0.001, 1, 'Below this recommended speed a stopped partner cannot be told from noise; the window restarts.'),
  b('watchdog.hold_link.enabled', false, 'Also take the partner\'s hold from a one-bit hold signal (topic partner_held) where the cell has a link between the controllers. Off by default: the method needs no messages.'),
  e('watchdog.on_impact', 'hold', ['hold', 'report'], 'On a flagged impact: latch a safe hold, or only report it.'),
  d('watchdog.release_clear_s', 's', 1.0, 0.05, 600, 'Every condition must be clear this long before a reset releases the hold.'),

  // ---- roles -------------------------------------------------------------------------------
  e('roles.scheduler', 'alternating', ['fixed', 'alternating', 'adaptive', 'lookahead'], 'How roles are assigned on the shared clock: fixed; alternating slots; adaptive (slots shared out by each arm\'s count of private zones); lookahead (the owner of the next private zone along the path speaks, from a progress estimate both arms compute from the clock and the task).'),
  e('roles.fixed_role', 'speaker', ['speaker', 'listener'], 'The role held when the scheduler is fixed.'),
  d('roles.period_s', 's', 0.5, 0.005, 600, 'Slot length of the alternating and adaptive schedulers (lookahead: of its alternation once no private zone is ahead, and the grid its progress clock starts on).'),
  d('roles.lookahead.speed_fraction', '1', 1, 0.05, 2, 'Lookahead: the common progress estimate advances at this fraction of policy.speed_m_s while nothing is in the way (detours are counted by detour_s). Both arms must use the same value.'),
  d('roles.lookahead.start_delay_s', 's', 0.6, 0, 600, 'Lookahead: the common progress estimate starts this long after the start of the slot of the first sample (the start-up tare and the acceleration). Both arms must use the same value.'),
  d('roles.lookahead.lead_m', 'm', 0.3, 0, 100, 'Lookahead: a private zone counts as ahead from this far (arc length of the progress estimate) before its near edge until it is surely passed. Each slot goes to the arms in proportion to the private zones each has ahead (all to the owner of the only ones ahead); with none ahead the arms alternate in period_s slots. Both arms must use the same value.'),
  d('roles.lookahead.detour_s', 's', 1.2, 0, 600, 'Lookahead: the longest a detour around one zone delays the object. A zone is surely passed once the progress estimate, delayed this much for every zone up to it (shared ones too), has passed its far edge by the clearance. Both arms must use the same value.'),
  { ...i('roles.phase', 0, 0, 1, 'Alternating: this arm speaks in even slots (0) or odd slots (1). The partner takes the other. Default: 0 for left, 1 for right.'), armDefault: { left: 0, right: 1 } },

  // ---- belief ------------------------------------------------------------------------------
  d('belief.update_rate_hz', 'Hz', 100, 1, 8000, 'Rate of Bayes updates (the correction band is a few hertz wide).'),
  d('belief.noise_force_n', 'N', 1.5, 0.001, 100, 'Standard deviation of the correction-band force around the coupling model, per axis.'),
  d('belief.forgetting', '1', 0.0005, 0, 0.5, 'Mixing toward the uniform belief at each update: the chance per update that a zone changed (0.0005 at 100 Hz: a half-life of about 14 s). Larger than the world\'s real rate of change makes the belief underconfident once the evidence stops.'),
  d('belief.commit_probability', '1', 0.8, 0.5, 1, 'At a role switch, a zone whose occupied probability reaches this becomes common knowledge.'),
  d('belief.release_probability', '1', 0.5, 0, 1, 'At a role switch, a committed zone stays committed while its occupied probability is at least this (sticky commitments: a hysteresis below commit_probability).'),
  d('belief.disturbance_force_n', 'N', 0, 0, 100, 'Standard deviation per axis of a slow correction-band disturbance the cell carries beyond belief.noise_force_n (cable drag, flex of the object, a hand on it), calibrated from a bag of the cell. Its windows are correlated over about 2 x belief.disturbance_time_s, so each window of the likelihood counts correspondingly less (0: none; today\'s scale).'),
  d('belief.disturbance_time_s', 's', 0.2, 0.001, 60, 'Correlation time of that disturbance (a first-order process: e^(-lag/time)).'),
  i('belief.max_hidden_zones', 8, 0, 8, 'Most zones only the partner observes (exact enumeration: 2^n hypotheses, at most 256).'),

  // ---- coupling ----------------------------------------------------------------------------
  d('coupling.damping_n_s_m', 'N*s/m', 40, 0.1, 10000, 'Effective damping from the partner intent to the correction force: f = c (v_partner - v_own).'),

  // ---- policy ------------------------------------------------------------------------------
  d('policy.speed_m_s', 'm/s', 0.15, 0.001, 5, 'Nominal cruise speed of the carried object (saturation of the policy).', 1.0),
  d('policy.goal_gain_1_s', '1/s', 1.0, 0.01, 100, 'Attraction to the goal: velocity per metre of remaining distance.'),
  d('policy.repulsion_gain_m_s', 'm/s', 0.25, 0, 5, 'Push away from an occupied zone at its margin.'),
  d('policy.repulsion_range_m', 'm', 0.25, 0.01, 5, 'Distance from a zone over which its push fades to zero.'),
  d('policy.legibility_gain', '1', 0.8, 0, 10, 'Speaker: exaggerates the part of its velocity that tells its view from the alternatives.'),
  d('policy.confidence_floor', '1', 0.3, 0, 1, 'Listener: speed scale while the hypotheses it holds disagree by the full speed (1 when they agree).'),
  d('policy.accel_limit_m_s2', 'm/s^2', 0.5, 0.001, 50, 'Largest change of the recommended linear velocity per second.', 10),
  d('policy.update_rate_hz', 'Hz', 100, 1, 8000, 'Rate at which the recommended velocity is recomputed (held between).'),

  // ---- task --------------------------------------------------------------------------------
  d('task.object.length_m', 'm', 1.2, 0.05, 10, 'Length of the carried object (along its own y axis, between the arms; the cell y axis unless task.path.orientations_xyzw turns it).'),
  d('task.object.radius_m', 'm', 0, 0, 1, 'Radius of the capsule around the object\'s axis used for clearances (0: the axis alone, as a thin beam).'),
  d('task.object.mass_kg', 'kg', 2.4, 0.001, 500, 'Mass of the carried object.'),
  d('task.object.grasp_offset_m', 'm', 0.55, 0, 5, 'Grasp points at +offset (left) and -offset (right) along the object from its centre.'),
  v('task.start_m', 'm', [0, 0], 2, -20, 20, 'Object centre at the pick stand (x, y in the cell frame). With task.path.waypoints_m: leave unset (the first waypoint).'),
  v('task.goal_m', 'm', [1.6, 0], 2, -20, 20, 'Object centre at the fixture (x, y in the cell frame). Without task.path.waypoints_m the path is the straight line start_m to goal_m in the plane (heights are the cell\'s). With waypoints: leave unset (the last waypoint).'),
  va('task.path.waypoints_m', 'm', [], -20, 20, 'The object centre\'s nominal path: x, y, z triples in the cell frame, at least two waypoints, no point repeated. Corners are rounded by the largest arc that fits in half the shorter leg. Empty: the straight line start_m to goal_m.'),
  va('task.path.orientations_xyzw', '1', [], -1, 1, 'The object\'s orientation at each waypoint: x, y, z, w unit quaternions (four numbers per waypoint), slerped along the path; the object lies along its own y axis. Empty: the object along the cell y axis everywhere.'),
  d('task.goal_tolerance_m', 'm', 0.02, 0.0005, 1, 'The object is at the goal within this distance.'),
  d('task.time_limit_s', 's', 60, 1, 3600, 'Time allowed for the transfer (simulation and offline checks).'),
  e('task.zones.*.shape', undefined, ['box', 'circle', 'cylinder', 'sphere'], 'Keep-out zone shape: an oriented box, a vertical cylinder (circle is the same), a sphere.'),
  v('task.zones.*.center_m', 'm', undefined, 2, -20, 20, 'Zone centre (x, y in the cell frame).'),
  v('task.zones.*.size_m', 'm', [0.2, 0.2], 2, 0.001, 20, 'Box zone extent (x, y in the box\'s own frame). Ignored for other shapes.'),
  d('task.zones.*.radius_m', 'm', 0.1, 0.001, 20, 'Cylinder (circle) or sphere radius. Ignored for boxes.'),
  v('task.zones.*.height_m', 'm', [0, 10], 2, -20, 20, 'Box and cylinder: bottom and top height in the cell frame. Ignored for spheres.'),
  d('task.zones.*.center_z_m', 'm', 0, -20, 20, 'Sphere: height of the centre in the cell frame. Ignored for other shapes.'),
  d('task.zones.*.yaw_rad', 'rad', 0, -6.3, 6.3, 'Box: turn about the vertical (its x axis at this angle from the cell x axis). Ignored for other shapes.'),
  e('task.zones.*.detours', 'sideways', ['sideways', 'over', 'both'], 'How the object may pass the zone when occupied: sideways (normal to the path in the horizontal plane), over (lifted), or either (the cheaper). Over needs a path with heights (task.path.waypoints_m).'),
  e('task.zones.*.observed_by', undefined, ['left', 'right', 'both'], 'Which arm\'s area sensor sees the zone.'),
  e('task.zones.*.kind', 'clamp_post', ['clamp_post', 'cable_tray', 'other'], 'What may stand there (for reports).'),

  // ---- ROS 2 node (the live node only; replay and simulate ignore these) -------------------
  b('use_sim_time', false, 'Follow /clock. Declared by rcl itself; listed so that a ros2 param dump of the node loads back.'),
  { key: 'ros.frames.cell', type: 'string', unit: '', default: 'cell', description: 'Frame of the tool pose and of the recommended twist; a tool pose in another frame is refused.' },
  { key: 'ros.frames.sensor', type: 'string', unit: '', default: 'left_ft_sensor', armDefault: { left: 'left_ft_sensor', right: 'right_ft_sensor' }, description: 'frame_id the wrench must carry (a wrench in another frame is refused); the output wrenches carry it.' },
  v('ros.frames.sensor_in_tool_xyzw', '1', [0, 0, 0, 1], 4, -1, 1, 'Orientation of the sensor frame in the tool frame (unit quaternion x, y, z, w): the sensor orientation is the tool orientation times this.'),
  { key: 'ros.joint_names', type: 'string_array', unit: '', default: [], description: 'This arm\'s joints in JointState, by name; joints of other names are ignored. Empty: every joint in the message is this arm\'s (a per-arm joint_states topic).' },
  i('ros.input_queue_depth', 100, 1, 10000, 'Queue depth of every input subscription (100 = 0.1 s of a 1 kHz wrench).'),
  e('ros.time_source', 'header', ['header', 'arrival'], 'Time of a sample: its header stamp (robust to event-loop pauses and clock steps), or the ROS time at arrival (what bag log times record).'),
  d('ros.clock_step_warn_s', 's', 0.005, 0.0001, 1, 'Warn when the ROS clock advances in steps above this (e.g. ros2 bag play --clock at its default 40 Hz).'),
  b('ros.services.enabled', true, 'Offer ~/reset_hold and ~/tare. Read-only: false leaves the hold to be released by restarting the node.'),
  d('ros.markers.rate_hz', 'Hz', 2, 0, 30, 'Rate of the visualization_msgs/MarkerArray topic antiphon/markers; 0 turns the markers off.'),
  e('ros.qos.status.reliability', 'reliable', ['reliable', 'best_effort'], 'Reliability of antiphon/role, antiphon/watchdog, antiphon/belief and antiphon/markers.'),
  i('ros.qos.status.depth', 10, 1, 1000, 'Queue depth of antiphon/role, antiphon/watchdog, antiphon/belief and antiphon/markers.'),
  e('ros.qos.wrenches.reliability', 'reliable', ['reliable', 'best_effort'], 'Reliability of antiphon/correction_wrench and antiphon/impact_wrench.'),
  i('ros.qos.wrenches.depth', 10, 1, 1000, 'Queue depth of antiphon/correction_wrench and antiphon/impact_wrench.'),
];

/** Specs by exact key or pattern key. */
export const SPEC_BY_KEY: ReadonlyMap<string, ParamSpec> = new Map(SCHEMA.map((s) => [s.key, s]));

/** The spec a concrete dotted key falls under (exact match first, then `*` patterns). */
export function specFor(key: string): ParamSpec | undefined {
  const exact = SPEC_BY_KEY.get(key);
  if (exact) return exact;
  const parts = key.split('.');
  for (const s of SCHEMA) {
    if (!s.key.includes('*')) continue;
    const pp = s.key.split('.');
    if (pp.length !== parts.length) continue;
    if (pp.every((p, k) => p === '*' || p === parts[k])) return s;
  }
  return undefined;
}
