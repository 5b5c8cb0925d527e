/**
 * Review (issue 9): YAML aliases in an expectations file crashed (uncaught "Excessive alias
 * count", exit 70) even in an ordinary file that reuses one anchor. Now ordinary reuse works,
 * and only an expansion beyond YAML_MAX_ALIAS_COUNT nodes ("billion laughs") is refused, as
 * bad input with the file. YAML 1.2 §3.2.2.2: an alias node denotes its anchored node.
 */
import { describe, expect, it } from 'vitest';
import { parseExpectations } from '../../src/replay/expect.js';
import { problemsOf } from '../support/files.js';

describe('review: aliases in expectations', () => {
  it('one anchor reused 200 times loads, every entry with its own line', () => {
    let text = 'version: 1\nexpect:\n  - peak_correction_force_below_n: &gentle { arm: both, value: 50.0 }\n';
    for (let i = 0; i < 200; i++) text += '  - peak_correction_force_below_n: *gentle\n';
    const list = parseExpectations(text, 'reuse.yaml');
    expect(list).toHaveLength(201);
    expect(list[200]).toMatchObject({ kind: 'peak_correction_force_below_n', args: { arm: 'both', value: 50 }, line: 203 });
  });

  it('a whole entry and a scalar can be aliased', () => {
    const text = 'version: 1\nexpect:\n  - &e { name: no hold, no_hold: { arm: both } }\n  - *e\n  - belief_above: { arm: right, zone: clamp_post, value: &p 0.9, by_s: 6.0 }\n  - belief_above: { arm: left, zone: tray_drop, value: *p, by_s: 12.0 }\n';
    const list = parseExpectations(text, 'e.yaml');
    expect(list.map((e) => e.kind)).toEqual(['no_hold', 'no_hold', 'belief_above', 'belief_above']);
    expect(list[3]!.args['value']).toBe(0.9);
  });

  it('an exponential expansion is refused as bad input naming the file', () => {
    let text = 'a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n';
    for (let i = 1; i < 9; i++) text += `a${i}: &a${i} [${Array.from({ length: 10 }, () => `*a${i - 1}`).join(', ')}]\n`;
    text += 'version: 1\nexpect:\n  - no_hold: { arm: both }\n';
    const p = problemsOf(() => parseExpectations(text, 'laughs.yaml'));
    expect(p[0]).toMatchObject({ code: 'expect.yaml_aliases', where: { file: 'laughs.yaml' } });
  });
});
