/**
 * Review: non-finite values in the zone view (SAFETY.md: a non-finite value in any input latches
 * a hold; unknown counts as occupied, the cautious reading). Invented data of our own scenario.
 */
import { describe, expect, it } from 'vitest';
import { ArmStep, ZONE_FREE, ZONE_OCCUPIED, ZONE_UNKNOWN } from '../../src/core/arm-step.js';
import { CHECK } from '../../src/core/watchdog.js';
import { loadCell } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const L = cell.left.config;
const W = Float64Array.of(0.1, -0.2, -11.8, 0, 0, 0);

describe('review: zone view inputs', () => {
  it('a zone view stamped +Infinity must not switch off its staleness check', () => {
    const s = new ArmStep(L);
    for (let k = 0; k < 2000; k++) {
      const t = k / 1000;
      s.setToolPose(t, 0, 0.55, 0.9, 0, 0, 0, 1);
      if (k % 100 === 0) s.setZoneView(k === 1900 ? Number.POSITIVE_INFINITY : t, [ZONE_FREE, ZONE_UNKNOWN]);
      s.step(t, W);
    }
    // No zone view for 3 s (stale_after_s.zone_view = 0.5 s in the demo cell).
    let o = s.out;
    for (let k = 2000; k < 5000; k++) {
      const t = k / 1000;
      s.setToolPose(t, 0, 0.55, 0.9, 0, 0, 0, 1);
      o = s.step(t, W);
    }
    expect(o.held).toBe(true);
    for (const v of o.twist) expect(Object.is(v, 0)).toBe(true);
    expect(s.watchdog.trips.some((r) => r.input === 'zone_view' && (r.check === CHECK.non_finite || r.check === CHECK.stale_input))).toBe(true);
  });
});

describe('review: zone view with a non-finite time', () => {
  it('latches a non_finite hold like every other input (SAFETY.md)', async () => {
    const { ArmStep } = await import('../../src/core/arm-step.js');
    const { CHECK } = await import('../../src/core/watchdog.js');
    const { loadCell } = await import('../../src/params/config.js');
    const s = new ArmStep(loadCell('config/demo_cell.yaml').left.config);
    const w = Float64Array.of(0.1, -0.2, -11.8, 0, 0, 0);
    for (let k = 0; k < 800; k++) {
      const t = k / 1000;
      s.setToolPose(t, 0, 0.55, 0.9, 0, 0, 0, 1);
      if (k % 100 === 0) s.setZoneView(t, [0, 2]);
      s.step(t, w);
    }
    s.setZoneView(Number.NaN, [0, 2]);
    const o = s.step(0.8, w);
    expect(o.held).toBe(true);
    expect(s.watchdog.trips.some((r) => r.check === CHECK.non_finite && r.input === 'zone_view')).toBe(true);
  });
});
