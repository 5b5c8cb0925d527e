/**
 * The ROS 2 parameters-file loader: the demo cell resolves for both arms with the right
 * sources, and every refusal names the dotted key, file, line and column, all at once.
 */
import { join } from 'node:path';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { loadParamsFile, parseParamsText, resolveForArm, SECTIONS } from '../../src/params/load.js';
import { SCHEMA } from '../../src/params/schema.js';
import type { ParamSpec, ParamValue } from '../../src/params/spec.js';
import { InputError, type Problem } from '../../src/util/errors.js';
import { DEMO, DEMO_TEXT, edit, lineCol, problemsOf, tempFiles } from '../support/files.js';

const { dir, write } = tempFiles('params');

/** Problems from loading `text` as a file with loadCell (file checks, then cross-checks). */
function cellProblems(text: string): { file: string; problems: Problem[] } {
  const file = write(text);
  return { file, problems: problemsOf(() => loadCell(file)) };
}

const ZONE_KEYS = ['shape', 'center_m', 'size_m', 'radius_m', 'height_m', 'center_z_m', 'yaw_rad', 'detours', 'observed_by', 'kind'];

describe('the demo cell file', () => {
  const cell = loadCell(DEMO);

  it('loads for both arms', () => {
    // config/demo_cell.yaml: left speaks in even slots, right in odd ones
    expect(cell.left.config.arm).toBe('left');
    expect(cell.right.config.arm).toBe('right');
    expect(cell.left.config.roles.phase).toBe(0);
    expect(cell.right.config.roles.phase).toBe(1);
    expect(cell.left.config.task.zones.map((z) => z.name)).toEqual(['clamp_post', 'tray_drop']);
    expect(cell.left.config.task).toEqual(cell.right.config.task);
    expect(cell.left.config.task.zones[0]).toEqual({ name: 'clamp_post', shape: 'circle', center_m: [0.6, 0.5], size_m: [0.2, 0.2], radius_m: 0.08, height_m: [0, 10], center_z_m: 0, yaw_rad: 0, detours: 'sideways', observed_by: 'left', kind: 'clamp_post' });
    expect(cell.left.config.task.zones[1]).toMatchObject({ name: 'tray_drop', shape: 'box', center_m: [1.1, -0.5], size_m: [0.24, 0.16], observed_by: 'right', kind: 'cable_tray' });
    expect(cell.left.config.watchdog.linear_speed_limit_m_s).toBe(0.25); // ISO 10218-1 reduced speed 250 mm/s, from memory (as the file says)
  });

  it('every schema key resolves, for every zone instance too, and nothing else', () => {
    // src/params/schema.ts: one ParamSpec per parameter; task.zones.* per named zone
    for (const arm of [cell.left, cell.right]) {
      const expected = new Set<string>();
      for (const s of SCHEMA) {
        if (!s.key.includes('*')) expected.add(s.key);
      }
      for (const zone of ['clamp_post', 'tray_drop']) for (const k of ZONE_KEYS) expected.add(`task.zones.${zone}.${k}`);
      expect(new Set(arm.values.keys())).toEqual(expected);
      for (const v of arm.values.values()) {
        expect(v.key).toBe(v.key.trim());
        expect(v.spec.key.split('.').length).toBe(v.key.split('.').length);
      }
    }
  });

  it('sources: default where the file is silent; file, section, line and column where it speaks', () => {
    // ROS 2 parameters-file format (rcl yaml): `/**` applies to every node, a node name to one
    const l = cell.left.values;
    const r = cell.right.values;
    expect(l.get('belief.max_hidden_zones')).toMatchObject({ value: 8, source: { kind: 'default' } });
    expect(l.get('roles.fixed_role')).toMatchObject({ value: 'speaker', source: { kind: 'default' } });
    expect(resolveForArm(undefined, 'right').get('roles.phase')).toMatchObject({ value: 1, source: { kind: 'default' } }); // schema: phase default 0 for left, 1 for right
    // A circle's size_m is not written: the default stands for that zone instance.
    expect(l.get('task.zones.clamp_post.size_m')).toMatchObject({ value: [0.2, 0.2], source: { kind: 'default' } });
    expect(l.get('wrench_filter.cutoff_hz')).toMatchObject({
      value: 5,
      source: { kind: 'file', file: DEMO, section: '/**', ...lineCol(DEMO_TEXT, '5.0', 'cutoff_hz:') },
    });
    expect(r.get('wrench_filter.cutoff_hz')!.source).toEqual(l.get('wrench_filter.cutoff_hz')!.source);
    expect(l.get('task.goal_m')).toMatchObject({ value: [1.6, 0], source: { section: '/**', ...lineCol(DEMO_TEXT, '[1.6, 0.0]') } });
    expect(l.get('task.zones.tray_drop.observed_by')).toMatchObject({ value: 'right', source: { section: '/**', ...lineCol(DEMO_TEXT, 'right', 'observed_by: right') } });
    expect(l.get('roles.phase')).toMatchObject({ value: 0, source: { kind: 'file', section: 'left', ...lineCol(DEMO_TEXT, '0', 'left:\n') } });
    expect(r.get('roles.phase')).toMatchObject({ value: 1, source: { kind: 'file', section: 'right', ...lineCol(DEMO_TEXT, '1', 'right:\n') } });
    expect(l.get('roles.phase')!.source.line).toBeLessThan(r.get('roles.phase')!.source.line!);
  });

  it('an arm section overrides /** for that arm only', () => {
    // ROS 2 parameters-file format (rcl yaml): a node's own section wins over the wildcard
    // (A key both arms must share, such as roles.period_s, is refused when the arms differ.)
    const text = edit(
      'left:\n  ros__parameters:\n    roles:\n      phase: 0',
      'left:\n  ros__parameters:\n    watchdog:\n      release_clear_s: 2.5\n    roles:\n      phase: 0',
    );
    const file = write(text);
    const cell2 = loadCell(file);
    expect(cell2.left.values.get('watchdog.release_clear_s')).toMatchObject({ value: 2.5, source: { section: 'left', ...lineCol(text, '2.5', 'left:\n') } });
    expect(cell2.right.values.get('watchdog.release_clear_s')).toMatchObject({ value: 1, source: { section: '/**', ...lineCol(text, '1.0', 'release_clear_s:') } });
    expect(cell2.left.config.watchdog.release_clear_s).toBe(2.5);
    expect(cell2.right.config.watchdog.release_clear_s).toBe(1);
  });

  it('an empty file and no file both mean all defaults', () => {
    // src/params/load.ts: an arm's value comes from its own section, else /**, else the default
    const none = resolveForArm(undefined, 'left');
    const empty = resolveForArm(parseParamsText('# nothing\n', 'e.yaml'), 'left');
    const values = (m: typeof none) => Object.fromEntries([...m.entries()].map(([k, v]) => [k, v.value]));
    expect(values(empty)).toEqual(values(none));
    for (const v of none.values()) expect(v.source).toEqual({ kind: 'default' });
  });
});

describe('refusals name the key, line and column', () => {
  it('a misspelt key, with the nearest allowed key suggested', () => {
    // common practice: report unknown keys with the closest allowed spelling
    const text = edit('      cutoff_hz: 5.0', '      cuttoff_hz: 5.0');
    const { file, problems } = cellProblems(text);
    expect(problems).toHaveLength(1);
    const p = problems[0]!;
    expect(p.code).toBe('param.unknown_key');
    expect(p.message).toContain('wrench_filter.cuttoff_hz');
    expect(p.where).toEqual({ file, key: 'wrench_filter.cuttoff_hz', ...lineCol(text, 'cuttoff_hz') });
    expect(p.hint).toContain('did you mean wrench_filter.cutoff_hz?');
    // The printed form carries file:line:column.
    const { line, column } = lineCol(text, 'cuttoff_hz');
    expect(new InputError(problems).message).toContain(`${file}:${line}:${column}`);
  });

  it('a misspelt key in an arm section and a misspelt map name', () => {
    // common practice (as above)
    const text = edit('      phase: 1                 # the right arm speaks in odd slots', '      phsae: 1').replace('    coupling:\n', '    couplng:\n');
    const ps = problemsOf(() => parseParamsText(text, 'f.yaml'));
    expect(ps.map((p) => p.code)).toEqual(['param.unknown_key', 'param.unknown_key']);
    expect(ps[0]!.where).toMatchObject({ key: 'couplng', ...lineCol(text, 'couplng') });
    expect(ps[1]!.where).toMatchObject({ key: 'roles.phsae', ...lineCol(text, 'phsae') });
    expect(ps[1]!.hint).toContain('did you mean roles.phase?');
  });

  interface TypeCase {
    name: string;
    from: string;
    to: string;
    code: string;
    key: string;
    at: string;
    after?: string;
    message: RegExp;
    /** Where the value is empty, only the line is fixed (the column is where the empty value ends). */
    lineOnly?: boolean;
  }
  const typeCases: TypeCase[] = [
    // ROS 2 parameters-file format (rcl yaml): the literal's own type decides the parameter type
    { name: 'string for a double', from: 'cutoff_hz: 5.0', to: 'cutoff_hz: "five"', code: 'param.wrong_type', key: 'wrench_filter.cutoff_hz', at: '"five"', message: /must be a number, got the string 'five'/ },
    { name: 'integer literal for a double (ROS 2 refuses it)', from: 'cutoff_hz: 5.0', to: 'cutoff_hz: 5', code: 'param.wrong_type', key: 'wrench_filter.cutoff_hz', at: '5', after: 'cutoff_hz:', message: /floating-point number \(e\.g\. 5\.0\).*ROS 2 reads 5 as an integer/ },
    { name: '1.5 for an integer', from: 'order: 4', to: 'order: 1.5', code: 'param.wrong_type', key: 'wrench_filter.order', at: '1.5', message: /whole number/ },
    { name: 'boolean for a double', from: 'force_n: 15.0', to: 'force_n: true', code: 'param.wrong_type', key: 'wrench_filter.impact.force_n', at: 'true', after: 'impact:', message: /must be a number, got boolean true/ },
    { name: 'number for a boolean', from: 'on_start: true', to: 'on_start: 1', code: 'param.wrong_type', key: 'wrench_filter.tare.on_start', at: '1', after: 'on_start:', message: /true or false/ },
    { name: 'map for a double', from: 'goal_tolerance_m: 0.02', to: 'goal_tolerance_m:\n        value: 0.02', code: 'param.wrong_type', key: 'task.goal_tolerance_m', at: 'goal_tolerance_m', message: /got a map/ },
    { name: 'scalar for a list', from: 'goal_m: [1.6, 0.0]', to: 'goal_m: 1.6', code: 'param.wrong_type', key: 'task.goal_m', at: '1.6', after: 'goal_m:', message: /must be a list/ },
    { name: 'list of the wrong length', from: 'goal_m: [1.6, 0.0]', to: 'goal_m: [1.6, 0.0, 0.0]', code: 'param.bad_length', key: 'task.goal_m', at: '[1.6, 0.0, 0.0]', message: /exactly 2 elements, got 3/ },
    { name: 'integer element in a double list', from: 'start_m: [0.0, 0.0]', to: 'start_m: [0.0, 0]', code: 'param.wrong_type', key: 'task.start_m', at: '[0.0, 0]', message: /task\.start_m\[1\].*floating-point/ },
    { name: 'value not among the choices', from: 'on_impact: hold', to: 'on_impact: ignore', code: 'param.bad_choice', key: 'watchdog.on_impact', at: 'ignore', message: /'ignore' is not allowed/ },
    { name: 'empty value', from: 'cutoff_hz: 5.0             # partner', to: 'cutoff_hz:             # partner', code: 'param.wrong_type', key: 'wrench_filter.cutoff_hz', at: 'cutoff_hz', message: /must be a number, got nothing/, lineOnly: true },
  ];

  it.each(typeCases)('wrong type: $name', ({ from, to, code, key, at, after, message, lineOnly }) => {
    const text = edit(from, to);
    const { file, problems } = cellProblems(text);
    expect(problems).toHaveLength(1);
    expect(problems[0]!.code).toBe(code);
    expect(problems[0]!.message).toMatch(message);
    const pos = lineCol(text, at, after ?? from.split(':')[0]!);
    if (lineOnly) expect(problems[0]!.where).toMatchObject({ file, key, line: pos.line });
    else expect(problems[0]!.where).toEqual({ file, key, ...pos });
    expect(problems[0]!.hint).toBeTruthy();
  });

  it('an allowed value range is enforced, with the range in the hint', () => {
    // src/params/schema.ts: order 1..8, roles.period_s 0.005..600 s, wrench_filter.cutoff_hz 0.1..400 Hz
    const text = edit('order: 4', 'order: 9').replace('period_s: 0.5\n', 'period_s: 0.001\n').replace('cutoff_hz: 5.0', 'cutoff_hz: -1.0');
    const ps = problemsOf(() => parseParamsText(text, 'f.yaml'));
    expect(ps.map((p) => [p.code, p.where?.key])).toEqual([
      ['param.out_of_range', 'wrench_filter.cutoff_hz'],
      ['param.out_of_range', 'wrench_filter.order'],
      ['param.out_of_range', 'roles.period_s'],
    ]);
    expect(ps[0]!.where).toMatchObject(lineCol(text, '-1.0'));
    expect(ps[1]!.hint).toBe('whole number, from 1 to 8');
    expect(ps[2]!.message).toBe('roles.period_s = 0.001 is out of range');
    // Infinity is never a value.
    const inf = problemsOf(() => parseParamsText(edit('time_limit_s: 60.0', 'time_limit_s: .inf'), 'f.yaml'));
    expect(inf[0]).toMatchObject({ code: 'param.out_of_range', where: { key: 'task.time_limit_s' } });
  });

  it('above the hard ceiling: refused whatever the file says, even within the schema range', () => {
    // src/params/schema.ts: watchdog.linear_speed_limit_m_s range to 5 m/s, hard ceiling 1.0 m/s
    const text = edit('linear_speed_limit_m_s: 0.25', 'linear_speed_limit_m_s: 2.0');
    const { file, problems } = cellProblems(text);
    expect(problems).toHaveLength(1);
    expect(problems[0]).toMatchObject({ code: 'param.above_ceiling', where: { file, key: 'watchdog.linear_speed_limit_m_s', ...lineCol(text, '2.0', 'linear_speed_limit_m_s') } });
    expect(problems[0]!.message).toMatch(/2 is above its hard safety ceiling 1 m\/s; refused whatever the file says/);
    // The ceiling itself is allowed.
    expect(() => loadCell(write(edit('linear_speed_limit_m_s: 0.25', 'linear_speed_limit_m_s: 1.0')))).not.toThrow();
    // In an arm section too.
    const arm = edit('      phase: 0                 # the left arm speaks in even slots', '      phase: 0\n    watchdog:\n      joint_velocity_limit_rad_s: 3.3');
    expect(problemsOf(() => loadCell(write(arm)))[0]).toMatchObject({ code: 'param.above_ceiling', where: { key: 'watchdog.joint_velocity_limit_rad_s', ...lineCol(arm, '3.3') } });
  });

  it('every ceiling is within or below its range, and --list style hints state it', () => {
    // src/params/spec.ts: a ceiling is a hard bound no file can exceed
    const withCeiling = SCHEMA.filter((s) => s.ceiling !== undefined);
    expect(withCeiling.length).toBeGreaterThanOrEqual(10);
    for (const s of withCeiling) {
      expect(s.ceiling!).toBeGreaterThan(s.min!);
      expect(typeof s.default === 'number' ? s.default : 0).toBeLessThanOrEqual(s.ceiling!);
    }
  });

  it('an unknown section and a section without ros__parameters', () => {
    // ROS 2 parameters-file format (rcl yaml): <node name>: ros__parameters: {...}
    const text = DEMO_TEXT + 'middle:\n  ros__parameters:\n    roles:\n      phase: 0\n';
    const ps = problemsOf(() => parseParamsText(text, 'f.yaml'));
    expect(ps).toHaveLength(1);
    expect(ps[0]).toMatchObject({ code: 'param.unknown_section', where: lineCol(text, 'middle:') });
    expect(ps[0]!.hint).toBe(`allowed sections: ${SECTIONS.join(', ')}`);

    const bare = edit('right:\n  ros__parameters:\n    roles:', 'right:\n  roles:\n    phase: 1\n  ros__parameters:\n    roles:');
    const pb = problemsOf(() => parseParamsText(bare, 'f.yaml'));
    expect(pb.map((p) => p.code)).toEqual(['param.no_ros_parameters']);
    expect(pb[0]!.message).toContain("section 'right'");
    expect(pb[0]!.where).toMatchObject({ line: lineCol(bare, 'roles:', 'right:').line });

    const missing = 'left:\n  roles:\n    phase: 0\n';
    expect(problemsOf(() => parseParamsText(missing, 'f.yaml'))[0]).toMatchObject({ code: 'param.no_ros_parameters', where: { line: 2, column: 3 } });
    expect(problemsOf(() => parseParamsText('- 1\n- 2\n', 'f.yaml'))[0]).toMatchObject({ code: 'param.not_a_map', where: { line: 1, column: 1 } });
  });

  it('YAML syntax errors carry line and column', () => {
    // YAML 1.2: map keys are unique; a compact mapping cannot nest another
    const dup = '/**:\n  ros__parameters:\n    policy:\n      speed_m_s: 0.1\n      speed_m_s: 0.2\n';
    expect(problemsOf(() => parseParamsText(dup, 'f.yaml'))).toEqual([
      { code: 'param.yaml_syntax', message: 'YAML syntax: Map keys must be unique', where: { file: 'f.yaml', line: 5, column: 7 } },
    ]);
    const nested = '/**:\n  ros__parameters:\n    policy:\n      speed_m_s: 0.1: 2\n';
    expect(problemsOf(() => parseParamsText(nested, 'f.yaml'))[0]).toMatchObject({ code: 'param.yaml_syntax', where: { line: 4, column: 18 } });
    const unclosed = edit('goal_m: [1.6, 0.0]', 'goal_m: [1.6, 0.0');
    const pu = problemsOf(() => loadParamsFile(write(unclosed)));
    expect(pu[0]!.code).toBe('param.yaml_syntax');
    expect(pu[0]!.where!.line).toBeGreaterThanOrEqual(lineCol(unclosed, 'goal_m').line);
    expect(pu[0]!.where!.column).toBeGreaterThanOrEqual(1);
  });

  it('an unreadable file', () => {
    // common practice: name the file
    const f = join(dir, 'does-not-exist.yaml');
    expect(problemsOf(() => loadParamsFile(f))[0]).toMatchObject({ code: 'param.file_unreadable', where: { file: f } });
  });

  it('a zone missing its shape or observed_by, at the zone', () => {
    // src/params/schema.ts: task.zones.*.shape and .observed_by have no default (required)
    const text = edit('          shape: circle\n', '').replace('          observed_by: right\n', '');
    const { problems } = cellProblems(text);
    expect(problems.map((p) => [p.code, p.where?.key])).toEqual([
      ['param.missing_required', 'task.zones.clamp_post.shape'],
      ['param.missing_required', 'task.zones.tray_drop.observed_by'],
    ]);
    // Placed at the zone's first written value.
    expect(problems[0]!.where).toMatchObject(lineCol(text, '[0.6, 0.5]'));
    expect(problems[1]!.where).toMatchObject(lineCol(text, 'box', 'tray_drop:'));
    expect(problems[0]!.hint).toMatch(/one of box, circle/);
    // A required key given in /** counts for an arm section that adds to the zone.
    const addInArm = edit('      phase: 0                 # the left arm speaks in even slots', '      phase: 0\n    task:\n      zones:\n        clamp_post:\n          kind: other');
    expect(() => parseParamsText(addInArm, 'f.yaml')).not.toThrow();
  });

  it('several problems in one file are all listed, in file order', () => {
    // src/params/load.ts: all problems are reported at once and nothing is half-applied
    const text = edit('cutoff_hz: 5.0', 'cuttoff_hz: 5.0')
      .replace('order: 4', 'order: 2.5')
      .replace('force_limit_n: 150.0', 'force_limit_n: "high"')
      .replace('linear_speed_limit_m_s: 0.25', 'linear_speed_limit_m_s: 2.0')
      .replace('period_s: 0.5\n', 'period_s: 0\n')
      .replace('goal_m: [1.6, 0.0]', 'goal_m: [1.6]')
      .replace('          shape: circle\n', '');
    const { file, problems } = cellProblems(text);
    expect(problems.map((p) => [p.code, p.where?.key])).toEqual([
      ['param.unknown_key', 'wrench_filter.cuttoff_hz'],
      ['param.wrong_type', 'wrench_filter.order'],
      ['param.wrong_type', 'watchdog.force_limit_n'],
      ['param.above_ceiling', 'watchdog.linear_speed_limit_m_s'],
      ['param.wrong_type', 'roles.period_s'],
      ['param.bad_length', 'task.goal_m'],
      ['param.missing_required', 'task.zones.clamp_post.shape'],
    ]);
    for (const p of problems) {
      expect(p.where?.file).toBe(file);
      expect(p.where?.line).toBeGreaterThan(0);
      expect(p.where?.column).toBeGreaterThan(0);
    }
    const lines = problems.map((p) => p.where!.line!);
    expect([...lines].sort((a, b) => a - b)).toEqual(lines);
  });
});

describe('property: written values load back exactly', () => {
  const scalar = SCHEMA.filter((s) => !s.key.includes('*') && ['double', 'integer', 'bool', 'string'].includes(s.type));

  /** A YAML literal ROS 2 reads with the parameter's own type: doubles always with a decimal point. */
  function literal(s: ParamSpec, v: ParamValue): string {
    if (s.type === 'double') {
      let x = String(v);
      if (!/[.e]/.test(x)) x += '.0';
      else if (!x.includes('.')) x = x.replace('e', '.0e');
      return x;
    }
    return String(v);
  }

  function valueArb(s: ParamSpec): fc.Arbitrary<ParamValue> {
    switch (s.type) {
      case 'double': {
        const hi = s.ceiling !== undefined ? Math.min(s.max!, s.ceiling) : s.max!;
        return fc.double({ min: s.min!, max: hi, noNaN: true, noDefaultInfinity: true }).map((x) => (x === 0 ? 0 : x));
      }
      case 'integer':
        return fc.integer({ min: s.min!, max: s.max! });
      case 'bool':
        return fc.boolean();
      default:
        // Free strings (frame names) have no choices: ROS-style names.
        return s.choices ? fc.constantFrom(...s.choices) : fc.stringMatching(/^[a-z][a-z0-9_]{0,12}$/);
    }
  }

  /** Nested ROS 2 parameters text for one section from dotted keys. */
  function sectionText(name: string, entries: [string, string][]): string {
    if (!entries.length) return '';
    const out = [`${name === '/**' ? '/**' : name}:`, '  ros__parameters:'];
    const open: string[] = [];
    for (const [key, lit] of [...entries].sort(([a], [b]) => (a < b ? -1 : 1))) {
      const parts = key.split('.');
      let common = 0;
      while (common < open.length && common < parts.length - 1 && open[common] === parts[common]) common++;
      open.length = common;
      for (let k = common; k < parts.length - 1; k++) {
        out.push(`${'  '.repeat(k + 2)}${parts[k]}:`);
        open.push(parts[k]!);
      }
      out.push(`${'  '.repeat(parts.length + 1)}${parts[parts.length - 1]}: ${lit}`);
    }
    return out.join('\n') + '\n';
  }

  const picks = fc.record(
    Object.fromEntries(scalar.map((s) => [s.key, fc.tuple(valueArb(s), fc.constantFrom('/**', 'left'))])) as Record<string, fc.Arbitrary<[ParamValue, '/**' | 'left']>>,
    { requiredKeys: [] },
  );

  it('random subsets of scalar keys with random in-range values resolve to exactly those values', () => {
    // src/params/load.ts (own section, else /**, else default); ROS 2 parameters-file format (rcl yaml)
    const specOf = new Map(scalar.map((s) => [s.key, s]));
    fc.assert(
      fc.property(picks, (chosen) => {
        const bySection: Record<'/**' | 'left', [string, string][]> = { '/**': [], left: [] };
        for (const [key, pick] of Object.entries(chosen)) {
          if (pick) bySection[pick[1]].push([key, literal(specOf.get(key)!, pick[0])]);
        }
        const text = sectionText('/**', bySection['/**']) + sectionText('left', bySection.left);
        const file = write(text);
        const parsed = loadParamsFile(file);
        const left = resolveForArm(parsed, 'left');
        const right = resolveForArm(parsed, 'right');
        for (const s of scalar) {
          const pick = chosen[s.key];
          const l = left.get(s.key)!;
          const r = right.get(s.key)!;
          // The schema default, or the per-arm one where the arms must differ (roles.phase).
          const def = (arm: 'left' | 'right') => (s.armDefault ? s.armDefault[arm] : s.default);
          if (pick === undefined) {
            expect(l).toMatchObject({ value: def('left'), source: { kind: 'default' } });
            expect(r).toMatchObject({ value: def('right'), source: { kind: 'default' } });
            continue;
          }
          expect(Object.is(l.value, pick[0]), `${s.key}: ${String(l.value)} vs ${String(pick[0])}`).toBe(true);
          expect(l.source).toMatchObject({ kind: 'file', file, section: pick[1] });
          if (pick[1] === '/**') expect(Object.is(r.value, pick[0])).toBe(true);
          else expect(r).toMatchObject({ value: def('right'), source: { kind: 'default' } });
        }
      }),
      { numRuns: 150 },
    );
  });
});
