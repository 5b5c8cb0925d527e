/**
 * Review finding: before the tare, gravity counted as correction force. The beam's weight
 * before the start-up tare showed as a 14.5 N peak correction force; with a tighter
 * correction_force_limit_n (10 N) replay latched a force_correction hold at t = 0.
 *
 * Our own synthetic stream (invented data): a still sensor carrying 14.5 N of weight on z.
 */
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { CHECK } from '../../src/core/watchdog.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const base = loadCell('config/demo_cell.yaml').left.config;
const tight: ArmConfig = { ...base, task: { ...base.task, zones: [] }, watchdog: { ...base.watchdog, correction_force_limit_n: 10 } };

describe('review: the untared weight is no correction force', () => {
  it('a 14.5 N weight before the start-up tare does not trip a 10 N correction limit', () => {
    const s = new ArmStep(tight, { required: { tool_pose: false, zone_view: false } });
    const w = Float64Array.of(0, 0, 14.5, 0, 0, 0);
    for (let k = 0; k < 2000; k++) s.step(k / 1000, w);
    expect(s.out.tared).toBe(true);
    expect(s.watchdog.trips.map((r) => r.check)).toEqual([]);
    expect(s.out.held).toBe(false);
  });

  it('the raw limits still apply before the tare', () => {
    const s = new ArmStep(tight, { required: { tool_pose: false, zone_view: false } });
    const w = Float64Array.of(0, 0, 200, 0, 0, 0); // above force_limit_n = 150 N
    s.step(0, w);
    expect(s.out.held).toBe(true);
    expect(s.watchdog.trips[0]!.check).toBe(CHECK.force_raw);
  });
});
