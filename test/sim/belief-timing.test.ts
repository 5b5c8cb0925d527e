/**
 * Belief timing (src/sim/belief-timing.ts) on constructed streams with a known answer: our own
 * behaviour, every expected value worked out by hand from the stream.
 */
import { describe, expect, it } from 'vitest';
import { BeliefTiming, beliefTimingSummary } from '../../src/sim/belief-timing.js';

const DT = 0.01;
/** Left infers zone 1 (seen by right), right infers zone 0 (seen by left). */
const hidden = { left: Int32Array.of(1), right: Int32Array.of(0) };

function run(occupied: boolean[], steps: number, feed: (t: number, bt: BeliefTiming) => [number, number]) {
  const bt = new BeliefTiming(hidden, occupied, DT);
  for (let i = 0; i < steps; i++) {
    const t = i * DT;
    const [l, r] = feed(t, bt);
    bt.sample(t, [l], [r]);
  }
  return bt.finish();
}

describe('belief timing', () => {
  it('time to correct: from the partner reading the truth to the marginal above 0.9', () => {
    // Zone 1 occupied; right reads it at t = 1.00; left's marginal 0.5 until 2.50, then 0.95.
    const s = run([false, true], 400, (t, bt) => {
      if (Math.abs(t - 1) < 1e-9) bt.reading('right', 1, 1, t);
      return [t >= 2.5 - 1e-9 ? 0.95 : 0.5, 0.05];
    });
    expect(s.times_s).toHaveLength(1);
    expect(s.times_s[0]).toBeCloseTo(1.5, 9);
    expect(s.unresolved).toBe(0); // right's zone 0: never read by left, so never determined
    expect(s.confident_wrong_s).toBe(0);
  });

  it('confident wrong: a marginal on the truth below 0.1 for a known time', () => {
    // Zone 0 free; right's marginal P(occupied) = 0.97 (truth marginal 0.03) for 120 samples.
    const s = run([false, false], 300, (t) => [0.5, t >= 1 - 1e-9 && t < 2.2 - 1e-9 ? 0.97 : 0.2]);
    expect(s.confident_wrong_s).toBeCloseTo(120 * DT, 9);
  });

  it('a reading that is wrong does not determine the zone; a change reopens it; an open one at the end is unresolved', () => {
    const s = run([false, true], 600, (t, bt) => {
      if (Math.abs(t - 0.5) < 1e-9) bt.reading('right', 1, 0, t); // a miss: not the truth
      if (Math.abs(t - 1) < 1e-9) bt.reading('right', 1, 1, t);
      if (Math.abs(t - 3) < 1e-9) bt.zoneChanged(1, false);
      if (Math.abs(t - 3.5) < 1e-9) bt.reading('right', 1, 0, t);
      // Correct at 1.2 s (0.2 s after the reading); after the change still believes occupied to the end.
      return [t >= 1.2 - 1e-9 ? 0.99 : 0.5, 0.5];
    });
    expect(s.times_s.map((x) => Number(x.toFixed(9)))).toEqual([0.2]);
    expect(s.unresolved).toBe(1);
    // From 3.00 s on the truth is free and the marginal on it 0.01: 300 samples.
    expect(s.confident_wrong_s).toBeCloseTo(300 * DT, 9);
  });

  it('a change while a determination is open counts it unresolved', () => {
    const s = run([false, true], 300, (t, bt) => {
      if (Math.abs(t - 0.5) < 1e-9) bt.reading('right', 1, 1, t);
      if (Math.abs(t - 1.0) < 1e-9) bt.zoneChanged(1, false);
      return [0.5, 0.5];
    });
    expect(s).toEqual({ times_s: [], unresolved: 1, confident_wrong_s: 0 });
  });

  it('pooled summary: nearest-rank median and p95 over every determination', () => {
    const sums = [1, 2, 3, 4, 5, 6, 7, 8, 9, 10].map((v) => ({ times_s: [v], unresolved: v === 10 ? 2 : 0, confident_wrong_s: v / 10 }));
    const p = beliefTimingSummary(sums);
    expect(p.time_to_correct_s).toEqual({ median: 5, p95: 10, max: 10, count: 10, unresolved: 2 });
    expect(p.confident_wrong_s).toBeCloseTo(5.5, 12);
  });
});

describe('false impact holds', () => {
  const hold = (t: number, check = 'impact') => ({ reasons: [{ check, t_s: t }] });
  it('an impact trip with no knock or collision within 0.5 s before it is false', async () => {
    const { countFalseImpactHolds } = await import('../../src/sim/belief-timing.js');
    const knocks = [{ t_s: 2, duration_s: 0.03 }];
    // 2.01 (during the knock) and 2.4 (0.37 s after it) explained; 2.6 not; 5.02 by a collision at 5.0;
    // 7 unexplained; a force_raw hold is no impact hold.
    expect(countFalseImpactHolds([hold(2.01), hold(2.4), hold(2.6), hold(5.02), hold(7), hold(7, 'force_raw')], knocks, [5.0])).toBe(2);
  });
});
