/**
 * Hardening: every hard safety ceiling of the parameter schema, pinned with its source, and
 * enforced by the loader: a file at the ceiling loads (both arms get the value), a file just
 * past it is refused with `param.above_ceiling` naming the key, file, line and column, in the
 * shared section and in an arm's own section alike.
 *
 * The ceilings are our own safety choices for a software monitor (SAFETY.md: changing one is a
 * code change that goes with the cell's risk assessment), except where a row says otherwise.
 * Raising any of them, or adding or dropping one, fails here.
 */
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { SCHEMA, SPEC_BY_KEY } from '../../src/params/schema.js';
import { lineCol, problemsOf, tempFiles } from '../support/files.js';

const { write } = tempFiles('ceilings');

/** Every ceiling, with its expected value as a literal and where the value comes from. */
const CEILINGS: { key: string; ceiling: number; source: string }[] = [
  { key: 'wrench_filter.tare.max_bias_n', ceiling: 100, source: 'our own safety ceiling (a tare must never hide a load)' },
  { key: 'wrench_filter.tare.max_bias_nm', ceiling: 50, source: 'our own safety ceiling' },
  { key: 'wrench_filter.tare.max_change_n', ceiling: 30, source: 'our own safety ceiling' },
  { key: 'wrench_filter.tare.max_change_nm', ceiling: 10, source: 'our own safety ceiling' },
  { key: 'wrench_filter.tare.max_horizontal_bias_n', ceiling: 30, source: 'our own safety ceiling (weight is vertical: a horizontal bias is a squeeze)' },
  { key: 'watchdog.force_limit_n', ceiling: 500, source: 'our own safety ceiling' },
  { key: 'watchdog.torque_limit_nm', ceiling: 100, source: 'our own safety ceiling' },
  { key: 'watchdog.correction_force_limit_n', ceiling: 300, source: 'our own safety ceiling' },
  { key: 'watchdog.correction_torque_limit_nm', ceiling: 100, source: 'our own safety ceiling' },
  { key: 'watchdog.joint_velocity_limit_rad_s', ceiling: 3.2, source: 'our own safety ceiling' },
  // The default below it, 0.25 m/s, is the reduced speed of ISO 10218-1 (from memory).
  { key: 'watchdog.linear_speed_limit_m_s', ceiling: 1.0, source: 'our own safety ceiling' },
  { key: 'watchdog.angular_speed_limit_rad_s', ceiling: 2.0, source: 'our own safety ceiling' },
  { key: 'watchdog.stale_after_s.wrench', ceiling: 1.0, source: 'our own safety ceiling' },
  { key: 'watchdog.stale_after_s.joint_states', ceiling: 2.0, source: 'our own safety ceiling' },
  { key: 'watchdog.stale_after_s.tool_pose', ceiling: 2.0, source: 'our own safety ceiling' },
  { key: 'watchdog.stale_after_s.zone_view', ceiling: 10.0, source: 'our own safety ceiling' },
  { key: 'watchdog.stale_after_s.hold_link', ceiling: 10.0, source: 'our own safety ceiling' },
  { key: 'watchdog.future_tolerance_s', ceiling: 1.0, source: 'our own safety ceiling' },
  { key: 'watchdog.quaternion_norm_tolerance', ceiling: 0.1, source: 'our own safety ceiling (a unit quaternion is off 1 by float rounding only)' },
  { key: 'watchdog.partner_stop.window_s', ceiling: 3.0, source: 'our own safety ceiling (it bounds the partner-stop detection time)' },
  { key: 'policy.speed_m_s', ceiling: 1.0, source: 'our own safety ceiling (no faster than the linear-speed ceiling)' },
  { key: 'policy.accel_limit_m_s2', ceiling: 10, source: 'our own safety ceiling' },
];

/** Other values a file needs so that only the ceiling is in question (cross-checks stay satisfied). */
const COMPANIONS: Record<string, Record<string, number>> = {
  // policy.speed_m_s must not exceed watchdog.linear_speed_limit_m_s (src/params/config.ts).
  'policy.speed_m_s': { 'watchdog.linear_speed_limit_m_s': 1.0 },
  // future_tolerance_s must not exceed the shortest input staleness limit (src/params/config.ts).
  'watchdog.future_tolerance_s': { 'watchdog.stale_after_s.joint_states': 1.0, 'watchdog.stale_after_s.tool_pose': 1.0, 'watchdog.stale_after_s.zone_view': 1.0, 'watchdog.stale_after_s.hold_link': 1.0 },
};

/** Keys both arms must share (src/params/config.ts): set in one arm's section only, they are refused as param.arms_differ. */
const shared = (key: string) => key.startsWith('policy.') || key.startsWith('belief.') || key.startsWith('coupling.');

/** A YAML float literal (ROS 2 reads `1` as an integer and refuses it for a double). */
const float = (v: number) => (Number.isInteger(v) ? `${v}.0` : String(v));

/** A parameters file setting dotted keys in `section`. */
function fileText(values: Record<string, number>, section = '/**'): string {
  const tree: Record<string, unknown> = {};
  for (const [key, v] of Object.entries(values)) {
    const parts = key.split('.');
    let node = tree;
    for (const p of parts.slice(0, -1)) node = (node[p] ??= {}) as Record<string, unknown>;
    node[parts[parts.length - 1]!] = v;
  }
  const lines: string[] = [];
  const emit = (node: Record<string, unknown>, indent: string) => {
    for (const [k, v] of Object.entries(node)) {
      if (typeof v === 'number') lines.push(`${indent}${k}: ${float(v)}`);
      else {
        lines.push(`${indent}${k}:`);
        emit(v as Record<string, unknown>, indent + '  ');
      }
    }
  };
  emit(tree, '    ');
  return `${section === '/**' ? "'/**'" : section}:\n  ros__parameters:\n${lines.join('\n')}\n`;
}

describe('hard safety ceilings', () => {
  it('the schema holds exactly these ceilings, at these values', () => {
    const inSchema = SCHEMA.filter((s) => s.ceiling !== undefined).map((s) => ({ key: s.key, ceiling: s.ceiling }));
    expect(inSchema).toEqual(CEILINGS.map(({ key, ceiling }) => ({ key, ceiling })));
  });

  it('every default lies at or below its ceiling; the linear speed default is the 0.25 m/s reduced speed', () => {
    for (const { key, ceiling } of CEILINGS) {
      const spec = SPEC_BY_KEY.get(key)!;
      expect(spec.default as number, key).toBeLessThanOrEqual(ceiling);
      expect(spec.min!, key).toBeLessThan(ceiling);
    }
    // ISO 10218-1 reduced speed, 250 mm/s (from memory).
    expect(SPEC_BY_KEY.get('watchdog.linear_speed_limit_m_s')!.default).toBe(0.25);
  });

  describe.each(CEILINGS)('$key ≤ $ceiling ($source)', ({ key, ceiling }) => {
    const spec = SPEC_BY_KEY.get(key)!;
    const past = ceiling * (1 + 1e-9);

    it('at the ceiling: accepted for both arms, in /** and in an arm section', () => {
      const cell = loadCell(write(fileText({ ...COMPANIONS[key], [key]: ceiling })));
      expect(cell.left.values.get(key)!.value).toBe(ceiling);
      expect(cell.right.values.get(key)!.value).toBe(ceiling);
      expect(cell.left.values.get(key)!.source.kind).toBe('file');
      if (shared(key)) {
        const codes = problemsOf(() => loadCell(write(fileText({ ...COMPANIONS[key], [key]: ceiling }, 'right')))).map((p) => p.code);
        expect(codes).toContain('param.arms_differ');
        return;
      }
      const own = loadCell(write(fileText({ ...COMPANIONS[key], [key]: ceiling }, 'right')));
      expect(own.right.values.get(key)!.value).toBe(ceiling);
    });

    it('just past the ceiling: refused with param.above_ceiling at the key, line and column', () => {
      for (const section of ['/**', 'left', 'right']) {
        const text = fileText({ ...COMPANIONS[key], [key]: past }, section);
        const file = write(text);
        const problems = problemsOf(() => loadCell(file));
        const mine = problems.filter((p) => p.where?.key === key);
        expect(mine.map((p) => p.code), `${section}: ${JSON.stringify(problems)}`).toEqual(['param.above_ceiling']);
        expect(problems.every((p) => p.code === 'param.above_ceiling' || (shared(key) && p.code === 'param.arms_differ'))).toBe(true);
        const leaf = key.split('.').pop()!;
        expect(mine[0]!.where).toMatchObject({ file, ...lineCol(text, float(past), `${leaf}:`) });
        expect(mine[0]!.message).toContain(String(ceiling));
      }
    });

    it('the ceiling binds below the schema range (the range alone would not refuse it)', () => {
      // A value in (ceiling, max] is refused only by the ceiling; at max it is still above_ceiling.
      expect(spec.max!, key).toBeGreaterThanOrEqual(ceiling);
      if (spec.max! > ceiling) {
        const file = write(fileText({ ...COMPANIONS[key], [key]: spec.max! }));
        expect(problemsOf(() => loadCell(file)).map((p) => p.code)).toEqual(['param.above_ceiling']);
      }
    });
  });
});
