/**
 * Review (issue 9): expectations with from_s > by_s > until_s were accepted, and an unknown zone
 * was reported without file and line, only after the whole replay. Now windows are checked at
 * load and, given what is replayed, arms and zones too: every problem with file:line:column,
 * before any replay work (the CLI loads expectations before it opens the bag).
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { hiddenZonesOf, parseExpectations } from '../../src/replay/expect.js';
import { loadCell } from '../../src/params/config.js';
import { problemsOf } from '../support/files.js';
import { antiphon, DEMO_PARAMS, tempDir } from './child.js';

const cell = loadCell(DEMO_PARAMS);
const context = { arms: ['left', 'right'] as ('left' | 'right')[], hiddenZones: hiddenZonesOf(cell) };

describe('review: expectation windows and names at load', () => {
  it('from_s > by_s > until_s: refused with the line of each', () => {
    const text = 'version: 1\nexpect:\n  - belief_above: { arm: right, zone: clamp_post, value: 0.9, from_s: 8.0, by_s: 6.0, until_s: 5.0 }\n';
    const p = problemsOf(() => parseExpectations(text, 'w.yaml'));
    expect(p.map((x) => x.code)).toEqual(['expect.bad_window', 'expect.bad_window']);
    expect(p[0]!.message).toMatch(/from_s 8 s is after by_s 6 s/);
    expect(p[1]!.message).toMatch(/until_s 5 s is before by_s 6 s/);
    expect(p[0]!.where).toMatchObject({ file: 'w.yaml', line: 3 });
    const tol = 'version: 1\nexpect:\n  - role_switches: { arm: both, period_s: 0.5, tolerance_s: 0.3 }\n';
    expect(problemsOf(() => parseExpectations(tol, 't.yaml'))[0]).toMatchObject({ code: 'expect.bad_window', where: { line: 3 } });
  });

  it('an unknown zone: refused at load with file, line and column, and the zones the arm infers', () => {
    const text = 'version: 1\nexpect:\n  - no_hold: { arm: both }\n  - belief_above: { arm: right, zone: clamp_pots, value: 0.9, by_s: 6.0 }\n';
    const p = problemsOf(() => parseExpectations(text, 'z.yaml', context));
    expect(p).toHaveLength(1);
    expect(p[0]).toMatchObject({ code: 'expect.unknown_zone', where: { file: 'z.yaml', line: 4, column: 39 } });
    expect(p[0]!.hint).toMatch(/did you mean clamp_post\?/);
    // the zone the right arm sees itself is not one it infers
    const own = 'version: 1\nexpect:\n  - belief_above: { arm: right, zone: tray_drop, value: 0.9, by_s: 6.0 }\n';
    expect(problemsOf(() => parseExpectations(own, 'o.yaml', context))[0]!.code).toBe('expect.unknown_zone');
    const oneArm = { ...context, arms: ['left'] as ('left' | 'right')[] };
    expect(problemsOf(() => parseExpectations(text, 'z.yaml', oneArm))[0]).toMatchObject({ code: 'expect.arm_not_replayed', where: { line: 3 } });
  });

  it('replay names the unknown zone with file:line before it opens the bag', () => {
    const dir = tempDir('expect-names');
    const f = join(dir, 'e.yaml');
    writeFileSync(f, 'version: 1\nexpect:\n  - belief_above: { arm: right, zone: nowhere, value: 0.9, by_s: 6.0 }\n');
    const r = antiphon(['replay', join(dir, 'no-such-bag'), '--params', DEMO_PARAMS, '--expect', f]);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(new RegExp(`${f}:3:\\d+: expect\\[0\\]\\.belief_above: 'nowhere' is not a zone the right arm infers`));
    expect(r.stderr).not.toMatch(/no-such-bag/);
  });
});
