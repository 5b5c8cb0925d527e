/**
 * Defects the fault campaign's invariants found (src/faults, test/property/arm-stream):
 *
 * 1. A delayed burst after a stale gap shortened the clear time: the timer ticks dated the
 *    stale condition at the gap's end, then a delayed sample (older stamp) that was itself bad
 *    (an input stamped later than it) dated the fault back at its own stamp, and a reset released
 *    0.05 s before `release_clear_s` had passed since the condition.
 * 2. A finite but absurd wrench component (1e300, a corrupt message) entered the filter: its
 *    state overflowed, the impact score was published as Infinity, and the correction band took
 *    minutes to decay, holding the arm all that time.
 *
 * Invented streams of the demo scenario; limits of config/demo_cell.yaml (release_clear_s 1 s,
 * stale_after_s.wrench 0.02 s, future_tolerance_s 0.05 s).
 */
import { describe, expect, it } from 'vitest';
import { ArmStep, WRENCH_ABS_MAX } from '../../src/core/arm-step.js';
import { CHECK } from '../../src/core/watchdog.js';
import { loadCell } from '../../src/params/config.js';

const cfg = loadCell('config/demo_cell.yaml').left.config;

function feedQuiet(arm: ArmStep, t: number, k: number): void {
  if (k % 100 === 0) arm.setZoneView(t, [1, 0]);
  arm.setToolPose(t, 0, 0.55, 0.9, 0, 0, 0, 1);
  arm.setJointState(t, new Float64Array(3), 3);
}

describe('review: fault campaign findings', () => {
  it('a delayed burst after a stale gap does not shorten the clear time', () => {
    const arm = new ArmStep(cfg, { jointCount: 3 });
    const w = new Float64Array(6);
    w[2] = -11.77;
    let releasedAt = Number.NaN;
    for (let k = 0; k < 2000; k++) {
      const now = k / 1000;
      feedQuiet(arm, now, k);
      if (k >= 200 && k < 251) {
        arm.tick(now); // the wrench is delayed: the node's timer ticks
      } else if (k === 251) {
        // The 51 delayed samples arrive together, with their own stamps, then the current one.
        for (let j = 200; j <= 251; j++) arm.step(j / 1000, w);
      } else arm.step(now, w);
      if (arm.watchdog.held && Number.isNaN(releasedAt) && arm.requestReset().released) releasedAt = now;
    }
    expect(arm.watchdog.trips.length === 0 || !arm.watchdog.held).toBe(true);
    // The last stale tick was at 0.250 s: no release before 1.250 s.
    expect(releasedAt).toBeGreaterThanOrEqual(1.25);
  });

  it('an absurd wrench value is kept out of the filter and holds', () => {
    const arm = new ArmStep(cfg, { jointCount: 3 });
    const w = new Float64Array(6);
    for (let k = 0; k < 4000; k++) {
      const t = k / 1000;
      feedQuiet(arm, t, k);
      w.fill(0);
      w[2] = -11.77;
      if (k === 1500) w[1] = 1e300;
      const o = arm.step(t, w);
      expect(Number.isFinite(o.impactScore)).toBe(true);
      for (const v of o.correction) expect(Number.isFinite(v)).toBe(true);
      if (k === 1500) {
        expect(o.held).toBe(true);
        expect(arm.watchdog.trips[0]!.check).toBe(CHECK.force_raw);
      }
      if (k > 1500 && o.held) arm.requestReset();
    }
    // Released after the clear time: the filter state was never poisoned.
    expect(arm.out.held).toBe(false);
    expect(Math.hypot(...arm.out.correction.subarray(0, 3))).toBeLessThan(1);
    expect(WRENCH_ABS_MAX).toBe(1e6);
  });
});

describe('review: a NaN log-likelihood of one hypothesis', () => {
  it('restarts the belief instead of turning every probability into NaN', async () => {
    // Found by test/property/belief.property.test.ts: the maximum skipped the NaN, the sum did not.
    const { Belief } = await import('../../src/core/belief.js');
    const b = new Belief(4);
    b.update(Float64Array.of(Number.NaN, 0, 0, Number.NaN), 0);
    expect(Array.from(b.p)).toEqual([0.25, 0.25, 0.25, 0.25]);
    b.update(Float64Array.of(0, -1, -2, -3), 0);
    expect(b.p.reduce((a, x) => a + x, 0)).toBeCloseTo(1, 12);
  });
});

describe('review: huge log-likelihoods', () => {
  it('keep the belief normalized (the log-sum rounded away: two hypotheses at 1e308 summed to 2)', async () => {
    // Found by test/property/belief.property.test.ts.
    const { Belief } = await import('../../src/core/belief.js');
    const b = new Belief(3);
    b.update(Float64Array.of(1e308, 1e308, -1e308), 0);
    expect(b.p[0]).toBeCloseTo(0.5, 12);
    expect(b.p[1]).toBeCloseTo(0.5, 12);
    expect(b.p[2]).toBe(0);
  });
});
