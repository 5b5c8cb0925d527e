/**
 * Each invariant of the fault campaign is able to fail: a stream that breaks it (a watchdog
 * disabled or tampered with in the test) is reported, and the same stream through the real
 * watchdog is not. Our own behaviour (invented inputs of the demo scenario), no outside source.
 */
import { describe, expect, it } from 'vitest';
import { INVARIANTS } from '../../src/faults/invariants.js';
import { drive, fault } from './drive.js';

const count = (d: ReturnType<typeof drive>, name: (typeof INVARIANTS)[number]) => d.monitor.counts[INVARIANTS.indexOf(name)]!;
const spike = (k: number, w: Float64Array) => {
  if (k === 2000) w[0] = 400;
};

describe('invariant monitor', () => {
  it('reports nothing on a clean still arm and on faults the real watchdog holds', () => {
    const clean = drive();
    clean.run(0, 3000);
    expect(clean.monitor.total).toBe(0);
    expect(clean.arm.out.tared).toBe(true);
    const faulted = drive([fault('nan_burst', 1.5, 0.01), fault('dropout', 2.0, 0.2, 0, 'tool_pose'), fault('time_jump_back', 2.5, Infinity, -0.3)]);
    faulted.monitor.armReaction(1.5);
    faulted.run(0, 6000, { wrench: spike, resetEvery: 50 });
    expect(faulted.monitor.firstHeldAt).toBe(1.5);
    expect(faulted.monitor.total).toBe(0);
  });

  it('held_twist_zero fails when a held arm publishes a twist', () => {
    const d = drive([], (arm) => {
      const step = arm.step.bind(arm);
      arm.step = (t, w) => {
        const o = step(t, w);
        if (o.held) o.twist[1] = 1e-6;
        return o;
      };
    });
    d.run(0, 2100, { wrench: spike });
    expect(d.arm.out.held).toBe(true);
    expect(count(d, 'held_twist_zero')).toBeGreaterThan(0);
  });

  it('limit_hold fails when a force past its limit is not held within one period', () => {
    const d = drive([], (arm) => {
      arm.watchdog.checkInputs = () => false;
    });
    d.run(0, 2100, { wrench: (k, w) => { if (k >= 2000) w[0] = 400; } });
    expect(count(d, 'limit_hold')).toBeGreaterThan(0);
    expect(d.monitor.violations[0]!.detail).toMatch(/force 4\d\d\.\d N > 150 N/);
  });

  it('limit_hold fails when a non-finite wrench is not held', () => {
    const d = drive([fault('nan_burst', 2.0, 0.005)], (arm) => {
      arm.watchdog.checkInputs = () => false;
    });
    d.run(0, 2100);
    expect(count(d, 'limit_hold')).toBeGreaterThan(0);
  });

  it('stale_hold fails when a dropped wrench is never held', () => {
    const d = drive([fault('dropout', 2.0, 0.5)], (arm) => {
      arm.watchdog.tick = () => false;
    });
    d.run(0, 2600);
    expect(count(d, 'stale_hold')).toBeGreaterThan(0);
    expect(count(d, 'limit_hold')).toBe(0);
    // The real watchdog holds the same stream at its timeout.
    const ok = drive([fault('dropout', 2.0, 0.5)]);
    ok.monitor.armReaction(2.0);
    ok.run(0, 2600);
    expect(ok.monitor.total).toBe(0);
    expect(ok.arm.out.held).toBe(true);
    expect(ok.monitor.firstHeldAt).toBeCloseTo(2.0 + ok.arm.config.watchdog.stale_after_s.wrench, 2);
  });

  it('reset_release fails when a reset releases during the clear time', () => {
    const d = drive([], (arm) => {
      arm.watchdog.requestReset = function (this: typeof arm.watchdog) {
        this.held = false;
        return { released: true, reason: 'tampered' };
      };
    });
    d.run(0, 2300, { wrench: spike, resetEvery: 50 });
    expect(count(d, 'reset_release')).toBeGreaterThan(0);
  });

  it('non_finite_output fails on a NaN in the belief', () => {
    const d = drive([], (arm) => {
      const step = arm.step.bind(arm);
      arm.step = (t, w) => {
        const o = step(t, w);
        if (t > 1) o.belief[0] = Number.NaN;
        return o;
      };
    });
    d.run(0, 1100);
    expect(count(d, 'non_finite_output')).toBeGreaterThan(0);
  });
});
