/**
 * The typed configuration of one arm, built from resolved parameters, with the checks that
 * span several keys (done once at load, never at the 1000th sample).
 */
import { InputError, type Problem } from '../util/errors.js';
import { loadParamsFile, resolveForArm, type ParamsFile } from './load.js';
import { pathProblems } from './task-geometry.js';
import type { ArmName, ParamValue, ResolvedValue } from './spec.js';

export type ZoneShape = 'box' | 'circle' | 'cylinder' | 'sphere';
export type Detours = 'sideways' | 'over' | 'both';
export type Observer = 'left' | 'right' | 'both';

export interface ZoneConfig {
  readonly name: string;
  readonly shape: ZoneShape;
  readonly center_m: readonly [number, number];
  readonly size_m: readonly [number, number];
  readonly radius_m: number;
  // The 3-D fields are optional so that zones built in code (tests, scenario families) keep
  // working; a parameters file always gives them (schema defaults).
  /** Box and cylinder: bottom and top height (cell frame). Default [0, 10]: floor to far above. */
  readonly height_m?: readonly [number, number];
  /** Sphere: centre height. Default 0. */
  readonly center_z_m?: number;
  /** Box: turn about the vertical (rad). Default 0. */
  readonly yaw_rad?: number;
  /** Allowed detours. Default sideways. */
  readonly detours?: Detours;
  readonly observed_by: Observer;
  readonly kind: string;
}

export interface WrenchFilterParams {
  readonly sample_rate_hz: number;
  readonly cutoff_hz: number;
  readonly order: number;
  readonly correction_force_n: number;
  readonly correction_torque_nm: number;
  readonly tare: {
    readonly window_s: number;
    readonly still_force_n: number;
    readonly still_torque_nm: number;
    readonly on_start: boolean;
    readonly max_bias_n: number;
    readonly max_bias_nm: number;
    readonly max_change_n: number;
    readonly max_change_nm: number;
    readonly max_horizontal_bias_n: number;
    readonly still_twist_m_s: number;
    readonly still_joint_rad_s: number;
  };
  readonly payload: { readonly enabled: boolean; readonly mass_kg: number; readonly com_m: readonly [number, number, number] };
  readonly impact: { readonly force_n: number; readonly torque_nm: number; readonly release_ratio: number; readonly min_duration_s: number; readonly hold_s: number };
}

export interface WatchdogParams {
  readonly force_limit_n: number;
  readonly torque_limit_nm: number;
  readonly correction_force_limit_n: number;
  readonly correction_torque_limit_nm: number;
  readonly joint_velocity_limit_rad_s: number;
  readonly linear_speed_limit_m_s: number;
  readonly angular_speed_limit_rad_s: number;
  readonly stale_after_s: { readonly wrench: number; readonly joint_states: number; readonly tool_pose: number; readonly zone_view: number; readonly hold_link: number };
  readonly on_impact: 'hold' | 'report';
  readonly release_clear_s: number;
  readonly future_tolerance_s: number;
  readonly quaternion_norm_tolerance: number;
  readonly require_joint_velocity: boolean;
  readonly partner_stop: { readonly enabled: boolean; readonly speed_ratio: number; readonly window_s: number; readonly min_speed_m_s: number };
  readonly hold_link: { readonly enabled: boolean };
}

export interface RolesParams {
  readonly scheduler: 'fixed' | 'alternating' | 'adaptive' | 'lookahead';
  readonly fixed_role: 'speaker' | 'listener';
  readonly period_s: number;
  readonly phase: 0 | 1;
  /** The lookahead scheduler's common progress estimate (src/core/roles.ts). */
  readonly lookahead: { readonly speed_fraction: number; readonly start_delay_s: number; readonly lead_m: number; readonly detour_s: number };
}

export interface BeliefParams {
  readonly update_rate_hz: number;
  readonly noise_force_n: number;
  readonly forgetting: number;
  readonly commit_probability: number;
  readonly release_probability: number;
  readonly disturbance_force_n: number;
  readonly disturbance_time_s: number;
  readonly max_hidden_zones: number;
}

export interface PolicyParams {
  readonly speed_m_s: number;
  readonly goal_gain_1_s: number;
  readonly repulsion_gain_m_s: number;
  readonly repulsion_range_m: number;
  readonly legibility_gain: number;
  readonly confidence_floor: number;
  readonly accel_limit_m_s2: number;
  readonly update_rate_hz: number;
}

export interface TaskParams {
  readonly object: { readonly length_m: number; readonly mass_kg: number; readonly grasp_offset_m: number; readonly radius_m?: number };
  /**
   * The nominal path: waypoints (x, y, z triples) and orientations (x, y, z, w per waypoint;
   * empty: identity). Empty waypoints: the planar straight line start_m -> goal_m. With
   * waypoints, start_m and goal_m are the first and last waypoint's x, y.
   */
  readonly path?: { readonly waypoints_m: readonly number[]; readonly orientations_xyzw: readonly number[] };
  readonly start_m: readonly [number, number];
  readonly goal_m: readonly [number, number];
  readonly goal_tolerance_m: number;
  readonly time_limit_s: number;
  /** Sorted by name: both arms enumerate hypotheses in the same order without messages. */
  readonly zones: readonly ZoneConfig[];
}

export interface ArmConfig {
  readonly arm: ArmName;
  readonly wrench_filter: WrenchFilterParams;
  readonly watchdog: WatchdogParams;
  readonly roles: RolesParams;
  readonly belief: BeliefParams;
  readonly coupling: { readonly damping_n_s_m: number };
  readonly policy: PolicyParams;
  readonly task: TaskParams;
}

/** A resolved arm configuration together with where each value came from. */
export interface LoadedArm {
  readonly config: ArmConfig;
  readonly values: ReadonlyMap<string, ResolvedValue>;
}

function nest(values: ReadonlyMap<string, ResolvedValue>): Record<string, unknown> {
  const root: Record<string, unknown> = {};
  for (const { key, value } of values.values()) {
    const parts = key.split('.');
    let obj = root;
    for (let k = 0; k < parts.length - 1; k++) obj = (obj[parts[k]!] ??= {}) as Record<string, unknown>;
    obj[parts[parts.length - 1]!] = value as ParamValue;
  }
  return root;
}

/** Build and cross-check one arm's configuration. `file` may be undefined (all defaults). */
export function buildArmConfig(file: ParamsFile | undefined, arm: ArmName): LoadedArm {
  const values = resolveForArm(file, arm);
  const tree = nest(values) as Record<string, any>;
  const zonesRec = (tree['task']?.zones ?? {}) as Record<string, Omit<ZoneConfig, 'name'>>;
  const zones = Object.keys(zonesRec)
    .sort()
    .map((name) => ({ name, ...zonesRec[name]! }) as ZoneConfig);
  const taskTree = { ...tree['task'], zones } as Record<string, any>;
  // With waypoints, the start and the goal are the path's ends (x, y).
  const wp = (taskTree['path']?.waypoints_m ?? []) as number[];
  if (wp.length >= 6 && wp.length % 3 === 0) {
    taskTree['start_m'] = [wp[0], wp[1]];
    taskTree['goal_m'] = [wp[wp.length - 3], wp[wp.length - 2]];
  }
  const config = { arm, ...tree, task: taskTree } as unknown as ArmConfig;
  crossCheck(config, values);
  return { config, values };
}

/** Load a parameters file (or none) and build both arms. */
export function loadCell(path: string | undefined): { file: ParamsFile | undefined; left: LoadedArm; right: LoadedArm } {
  return cellFromFile(path === undefined ? undefined : loadParamsFile(path), path);
}

/** Build and cross-check both arms from a parsed parameters file (or none: defaults); `path` names it in problems. */
export function cellFromFile(file: ParamsFile | undefined, path: string | undefined): { file: ParamsFile | undefined; left: LoadedArm; right: LoadedArm } {
  const problems: Problem[] = [];
  const build = (arm: ArmName): LoadedArm | undefined => {
    try {
      return buildArmConfig(file, arm);
    } catch (err) {
      if (err instanceof InputError) problems.push(...err.problems.map((p) => ({ ...p, message: `[${arm}] ${p.message}` })));
      else throw err;
      return undefined;
    }
  };
  const left = build('left');
  const right = build('right');
  // Both arms must agree on what is common knowledge: the task geometry and the clock. Checked on
  // the resolved values (which never fail), so these are listed together with each arm's own problems.
  const lv = resolveForArm(file, 'left');
  const rv = resolveForArm(file, 'right');
  const task = (v: ReadonlyMap<string, ResolvedValue>) => JSON.stringify([...v.values()].filter((x) => x.key.startsWith('task.')).map((x) => [x.key, x.value]));
  if (task(lv) !== task(rv)) {
    problems.push({ code: 'param.task_mismatch', message: 'left and right sections describe different tasks', where: { file: path }, hint: 'put task.* in the /** section so both arms share it' });
  }
  const val = (v: ReadonlyMap<string, ResolvedValue>, key: string) => v.get(key)?.value;
  if (val(lv, 'roles.scheduler') === 'alternating' && val(rv, 'roles.scheduler') === 'alternating' && val(lv, 'roles.phase') === val(rv, 'roles.phase')) {
    problems.push({ code: 'param.same_phase', message: 'both arms have the same roles.phase, so they would speak at the same time', where: { file: path, key: 'roles.phase' }, hint: 'set roles.phase: 0 for one arm and 1 for the other' });
  }
  // Everything each arm reproduces of the other (the partner's policy in the likelihood, the
  // replica, the role clock) must be the same on both arms.
  const shared = (k: string) => k.startsWith('belief.') || k.startsWith('policy.') || k.startsWith('coupling.') || k === 'roles.scheduler' || k === 'roles.period_s' || k.startsWith('roles.lookahead.');
  for (const key of new Set([...lv.keys(), ...rv.keys()])) {
    if (!shared(key)) continue;
    const a = JSON.stringify(val(lv, key));
    const b = JSON.stringify(val(rv, key));
    if (a !== b) {
      const src = (rv.get(key)?.source.file ? rv : lv).get(key)?.source;
      problems.push({
        code: 'param.arms_differ',
        message: `${key} is ${a} for the left arm and ${b} for the right: each arm reproduces the other's policy, belief and clock, so both must use the same value`,
        where: { file: path, key, ...(src?.line !== undefined ? { line: src.line, column: src.column } : {}) },
        hint: `set ${key} once, in the /** section`,
      });
    }
  }
  const sched = val(lv, 'roles.scheduler');
  if ((sched === 'adaptive' || sched === 'lookahead') && val(lv, 'roles.phase') === val(rv, 'roles.phase')) {
    problems.push({ code: 'param.same_phase', message: `both arms have the same roles.phase; the ${String(sched)} scheduler alternates on it when no private zone is ahead, so they would speak at the same time`, where: { file: path, key: 'roles.phase' }, hint: 'set roles.phase: 0 for one arm and 1 for the other' });
  }
  if (sched === 'fixed' && val(rv, 'roles.scheduler') === 'fixed' && val(lv, 'roles.fixed_role') === val(rv, 'roles.fixed_role')) {
    problems.push({ code: 'param.same_fixed_role', message: `both arms have roles.fixed_role ${String(val(lv, 'roles.fixed_role'))}: with fixed roles one arm must speak and the other listen`, where: { file: path, key: 'roles.fixed_role' }, hint: 'speaker for one arm, listener for the other' });
  }
  if (problems.length) throw new InputError(dedupe(problems));
  return { file, left: left!, right: right! };
}

function dedupe(problems: Problem[]): Problem[] {
  const seen = new Set<string>();
  return problems.filter((p) => {
    const k = JSON.stringify({ ...p, message: p.message.replace(/^\[(left|right)\] /, '') });
    if (seen.has(k)) return false;
    seen.add(k);
    return true;
  });
}

function crossCheck(c: ArmConfig, values: ReadonlyMap<string, ResolvedValue>): void {
  const problems: Problem[] = [];
  const where = (key: string) => {
    const s = values.get(key)?.source;
    return { key, ...(s?.file ? { file: s.file, line: s.line, column: s.column } : {}) };
  };
  const wf = c.wrench_filter;
  if (wf.cutoff_hz >= 0.45 * wf.sample_rate_hz) {
    problems.push({ code: 'param.cutoff_too_high', message: `wrench_filter.cutoff_hz = ${wf.cutoff_hz} Hz is too close to the Nyquist frequency of ${wf.sample_rate_hz} Hz`, where: where('wrench_filter.cutoff_hz'), hint: `below ${0.45 * wf.sample_rate_hz} Hz` });
  }
  // A wrench gap of one sample must not read as stale: allow at least two sample periods.
  if (c.watchdog.stale_after_s.wrench < 2 / wf.sample_rate_hz) {
    problems.push({ code: 'param.stale_below_period', message: `watchdog.stale_after_s.wrench = ${c.watchdog.stale_after_s.wrench} s is shorter than two wrench samples at ${wf.sample_rate_hz} Hz`, where: where('watchdog.stale_after_s.wrench'), hint: `at least ${(2 / wf.sample_rate_hz).toPrecision(3)} s` });
  }
  if (c.belief.release_probability > c.belief.commit_probability) {
    problems.push({ code: 'param.release_above_commit', message: `belief.release_probability = ${c.belief.release_probability} exceeds belief.commit_probability = ${c.belief.commit_probability}`, where: where('belief.release_probability'), hint: `at most ${c.belief.commit_probability} (a committed zone is released below it)` });
  }
  if (c.watchdog.partner_stop.enabled && c.watchdog.partner_stop.min_speed_m_s >= c.policy.speed_m_s) {
    problems.push({ code: 'param.partner_stop_never_armed', message: `watchdog.partner_stop.min_speed_m_s = ${c.watchdog.partner_stop.min_speed_m_s} m/s is not below policy.speed_m_s = ${c.policy.speed_m_s} m/s, so the partner-stop check would never run`, where: where('watchdog.partner_stop.min_speed_m_s'), hint: `below ${c.policy.speed_m_s} m/s, or set watchdog.partner_stop.enabled: false` });
  }
  if (c.watchdog.partner_stop.enabled && c.watchdog.partner_stop.speed_ratio >= c.policy.confidence_floor) {
    problems.push({ code: 'param.partner_stop_above_floor', message: `watchdog.partner_stop.speed_ratio = ${c.watchdog.partner_stop.speed_ratio} is not below policy.confidence_floor = ${c.policy.confidence_floor}: a listener slowing down while unsure would read as a stopped partner`, where: where('watchdog.partner_stop.speed_ratio'), hint: `below ${c.policy.confidence_floor}` });
  }
  if (c.wrench_filter.tare.still_twist_m_s >= c.policy.speed_m_s) {
    problems.push({ code: 'param.tare_gate_open', message: `wrench_filter.tare.still_twist_m_s = ${c.wrench_filter.tare.still_twist_m_s} m/s is not below policy.speed_m_s = ${c.policy.speed_m_s} m/s, so a cruising arm would count as still for a tare`, where: where('wrench_filter.tare.still_twist_m_s'), hint: `well below ${c.policy.speed_m_s} m/s (default 0.005)` });
  }
  if (c.wrench_filter.tare.still_joint_rad_s >= c.watchdog.joint_velocity_limit_rad_s) {
    problems.push({ code: 'param.tare_gate_open', message: `wrench_filter.tare.still_joint_rad_s = ${c.wrench_filter.tare.still_joint_rad_s} rad/s is not below watchdog.joint_velocity_limit_rad_s = ${c.watchdog.joint_velocity_limit_rad_s} rad/s`, where: where('wrench_filter.tare.still_joint_rad_s'), hint: 'well below the joint speed limit (default 0.02)' });
  }
  {
    const st = c.watchdog.stale_after_s;
    const minStale = Math.min(st.joint_states, st.tool_pose, st.zone_view, st.hold_link);
    if (c.watchdog.future_tolerance_s > minStale) {
      problems.push({ code: 'param.future_above_stale', message: `watchdog.future_tolerance_s = ${c.watchdog.future_tolerance_s} s exceeds the shortest input staleness limit (${minStale} s): an input stamped that far ahead would go unseen for longer than its limit`, where: where('watchdog.future_tolerance_s'), hint: `at most ${minStale} s` });
    }
  }
  if (c.watchdog.partner_stop.enabled && c.watchdog.partner_stop.window_s < 2 / c.belief.update_rate_hz) {
    problems.push({ code: 'param.partner_stop_window_short', message: `watchdog.partner_stop.window_s = ${c.watchdog.partner_stop.window_s} s is shorter than two belief updates at ${c.belief.update_rate_hz} Hz`, where: where('watchdog.partner_stop.window_s'), hint: `at least ${(2 / c.belief.update_rate_hz).toPrecision(3)} s` });
  }
  for (const k of ['belief.update_rate_hz', 'policy.update_rate_hz'] as const) {
    const rate = k === 'belief.update_rate_hz' ? c.belief.update_rate_hz : c.policy.update_rate_hz;
    if (rate > wf.sample_rate_hz) problems.push({ code: 'param.rate_above_sample_rate', message: `${k} = ${rate} Hz exceeds wrench_filter.sample_rate_hz = ${wf.sample_rate_hz} Hz`, where: where(k), hint: 'at most the sample rate' });
  }
  if (c.policy.speed_m_s > c.watchdog.linear_speed_limit_m_s) {
    problems.push({ code: 'param.speed_above_limit', message: `policy.speed_m_s = ${c.policy.speed_m_s} exceeds watchdog.linear_speed_limit_m_s = ${c.watchdog.linear_speed_limit_m_s}`, where: where('policy.speed_m_s'), hint: 'the policy must cruise below the watchdog limit' });
  }
  if (c.task.object.grasp_offset_m > c.task.object.length_m / 2) {
    problems.push({ code: 'param.grasp_off_object', message: `task.object.grasp_offset_m = ${c.task.object.grasp_offset_m} lies beyond the object's end (length ${c.task.object.length_m} m)`, where: where('task.object.grasp_offset_m'), hint: `at most ${c.task.object.length_m / 2} m` });
  }
  const hidden = c.task.zones.filter((z) => z.observed_by !== 'both' && z.observed_by !== c.arm);
  if (hidden.length > c.belief.max_hidden_zones) {
    problems.push({ code: 'param.too_many_hypotheses', message: `${hidden.length} zones are seen only by the partner: 2^${hidden.length} hypotheses exceed the limit of 2^${c.belief.max_hidden_zones}`, where: where('belief.max_hidden_zones'), hint: 'at most 8 partner-only zones (256 hypotheses); merge zones or mark some observed by both' });
  }
  if (hidden.length > 0 && c.policy.repulsion_gain_m_s === 0) {
    problems.push({ code: 'param.singular_speaker', message: 'policy.repulsion_gain_m_s = 0: the speaker\'s velocity would not depend on the zones it sees, so a listener could never infer them', where: where('policy.repulsion_gain_m_s'), hint: 'a positive gain' });
  }
  const explicit = new Set([...values.values()].filter((v) => v.source.kind === 'file').map((v) => v.key));
  problems.push(...pathProblems(c.task, where, explicit));
  const half = c.task.object.length_m / 2;
  const planarTask = !c.task.path || c.task.path.waypoints_m.length === 0;
  for (const z of planarTask ? c.task.zones : []) {
    for (const [label, p] of [['goal', c.task.goal_m], ['start', c.task.start_m]] as const) {
      if (segmentHitsZone(p[0], p[1] - half, p[1] + half, z)) {
        problems.push({ code: `param.zone_overlaps_${label}`, message: `zone '${z.name}' overlaps the object at the ${label} (${p[0]}, ${p[1]})`, where: where(`task.zones.${z.name}.center_m`), hint: `move the zone or the ${label} so the ${c.task.object.length_m} m object clears it` });
      }
    }
  }
  if (problems.length) throw new InputError(problems);
}

/** Does the segment x = const, y in [y0, y1] touch the zone? */
export function segmentHitsZone(x: number, y0: number, y1: number, z: ZoneConfig): boolean {
  const [cx, cy] = z.center_m;
  if (z.shape === 'box') {
    const hx = z.size_m[0] / 2;
    const hy = z.size_m[1] / 2;
    return Math.abs(x - cx) <= hx && y1 >= cy - hy && y0 <= cy + hy;
  }
  const yy = Math.min(Math.max(cy, y0), y1);
  return Math.hypot(x - cx, yy - cy) <= z.radius_m;
}
