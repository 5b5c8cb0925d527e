/**
 * Review: a gap in the wrench stream. The live node finds it on its timer (tick); replay and
 * the simulated cell have no timer, so the step itself must see how old the previous wrench
 * sample was (SAFETY.md: "an input (wrench, ...) older than its timeout" latches a hold).
 * Invented data of our own scenario; limits are the demo cell's (stale_after_s.wrench 0.02 s).
 */
import { describe, expect, it } from 'vitest';
import { ArmStep, ZONE_FREE, ZONE_UNKNOWN } from '../../src/core/arm-step.js';
import { CHECK } from '../../src/core/watchdog.js';
import { loadCell } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const L = cell.left.config;
const W = Float64Array.of(0.1, -0.2, -11.8, 0, 0, 0);

describe('review: wrench gap without a timer tick', () => {
  it('a wrench sample after a gap longer than stale_after_s.wrench trips stale_input and the twist is zero', () => {
    const s = new ArmStep(L);
    const inputs = (t: number) => {
      s.setToolPose(t, 0, 0.55, 0.9, 0, 0, 0, 1);
      if (Math.round(t * 1000) % 100 === 0) s.setZoneView(t, [ZONE_FREE, ZONE_UNKNOWN]);
    };
    for (let k = 0; k < 2000; k++) {
      inputs(k / 1000);
      s.step(k / 1000, W);
    }
    expect(s.out.held).toBe(false);
    expect(Math.hypot(s.out.twist[0]!, s.out.twist[1]!)).toBeGreaterThan(0);
    // 0.5 s without a wrench sample; pose and zone view keep arriving (as replay feeds them).
    for (let k = 2000; k < 2500; k++) inputs(k / 1000);
    inputs(2.5);
    const o = s.step(2.5, W);
    expect(s.watchdog.trips.some((r) => r.check === CHECK.stale_input && r.input === 'wrench')).toBe(true);
    expect(o.held).toBe(true);
    for (const v of o.twist) expect(Object.is(v, 0)).toBe(true);
  });
});
