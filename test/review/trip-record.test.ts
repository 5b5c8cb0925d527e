/**
 * Review: a trip record names check, input, value and limit (SAFETY.md). When a second input
 * trips the same check with a worse value, the record takes that input and value; its limit
 * must be that input's limit, not the first one's. Limits: demo cell schema defaults
 * (stale_after_s.tool_pose 0.05 s, stale_after_s.zone_view 0.5 s).
 */
import { describe, expect, it } from 'vitest';
import { CHECK, INPUTS, Watchdog, watchdogInputs, type WatchdogInputs } from '../../src/core/watchdog.js';
import { buildArmConfig } from '../../src/params/config.js';

const P = buildArmConfig(undefined, 'left').config.watchdog;

describe('review: trip record', () => {
  it('the recorded limit belongs to the recorded input', () => {
    const wd = new Watchdog(P);
    const x: WatchdogInputs = watchdogInputs({
      lastSeen: new Float64Array(INPUTS.length).fill(0), required: Uint8Array.of(1, 0, 1, 1),
    });
    for (let k = 0; k <= 1000; k++) {
      const t = k / 1000;
      x.t_s = t;
      x.lastSeen[0] = t; // wrench keeps arriving
      if (t <= 0.3) x.lastSeen[2] = t; // tool pose stops at 0.3 s; zone view never after 0
      wd.checkInputs(x);
    }
    const stale = wd.trips.filter((r) => r.check === CHECK.stale_input);
    expect(stale.length).toBe(1);
    const r = stale[0]!;
    const limit = r.input === 'zone_view' ? P.stale_after_s.zone_view : P.stale_after_s.tool_pose;
    expect(r.limit).toBe(limit);
    expect(r.value).toBeGreaterThan(r.limit);
  });
});
