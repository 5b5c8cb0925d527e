/**
 * The parameter table itself (src/params/schema.ts), rule by rule: names as ROS 2 parameter
 * names (dot-separated lowercase words; ROS 2's parameter naming, from memory), the unit in
 * the name and in `unit` agreeing (our convention "units in names", SI units as in ROS REP 103,
 * from memory), a description for every row (check-config --list and the ROS parameter
 * descriptors print it), defaults inside their own ranges and below their ceilings, choices
 * that hold their default, and the shipped switches and choices of the safety behaviour pinned
 * (SAFETY.md: changing one is a code change).
 */
import { describe, expect, it } from 'vitest';
import { SCHEMA, SPEC_BY_KEY, specFor } from '../../src/params/schema.js';

/** Name suffix → SI unit (REP 103 units, from memory; `_1_s` is per second). Longest first. */
const SUFFIX_UNITS: [string, string][] = [
  ['_n_s_m', 'N*s/m'],
  ['_m_s2', 'm/s^2'],
  ['_rad_s', 'rad/s'],
  ['_rad', 'rad'],
  ['_m_s', 'm/s'],
  ['_1_s', '1/s'],
  ['_hz', 'Hz'],
  ['_nm', 'N*m'],
  ['_kg', 'kg'],
  ['_n', 'N'],
  ['_s', 's'],
  ['_m', 'm'],
];
/** The unit a name gives: its last segment with a unit suffix (`stale_after_s.wrench` is in s). */
const unitOfName = (key: string): string | undefined => {
  for (const seg of key.split('.').reverse()) {
    const u = SUFFIX_UNITS.find(([suffix]) => seg.endsWith(suffix))?.[1];
    if (u !== undefined) return u;
  }
  return undefined;
};

describe('the parameter table', () => {
  it('has unique names, each dot-separated lowercase words (a `*` segment for a user-chosen name)', () => {
    const keys = SCHEMA.map((s) => s.key);
    expect(new Set(keys).size).toBe(keys.length);
    for (const k of keys) expect(k, k).toMatch(/^([a-z][a-z0-9_]*|\*)(\.([a-z][a-z0-9_]*|\*))*$/);
    expect(SPEC_BY_KEY.size).toBe(SCHEMA.length);
    // ROS 2 parameter types (rcl_interfaces/ParameterType names, src/params/spec.ts).
    for (const s of SCHEMA) expect(['double', 'integer', 'bool', 'string', 'double_array', 'string_array'], s.key).toContain(s.type);
    expect(SPEC_BY_KEY.get('wrench_filter.order')!.type).toBe('integer');
    expect(SPEC_BY_KEY.get('task.start_m')!.type).toBe('double_array');
    expect(SPEC_BY_KEY.get('ros.frames.sensor')!.type).toBe('string');
  });

  it('gives every number its SI unit, the one its name ends in; switches and choices have none', () => {
    for (const s of SCHEMA) {
      if (s.type === 'bool' || s.type === 'string' || s.type === 'string_array') {
        expect(s.unit, s.key).toBe('');
        continue;
      }
      expect(s.unit, s.key).not.toBe('');
      const fromName = unitOfName(s.key);
      // A name without a unit suffix is a count or a ratio (unit 1).
      expect(s.unit, s.key).toBe(fromName ?? '1');
    }
  });

  it('describes every row in a sentence', () => {
    for (const s of SCHEMA) {
      expect(s.description.length, s.key).toBeGreaterThan(10);
      expect(s.description, s.key).toMatch(/^[A-Za-z~`]/);
      expect(s.description, s.key).toMatch(/[.)]$/);
    }
  });

  it('keeps every default inside its range, of its type and length, and at or below its ceiling', () => {
    for (const s of SCHEMA) {
      const defaults = [s.default, ...(s.armDefault ? [s.armDefault.left, s.armDefault.right] : [])].filter((d) => d !== undefined);
      for (const d of defaults) {
        const values = Array.isArray(d) ? d : [d];
        if (s.type === 'double_array' && s.length !== undefined) expect(values.length, s.key).toBe(s.length);
        for (const v of values) {
          if (s.type === 'bool') expect(typeof v, s.key).toBe('boolean');
          else if (s.type === 'string' || s.type === 'string_array') expect(typeof v, s.key).toBe('string');
          else {
            expect(typeof v, s.key).toBe('number');
            if (s.type === 'integer') expect(Number.isInteger(v), s.key).toBe(true);
            expect(v as number, s.key).toBeGreaterThanOrEqual(s.min!);
            expect(v as number, s.key).toBeLessThanOrEqual(s.max!);
            if (s.ceiling !== undefined) expect(v as number, s.key).toBeLessThanOrEqual(s.ceiling);
          }
        }
      }
      if (s.type === 'double' || s.type === 'integer' || s.type === 'double_array') expect(s.min!, s.key).toBeLessThan(s.max!);
      // Only the rows with a ceiling carry the field; a ceiling lies inside the range it cuts.
      if (s.ceiling === undefined) expect('ceiling' in s, s.key).toBe(false);
      else {
        expect(s.ceiling, s.key).toBeGreaterThan(s.min!);
        expect(s.ceiling, s.key).toBeLessThanOrEqual(s.max!);
      }
      if (s.type === 'string' && s.choices) {
        expect(s.choices.length, s.key).toBeGreaterThanOrEqual(2);
        expect(new Set(s.choices).size, s.key).toBe(s.choices.length);
        for (const c of s.choices) expect(c, s.key).toMatch(/^[a-z][a-z_]*$/);
        if (s.default !== undefined) expect(s.choices, s.key).toContain(s.default);
      }
    }
  });

  it('ships the safety switches and choices at their documented values (SAFETY.md)', () => {
    const shipped = Object.fromEntries(SCHEMA.filter((s) => s.type === 'bool' || (s.type === 'string' && s.choices)).map((s) => [s.key, [s.default, s.choices]]));
    expect(shipped).toEqual({
      'wrench_filter.tare.on_start': [true, undefined],
      'wrench_filter.payload.enabled': [false, undefined],
      'watchdog.require_joint_velocity': [false, undefined],
      'watchdog.partner_stop.enabled': [true, undefined],
      'watchdog.hold_link.enabled': [false, undefined],
      'watchdog.on_impact': ['hold', ['hold', 'report']],
      'roles.scheduler': ['alternating', ['fixed', 'alternating', 'adaptive', 'lookahead']],
      'roles.fixed_role': ['speaker', ['speaker', 'listener']],
      'task.zones.*.shape': [undefined, ['box', 'circle', 'cylinder', 'sphere']],
      'task.zones.*.detours': ['sideways', ['sideways', 'over', 'both']],
      'task.zones.*.observed_by': [undefined, ['left', 'right', 'both']],
      'task.zones.*.kind': ['clamp_post', ['clamp_post', 'cable_tray', 'other']],
      use_sim_time: [false, undefined],
      'ros.time_source': ['header', ['header', 'arrival']],
      'ros.services.enabled': [true, undefined],
      'ros.qos.status.reliability': ['reliable', ['reliable', 'best_effort']],
      'ros.qos.wrenches.reliability': ['reliable', ['reliable', 'best_effort']],
    });
  });

  it('has ceilings (each value pinned with its source in test/hardening/param-ceilings.test.ts), the force ceiling at 500 N', () => {
    const ceilings = SCHEMA.filter((s) => s.ceiling !== undefined);
    expect(ceilings.length).toBeGreaterThanOrEqual(20);
    expect(SPEC_BY_KEY.get('watchdog.force_limit_n')!.ceiling).toBe(500);
    expect(ceilings.every((s) => s.type === 'double')).toBe(true);
  });

  it('gives the two arms their own defaults where they must differ', () => {
    expect(SPEC_BY_KEY.get('roles.phase')!.armDefault).toEqual({ left: 0, right: 1 });
    expect(SPEC_BY_KEY.get('ros.frames.sensor')!.armDefault).toEqual({ left: 'left_ft_sensor', right: 'right_ft_sensor' });
    expect(SPEC_BY_KEY.get('ros.frames.cell')!.default).toBe('cell');
    expect(SPEC_BY_KEY.get('ros.joint_names')).toMatchObject({ type: 'string_array', default: [] });
    expect(SCHEMA.filter((s) => s.armDefault).map((s) => s.key)).toEqual(['roles.phase', 'ros.frames.sensor']);
  });

  it('specFor: an exact name, then a `*` pattern of the same depth, else nothing', () => {
    expect(specFor('watchdog.force_limit_n')?.key).toBe('watchdog.force_limit_n');
    expect(specFor('task.zones.clamp_post.shape')?.key).toBe('task.zones.*.shape');
    expect(specFor('task.zones.clamp_post.radius_m')?.key).toBe('task.zones.*.radius_m');
    expect(specFor('task.zones.shape')).toBeUndefined();
    expect(specFor('task.zones.a.b.shape')).toBeUndefined();
    expect(specFor('task.zones.a.shape.extra')).toBeUndefined();
    expect(specFor('task.zonez.a.shape')).toBeUndefined();
    expect(specFor('watchdog.force_limit')).toBeUndefined();
    expect(specFor('')).toBeUndefined();
  });
});
