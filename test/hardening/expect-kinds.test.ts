/**
 * Hardening: the expectation kinds honour every argument they accept (src/replay/expect.ts,
 * examples/expectations.yaml; a format of our own). `belief_above` with `until_s` must also
 * hold the value until then; `hold` with `reason` counts only trips of that check; windows
 * are inclusive. Evaluated on constructed replay records with a known answer.
 */
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { evaluate, parseExpectations } from '../../src/replay/expect.js';
import type { ArmReplayRecord, ReplayEvent, ReplayRecord } from '../../src/replay/replay.js';
import { DEMO } from '../support/files.js';

const cell = loadCell(DEMO);
const empty = new Float64Array(0);

/** A replay record of one or two arms with only the series the kinds read. */
function record(arms: { arm: 'left' | 'right'; hiddenZones?: string[]; beliefT?: number[]; marginals?: number[]; events?: ReplayEvent[]; correction?: number[] }[], internal?: number[]): ReplayRecord {
  const out: ArmReplayRecord[] = arms.map((a) => ({
    arm: a.arm,
    config: cell[a.arm].config,
    topics: {} as ArmReplayRecord['topics'],
    hiddenZones: a.hiddenZones ?? [],
    t: empty,
    rawForce: empty,
    correctionForce: Float64Array.from(a.correction ?? []),
    taredFrom: 0,
    jointVelocityAvailable: null,
    impactForce: empty,
    impactScore: empty,
    role: empty,
    held: empty,
    recommendedSpeed: empty,
    correctionAlongObject: empty,
    poseT: empty,
    measuredSpeed: empty,
    beliefT: Float64Array.from(a.beliefT ?? []),
    beliefMarginals: Float64Array.from(a.marginals ?? []),
    events: a.events ?? [],
    samples: 0,
  }));
  return { bag: 'constructed', storage: 'mcap', startNs: 0n, duration_s: 10, arms: out, ...(internal ? { internalForce: { t: Float64Array.from(internal.map((_, k) => k)), y: Float64Array.from(internal) } } : {}), warnings: [] };
}

const verdicts = (rec: ReplayRecord, yaml: string) => evaluate(rec, parseExpectations(`version: 1\nexpect:\n${yaml}`, 'constructed.yaml'));
const passes = (rec: ReplayRecord, yaml: string) => verdicts(rec, yaml).map((v) => v.pass);

describe('belief_above honours until_s', () => {
  // The right arm's belief that clamp_post is occupied, every 0.1 s from 0 to 10 s:
  // rises to 0.95 by 3 s, dips to 0.5 over [6.0, 6.5], back to 0.95 after.
  const t = Array.from({ length: 101 }, (_, k) => k / 10);
  const p = t.map((x) => (x < 1 ? 0.5 : x < 3 ? 0.5 + (0.45 * (x - 1)) / 2 : x >= 6 - 1e-9 && x <= 6.5 + 1e-9 ? 0.5 : 0.95));
  // Two hidden zones, row-major: clamp_post as above, other_zone constant 0.2.
  const marginals = t.flatMap((_, k) => [p[k]!, 0.2]);
  const rec = record([{ arm: 'right', hiddenZones: ['clamp_post', 'other_zone'], beliefT: t, marginals }]);
  const base = 'arm: right, zone: clamp_post, occupied: true, value: 0.9';

  it('without until_s: reached by 5 s passes whatever comes after', () => {
    expect(passes(rec, `  - belief_above: { ${base}, by_s: 5.0 }`)).toEqual([true]);
  });

  it('with until_s past the dip: fails, and says how low it went', () => {
    const [v] = verdicts(rec, `  - belief_above: { ${base}, by_s: 5.0, until_s: 8.0 }`);
    expect(v!.pass).toBe(false);
    expect(v!.measured).toMatch(/lowest after 0\.500/);
    expect(v!.expected).toMatch(/until 8 s/);
  });

  it('with until_s before the dip: passes; until_s exactly at the dip start (inclusive): fails', () => {
    expect(passes(rec, `  - belief_above: { ${base}, by_s: 5.0, until_s: 5.9 }`)).toEqual([true]);
    expect(passes(rec, `  - belief_above: { ${base}, by_s: 5.0, until_s: 6.0 }`)).toEqual([false]);
  });

  it('from_s after the dip, until_s to the end: passes; by_s before it is reached: fails', () => {
    expect(passes(rec, `  - belief_above: { ${base}, from_s: 6.6, by_s: 7.0, until_s: 10.0 }`)).toEqual([true]);
    expect(passes(rec, `  - belief_above: { ${base}, by_s: 2.0 }`)).toEqual([false]);
  });

  it('the value itself counts as reached (at or above), and occupied: false reads 1 − p', () => {
    expect(passes(rec, '  - belief_above: { arm: right, zone: clamp_post, value: 0.95, by_s: 4.0, until_s: 5.0 }')).toEqual([true]);
    expect(passes(rec, '  - belief_above: { arm: right, zone: other_zone, occupied: false, value: 0.8, by_s: 0.0, until_s: 10.0 }')).toEqual([true]);
    expect(passes(rec, '  - belief_above: { arm: right, zone: other_zone, occupied: true, value: 0.8, by_s: 10.0 }')).toEqual([false]);
  });
});

describe('hold honours reason and between_s', () => {
  const trip = (t_s: number, check: string): ReplayEvent => ({ arm: 'left', t_s, kind: 'trip', text: check, check, value: 1, limit: 1 });
  const hold = (t_s: number): ReplayEvent => ({ arm: 'left', t_s, kind: 'hold', text: 'hold' });
  const rec = record([
    { arm: 'left', events: [trip(2.0, 'force_raw'), hold(2.0), trip(5.2, 'impact'), hold(5.2)] },
    { arm: 'right', events: [] },
  ]);

  it('a reason that never tripped fails, even with holds in the window', () => {
    expect(passes(rec, '  - hold: { arm: left, reason: stale_input }')).toEqual([false]);
    expect(passes(rec, '  - hold: { arm: left, reason: stale_input, between_s: [0.0, 10.0] }')).toEqual([false]);
  });

  it('a reason that tripped only outside the window fails; inside it passes, with the trip time as value', () => {
    expect(passes(rec, '  - hold: { arm: left, reason: force_raw, between_s: [5.0, 6.0] }')).toEqual([false]);
    const [v] = verdicts(rec, '  - hold: { arm: left, reason: impact, between_s: [5.0, 6.0] }');
    expect(v).toMatchObject({ pass: true, value: 5.2 });
    expect(v!.expected).toBe('a hold for impact between 5 and 6 s');
  });

  it('without a reason any trip counts; window ends are inclusive', () => {
    expect(passes(rec, '  - hold: { arm: left, between_s: [1.5, 2.5] }')).toEqual([true]);
    expect(passes(rec, '  - hold: { arm: left, between_s: [2.0, 2.0] }')).toEqual([true]);
    expect(passes(rec, '  - hold: { arm: left, between_s: [5.2, 9.0] }')).toEqual([true]);
    expect(passes(rec, '  - hold: { arm: left, between_s: [2.1, 5.1] }')).toEqual([false]);
    expect(passes(rec, '  - hold: { arm: right }')).toEqual([false]);
    expect(passes(rec, '  - hold: { arm: both, reason: impact }')).toEqual([true]);
  });

  it('no_hold sees the holds of the arm named, and names the check', () => {
    const [l, r, b] = verdicts(rec, '  - no_hold: { arm: left }\n  - no_hold: { arm: right }\n  - no_hold: { arm: both }');
    expect([l!.pass, r!.pass, b!.pass]).toEqual([false, true, false]);
    expect(l!.measured).toBe('left held at 2.000 s (force_raw); left held at 5.200 s (impact)');
    expect(l!.value).toBe(2);
  });
});

describe('peak force kinds are strict upper bounds', () => {
  const rec = record([{ arm: 'left', correction: [1, 12, -3] }, { arm: 'right', correction: [4, 40] }], [0, -30, 12]);
  it('peak_correction_force_below_n: the largest value of the arms named, strictly below', () => {
    expect(passes(rec, '  - peak_correction_force_below_n: { arm: left, value: 12.5 }')).toEqual([true]);
    expect(passes(rec, '  - peak_correction_force_below_n: { arm: left, value: 12.0 }')).toEqual([false]);
    expect(passes(rec, '  - peak_correction_force_below_n: { arm: both, value: 39.0 }')).toEqual([false]);
  });
  it('peak_internal_force_below_n: the largest magnitude, strictly below', () => {
    expect(passes(rec, '  - peak_internal_force_below_n: { value: 30.5 }')).toEqual([true]);
    expect(passes(rec, '  - peak_internal_force_below_n: { value: 30.0 }')).toEqual([false]);
  });
});
