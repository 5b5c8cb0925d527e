/**
 * The sweep's pure parts on hand-made inputs (our own behaviour): counting against labels,
 * the objectives' tie rules, the Pareto front, and tuned.yaml's in-place edit of
 * config/demo_cell.yaml (every other byte kept).
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parseParamsText } from '../../src/params/load.js';
import { cellFromFile } from '../../src/params/config.js';
import { countAgainstLabels, metricsFromBags } from '../../src/sweep/evaluate.js';
import type { Label } from '../../src/sweep/labels.js';
import { choose, objectiveByName, paretoFront } from '../../src/sweep/objective.js';
import { applyChanges } from '../../src/sweep/tuned.js';

const impact = (t: number, arm: Label['arm'] = 'left'): Label => ({ bag: null, t_s: t, end_s: t, kind: 'impact', arm, where: {} });

describe('countAgainstLabels', () => {
  it('detections, delays, false holds, consequences and ROC bins', () => {
    const c = countAgainstLabels(
      10,
      [
        { arm: 'left', impacts: [2.004, 7.5], holds: [2.004, 7.5], partnerHolds: [0, 0] },
        // 3.9: the right arm feels the left arm's hold (partner_stop): a consequence, not counted.
        { arm: 'right', impacts: [], holds: [3.9, 9.2], partnerHolds: [1, 0] },
      ],
      [impact(2.0), impact(5.0, 'right')],
      0.3,
      0,
      0,
      4,
    );
    expect(c.labelled).toBe(2);
    expect(c.detected).toBe(1); // the knock at 5.0 s on the right arm was never flagged
    expect(c.delays_s[0]).toBeCloseTo(0.004, 12);
    expect(c.holds).toBe(4);
    expect(c.false_holds).toBe(2); // 7.5 (left) and 9.2 (right)
    // Bins [0,10): impact windows 1.98-2.3 and 4.98-5.3 remove bins 1, 2, 4 and 5.
    expect(c.negative_bins).toBe(6);
    expect(c.false_bins).toBe(2);
    const m = metricsFromBags([c]);
    expect(m.false_holds_per_hour).toBeCloseTo(720, 9);
    expect(m.missed_impacts).toBe(1);
  });
});

describe('objectives', () => {
  const cand = (index: number, missed: number, fh: number, f = 5, values: Record<string, number> = { k: index }) => ({ index, values, metrics: { ...metricsFromBags([]), missed_impacts: missed, false_holds_per_hour: fh, peak_internal_force_n: f } });
  it('safe: drops misses, then fewest false holds; ties to the base value, then the lower index', () => {
    const cs = [cand(0, 1, 0), cand(1, 0, 30), cand(2, 0, 10), cand(3, 0, 10)];
    expect(choose(cs, objectiveByName('safe'))).toBe(2);
    expect(choose(cs, objectiveByName('safe'), { k: 3 })).toBe(3);
    expect(choose([cand(0, 1, 0)], objectiveByName('safe'))).toBeNull();
    // success is not measured on bags (null for all): then fewest misses, fewest false holds.
    expect(choose(cs, objectiveByName('success'))).toBe(2);
  });
  it('the Pareto front holds the non-dominated candidates', () => {
    expect(paretoFront([cand(0, 0, 10, 5), cand(1, 0, 5, 8), cand(2, 0, 12, 6), cand(3, 1, 0, 1)])).toEqual([0, 1, 3]);
  });
});

describe('tuned.yaml edit', () => {
  it('changes only the named lines of config/demo_cell.yaml, keeps every comment, and loads', () => {
    const base = readFileSync('config/demo_cell.yaml', 'utf8');
    const text = applyChanges(base, [
      { key: 'wrench_filter.impact.force_n', value: 8, comment: 'tuned: evidence' },
      { key: 'roles.period_s', value: 0.75, comment: 'tuned: more evidence' },
    ]);
    const a = base.split('\n');
    const b = text.split('\n');
    expect(b.length).toBe(a.length);
    const changed = b.map((l, k) => [l, a[k]]).filter(([l, o]) => l !== o);
    expect(changed.map(([l]) => l!.trim())).toEqual(['force_n: 8.0  # tuned: evidence', 'period_s: 0.75  # tuned: more evidence']);
    const cell = cellFromFile(parseParamsText(text, 'tuned.yaml'), 'tuned.yaml');
    expect(cell.left.config.wrench_filter.impact.force_n).toBe(8);
    expect(cell.right.config.roles.period_s).toBe(0.75);
  });
});
