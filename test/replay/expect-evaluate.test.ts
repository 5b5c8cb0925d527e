/**
 * Evaluating expectations on constructed replay records with a known answer
 * (src/replay/expect.ts; the format is our own): what each kind measures and reports, its
 * edges (strict "below", inclusive windows, the tared part of a series only), and the checks
 * that cannot apply (an arm or a zone the record does not have) as bad input. In process, so
 * the mutation run sees them; no parameters file is loaded (the kinds do not read the arm's
 * configuration).
 */
import { describe, expect, it } from 'vitest';
import { evaluate, parseExpectations } from '../../src/replay/expect.js';
import type { ArmReplayRecord, ReplayEvent, ReplayRecord } from '../../src/replay/replay.js';
import { InputError, type Problem } from '../../src/util/errors.js';

const empty = new Float64Array(0);
interface ArmSpec {
  arm: 'left' | 'right';
  hiddenZones?: string[];
  beliefT?: number[];
  marginals?: number[];
  events?: ReplayEvent[];
  correction?: number[];
  taredFrom?: number;
}
function record(arms: ArmSpec[], opts: { internal?: number[]; startNs?: bigint } = {}): ReplayRecord {
  const out = arms.map(
    (a): ArmReplayRecord => ({
      arm: a.arm,
      config: {} as ArmReplayRecord['config'],
      topics: {} as ArmReplayRecord['topics'],
      hiddenZones: a.hiddenZones ?? [],
      t: empty,
      rawForce: empty,
      correctionForce: Float64Array.from(a.correction ?? []),
      taredFrom: a.taredFrom ?? 0,
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
    }),
  );
  const internal = opts.internal;
  return {
    bag: 'constructed',
    storage: 'mcap',
    startNs: opts.startNs ?? 0n,
    duration_s: 10,
    arms: out,
    ...(internal ? { internalForce: { t: Float64Array.from(internal.map((_, k) => k)), y: Float64Array.from(internal) } } : {}),
    warnings: [],
  };
}
const verdicts = (rec: ReplayRecord, yaml: string) => evaluate(rec, parseExpectations(`version: 1\nexpect:\n${yaml}`, 'constructed.yaml'));
const one = (rec: ReplayRecord, entry: string) => verdicts(rec, `  - ${entry}\n`)[0]!;
function refusal(fn: () => unknown): Problem {
  try {
    fn();
  } catch (err) {
    expect(err).toBeInstanceOf(InputError);
    return (err as InputError).problems[0]!;
  }
  throw new Error('evaluated');
}
const trip = (arm: 'left' | 'right', t_s: number, check: string): ReplayEvent => ({ arm, t_s, kind: 'trip', text: check, check, value: 1, limit: 1 });
const hold = (arm: 'left' | 'right', t_s: number): ReplayEvent => ({ arm, t_s, kind: 'hold', text: 'hold' });
const role = (arm: 'left' | 'right', t_s: number): ReplayEvent => ({ arm, t_s, kind: 'role', text: 'speaker' });

describe('no_hold', () => {
  it('a hold with no trip at the same time is reported with "?"; the value counts the holds; other events do not count', () => {
    const rec = record([{ arm: 'left', events: [trip('left', 1.25, 'stale_input'), hold('left', 1.5), role('left', 2), { arm: 'left', t_s: 3, kind: 'tared', text: 'tared' }] }, { arm: 'right' }]);
    expect(one(rec, 'no_hold: { arm: left }')).toEqual({ name: 'no_hold {"arm":"left"}', kind: 'no_hold', expected: 'no safe hold', measured: 'left held at 1.500 s (?)', pass: false, value: 1 });
    expect(one(rec, 'no_hold: { arm: right }')).toMatchObject({ measured: 'no hold', pass: true, value: 0 });
  });

  it('both: the holds of each arm, each named with its check', () => {
    const rec = record([
      { arm: 'left', events: [trip('left', 2, 'force_raw'), hold('left', 2)] },
      { arm: 'right', events: [trip('right', 2.5, 'partner_stop'), hold('right', 2.5)] },
    ]);
    expect(one(rec, 'no_hold: { arm: both }')).toMatchObject({ measured: 'left held at 2.000 s (force_raw); right held at 2.500 s (partner_stop)', pass: false, value: 2 });
  });
});

describe('hold', () => {
  const rec = record([{ arm: 'left', events: [1, 2, 3, 4, 5, 6].map((t) => trip('left', t, t % 2 ? 'impact' : 'force_raw')) }, { arm: 'right' }]);

  it('without a window: any trip; the value is the first trip time; the measured list stops at five', () => {
    expect(one(rec, 'hold: { arm: left }')).toEqual({
      name: 'hold {"arm":"left"}',
      kind: 'hold',
      expected: 'a hold',
      measured: 'left impact at 1.000 s; left force_raw at 2.000 s; left impact at 3.000 s; left force_raw at 4.000 s; left impact at 5.000 s',
      pass: true,
      value: 1,
    });
  });

  it('with a reason: only that check; the first inside the window is the value', () => {
    expect(one(rec, 'hold: { arm: left, reason: force_raw }')).toMatchObject({ expected: 'a hold for force_raw', pass: true, value: 2 });
    expect(one(rec, 'hold: { arm: left, reason: force_raw, between_s: [2.5, 4.0] }')).toMatchObject({ expected: 'a hold for force_raw between 2.5 and 4 s', pass: true, value: 4 });
    expect(one(rec, 'hold: { arm: left, reason: impact, between_s: [3.5, 4.5] }')).toMatchObject({ pass: false, value: null });
  });

  it('no trip at all: "no such trip", failed, no value', () => {
    expect(one(rec, 'hold: { arm: right }')).toMatchObject({ expected: 'a hold', measured: 'no such trip', pass: false, value: null });
    expect(one(rec, 'hold: { arm: left, reason: stale_input }')).toMatchObject({ measured: 'no such trip', pass: false, value: null });
  });

  it('events that are not trips never count (a hold event alone is no trip)', () => {
    const r = record([{ arm: 'left', events: [hold('left', 1), role('left', 1)] }]);
    expect(one(r, 'hold: { arm: left }')).toMatchObject({ measured: 'no such trip', pass: false });
  });
});

describe('peak_internal_force_below_n', () => {
  it('the largest magnitude (either sign) must be strictly below the value', () => {
    const rec = record([{ arm: 'left' }, { arm: 'right' }], { internal: [1, -12.5, 3] });
    expect(one(rec, 'peak_internal_force_below_n: { value: 13 }')).toEqual({ name: 'peak_internal_force_below_n {"value":13}', kind: 'peak_internal_force_below_n', expected: '< 13 N', measured: '12.50 N', pass: true, value: 12.5 });
    expect(one(rec, 'peak_internal_force_below_n: { value: 12.5 }')).toMatchObject({ pass: false, value: 12.5 });
  });

  it('a non-finite peak is printed as such, and fails', () => {
    const rec = record([{ arm: 'left' }, { arm: 'right' }], { internal: [1, Number.POSITIVE_INFINITY] });
    expect(one(rec, 'peak_internal_force_below_n: { value: 13 }')).toMatchObject({ measured: 'Infinity N', pass: false });
  });

  it('without the internal force (one arm replayed): bad input naming the expectation', () => {
    const rec = record([{ arm: 'left' }]);
    expect(refusal(() => one(rec, 'name: squeeze\n    peak_internal_force_below_n: { value: 13 }'))).toEqual({ code: 'expect.arm_not_replayed', message: "expectation 'squeeze' needs both arms", hint: 'replay with --arm both' });
  });
});

describe('peak_correction_force_below_n', () => {
  it('only the tared part of the series counts; strictly below', () => {
    const rec = record([
      { arm: 'left', correction: [90, 80, 4, 5], taredFrom: 2 },
      { arm: 'right', correction: [1, 6, 2], taredFrom: 0 },
    ]);
    expect(one(rec, 'peak_correction_force_below_n: { arm: left, value: 6 }')).toMatchObject({ expected: '< 6 N', measured: '5.00 N', pass: true, value: 5 });
    expect(one(rec, 'peak_correction_force_below_n: { arm: both, value: 6 }')).toMatchObject({ measured: '6.00 N', pass: false, value: 6 });
    expect(one(rec, 'peak_correction_force_below_n: { arm: right, value: 6.001 }')).toMatchObject({ pass: true, value: 6 });
  });

  it('nothing tared: a peak of 0, which passes', () => {
    const rec = record([{ arm: 'left', correction: [50, 60], taredFrom: 2 }]);
    expect(one(rec, 'peak_correction_force_below_n: { arm: left, value: 1 }')).toMatchObject({ measured: '0.00 N', pass: true, value: 0 });
  });
});

describe('arms the record lacks', () => {
  it('one arm missing: "was not replayed"; both asked of one arm: "were not replayed"', () => {
    const rec = record([{ arm: 'left' }]);
    expect(refusal(() => one(rec, 'name: r\n    no_hold: { arm: right }'))).toEqual({ code: 'expect.arm_not_replayed', message: "expectation 'r' needs the right arm, which was not replayed", hint: 'replay with --arm both (or the arm named)' });
    expect(refusal(() => one(rec, 'name: b\n    hold: { arm: both }')).message).toBe("expectation 'b' needs both arms, which were not replayed");
    expect(refusal(() => one(rec, 'role_switches: { arm: both, period_s: 0.5 }')).code).toBe('expect.arm_not_replayed');
  });
});

describe('belief_above', () => {
  // Right arm, two hidden zones, row-major marginals: clamp_post then tray_drop.
  const t = [0, 1, 2, 3, 4, 5];
  const clamp = [0.5, 0.6, 0.92, 0.95, 0.7, 0.95];
  const tray = [0.3, 0.2, 0.1, 0.1, 0.1, 0.4];
  const rec = record([{ arm: 'right', hiddenZones: ['clamp_post', 'tray_drop'], beliefT: t, marginals: t.flatMap((_, k) => [clamp[k]!, tray[k]!]) }]);

  it('reached: the first update at or above the value by by_s (inclusive); its time is the value', () => {
    expect(one(rec, 'belief_above: { arm: right, zone: clamp_post, value: 0.92, by_s: 2 }')).toEqual({
      name: 'belief_above {"arm":"right","zone":"clamp_post","value":0.92,"by_s":2}',
      kind: 'belief_above',
      expected: 'P(clamp_post occupied) >= 0.92 by 2 s',
      measured: 'reached at 2.000 s',
      pass: true,
      value: 2,
    });
  });

  it('not reached: the best seen by by_s, failed, no value', () => {
    expect(one(rec, 'belief_above: { arm: right, zone: clamp_post, value: 0.93, by_s: 2 }')).toMatchObject({ measured: 'at most 0.920 by 2 s', pass: false, value: null });
    expect(one(rec, 'belief_above: { arm: right, zone: clamp_post, value: 0.99, by_s: 9 }')).toMatchObject({ measured: 'at most 0.950 by 9 s', pass: false });
  });

  it('from_s: updates before it are skipped (inclusive start)', () => {
    expect(one(rec, 'belief_above: { arm: right, zone: clamp_post, value: 0.9, from_s: 3, by_s: 5 }')).toMatchObject({ pass: true, value: 3 });
    expect(one(rec, 'belief_above: { arm: right, zone: clamp_post, value: 0.9, from_s: 3.5, by_s: 5 }')).toMatchObject({ pass: true, value: 5 });
    expect(one(rec, 'belief_above: { arm: right, zone: clamp_post, value: 0.9, from_s: 3.5, by_s: 4.5 }')).toMatchObject({ measured: 'at most 0.700 by 4.5 s', pass: false });
  });

  it('until_s: kept from reaching until until_s (inclusive), the lowest reported', () => {
    expect(one(rec, 'belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 3, until_s: 3.9 }')).toMatchObject({
      expected: 'P(clamp_post occupied) >= 0.9 by 3 s and until 3.9 s',
      measured: 'reached at 2.000 s, lowest after 0.920',
      pass: true,
      value: 2,
    });
    expect(one(rec, 'belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 3, until_s: 4 }')).toMatchObject({ measured: 'reached at 2.000 s, lowest after 0.700', pass: false, value: 2 });
  });

  it('occupied: false reads 1 − p; the label says free; the second zone is read at its own column', () => {
    expect(one(rec, 'belief_above: { arm: right, zone: tray_drop, occupied: false, value: 0.9, by_s: 5 }')).toMatchObject({ expected: 'P(tray_drop free) >= 0.9 by 5 s', measured: 'reached at 2.000 s', pass: true, value: 2 });
    expect(one(rec, 'belief_above: { arm: right, zone: tray_drop, occupied: true, value: 0.35, by_s: 5 }')).toMatchObject({ pass: true, value: 5 });
    expect(one(rec, 'belief_above: { arm: right, zone: tray_drop, value: 0.35, by_s: 4 }')).toMatchObject({ measured: 'at most 0.300 by 4 s', pass: false });
  });

  it('a zone the arm does not infer: bad input at the expectation’s file, line and column, with the arm’s zones', () => {
    expect(refusal(() => one(rec, 'belief_above: { arm: right, zone: fixture, value: 0.9, by_s: 5 }'))).toEqual({
      code: 'expect.unknown_zone',
      message: 'expectation \'belief_above {"arm":"right","zone":"fixture","value":0.9,"by_s":5}\': \'fixture\' is not a zone the right arm infers',
      where: { file: 'constructed.yaml', line: 3, column: 5 },
      hint: "the right arm's hidden zones: clamp_post, tray_drop",
    });
    const none = record([{ arm: 'left' }]);
    const p = refusal(() => evaluate(none, [{ name: 'n', kind: 'belief_above', args: { arm: 'left', zone: 'tray_drop', value: 0.5, by_s: 1 } }]));
    expect(p).toEqual({ code: 'expect.unknown_zone', message: "expectation 'n': 'tray_drop' is not a zone the left arm infers", where: {}, hint: "the left arm's hidden zones: none" });
  });
});

describe('role_switches', () => {
  it('switch times on the shared clock (bag start + t): the worst offset from a multiple of the period, in ms', () => {
    // The bag starts at 100.2 s; switches at absolute 100.5, 101.0015, 101.4990 s.
    const rec = record([{ arm: 'left', events: [role('left', 0.3), role('left', 0.8015), role('left', 1.299), hold('left', 0.41)] }, { arm: 'right', events: [role('right', 0.3)] }], { startNs: 100_200_000_000n });
    const v = one(rec, 'role_switches: { arm: left, period_s: 0.5, tolerance_s: 0.002 }');
    expect(v).toMatchObject({ expected: 'switches on multiples of 0.5 s within 0.002 s', measured: '3 switches, worst 0.00150 s off', pass: true });
    expect(v.value).toBeCloseTo(0.0015, 9);
    expect(one(rec, 'role_switches: { arm: left, period_s: 0.5, tolerance_s: 0.001 }')).toMatchObject({ pass: false });
    expect(one(rec, 'role_switches: { arm: both, period_s: 0.5, tolerance_s: 0.002 }')).toMatchObject({ measured: '4 switches, worst 0.00150 s off', pass: true });
  });

  it('the default tolerance is 5 ms', () => {
    const rec = record([{ arm: 'left', events: [role('left', 0.5049)] }]);
    expect(one(rec, 'role_switches: { arm: left, period_s: 0.5 }')).toMatchObject({ expected: 'switches on multiples of 0.5 s within 0.005 s', pass: true });
    const late = record([{ arm: 'left', events: [role('left', 0.5051)] }]);
    expect(one(late, 'role_switches: { arm: left, period_s: 0.5 }')).toMatchObject({ pass: false });
  });

  it('no switch at all fails, with no value', () => {
    const rec = record([{ arm: 'left', events: [hold('left', 1)] }]);
    expect(one(rec, 'role_switches: { arm: left, period_s: 0.5 }')).toMatchObject({ measured: 'no switch', pass: false, value: null });
  });
});
