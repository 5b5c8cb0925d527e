/**
 * Run-time parameters of the live node: which keys may change while running, their ROS
 * descriptors (description, unit, range), and the check of a proposed change through the one
 * schema (src/params/schema.ts: type, range, hard ceiling) and the cross-key checks.
 *
 * Live keys are thresholds, limits, gains and periods that change no buffer size and no filter
 * design; the arm step applies them at a sample boundary (ArmStep.applyParams). Every other key
 * is structural and declared read-only: change it in the parameters file and restart.
 */
import { buildArmConfig, type ArmConfig } from '../params/config.js';
import { parseParamsText } from '../params/load.js';
import { specFor } from '../params/schema.js';
import type { ArmName, ParamSpec, ParamValue, ResolvedValue } from '../params/spec.js';
import { InputError, formatProblem } from '../util/errors.js';
import { PARAMETER_TYPE, type RclModule, type RclParameterValue } from './rcl.js';

/** Schema keys (or patterns) that may change at run time. */
export const LIVE_KEYS: ReadonlySet<string> = new Set([
  'wrench_filter.tare.still_force_n',
  'wrench_filter.tare.still_torque_nm',
  'wrench_filter.impact.force_n',
  'wrench_filter.impact.torque_nm',
  'wrench_filter.impact.release_ratio',
  'wrench_filter.impact.min_duration_s',
  'wrench_filter.impact.hold_s',
  'wrench_filter.correction_force_n',
  'wrench_filter.correction_torque_nm',
  'watchdog.force_limit_n',
  'watchdog.torque_limit_nm',
  'watchdog.correction_force_limit_n',
  'watchdog.correction_torque_limit_nm',
  'watchdog.joint_velocity_limit_rad_s',
  'watchdog.linear_speed_limit_m_s',
  'watchdog.angular_speed_limit_rad_s',
  'watchdog.stale_after_s.wrench',
  'watchdog.stale_after_s.joint_states',
  'watchdog.stale_after_s.tool_pose',
  'watchdog.stale_after_s.zone_view',
  'watchdog.stale_after_s.hold_link',
  'watchdog.release_clear_s',
  'watchdog.partner_stop.speed_ratio',
  'roles.period_s',
  'roles.phase',
  'belief.noise_force_n',
  'belief.forgetting',
  'belief.commit_probability',
  'belief.release_probability',
  'coupling.damping_n_s_m',
  'policy.speed_m_s',
  'policy.goal_gain_1_s',
  'policy.repulsion_gain_m_s',
  'policy.repulsion_range_m',
  'policy.legibility_gain',
  'policy.confidence_floor',
  'policy.accel_limit_m_s2',
  'ros.clock_step_warn_s',
]);

/** Keys both arms must share: a change on one arm alone breaks the alternation. */
export const SHARED_KEYS: ReadonlySet<string> = new Set(['roles.period_s', 'roles.phase']);

export const isLive = (key: string): boolean => LIVE_KEYS.has(specFor(key)?.key ?? key);

/** rcl declares use_sim_time itself; antiphon never declares it. */
export const RCL_OWN = new Set(['use_sim_time']);

/** Which of the arm's two nodes holds a parameter (the node whose part of the pipeline reads it). */
export function ownerOf(key: string): 'roles' | 'inference' {
  return key.startsWith('wrench_filter.') || key.startsWith('watchdog.') || key.startsWith('roles.') ? 'roles' : 'inference';
}

export function describe(spec: ParamSpec): string {
  const unit = spec.unit && spec.unit !== '1' ? ` [${spec.unit}]` : '';
  const ceiling = spec.ceiling !== undefined ? ` Hard ceiling ${spec.ceiling} ${spec.unit}.` : '';
  return `${spec.description}${unit}${ceiling}`;
}

/** The ROS parameter and descriptor of one resolved value. */
export function declaration(rcl: RclModule, v: ResolvedValue): { parameter: object; descriptor: object } {
  const s = v.spec;
  const type = PARAMETER_TYPE[s.type];
  const value = s.type === 'integer' ? BigInt(v.value as number) : v.value;
  let range: object | undefined;
  if (s.min !== undefined && s.max !== undefined && (s.type === 'double' || s.type === 'integer')) {
    const hi = s.ceiling !== undefined ? Math.min(s.max, s.ceiling) : s.max;
    // step 0: a continuous range (the default step 1 would snap values to a grid).
    range = s.type === 'integer' ? new rcl.IntegerRange(BigInt(s.min), BigInt(hi), 1n) : new rcl.FloatingPointRange(s.min, hi, 0);
  }
  return { parameter: new rcl.Parameter(v.key, type, value), descriptor: new rcl.ParameterDescriptor(v.key, type, describe(s), !isLive(v.key), range) };
}

/** A ROS parameter value as YAML text the loader reads like a file (doubles keep a decimal point). */
function yamlOf(p: RclParameterValue): string | undefined {
  const num = (x: unknown) => {
    const n = Number(x);
    return Number.isInteger(n) && p.type === PARAMETER_TYPE.double ? `${n}.0` : String(n);
  };
  switch (p.type) {
    case PARAMETER_TYPE.bool: return String(p.value === true);
    case PARAMETER_TYPE.integer: return String(p.value);
    case PARAMETER_TYPE.double: return num(p.value);
    case PARAMETER_TYPE.string: return JSON.stringify(String(p.value));
    case PARAMETER_TYPE.double_array: return `[${Array.from(p.value as ArrayLike<number>, (x) => (Number.isInteger(x) ? `${x}.0` : String(x))).join(', ')}]`;
    case PARAMETER_TYPE.string_array: return JSON.stringify(Array.from(p.value as ArrayLike<string>));
    default: return undefined;
  }
}

export interface Change {
  readonly key: string;
  readonly old: ParamValue;
  readonly value: ParamValue;
}

export type Checked =
  | { ok: true; config: ArmConfig; values: Map<string, ResolvedValue>; changes: Change[]; warnings: string[] }
  | { ok: false; reason: string };

/**
 * Check proposed values against the schema and the cross-key checks, on top of `values`.
 * `source` names where they come from (`ros2 param set`, `--ros-args -p`).
 */
export function checkChanges(arm: ArmName, values: ReadonlyMap<string, ResolvedValue>, proposed: readonly RclParameterValue[], source: string, opts: { allowStructural?: boolean } = {}): Checked {
  const problems: string[] = [];
  const lines: string[] = [];
  const ours = proposed.filter((p) => !RCL_OWN.has(p.name));
  for (const p of ours) {
    const current = values.get(p.name);
    if (!current) {
      problems.push(`${p.name} is not an antiphon parameter of this node`);
      continue;
    }
    if (!opts.allowStructural && !isLive(p.name)) {
      problems.push(`${p.name} is structural (read-only at run time): change it in the parameters file and restart the node`);
      continue;
    }
    const y = yamlOf(p);
    if (y === undefined) problems.push(`${p.name}: a value of ROS parameter type ${p.type} is not allowed`);
    else lines.push(`    ${JSON.stringify(p.name)}: ${y}`);
  }
  if (problems.length) return { ok: false, reason: problems.join('; ') };
  let parsed;
  try {
    parsed = ours.length ? parseParamsText(`/**:\n  ros__parameters:\n${lines.join('\n')}\n`, source) : undefined;
  } catch (err) {
    if (err instanceof InputError) return { ok: false, reason: err.problems.map((q) => `${q.where?.key ?? ''}: ${q.message}${q.hint ? ` (allowed: ${q.hint})` : ''}`).join('; ') };
    throw err;
  }
  const next = new Map(values);
  const changes: Change[] = [];
  for (const e of parsed?.sections.get('/**')?.values() ?? []) {
    const prev = next.get(e.key)!;
    changes.push({ key: e.key, old: prev.value, value: e.value });
    next.set(e.key, { key: e.key, value: e.value, source: e.source, spec: prev.spec });
  }
  // Cross-key checks (e.g. the policy speed below the watchdog limit), on every value at once.
  const entries = new Map([...next.values()].map((v) => [v.key, { key: v.key, value: v.value, source: v.source }]));
  try {
    const built = buildArmConfig({ path: source, sections: new Map([['/**', entries]]) }, arm);
    const warnings = changes.filter((c) => SHARED_KEYS.has(c.key)).map((c) => `${c.key} must be the same on both arms (${c.key === 'roles.phase' ? 'opposite phases' : 'equal values'}): change it on the partner arm too, or the roles no longer alternate`);
    return { ok: true, config: built.config, values: next, changes, warnings };
  } catch (err) {
    if (err instanceof InputError) return { ok: false, reason: err.problems.map((q) => formatProblem(q)).join('; ') };
    throw err;
  }
}
