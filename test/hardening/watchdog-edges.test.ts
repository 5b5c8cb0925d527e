/**
 * Hardening: watchdog edges found by mutation testing (npm run mutate; DEVELOPERS.md, Mutation
 * testing). Our own behaviour as src/core/watchdog.ts and SAFETY.md state it.
 */
import { describe, expect, it } from 'vitest';
import { CHECKS, INPUTS, Watchdog, type WatchdogInputs } from '../../src/core/watchdog.js';
import { loadCell, type WatchdogParams } from '../../src/params/config.js';
import { DEMO } from '../support/files.js';
import { requiredInputs } from '../support/watchdog.js';

const P: WatchdogParams = loadCell(DEMO).left.config.watchdog;

const inputs = (joints = 6): WatchdogInputs => requiredInputs(joints);

function clean(wd: Watchdog, x: WatchdogInputs, t: number, mutate?: (x: WatchdogInputs) => void): boolean {
  x.t_s = t;
  x.compensated.fill(0);
  x.correction.fill(0);
  x.jointVelocity.fill(0);
  x.impactFlag = false;
  x.jointFinite = x.poseFinite = x.zoneFinite = true;
  x.lastSeen.fill(t);
  mutate?.(x);
  return wd.checkInputs(x);
}
const names = (wd: Watchdog) => wd.trips.map((r) => CHECKS[r.check]);

describe('watchdog edges', () => {
  it('before any input has arrived the twist is zero (waiting), from checkOutput and tick alike', () => {
    const wd = new Watchdog(P);
    expect(wd.waitingForInputs).toBe(true);
    const tw = Float64Array.of(0.1, 0, 0, 0, 0, 0.1);
    wd.checkOutput(0, tw);
    expect(Array.from(tw)).toEqual([0, 0, 0, 0, 0, 0]);
    expect(wd.tick(0, new Float64Array(4).fill(Number.NaN), Uint8Array.of(1, 1, 1, 1))).toBe(true);
    expect(wd.held).toBe(false);
  });

  it('the eleven checks trip in one hold: every reason is kept, oldest first', () => {
    const wd = new Watchdog({ ...P, on_impact: 'hold' });
    const x = inputs();
    for (let k = 0; k <= 100; k++) clean(wd, x, k / 1000);
    const faults: ((x: WatchdogInputs) => void)[] = [
      (v) => void (v.compensated[0] = 2 * P.force_limit_n),
      (v) => void (v.compensated[3] = 2 * P.torque_limit_nm),
      (v) => void (v.correction[1] = 2 * P.correction_force_limit_n),
      (v) => void (v.correction[4] = 2 * P.correction_torque_limit_nm),
      (v) => void (v.jointVelocity[0] = 2 * P.joint_velocity_limit_rad_s),
      (v) => { v.impactFlag = true; v.impactScore = 3; },
      (v) => void (v.poseFinite = false),
    ];
    let t = 0.1;
    for (const f of faults) clean(wd, x, (t += 0.001), f);
    wd.checkOutput((t += 0.001), Float64Array.of(2 * P.linear_speed_limit_m_s, 0, 0, 0, 0, 0));
    wd.checkOutput(t, Float64Array.of(0, 0, 0, 0, 0, 2 * P.angular_speed_limit_rad_s));
    // Every input 1 s late (stale), then a sample from the past (backwards).
    x.t_s = t += 1;
    x.poseFinite = true;
    wd.checkInputs(x);
    clean(wd, x, t - 0.5);
    expect(names(wd)).toEqual(['force_raw', 'torque_raw', 'force_correction', 'torque_correction', 'joint_velocity', 'impact', 'non_finite', 'twist_linear', 'twist_angular', 'stale_input', 'time_backwards']);
    expect(wd.tripsLength).toBe(11);
  });

  it('a second joint at the same speed does not relabel the record; a faster one does', () => {
    const wd = new Watchdog(P);
    const x = inputs();
    clean(wd, x, 0);
    const v = 2 * P.joint_velocity_limit_rad_s;
    clean(wd, x, 0.001, (y) => void (y.jointVelocity[1] = v));
    clean(wd, x, 0.002, (y) => void (y.jointVelocity[4] = -v));
    expect(wd.trips).toEqual([{ check: CHECKS.indexOf('joint_velocity'), input: 'joint_states[1]', value: v, limit: P.joint_velocity_limit_rad_s, t_s: 0.001 }]);
    clean(wd, x, 0.003, (y) => void (y.jointVelocity[5] = 2 * v));
    expect(wd.trips).toEqual([{ check: CHECKS.indexOf('joint_velocity'), input: 'joint_states[5]', value: 2 * v, limit: P.joint_velocity_limit_rad_s, t_s: 0.001 }]);
  });

  it('joints past the 64th are labelled joint_states', () => {
    const wd = new Watchdog(P);
    const x = inputs(70);
    clean(wd, x, 0);
    clean(wd, x, 0.001, (y) => void (y.jointVelocity[66] = 2 * P.joint_velocity_limit_rad_s));
    expect(wd.tripAt(0).input).toBe('joint_states');
    const w2 = new Watchdog(P);
    clean(w2, x, 0);
    clean(w2, x, 0.001, (y) => void (y.jointVelocity[63] = 2 * P.joint_velocity_limit_rad_s));
    expect(w2.tripAt(0).input).toBe('joint_states[63]');
  });

  it.each(INPUTS.map((name, k) => ({ name, k })))('a last arrival of $name at ±infinity trips non_finite for that input (never "fresh", never "stale")', ({ name, k }) => {
    for (const inf of [Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY]) {
      const wd = new Watchdog(P);
      const x = inputs();
      clean(wd, x, 0);
      expect(clean(wd, x, 0.001, (y) => void (y.lastSeen[k] = inf))).toBe(true);
      expect(wd.trips.map((r) => [CHECKS[r.check], r.input, r.value])).toEqual([['non_finite', name, inf]]);
    }
  });

  it('an angular twist fault alone restarts the clear timer at once, like a linear one', () => {
    for (const tw of [Float64Array.of(0, 0, 0, 2 * P.angular_speed_limit_rad_s, 0, 0), Float64Array.of(2 * P.linear_speed_limit_m_s, 0, 0, 0, 0, 0)]) {
      const wd = new Watchdog(P);
      const x = inputs();
      for (let k = 0; k <= 500; k++) clean(wd, x, k / 1000);
      expect(wd.clearFor_s).toBe(0.5);
      wd.checkOutput(0.5, tw);
      expect(wd.held).toBe(true);
      expect(wd.clearFor_s).toBe(0);
    }
  });

  it('a tick with fresh inputs keeps the clear timer running (ready stays ready)', () => {
    const wd = new Watchdog(P);
    const x = inputs();
    clean(wd, x, 0);
    clean(wd, x, 0.001, (y) => void (y.compensated[0] = 2 * P.force_limit_n));
    for (let k = 2; k <= 1100; k++) clean(wd, x, k / 1000);
    expect(wd.readyToRelease).toBe(true);
    x.lastSeen.fill(1.105);
    expect(wd.tick(1.105, x.lastSeen, x.required)).toBe(true);
    expect(wd.clearFor_s).toBeCloseTo(1.104, 12);
    expect(wd.readyToRelease).toBe(true);
    expect(wd.requestReset().released).toBe(true);
  });

  it('a tick dated before the last sample changes nothing (no trip, the clear timer as it was)', () => {
    const wd = new Watchdog(P);
    const x = inputs();
    clean(wd, x, 0);
    clean(wd, x, 0.001, (y) => void (y.compensated[0] = 2 * P.force_limit_n));
    for (let k = 2; k <= 800; k++) clean(wd, x, k / 1000);
    const before = wd.clearFor_s;
    // Inputs last seen "in the future" of the tick: a negative age, so nothing looks stale either way.
    expect(wd.tick(0.3, x.lastSeen, x.required)).toBe(true);
    expect(wd.clearFor_s).toBe(before);
    expect(names(wd)).toEqual(['force_raw']);
  });

  it('a twist fault checked with a time before the last sample is dated at the latest time seen', () => {
    // watchdog.ts updateClear: "a sample from the past must not date the fault earlier".
    const wd = new Watchdog(P);
    const x = inputs();
    for (let k = 0; k <= 2000; k++) clean(wd, x, k / 1000);
    wd.checkOutput(1.5, Float64Array.of(2 * P.linear_speed_limit_m_s, 0, 0, 0, 0, 0));
    for (let k = 2001; k <= 2999; k++) clean(wd, x, k / 1000);
    expect(wd.requestReset().released).toBe(false);
    clean(wd, x, 3.0);
    clean(wd, x, 3.001);
    expect(wd.requestReset().released).toBe(true);
  });
});
