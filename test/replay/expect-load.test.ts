/**
 * Loading an expectations file (src/replay/expect.ts; the format is our own): every problem
 * named with its code, message, file, line and column; the window checks at their edges; the
 * names checked against what is replayed. In process, so the mutation run (`npm run mutate`)
 * sees these tests. Line and column are 1-based, as editors count (common practice); the
 * messages of the JSON Schema checks are ajv's own wording (the reference library that checks
 * the structure).
 */
import { describe, expect, it } from 'vitest';
import { hiddenZonesOf, parseExpectations, type ExpectationContext } from '../../src/replay/expect.js';
import { CHECKS } from '../../src/core/watchdog.js';
import { InputError, type Problem } from '../../src/util/errors.js';

const KINDS = 'no_hold, hold, peak_internal_force_below_n, peak_correction_force_below_n, belief_above, role_switches';

/** The problems an expectations text is refused with (fails when it is accepted). */
function problems(text: string, context?: ExpectationContext): Problem[] {
  try {
    parseExpectations(text, 'e.yaml', context);
  } catch (err) {
    expect(err).toBeInstanceOf(InputError);
    return [...(err as InputError).problems];
  }
  throw new Error(`accepted:\n${text}`);
}
const body = (entries: string) => `version: 1\nexpect:\n${entries}`;
const one = (entry: string, context?: ExpectationContext) => problems(body(`  - ${entry}\n`), context);
const accepts = (entry: string, context?: ExpectationContext) => parseExpectations(body(`  - ${entry}\n`), 'e.yaml', context);

describe('the file structure', () => {
  it('a YAML syntax error: its first line, with the line and column of the error', () => {
    const p = problems('version: 1\nexpect:\n  - no_hold: { arm: both\n');
    expect(p[0]!.code).toBe('expect.yaml_syntax');
    expect(p[0]!.message).toMatch(/^YAML syntax: /);
    expect(p[0]!.message).not.toContain('\n');
    expect(p[0]!.where).toMatchObject({ file: 'e.yaml', line: expect.any(Number), column: expect.any(Number) });
  });

  it('version must be 1, and both keys are required', () => {
    expect(problems('version: 2\nexpect:\n  - no_hold: { arm: both }\n')).toEqual([
      { code: 'expect.schema', message: 'expectations.version must be equal to constant', where: { file: 'e.yaml', line: 1, column: 10 } },
    ]);
    const p = problems('expect:\n  - no_hold: { arm: both }\n');
    expect(p).toEqual([{ code: 'expect.schema', message: "expectations must have required property 'version'", where: { file: 'e.yaml', line: 1, column: 1 } }]);
    expect(problems('version: 1\n').map((x) => x.message)).toEqual(["expectations must have required property 'expect'"]);
  });

  it('an empty list, a list of scalars and an unknown top-level key are refused where they are', () => {
    expect(problems('version: 1\nexpect: []\n')).toEqual([
      { code: 'expect.schema', message: 'expectations.expect must NOT have fewer than 1 items', where: { file: 'e.yaml', line: 2, column: 9 } },
    ]);
    expect(problems('version: 1\nexpect:\n  - 3\n')).toEqual([
      { code: 'expect.schema', message: 'expectations.expect.0 must be object', where: { file: 'e.yaml', line: 3, column: 5 } },
    ]);
    expect(problems('version: 1\nexpect:\n  - no_hold: { arm: both }\nextra: 1\n')).toEqual([
      { code: 'expect.schema', message: "expectations: unknown key 'extra'", where: { file: 'e.yaml', line: 4, column: 1 } },
    ]);
    expect(problems('version: 1\nexpect: 5\n').map((x) => x.message)).toEqual(['expectations.expect must be array']);
  });

  it('every problem of the top level is reported at once (ajv allErrors)', () => {
    expect(problems('version: 3\nextra: 1\n').map((x) => x.message).sort()).toEqual([
      "expectations must have required property 'expect'",
      'expectations.version must be equal to constant',
      "expectations: unknown key 'extra'",
    ]);
  });
});

describe('one kind per entry', () => {
  it('none, or two: the kinds found, the kinds allowed, at the entry', () => {
    expect(one('{ name: lonely }')).toEqual([
      { code: 'expect.one_kind', message: 'expect[0] must hold exactly one kind, found none', where: { file: 'e.yaml', line: 3, column: 5 }, hint: `kinds: ${KINDS}` },
    ]);
    expect(one('{ no_hold: { arm: both }, hold: { arm: left } }')[0]).toMatchObject({ code: 'expect.one_kind', message: 'expect[0] must hold exactly one kind, found no_hold, hold' });
  });

  it('an unknown kind: at its key, with the closest kind', () => {
    expect(problems(body('  - no_hold: { arm: both }\n  - peak_internal_force_under_n: { value: 3 }\n'))).toEqual([
      {
        code: 'expect.unknown_kind',
        message: "expect[1]: unknown kind 'peak_internal_force_under_n'",
        where: { file: 'e.yaml', line: 4, column: 5 },
        hint: `did you mean peak_internal_force_below_n? kinds: ${KINDS}`,
      },
    ]);
  });

  it('every entry is checked: problems of several entries come together, in order', () => {
    const p = problems(body('  - { name: a }\n  - no_hld: { arm: left }\n  - hold: { arm: middle }\n'));
    expect(p.map((x) => x.code)).toEqual(['expect.one_kind', 'expect.unknown_kind', 'expect.schema']);
    expect(p.map((x) => x.where?.line)).toEqual([3, 4, 5]);
  });
});

describe('the arguments of each kind (JSON Schema)', () => {
  it('an enum names the values allowed; the reasons of hold are the watchdog checks', () => {
    expect(one('hold: { arm: middle }')).toEqual([
      { code: 'expect.schema', message: 'expect[0].hold.arm must be equal to one of the allowed values: left, right, both', where: { file: 'e.yaml', line: 3, column: 18 } },
    ]);
    expect(one('hold: { arm: left, reason: squeeze }')[0]!.message).toBe(`expect[0].hold.reason must be equal to one of the allowed values: ${CHECKS.join(', ')}`);
    for (const reason of CHECKS) expect(accepts(`hold: { arm: left, reason: ${reason} }`)).toHaveLength(1);
  });

  it('an unknown argument is named at its key', () => {
    expect(one('peak_internal_force_below_n: { value: 3.0, unit: kN }')).toEqual([
      { code: 'expect.schema', message: "expect[0].peak_internal_force_below_n: unknown key 'unit'", where: { file: 'e.yaml', line: 3, column: 48 } },
    ]);
  });

  it('a missing required argument is placed at the entry’s map', () => {
    expect(one('no_hold: {}')).toEqual([
      { code: 'expect.schema', message: "expect[0].no_hold must have required property 'arm'", where: { file: 'e.yaml', line: 3, column: 14 } },
    ]);
  });

  // Each row: an entry, and whether it loads. The refused ones break one rule of the kind.
  const rows: [string, boolean][] = [
    ['no_hold: { arm: both }', true],
    ['no_hold: { arm: both, reason: impact }', false],
    ['no_hold: { arm: 3 }', false],
    ['hold: { arm: left }', true],
    ['hold: {}', false],
    ['hold: { arm: left, between_s: [1.0, 2.0] }', true],
    ['hold: { arm: left, between_s: [1.0] }', false],
    ['hold: { arm: left, between_s: [1.0, 2.0, 3.0] }', false],
    ["hold: { arm: left, between_s: [1.0, 'two'] }", false],
    ['hold: { arm: left, between_s: 1.0 }', false],
    ['hold: { arm: left, by_s: 1.0 }', false],
    ['peak_internal_force_below_n: { value: 0.001 }', true],
    ['peak_internal_force_below_n: { value: 0 }', false],
    ['peak_internal_force_below_n: { value: -1 }', false],
    ["peak_internal_force_below_n: { value: 'ten' }", false],
    ['peak_internal_force_below_n: {}', false],
    ['peak_internal_force_below_n: { value: 1, arm: both }', false],
    ['peak_correction_force_below_n: { arm: both, value: 40 }', true],
    ['peak_correction_force_below_n: { value: 40 }', false],
    ['peak_correction_force_below_n: { arm: both }', false],
    ['peak_correction_force_below_n: { arm: both, value: 0 }', false],
    ["peak_correction_force_below_n: { arm: both, value: 'x' }", false],
    ['peak_correction_force_below_n: { arm: both, value: 4, extra: 1 }', false],
    ['belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 5 }', true],
    ['belief_above: { arm: both, zone: clamp_post, value: 0.9, by_s: 5 }', false],
    ['belief_above: { arm: right, zone: "", value: 0.9, by_s: 5 }', false],
    ['belief_above: { arm: right, zone: 3, value: 0.9, by_s: 5 }', false],
    ['belief_above: { arm: right, value: 0.9, by_s: 5 }', false],
    ['belief_above: { arm: right, zone: clamp_post, by_s: 5 }', false],
    ['belief_above: { arm: right, zone: clamp_post, value: 0.9 }', false],
    ['belief_above: { zone: clamp_post, value: 0.9, by_s: 5 }', false],
    ['belief_above: { arm: right, zone: clamp_post, value: 0, by_s: 0 }', true],
    ['belief_above: { arm: right, zone: clamp_post, value: 1, by_s: 5 }', true],
    ['belief_above: { arm: right, zone: clamp_post, value: 1.01, by_s: 5 }', false],
    ['belief_above: { arm: right, zone: clamp_post, value: -0.01, by_s: 5 }', false],
    ["belief_above: { arm: right, zone: clamp_post, value: 'high', by_s: 5 }", false],
    ['belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: -1 }', false],
    ["belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 'soon' }", false],
    ['belief_above: { arm: right, zone: clamp_post, value: 0.9, from_s: 0, by_s: 5, until_s: 9 }', true],
    ['belief_above: { arm: right, zone: clamp_post, value: 0.9, from_s: -1, by_s: 5 }', false],
    ["belief_above: { arm: right, zone: clamp_post, value: 0.9, from_s: 'x', by_s: 5 }", false],
    ['belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 5, until_s: -1 }', false],
    ["belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 5, until_s: 'x' }", false],
    ['belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 5, occupied: false }', true],
    ['belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 5, occupied: 1 }', false],
    ['belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 5, between_s: [1, 2] }', false],
    ['role_switches: { arm: both, period_s: 0.5 }', true],
    ['role_switches: { arm: both, period_s: 0.5, tolerance_s: 0 }', true],
    ['role_switches: { arm: both, period_s: 0.5, tolerance_s: -0.001 }', false],
    ["role_switches: { arm: both, period_s: 0.5, tolerance_s: 'x' }", false],
    ['role_switches: { arm: both, period_s: 0 }', false],
    ["role_switches: { arm: both, period_s: 'x' }", false],
    ['role_switches: { arm: both }', false],
    ['role_switches: { period_s: 0.5 }', false],
    ['role_switches: { arm: sideways, period_s: 0.5 }', false],
    ['role_switches: { arm: both, period_s: 0.5, phase: 1 }', false],
  ];
  it.each(rows)('%s loads: %s', (entry, ok) => {
    if (ok) expect(accepts(entry)).toHaveLength(1);
    else expect(one(entry)[0]!.code).toBe('expect.schema');
  });
});

describe('windows in order, checked at load (edges inclusive where the format says ≤)', () => {
  it('hold.between_s: [a, b] with a = b loads; b < a is refused at between_s', () => {
    expect(accepts('hold: { arm: left, between_s: [2.0, 2.0] }')).toHaveLength(1);
    expect(one('hold: { arm: left, between_s: [2.0, 1.999] }')).toEqual([
      { code: 'expect.bad_window', message: 'expect[0].hold.between_s ends before it starts', where: { file: 'e.yaml', line: 3, column: 35 } },
    ]);
  });

  it('belief_above: from_s = by_s = until_s loads; from_s after by_s, until_s before it are refused', () => {
    const z = 'arm: right, zone: clamp_post, value: 0.9';
    expect(accepts(`belief_above: { ${z}, from_s: 5, by_s: 5, until_s: 5 }`)).toHaveLength(1);
    expect(one(`belief_above: { ${z}, from_s: 5.5, by_s: 5 }`)).toEqual([
      { code: 'expect.bad_window', message: 'expect[0].belief_above: from_s 5.5 s is after by_s 5 s', where: { file: 'e.yaml', line: 3, column: 71 }, hint: 'from_s <= by_s <= until_s' },
    ]);
    expect(one(`belief_above: { ${z}, by_s: 5, until_s: 4.5 }`)).toEqual([
      { code: 'expect.bad_window', message: 'expect[0].belief_above: until_s 4.5 s is before by_s 5 s', where: { file: 'e.yaml', line: 3, column: 81 }, hint: 'from_s <= by_s <= until_s' },
    ]);
    // Both at once: both reported.
    expect(one(`belief_above: { ${z}, from_s: 6, by_s: 5, until_s: 4 }`).map((x) => x.message)).toEqual([
      'expect[0].belief_above: from_s 6 s is after by_s 5 s',
      'expect[0].belief_above: until_s 4 s is before by_s 5 s',
    ]);
    // Without by_s the order cannot be checked here (by_s is required: the schema refuses first).
    expect(one(`belief_above: { ${z}, from_s: 6, until_s: 4 }`)[0]!.code).toBe('expect.schema');
  });

  it('role_switches: tolerance_s just below half of period_s loads; at half it is refused (any time would pass)', () => {
    expect(accepts('role_switches: { arm: both, period_s: 0.5, tolerance_s: 0.2499 }')).toHaveLength(1);
    expect(one('role_switches: { arm: both, period_s: 0.5, tolerance_s: 0.25 }')).toEqual([
      {
        code: 'expect.bad_window',
        message: 'expect[0].role_switches: tolerance_s 0.25 s is not below half of period_s (0.25 s), so any time would pass',
        where: { file: 'e.yaml', line: 3, column: 61 },
        hint: 'below 0.25 s',
      },
    ]);
    expect(one('role_switches: { arm: both, period_s: 0.5, tolerance_s: 0.3 }')[0]!.code).toBe('expect.bad_window');
  });

  it('the window checks are for their own kind only', () => {
    // until_s before by_s is a belief_above rule; hold has no such keys, so the schema speaks.
    expect(one('hold: { arm: left, until_s: 1 }')[0]!.code).toBe('expect.schema');
  });
});

describe('names checked against what is replayed', () => {
  const both: ExpectationContext = { arms: ['left', 'right'], hiddenZones: { left: ['tray_drop'], right: ['clamp_post', 'pick_stand_edge'] } };
  const leftOnly: ExpectationContext = { arms: ['left'], hiddenZones: both.hiddenZones };
  const rightOnly: ExpectationContext = { arms: ['right'], hiddenZones: both.hiddenZones };

  it('an arm that is not replayed: named, at arm, with the hint', () => {
    expect(one('no_hold: { arm: right }', leftOnly)).toEqual([
      { code: 'expect.arm_not_replayed', message: 'expect[0].no_hold needs the right arm, which is not replayed', where: { file: 'e.yaml', line: 3, column: 21 }, hint: 'replay with --arm both (or the arm named)' },
    ]);
    expect(one('hold: { arm: both }', rightOnly)[0]!.message).toBe('expect[0].hold needs the left arm, which is not replayed');
    expect(one('role_switches: { arm: both, period_s: 0.5 }', { arms: [], hiddenZones: both.hiddenZones })[0]!.message).toBe(
      'expect[0].role_switches needs the left and right arms, which are not replayed',
    );
    expect(accepts('no_hold: { arm: left }', leftOnly)).toHaveLength(1);
    expect(accepts('no_hold: { arm: both }', both)).toHaveLength(1);
    // Without a context the names are not checked.
    expect(accepts('no_hold: { arm: right }')).toHaveLength(1);
  });

  it('a zone the arm does not infer: named, at zone, with the zones it does infer and the closest one', () => {
    expect(one('belief_above: { arm: right, zone: clamp_pots, value: 0.9, by_s: 5 }', both)).toEqual([
      {
        code: 'expect.unknown_zone',
        message: "expect[0].belief_above: 'clamp_pots' is not a zone the right arm infers",
        where: { file: 'e.yaml', line: 3, column: 39 },
        hint: 'the right arm infers clamp_post, pick_stand_edge; did you mean clamp_post?',
      },
    ]);
    // The left arm sees the clamp post itself: it does not infer it.
    expect(one('belief_above: { arm: left, zone: clamp_post, value: 0.9, by_s: 5 }', both)[0]!.hint).toBe('the left arm infers tray_drop; did you mean tray_drop?');
    expect(one('belief_above: { arm: left, zone: tray_drop, value: 0.9, by_s: 5 }', { arms: ['left', 'right'], hiddenZones: { left: [], right: [] } })[0]!.hint).toBe(
      'the left arm infers no zone (it sees every zone itself)',
    );
    expect(accepts('belief_above: { arm: right, zone: pick_stand_edge, value: 0.9, by_s: 5 }', both)).toHaveLength(1);
    // An arm not replayed is reported instead of its zones.
    expect(one('belief_above: { arm: right, zone: nowhere, value: 0.9, by_s: 5 }', leftOnly).map((x) => x.code)).toEqual(['expect.arm_not_replayed']);
  });

  it('peak_internal_force_below_n needs both arms replayed', () => {
    expect(one('peak_internal_force_below_n: { value: 20 }', leftOnly)).toEqual([
      { code: 'expect.arm_not_replayed', message: 'expect[0].peak_internal_force_below_n needs both arms, which are not replayed', where: { file: 'e.yaml', line: 3, column: 5 }, hint: 'replay with --arm both' },
    ]);
    expect(accepts('peak_internal_force_below_n: { value: 20 }', both)).toHaveLength(1);
  });

  it('hiddenZonesOf: an arm infers the zones observed by its partner only', () => {
    const arm = (zones: [string, string][]) => ({ config: { task: { zones: zones.map(([name, observed_by]) => ({ name, observed_by })) } } });
    const zones: [string, string][] = [['clamp_post', 'left'], ['tray_drop', 'right'], ['fixture', 'both'], ['pick_stand_edge', 'left']];
    expect(hiddenZonesOf({ left: arm(zones), right: arm(zones) })).toEqual({ left: ['tray_drop'], right: ['clamp_post', 'pick_stand_edge'] });
  });
});

describe('what a loaded expectation carries', () => {
  it('its name (given, or the kind and its arguments), kind, arguments, file, line and column', () => {
    const list = parseExpectations(body('  - name: quiet right\n    no_hold: { arm: right }\n  - hold: { arm: left, reason: impact }\n'), 'cell.yaml');
    expect(list).toEqual([
      { name: 'quiet right', kind: 'no_hold', args: { arm: 'right' }, file: 'cell.yaml', line: 3, column: 5 },
      { name: 'hold {"arm":"left","reason":"impact"}', kind: 'hold', args: { arm: 'left', reason: 'impact' }, file: 'cell.yaml', line: 5, column: 5 },
    ]);
  });

  it('a name that is not a string is not a kind, and does not become the name', () => {
    expect(parseExpectations(body('  - { name: 7, no_hold: { arm: both } }\n'), 'e.yaml')[0]!.name).toBe('no_hold {"arm":"both"}');
  });
});
