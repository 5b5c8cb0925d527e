/**
 * Checks that span several keys or both arms (src/params/config.ts), done once at load:
 * zone geometry, hypothesis count, phases, speed below the watchdog limit, cut-off below
 * Nyquist, a speaker whose velocity depends on what it sees.
 */
import { describe, expect, it } from 'vitest';
import { buildArmConfig, loadCell, segmentHitsZone, type ZoneConfig } from '../../src/params/config.js';
import { DEMO_TEXT, edit, lineCol, problemsOf, tempFiles } from '../support/files.js';

const { write } = tempFiles('cross');

const cell = (text: string) => {
  const file = write(text);
  return { file, problems: problemsOf(() => loadCell(file)) };
};

/** The demo file with its two zones replaced by `zones` (YAML lines under `zones:`). */
function withZones(zones: string, text = DEMO_TEXT): string {
  const start = text.indexOf('      zones:\n');
  const end = text.indexOf('left:\n');
  expect(start).toBeGreaterThan(0);
  return text.slice(0, start) + '      zones:\n' + zones + text.slice(end);
}

/** `n` small circles in the aisle between start (x = 0) and goal (x = 1.6), seen by `observer`. */
function circles(n: number, observer: string): string {
  let s = '';
  for (let k = 0; k < n; k++) {
    s += `        post_${k}:\n          shape: circle\n          center_m: [${(0.3 + 0.1 * k).toFixed(1)}, 0.8]\n          radius_m: 0.03\n          observed_by: ${observer}\n`;
  }
  return s;
}

describe('zone geometry', () => {
  it('a zone overlapping the object at the goal is refused at its center_m', () => {
    // geometry: the 1.2 m beam at the fixture spans x = 1.6, y in [-0.6, 0.6]; a 0.24 x 0.16 box at (1.6, -0.5) touches it
    const text = edit('center_m: [1.1, -0.5]', 'center_m: [1.6, -0.5]');
    const { file, problems } = cell(text);
    expect(problems).toHaveLength(1); // both arms find it; reported once
    expect(problems[0]).toMatchObject({ code: 'param.zone_overlaps_goal', where: { file, key: 'task.zones.tray_drop.center_m', ...lineCol(text, '[1.6, -0.5]') } });
    expect(problems[0]!.message).toMatch(/zone 'tray_drop' overlaps the object at the goal \(1\.6, 0\)/);
  });

  it('a zone overlapping the object at the start is refused too', () => {
    // geometry: a 0.08 m circle at (0.05, 0.5) reaches x = 0 within y in [-0.6, 0.6]
    const { problems } = cell(edit('center_m: [0.6, 0.5]', 'center_m: [0.05, 0.5]'));
    expect(problems.map((p) => p.code)).toEqual(['param.zone_overlaps_start']);
  });

  it('segmentHitsZone: touching counts, clearing does not', () => {
    // geometry, by hand: box half-extents 0.12 x 0.08; circle distance vs radius
    const box: ZoneConfig = { name: 'b', shape: 'box', center_m: [1.1, -0.5], size_m: [0.24, 0.16], radius_m: 0.1, observed_by: 'right', kind: 'cable_tray' };
    expect(segmentHitsZone(1.22, -0.6, 0.6, box)).toBe(true);
    expect(segmentHitsZone(1.23, -0.6, 0.6, box)).toBe(false);
    expect(segmentHitsZone(1.1, -0.4, 0.6, box)).toBe(false); // box ends at y = -0.42
    const circle: ZoneConfig = { ...box, shape: 'circle', center_m: [0.6, 0.5], radius_m: 0.08 };
    expect(segmentHitsZone(0.6, -0.6, 0.6, circle)).toBe(true);
    expect(segmentHitsZone(0.6, -0.6, 0.41, circle)).toBe(false);
    expect(segmentHitsZone(0.6 + 0.06, 0.5 + 0.1 + 0.06, 1, circle)).toBe(false); // 0.06·√2 ≈ 0.085 > 0.08
  });
});

describe('hypotheses and observability', () => {
  it('9 partner-only zones are too many hypotheses for the arm that cannot see them', () => {
    // src/params/schema.ts: belief.max_hidden_zones at most 8 (2^8 = 256 hypotheses)
    const { problems } = cell(withZones(circles(9, 'right')));
    expect(problems).toHaveLength(1);
    expect(problems[0]!.code).toBe('param.too_many_hypotheses');
    expect(problems[0]!.message).toMatch(/^\[left\] 9 zones are seen only by the partner: 2\^9 hypotheses exceed the limit of 2\^8/);
    expect(problems[0]!.where?.key).toBe('belief.max_hidden_zones');
  });

  it('8 partner-only zones load (256 hypotheses)', () => {
    // src/params/schema.ts: exact enumeration up to 2^8
    const loaded = loadCell(write(withZones(circles(8, 'right'))));
    expect(loaded.left.config.task.zones).toHaveLength(8);
    expect(loaded.left.config.task.zones.map((z) => z.name)).toEqual([...loaded.left.config.task.zones.map((z) => z.name)].sort());
  });

  it('a lower max_hidden_zones lowers the limit', () => {
    // src/params/config.ts: hidden zones > belief.max_hidden_zones is refused
    const text = edit('      forgetting: 0.0005\n', '      forgetting: 0.0005\n      max_hidden_zones: 0\n');
    const { problems } = cell(text);
    expect(problems.map((p) => p.code)).toEqual(['param.too_many_hypotheses']);
    expect(problems[0]!.where).toMatchObject(lineCol(text, '0\n', 'max_hidden_zones:'));
  });

  it('repulsion gain 0 with partner-only zones: a listener could never infer them', () => {
    // src/params/config.ts: the speaker's velocity must depend on the zones it sees
    const text = edit('repulsion_gain_m_s: 0.25', 'repulsion_gain_m_s: 0.0');
    const { problems } = cell(text);
    expect(problems).toHaveLength(1);
    expect(problems[0]).toMatchObject({ code: 'param.singular_speaker', where: { key: 'policy.repulsion_gain_m_s', ...lineCol(text, '0.0', 'repulsion_gain_m_s') } });
    // With every zone seen by both arms nothing is hidden, and a zero gain is allowed.
    const both = text.replace('observed_by: left', 'observed_by: both').replace('observed_by: right', 'observed_by: both');
    expect(() => loadCell(write(both))).not.toThrow();
  });
});

describe('speeds, rates and phases', () => {
  it('policy.speed_m_s above the watchdog limit', () => {
    // src/params/config.ts: the policy must cruise below watchdog.linear_speed_limit_m_s (0.25 m/s in the demo)
    const text = edit('speed_m_s: 0.15', 'speed_m_s: 0.3');
    const { file, problems } = cell(text);
    expect(problems).toHaveLength(1);
    expect(problems[0]).toMatchObject({ code: 'param.speed_above_limit', where: { file, key: 'policy.speed_m_s', ...lineCol(text, '0.3', 'speed_m_s:') } });
    // Equal to the limit is allowed.
    expect(() => loadCell(write(edit('speed_m_s: 0.15', 'speed_m_s: 0.25')))).not.toThrow();
  });

  it('cut-off at or above 0.45 of the sample rate', () => {
    // src/params/schema.ts: cutoff "must be below 0.45 x sample rate" (margin under Nyquist, fs/2)
    const text = edit('sample_rate_hz: 1000.0', 'sample_rate_hz: 100.0').replace('cutoff_hz: 5.0', 'cutoff_hz: 50.0');
    const { problems } = cell(text);
    expect(problems).toHaveLength(1);
    expect(problems[0]).toMatchObject({ code: 'param.cutoff_too_high', where: { key: 'wrench_filter.cutoff_hz', ...lineCol(text, '50.0') } });
    expect(problems[0]!.hint).toBe('below 45 Hz');
    expect(() => loadCell(write(text.replace('cutoff_hz: 50.0', 'cutoff_hz: 40.0')))).not.toThrow();
  });

  it('update rates above the sample rate', () => {
    // src/params/config.ts: belief and policy update at most once per wrench sample
    // (a 50 ms wrench staleness limit keeps this file clear of the staleness check below)
    const text = edit('        wrench: 0.02', '        wrench: 0.05', edit('sample_rate_hz: 1000.0', 'sample_rate_hz: 80.0'));
    const { problems } = cell(text);
    expect(problems.map((p) => [p.code, p.where?.key])).toEqual([
      ['param.rate_above_sample_rate', 'belief.update_rate_hz'],
      ['param.rate_above_sample_rate', 'policy.update_rate_hz'],
    ]);
  });

  it('a wrench staleness limit shorter than two sample periods', () => {
    // src/params/config.ts: one late sample must not read as a stale stream (common practice:
    // a timeout of at least two periods of the expected rate)
    const text = edit('sample_rate_hz: 1000.0', 'sample_rate_hz: 50.0');
    const { problems } = cell(edit('    belief:\n      update_rate_hz: 100.0', '    belief:\n      update_rate_hz: 50.0', edit('      update_rate_hz: 100.0\n    task:', '      update_rate_hz: 50.0\n    task:', text)));
    expect(problems.map((p) => [p.code, p.where?.key])).toEqual([['param.stale_below_period', 'watchdog.stale_after_s.wrench']]);
    expect(problems[0]!.hint).toContain('0.0400');
  });

  it('a grasp point beyond the end of the object', () => {
    // geometry: grasps at ±offset on a 1.2 m beam must lie within ±0.6 m
    const { problems } = cell(edit('grasp_offset_m: 0.55', 'grasp_offset_m: 0.65'));
    expect(problems.map((p) => p.code)).toEqual(['param.grasp_off_object']);
  });

  it('both arms with the same roles.phase', () => {
    // src/params/config.ts: alternating arms with one phase would speak at the same time
    const text = edit('      phase: 1                 # the right arm speaks in odd slots', '      phase: 0');
    const { file, problems } = cell(text);
    expect(problems).toHaveLength(1);
    expect(problems[0]).toMatchObject({ code: 'param.same_phase', where: { file, key: 'roles.phase' } });
    // A fixed scheduler has no phase to clash, but both arms would hold the default fixed role.
    const fixed = cell(text.replace('scheduler: alternating', 'scheduler: fixed'));
    expect(fixed.problems.map((p) => p.code)).toEqual(['param.same_fixed_role']);
    // Without a file, the per-arm defaults differ (0 left, 1 right).
    expect(() => loadCell(undefined)).not.toThrow();
  });

  it('left and right describing different tasks', () => {
    // src/params/config.ts: task geometry is common knowledge, both arms must agree
    const text = edit('      phase: 0                 # the left arm speaks in even slots', '      phase: 0\n    task:\n      goal_tolerance_m: 0.05');
    const { problems } = cell(text);
    expect(problems.map((p) => p.code)).toEqual(['param.task_mismatch']);
  });

  it('a single arm builds without the partner (classify uses one arm)', () => {
    // src/params/config.ts buildArmConfig: per-arm checks only
    expect(buildArmConfig(undefined, 'right').config.roles.phase).toBe(1);
  });
});

describe('all problems together', () => {
  it('several cross-key problems in one file are all listed', () => {
    // src/params/load.ts: all problems are reported at once
    const text = edit('speed_m_s: 0.15', 'speed_m_s: 0.3')
      .replace('sample_rate_hz: 1000.0', 'sample_rate_hz: 100.0')
      .replace('cutoff_hz: 5.0', 'cutoff_hz: 50.0')
      .replace('repulsion_gain_m_s: 0.25', 'repulsion_gain_m_s: 0.0')
      .replace('center_m: [1.1, -0.5]', 'center_m: [1.6, -0.5]');
    const { problems } = cell(text);
    expect(new Set(problems.map((p) => p.code))).toEqual(new Set(['param.cutoff_too_high', 'param.speed_above_limit', 'param.singular_speaker', 'param.zone_overlaps_goal']));
    expect(problems).toHaveLength(4);
  });

  it('arm-level and cell-level problems are listed together (same phase with a speed above the limit)', () => {
    // src/params/load.ts: all problems are reported at once; a user should not fix one to discover the next
    const text = edit('speed_m_s: 0.15', 'speed_m_s: 0.3').replace('      phase: 1                 # the right arm speaks in odd slots', '      phase: 0');
    const { problems } = cell(text);
    expect(problems.map((p) => p.code).sort()).toEqual(['param.same_phase', 'param.speed_above_limit']);
  });
});
