/**
 * Hardening: a hold always has a reason, and a released hold forgets its old reasons.
 * SAFETY.md and the watchdog's module comment: it "latches a safe hold when any check fails,
 * records machine-readable reasons" and "releases only on an explicit reset". Our own
 * behaviour; the oracle is a small model of which check each injected fault trips.
 *
 * Also: the non-finite time guard of Watchdog.tick() is load-bearing (each test below fails
 * when `!Number.isFinite(t)` is removed from tick()).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { CHECKS, Watchdog, type CheckName, type WatchdogInputs } from '../../src/core/watchdog.js';
import { loadCell, type WatchdogParams } from '../../src/params/config.js';
import { DEMO } from '../support/files.js';
import { requiredInputs } from '../support/watchdog.js';

const P: WatchdogParams = loadCell(DEMO).left.config.watchdog;

const inputs = (): WatchdogInputs => requiredInputs(6);

type Fault = 'force' | 'torque' | 'corr_force' | 'corr_torque' | 'joint' | 'nan_wrench' | 'pose' | 'impact' | 'backwards' | 'nan_time' | 'twist' | 'omega' | 'stale_zone';
/** The one check each fault trips (the model). */
const TRIPS: Record<Fault, CheckName> = {
  force: 'force_raw',
  torque: 'torque_raw',
  corr_force: 'force_correction',
  corr_torque: 'torque_correction',
  joint: 'joint_velocity',
  nan_wrench: 'non_finite',
  pose: 'non_finite',
  impact: 'impact',
  backwards: 'time_backwards',
  nan_time: 'non_finite',
  twist: 'twist_linear',
  omega: 'twist_angular',
  stale_zone: 'stale_input',
};
const FAULTS = Object.keys(TRIPS) as Fault[];

type Op = { kind: 'clean'; dt: number } | { kind: 'fault'; fault: Fault; dt: number } | { kind: 'tick'; dt: number } | { kind: 'nan_tick' } | { kind: 'reset' } | { kind: 'wait_clear' };

const op: fc.Arbitrary<Op> = fc.oneof(
  { weight: 6, arbitrary: fc.record({ kind: fc.constant('clean' as const), dt: fc.integer({ min: 1, max: 10 }).map((k) => k / 1000) }) },
  { weight: 3, arbitrary: fc.record({ kind: fc.constant('fault' as const), fault: fc.constantFrom(...FAULTS), dt: fc.integer({ min: 1, max: 10 }).map((k) => k / 1000) }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('tick' as const), dt: fc.integer({ min: 0, max: 5 }).map((k) => k / 1000) }) },
  { weight: 1, arbitrary: fc.constant({ kind: 'nan_tick' as const }) },
  { weight: 2, arbitrary: fc.constant({ kind: 'reset' as const }) },
  { weight: 1, arbitrary: fc.constant({ kind: 'wait_clear' as const }) },
);

/** Drive a watchdog through `ops`; returns a failure description or undefined. */
function drive(ops: readonly Op[]): void {
  const wd = new Watchdog(P);
  const x = inputs();
  let t = 0;
  /** Checks tripped since the last granted release (the model of the trip list). */
  let expected = new Set<CheckName>();
  const clean = (tt: number, mutate?: (x: WatchdogInputs) => void, fresh = [0, 1, 2, 3, 4]) => {
    x.t_s = tt;
    x.compensated.fill(0);
    x.correction.fill(0);
    x.jointVelocity.fill(0);
    x.impactFlag = false;
    x.impactScore = 0;
    x.jointFinite = x.poseFinite = x.zoneFinite = true;
    for (const k of fresh) x.lastSeen[k] = tt;
    mutate?.(x);
    wd.checkInputs(x);
  };
  clean(0);
  const check = (label: string) => {
    // The invariant: held ⇔ at least one reason; and the reasons are exactly those since the last release.
    const names = wd.trips.map((r) => CHECKS[r.check]!);
    const ok = (wd.held ? wd.tripsLength > 0 : wd.tripsLength === 0) && names.length === expected.size && names.every((n) => expected.has(n));
    if (!ok) {
      expect(wd.held ? wd.tripsLength > 0 : wd.tripsLength === 0, `${label}: held=${wd.held} with ${wd.tripsLength} reasons`).toBe(true);
      expect(names.sort(), label).toEqual([...expected].sort());
    }
  };
  for (const [n, o] of ops.entries()) {
    const label = `op ${n} ${JSON.stringify(o)}`;
    switch (o.kind) {
      case 'clean':
        clean((t += o.dt));
        break;
      case 'tick':
        t += o.dt;
        x.lastSeen.fill(t);
        wd.tick(t, x.lastSeen, x.required);
        break;
      case 'nan_tick':
        wd.tick(Number.NaN, x.lastSeen, x.required);
        break;
      case 'wait_clear':
        // Clean samples until every condition has been clear for release_clear_s.
        for (let k = 0; k < Math.round(P.release_clear_s * 1000) + 2; k++) clean((t += 0.001));
        break;
      case 'reset': {
        const r = wd.requestReset();
        if (r.released) expected = new Set();
        expect(r.released, label).toBe(!wd.held);
        break;
      }
      case 'fault': {
        const f = o.fault;
        if (f === 'backwards') {
          clean(t - 0.5);
        } else if (f === 'nan_time') {
          clean(Number.NaN);
        } else if (f === 'twist' || f === 'omega') {
          clean((t += o.dt));
          const tw = new Float64Array(6);
          tw[f === 'twist' ? 1 : 5] = 2 * (f === 'twist' ? P.linear_speed_limit_m_s : P.angular_speed_limit_rad_s);
          wd.checkOutput(t, tw);
        } else if (f === 'stale_zone') {
          // The zone view stops (its last arrival stays where it was) beyond its limit.
          clean((t += 0.001));
          t += P.stale_after_s.zone_view + 0.01;
          clean(t, undefined, [0, 1, 2]);
          clean(t, undefined);
        } else {
          clean((t += o.dt), (v) => {
            if (f === 'force') v.compensated[2] = -2 * P.force_limit_n;
            if (f === 'torque') v.compensated[4] = 2 * P.torque_limit_nm;
            if (f === 'corr_force') v.correction[0] = 2 * P.correction_force_limit_n;
            if (f === 'corr_torque') v.correction[5] = -2 * P.correction_torque_limit_nm;
            if (f === 'joint') v.jointVelocity[4] = 2 * P.joint_velocity_limit_rad_s;
            if (f === 'nan_wrench') v.compensated[1] = Number.NaN;
            if (f === 'pose') v.poseFinite = false;
            if (f === 'impact') { v.impactFlag = true; v.impactScore = 2; }
          });
        }
        expected.add(TRIPS[f]);
        expect(wd.held, label).toBe(true);
        break;
      }
    }
    check(label);
  }
}

describe('a hold always has a reason', () => {
  it('over random streams of faults, ticks, NaN ticks and resets: held ⇔ reasons, and the reasons are exactly the checks tripped since the last release', () => {
    fc.assert(fc.property(fc.array(op, { minLength: 1, maxLength: 80 }), (ops) => drive(ops)), { numRuns: 150 });
  });

  it('after a granted reset, a later trip holds with exactly the new reason (the old list is cleared)', () => {
    // Fixed case of the property above (the planted bug "reset does not clear the trip list").
    drive([
      { kind: 'fault', fault: 'force', dt: 0.001 },
      { kind: 'fault', fault: 'joint', dt: 0.001 },
      { kind: 'wait_clear' },
      { kind: 'reset' },
      { kind: 'fault', fault: 'force', dt: 0.001 },
    ]);
    const wd = new Watchdog(P);
    const x = inputs();
    const at = (t: number, f = 0) => {
      x.t_s = t;
      x.lastSeen.fill(t);
      x.compensated[0] = f;
      return wd.checkInputs(x);
    };
    at(0);
    at(0.001, 1000);
    for (let k = 2; k <= 1002; k++) at(k / 1000);
    expect(wd.requestReset().released).toBe(true);
    expect(wd.tripsLength).toBe(0);
    expect(wd.trips).toEqual([]);
    at(1.003, 1000);
    expect(wd.held).toBe(true);
    expect(wd.trips.map((r) => ({ check: CHECKS[r.check], t_s: r.t_s }))).toEqual([{ check: 'force_raw', t_s: 1.003 }]);
  });
});

describe('Watchdog.tick() refuses a non-finite time', () => {
  it('a NaN tick leaves the clear timer as it was, and a reset afterwards still refuses to release early', () => {
    const wd = new Watchdog(P);
    const x = inputs();
    const at = (t: number, f = 0) => {
      x.t_s = t;
      x.lastSeen.fill(t);
      x.compensated[0] = f;
      return wd.checkInputs(x);
    };
    for (let k = 0; k <= 1000; k++) at(k / 1000);
    at(1.001, 2 * P.force_limit_n);
    for (let k = 1002; k <= 1500; k++) at(k / 1000);
    const before = wd.clearFor_s;
    expect(before).toBeCloseTo(0.499, 9);
    expect(wd.tick(Number.NaN, x.lastSeen, x.required)).toBe(true);
    // Without the guard the timer would read NaN (NaN − last fault time).
    expect(wd.clearFor_s).toBe(before);
    expect(wd.requestReset().released).toBe(false);
    expect(wd.held).toBe(true);
    expect(wd.tripsLength).toBe(1);
  });

  it('a hold from a NaN-stamped first sample, then a tick at −∞: a reset right after must not release', () => {
    // The first valid time starts the clear timer (watchdog.ts). A non-finite tick must not
    // date it instead: −∞ as the start would make the hold look clear for ever.
    const wd = new Watchdog(P);
    const x = inputs();
    x.t_s = Number.NaN;
    wd.checkInputs(x);
    expect(wd.held).toBe(true);
    for (const bad of [Number.NEGATIVE_INFINITY, Number.NaN, Number.POSITIVE_INFINITY]) {
      expect(wd.tick(bad, x.lastSeen, x.required), String(bad)).toBe(true);
    }
    for (let k = 1; k <= 10; k++) {
      x.t_s = k / 1000;
      x.lastSeen.fill(x.t_s);
      wd.checkInputs(x);
    }
    expect(wd.clearFor_s).toBeCloseTo(0.009, 12);
    expect(wd.readyToRelease).toBe(false);
    expect(wd.requestReset().released).toBe(false);
    expect(wd.held).toBe(true);
    expect(wd.trips.map((r) => CHECKS[r.check])).toEqual(['non_finite']);
  });
});
