/**
 * Review findings on input times:
 * - a NaN wrench time erased the wrench's last arrival: after one NaN-stamped sample the
 *   stream could die, a reset still released the hold, and when the stream came back 2 s later
 *   nothing tripped;
 * - inputs stamped in the future never went stale: a pose stamped t + 100 s, then silence, and
 *   10 s later there was still no hold and the twist was 0.15 m/s.
 * Our own synthetic streams (invented data).
 */
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { CHECK, INPUT } from '../../src/core/watchdog.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const base = loadCell('config/demo_cell.yaml').left.config;
const cfg: ArmConfig = { ...base, task: { ...base.task, zones: [] } };
const zero = new Float64Array(6);

describe('review: input times', () => {
  it('a NaN-stamped wrench sample does not erase its last arrival', () => {
    const s = new ArmStep(cfg, { required: { tool_pose: false, zone_view: false } });
    for (let k = 0; k < 1000; k++) s.step(k / 1000, zero);
    s.step(Number.NaN, zero);
    expect(s.out.held).toBe(true);
    // The stream dies; the live node's timer ticks.
    for (let t = 1.0; t < 3; t += 0.01) s.tick(t);
    expect(s.requestReset().released).toBe(false);
    expect(s.watchdog.trips.some((r) => r.check === CHECK.stale_input && r.input === 'wrench')).toBe(true);
    // Replay and the simulated cell have no timer: the stream coming back 2 s later trips stale.
    const s2 = new ArmStep(cfg, { required: { tool_pose: false, zone_view: false } });
    for (let k = 0; k < 1000; k++) s2.step(k / 1000, zero);
    s2.step(Number.NaN, zero);
    s2.step(3.0, zero);
    expect(s2.watchdog.trips.some((r) => r.check === CHECK.stale_input && r.input === 'wrench' && r.value > 1.9)).toBe(true);
  });

  it('a pose stamped in the future trips time_future at once, and the twist stays zero', () => {
    const s = new ArmStep(cfg, { required: { zone_view: false } });
    for (let k = 0; k < 2000; k++) {
      const t = k / 1000;
      s.setToolPose(t, 0, 0.55, 0.9, 0, 0, 0, 1);
      s.step(t, zero);
    }
    expect(s.out.held).toBe(false);
    s.setToolPose(2 + 100, 0, 0.55, 0.9, 0, 0, 0, 1);
    for (let k = 2000; k < 12000; k++) s.step(k / 1000, zero);
    expect(s.out.held).toBe(true);
    expect(s.watchdog.trips[0]!.check).toBe(CHECK.time_future);
    expect(Array.from(s.out.twist)).toEqual([0, 0, 0, 0, 0, 0]);
  });

  it('a NaN-stamped pose is a fault and keeps the last finite arrival', () => {
    const s = new ArmStep(cfg, { required: { zone_view: false } });
    s.setToolPose(0.5, 0, 0.55, 0.9, 0, 0, 0, 1);
    s.setToolPose(Number.NaN, 0, 0.55, 0.9, 0, 0, 0, 1);
    s.step(0.5, zero);
    expect(s.watchdog.trips.some((r) => r.check === CHECK.non_finite && r.input === 'tool_pose')).toBe(true);
    expect(s.snapshot().lastSeen[INPUT.tool_pose]).toBe(0.5);
  });
});
