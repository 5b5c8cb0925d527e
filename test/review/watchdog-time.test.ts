/**
 * Review: the watchdog's clear timer and staleness against odd times (our own behaviour;
 * SAFETY.md: "A hold releases only on an explicit reset, and only after every condition has
 * been clear for watchdog.release_clear_s"; "an input older than its timeout" trips).
 */
import { describe, expect, it } from 'vitest';
import { ArmStep, ZONE_FREE, ZONE_UNKNOWN } from '../../src/core/arm-step.js';
import { CHECK } from '../../src/core/watchdog.js';
import { loadCell } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const L = cell.left.config;
const W = Float64Array.of(0.1, -0.2, -11.8, 0, 0, 0);

function feed(s: ArmStep, t: number, w = W, zones = true) {
  s.setToolPose(t, 0, 0.55, 0.9, 0, 0, 0, 1);
  if (zones && Math.round(t * 1000) % 100 === 0) s.setZoneView(t, [ZONE_FREE, ZONE_UNKNOWN]);
  return s.step(t, w);
}
function run(s: ArmStep, k0: number, k1: number) {
  let o = s.out;
  for (let k = k0; k < k1; k++) o = feed(s, k / 1000);
  return o;
}

describe('review: watchdog clear timer', () => {
  it('a tick with a non-finite time must not make a reset release a fresh hold', () => {
    const s = new ArmStep(L);
    run(s, 0, 1000);
    feed(s, 1.0, Float64Array.of(400, 0, -11.8, 0, 0, 0));
    expect(s.watchdog.held).toBe(true);
    expect(s.requestReset().released).toBe(false);
    s.tick(Number.NaN);
    expect(s.requestReset().released).toBe(false);
    expect(s.watchdog.held).toBe(true);
  });
});
