/**
 * The watchdog on its own: every check trips a latched hold with a machine-readable reason,
 * the recommended twist is exactly zero while held, and only an explicit reset after every
 * condition has been clear for `release_clear_s` releases it.
 *
 * Limits are the schema defaults of the demo cell (src/params/schema.ts); the reference for
 * each expectation is named beside the check.
 */
import fc from 'fast-check';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { CHECK, CHECKS, INPUT, INPUTS, Watchdog, type CheckName, type Trip, watchdogInputs, type WatchdogInputs } from '../../src/core/watchdog.js';
import { buildArmConfig, type WatchdogParams } from '../../src/params/config.js';

/** Schema defaults: force 150 N, torque 25 N·m, correction 60 N / 15 N·m, joints 1 rad/s, 0.25 m/s, 0.5 rad/s, release after 1 s. */
const DEFAULTS: WatchdogParams = buildArmConfig(undefined, 'left').config.watchdog;

function params(over: Partial<WatchdogParams> = {}): WatchdogParams {
  return { ...DEFAULTS, ...over };
}

function inputs(): WatchdogInputs {
  return watchdogInputs({
    jointVelocity: new Float64Array(6),
    jointCount: 6,
    lastSeen: new Float64Array(INPUTS.length).fill(Number.NaN),
    required: Uint8Array.of(1, 1, 1, 1),
  });
}

/** A watchdog fed by a clean, fresh stream at 1 kHz; `step` mutates one sample. */
class Bench {
  readonly wd: Watchdog;
  readonly x = inputs();
  constructor(p: WatchdogParams = DEFAULTS) {
    this.wd = new Watchdog(p);
  }
  /** One sample at `t`: every required input fresh unless `fresh` says otherwise, then `mutate`, then the check. */
  sample(t: number, mutate?: (x: WatchdogInputs) => void, fresh: readonly number[] = [0, 1, 2, 3]): boolean {
    const x = this.x;
    x.t_s = t;
    x.compensated.fill(0);
    x.correction.fill(0);
    x.jointVelocity.fill(0);
    x.impactFlag = false;
    x.impactScore = 0;
    x.jointFinite = true;
    x.poseFinite = true;
    for (const k of fresh) x.lastSeen[k] = t;
    mutate?.(x);
    return this.wd.checkInputs(x);
  }
  /** Clean samples every `dt` from `t0` up to and including `t1` (integer steps, no drift). */
  run(t0: number, t1: number, dt = 0.001): void {
    const n = Math.round((t1 - t0) / dt);
    for (let k = 0; k <= n; k++) this.sample(t0 + k * dt);
  }
  twist(t: number, v: readonly number[]): Float64Array {
    const tw = Float64Array.from(v);
    this.wd.checkOutput(t, tw);
    return tw;
  }
}

const checkName = (r: Trip): CheckName => CHECKS[r.check]!;
const allExactZero = (tw: Float64Array): boolean => Array.from(tw).every((v) => Object.is(v, 0));
const SOME_TWIST = [0.1, -0.05, 0.02, 0.1, -0.2, 0.15];

describe('watchdog: a clean stream', () => {
  it('does not hold and passes a twist within the limits through unchanged', () => {
    // common practice: a monitor is transparent while nothing is wrong
    const b = new Bench();
    b.run(0, 0.5);
    expect(b.wd.held).toBe(false);
    expect(b.wd.waitingForInputs).toBe(false);
    expect(b.wd.trips).toEqual([]);
    expect(Array.from(b.twist(0.5, SOME_TWIST))).toEqual(SOME_TWIST);
  });

  it('counts the clear time from the first sample', () => {
    // watchdog.ts module comment: clearFor_s is the time every condition has been clear
    const b = new Bench();
    b.run(2, 2.25);
    expect(b.wd.clearFor_s).toBeCloseTo(0.25, 12);
  });

  it('check identifiers are the published list, in order', () => {
    // antiphon/msg/WatchdogTrip.check (watchdog.ts): the index is the wire value
    expect(CHECKS).toEqual([
      'force_raw', 'torque_raw', 'force_correction', 'torque_correction', 'joint_velocity', 'twist_linear', 'twist_angular', 'stale_input', 'non_finite', 'time_backwards', 'impact',
      'force_untared', 'torque_untared', 'time_future', 'quaternion_norm', 'joint_velocity_absent', 'partner_stop', 'partner_hold',
    ]);
    for (const [k, name] of CHECKS.entries()) expect(CHECK[name]).toBe(k);
    expect(INPUTS).toEqual(['wrench', 'joint_states', 'tool_pose', 'zone_view', 'hold_link']);
    // The message documents every name.
    const msg = readFileSync('msg/WatchdogTrip.msg', 'utf8');
    for (const name of CHECKS) expect(msg, name).toContain(name);
  });
});

describe('watchdog: each check trips with its reason', () => {
  interface Case {
    check: CheckName;
    input: string;
    value: number;
    limit: number;
    mutate: (x: WatchdogInputs) => void;
  }
  // Magnitudes are Euclidean norms over the three axes (common practice for wrench limits).
  const cases: Case[] = [
    { check: 'force_raw', input: 'wrench', value: Math.hypot(120, 100, 0), limit: 150, mutate: (x) => x.compensated.set([120, 100, 0, 0, 0, 0]) },
    { check: 'torque_raw', input: 'wrench', value: Math.hypot(20, 20, 0), limit: 25, mutate: (x) => x.compensated.set([0, 0, 0, 20, -20, 0]) },
    { check: 'force_correction', input: 'wrench', value: Math.hypot(50, 40), limit: 60, mutate: (x) => x.correction.set([50, 0, 40, 0, 0, 0]) },
    { check: 'torque_correction', input: 'wrench', value: Math.hypot(12, 10), limit: 15, mutate: (x) => x.correction.set([0, 0, 0, 12, 0, -10]) },
    { check: 'joint_velocity', input: 'joint_states[2]', value: 1.3, limit: 1.0, mutate: (x) => (x.jointVelocity[2] = -1.3) },
    { check: 'impact', input: 'wrench.force', value: 1.7, limit: 1, mutate: (x) => ((x.impactFlag = true), (x.impactScore = 1.7)) },
    { check: 'impact', input: 'wrench.torque', value: 1.7, limit: 1, mutate: (x) => ((x.impactFlag = true), (x.impactScore = 1.7), (x.impactByTorque = true)) },
  ];

  it.each(cases)('$check: check, input, value, limit, time', ({ check, input, value, limit, mutate }) => {
    // watchdog.ts: trips record (check, input, measured value, limit, time)
    const b = new Bench();
    b.run(0, 0.2);
    expect(b.wd.held).toBe(false);
    expect(b.sample(0.201, mutate)).toBe(true);
    expect(b.wd.held).toBe(true);
    expect(b.wd.clearFor_s).toBe(0);
    expect(b.wd.trips).toHaveLength(1);
    const r = b.wd.trips[0]!;
    expect(checkName(r)).toBe(check);
    expect(r.input).toBe(input);
    expect(r.value).toBeCloseTo(value, 12);
    expect(r.limit).toBe(limit);
    expect(r.t_s).toBe(0.201);
    // The machine-readable record survives a JSON round trip (what the ROS adapter publishes).
    expect(JSON.parse(JSON.stringify(b.wd.trips))).toEqual([{ check: CHECK[check], input, value: r.value, limit, t_s: 0.201 }]);
  });

  it('a value exactly at its limit does not trip', () => {
    // schema descriptions: "largest ... before a safe hold", so the limit itself is allowed
    const b = new Bench();
    b.sample(0, (x) => {
      x.compensated.set([0, 150, 0, 0, 0, -25]);
      x.correction.set([60, 0, 0, 0, 15, 0]);
      x.jointVelocity[0] = 1.0;
    });
    expect(b.wd.held).toBe(false);
    b.twist(0, [0.25, 0, 0, 0, 0, 0.5]);
    expect(b.wd.held).toBe(false);
  });

  it('twist_linear and twist_angular trip via checkOutput and zero the twist', () => {
    // watchdog.ts checkOutput: a twist above its limit trips the hold
    const lin = new Bench();
    lin.run(0, 0.1);
    const tw = lin.twist(0.1, [0.2, 0.2, 0, 0, 0, 0]);
    expect(lin.wd.held).toBe(true);
    expect(allExactZero(tw)).toBe(true);
    expect(lin.wd.trips).toEqual([{ check: CHECK.twist_linear, input: 'recommended_twist', value: Math.hypot(0.2, 0.2), limit: 0.25, t_s: 0.1 }]);
    expect(lin.wd.clearFor_s).toBe(0);

    const ang = new Bench();
    ang.run(0, 0.1);
    ang.twist(0.1, [0, 0, 0, 0, 0, -0.6]);
    expect(ang.wd.trips).toEqual([{ check: CHECK.twist_angular, input: 'recommended_twist', value: 0.6, limit: 0.5, t_s: 0.1 }]);

    const nan = new Bench();
    nan.run(0, 0.1);
    nan.twist(0.1, [Number.NaN, 0, 0, 0, 0, 0]);
    expect(nan.wd.held).toBe(true);
    expect(checkName(nan.wd.trips[0]!)).toBe('twist_linear');
  });

  it('several conditions at once: one record each, oldest first; a repeat keeps the first time and the worst value', () => {
    // watchdog.ts trip(): keep the first occurrence, raise the recorded value to the worst seen
    const b = new Bench();
    b.sample(0, (x) => x.compensated.set([160, 0, 0, 0, 0, 30]));
    b.sample(0.001, (x) => x.compensated.set([200, 0, 0, 0, 0, 0]));
    b.sample(0.002, (x) => x.compensated.set([170, 0, 0, 0, 0, 0]));
    expect(b.wd.trips.map(checkName)).toEqual(['force_raw', 'torque_raw']);
    expect(b.wd.trips[0]).toMatchObject({ value: 200, t_s: 0, limit: 150 });
    expect(b.wd.trips[1]).toMatchObject({ value: 30, t_s: 0, limit: 25 });
  });

  it('non-finite values in the wrench, joint states or tool pose', () => {
    // watchdog.ts: non-finite values anywhere in the wrench or the other inputs
    const w = new Bench();
    w.sample(0, (x) => (x.compensated[4] = Number.POSITIVE_INFINITY));
    expect(w.wd.held).toBe(true);
    expect(w.wd.trips[0]).toMatchObject({ check: CHECK.non_finite, input: 'wrench', t_s: 0 });
    expect(Number.isNaN(w.wd.trips[0]!.value)).toBe(true);

    const j = new Bench();
    j.sample(0, (x) => (x.jointFinite = false));
    expect(j.wd.trips[0]).toMatchObject({ check: CHECK.non_finite, input: 'joint_states' });

    const p = new Bench();
    p.sample(0, (x) => (x.poseFinite = false));
    expect(p.wd.trips[0]).toMatchObject({ check: CHECK.non_finite, input: 'tool_pose' });

    const t = new Bench();
    t.run(0, 0.1);
    expect(t.sample(Number.NaN)).toBe(true);
    expect(t.wd.trips[0]).toMatchObject({ check: CHECK.non_finite, input: 'time' });
  });

  it('time going backwards trips with the (negative) step as its value', () => {
    // common practice: a monotonic clock per stream; a step back is a fault
    const b = new Bench();
    b.run(0, 1);
    b.sample(0.75);
    expect(b.wd.held).toBe(true);
    expect(b.wd.trips).toEqual([{ check: CHECK.time_backwards, input: 'time', value: 0.75 - 1, limit: 0, t_s: 0.75 }]);
  });

  it('impact: on_impact hold latches, on_impact report does not', () => {
    // schema: watchdog.on_impact "latch a safe hold, or only report it"
    const hold = new Bench(params({ on_impact: 'hold' }));
    hold.sample(0, (x) => ((x.impactFlag = true), (x.impactScore = 2.5)));
    expect(hold.wd.held).toBe(true);
    expect(hold.wd.trips[0]).toMatchObject({ check: CHECK.impact, value: 2.5, limit: 1 });

    const report = new Bench(params({ on_impact: 'report' }));
    expect(report.sample(0, (x) => ((x.impactFlag = true), (x.impactScore = 2.5)))).toBe(false);
    expect(report.wd.held).toBe(false);
    expect(report.wd.trips).toEqual([]);
    expect(Array.from(report.twist(0, SOME_TWIST))).toEqual(SOME_TWIST);
  });
});

describe('watchdog: stale and never-seen inputs', () => {
  it('an input that stops arriving trips stale_input once older than its limit', () => {
    // schema: watchdog.stale_after_s.joint_states = 0.05 s
    const b = new Bench();
    b.run(0, 0.1);
    // joint_states last at 0.1 s; the others stay fresh.
    const others = [INPUT.wrench, INPUT.tool_pose, INPUT.zone_view];
    for (let k = 1; k <= 45; k++) b.sample(0.1 + k * 0.001, undefined, others);
    expect(b.wd.held).toBe(false); // 0.045 s old: within the limit
    b.sample(0.152, undefined, others);
    expect(b.wd.held).toBe(true);
    const r = b.wd.trips[0]!;
    expect(checkName(r)).toBe('stale_input');
    expect(r.input).toBe('joint_states');
    expect(r.value).toBeCloseTo(0.052, 12);
    expect(r.limit).toBe(0.05);
    expect(r.t_s).toBe(0.152);
  });

  it('tick() finds a stale wrench without a new sample', () => {
    // watchdog.ts tick: staleness checked on the node timer; stale_after_s.wrench = 0.02 s
    const b = new Bench();
    b.run(0, 0.1);
    expect(b.wd.tick(0.11, b.x.lastSeen, b.x.required)).toBe(false);
    expect(b.wd.tick(0.125, b.x.lastSeen, b.x.required)).toBe(true);
    expect(b.wd.held).toBe(true);
    expect(b.wd.trips.map((r) => r.input)).toEqual(['wrench']); // 0.025 s old: only the wrench (0.02 s) is stale
  });

  it('a required input never seen keeps waitingForInputs (zero twist) without latching', () => {
    // watchdog.ts: an input never seen keeps the arm waiting (not latched); once seen, a gap trips
    const b = new Bench();
    const noPose = [INPUT.wrench, INPUT.joint_states, INPUT.zone_view];
    for (let k = 0; k <= 5000; k++) {
      expect(b.sample(k * 0.002, undefined, noPose)).toBe(true);
    }
    expect(b.wd.waitingForInputs).toBe(true);
    expect(b.wd.held).toBe(false);
    expect(b.wd.trips).toEqual([]);
    expect(allExactZero(b.twist(10, SOME_TWIST))).toBe(true);
    // The pose arrives: no reset needed, the twist passes.
    expect(b.sample(10.002)).toBe(false);
    expect(b.wd.waitingForInputs).toBe(false);
    expect(Array.from(b.twist(10.002, SOME_TWIST))).toEqual(SOME_TWIST);
    // ...and from now on a gap in it trips (0.05 s limit).
    b.sample(10.1, undefined, noPose);
    expect(b.wd.held).toBe(true);
    expect(b.wd.trips[0]).toMatchObject({ check: CHECK.stale_input, input: 'tool_pose' });
  });

  it('an input marked not required is ignored', () => {
    // watchdog.ts WatchdogInputs.required: 0 = ignored
    const b = new Bench();
    b.x.required[INPUT.zone_view] = 0;
    for (let k = 0; k <= 2000; k++) b.sample(k * 0.001, undefined, [INPUT.wrench, INPUT.joint_states, INPUT.tool_pose]);
    expect(b.wd.held).toBe(false);
    expect(b.wd.waitingForInputs).toBe(false);
  });
});

describe('watchdog: the hold and its release', () => {
  it('the twist is exactly zero (+0 on all six axes) while held', () => {
    // watchdog.ts: keeps the recommended twist exactly zero while held
    const b = new Bench();
    b.sample(0, (x) => (x.jointVelocity[5] = 2));
    for (let k = 1; k <= 3000; k++) {
      b.sample(k * 0.001);
      const tw = b.twist(k * 0.001, [-0.01 * (k % 7), 0.02, -0, 0.1, -0.3, 0.01]);
      expect(allExactZero(tw)).toBe(true);
      for (const v of tw) expect(v === 0 && !Object.is(v, -0)).toBe(true);
    }
    expect(b.wd.held).toBe(true); // never released without a reset
  });

  it('a reset before release_clear_s is refused with a reason; the hold stays', () => {
    // schema: watchdog.release_clear_s = 1.0 s
    const b = new Bench();
    b.run(0, 1);
    b.sample(1.001, (x) => x.compensated.set([0, 0, 180, 0, 0, 0]));
    b.run(1.002, 1.5);
    const r = b.wd.requestReset();
    expect(r.released).toBe(false);
    expect(r.reason).toMatch(/clear for 0\.499 s of the 1 s required/);
    expect(b.wd.held).toBe(true);
    expect(b.wd.readyToRelease).toBe(false);
    expect(b.wd.trips.map(checkName)).toEqual(['force_raw']);
    expect(allExactZero(b.twist(1.5, SOME_TWIST))).toBe(true);
    // After a full clear second, the reset releases and clears the reasons.
    b.run(1.501, 2.002);
    expect(b.wd.readyToRelease).toBe(true);
    expect(b.wd.held).toBe(true); // ready is not released
    expect(b.wd.requestReset()).toEqual({ released: true, reason: 'released' });
    expect(b.wd.held).toBe(false);
    expect(b.wd.trips).toEqual([]);
    expect(Array.from(b.twist(2.002, SOME_TWIST))).toEqual(SOME_TWIST);
    // A reset when nothing is held is harmless.
    expect(b.wd.requestReset()).toEqual({ released: true, reason: 'not held' });
  });

  it('a condition that persists keeps the clear timer at zero', () => {
    // watchdog.ts: clearFor_s is 0 while any condition fails
    const b = new Bench();
    for (let k = 0; k <= 3000; k++) b.sample(k * 0.001, (x) => (x.correction[0] = 61));
    expect(b.wd.clearFor_s).toBe(0);
    expect(b.wd.requestReset().released).toBe(false);
  });

  it('a condition recurring restarts the clear timer', () => {
    // watchdog.ts: every condition clear for release_clear_s, counted from the last bad sample
    const b = new Bench();
    b.sample(0, (x) => (x.jointVelocity[0] = 1.5));
    b.run(0.001, 0.8);
    expect(b.wd.clearFor_s).toBeCloseTo(0.8, 9);
    b.sample(0.801, (x) => (x.jointVelocity[3] = -1.2)); // recurs (another joint, same check)
    expect(b.wd.clearFor_s).toBe(0);
    b.run(0.802, 1.5);
    expect(b.wd.requestReset().released).toBe(false); // 1.5 s since the first trip, 0.699 s since the last
    b.run(1.501, 1.802);
    expect(b.wd.requestReset().released).toBe(true);
  });

  it('a twist fault recurring via checkOutput also restarts the clear timer', () => {
    // watchdog.ts checkOutput: a twist above its limit trips the hold (and is a failing condition)
    const b = new Bench();
    b.sample(0, (x) => (x.poseFinite = false));
    b.run(0.001, 0.9);
    b.twist(0.9, [0, 0, 0.3, 0, 0, 0]);
    expect(b.wd.clearFor_s).toBe(0);
    b.run(0.901, 1.5);
    expect(b.wd.requestReset().released).toBe(false);
  });

  it('a stale input that resumes must stay fresh for release_clear_s', () => {
    // schema: stale_after_s.zone_view = 0.5 s, release_clear_s = 1.0 s
    const b = new Bench();
    b.run(0, 0.1);
    for (let k = 1; k <= 700; k++) b.sample(0.1 + k * 0.001, undefined, [INPUT.wrench, INPUT.joint_states, INPUT.tool_pose]);
    expect(b.wd.trips[0]).toMatchObject({ check: CHECK.stale_input, input: 'zone_view', limit: 0.5 });
    b.run(0.801, 1.7);
    expect(b.wd.requestReset().released).toBe(false);
    b.run(1.701, 1.801);
    expect(b.wd.requestReset().released).toBe(true);
  });

  it('time going backwards: the hold is not released before release_clear_s of monotonic time', () => {
    // common practice: the clear timer runs on the latest time seen; a sample from the past
    // must not date the fault earlier (else a single later sample would look "clear" for seconds)
    const b = new Bench();
    b.run(0, 10);
    b.sample(5); // 5 s back
    expect(b.wd.held).toBe(true);
    b.sample(10.001);
    expect(b.wd.clearFor_s).toBeLessThan(0.01);
    expect(b.wd.requestReset().released).toBe(false);
    b.run(10.002, 11.001);
    expect(b.wd.requestReset().released).toBe(true);
  });

  it('a non-finite time: a reset right after it is refused, and clear time counts from the next valid sample', () => {
    // watchdog.ts: release only after every condition has been clear for release_clear_s
    const b = new Bench();
    b.run(0, 3);
    b.sample(Number.NaN);
    expect(b.wd.held).toBe(true);
    expect(b.wd.requestReset().released).toBe(false);
    b.run(3.001, 3.5);
    expect(b.wd.requestReset().released).toBe(false);
    b.run(3.501, 4.002);
    expect(b.wd.requestReset().released).toBe(true);

    // The very first sample with a NaN time: no time to date it against.
    const first = new Bench();
    first.sample(Number.NaN);
    first.sample(0.001);
    expect(first.wd.requestReset().released).toBe(false);
    first.run(0.002, 0.5);
    expect(first.wd.requestReset().released).toBe(false);
  });
});

describe('watchdog: properties over random faulty streams', () => {
  type Fault = 'none' | 'force' | 'torque' | 'corr_force' | 'corr_torque' | 'joint' | 'nan_wrench' | 'joint_nonfinite' | 'pose_nonfinite' | 'impact' | 'drop_wrench' | 'drop_zone' | 'backwards' | 'nan_time' | 'twist';
  const FAULTS: Fault[] = ['force', 'torque', 'corr_force', 'corr_torque', 'joint', 'nan_wrench', 'joint_nonfinite', 'pose_nonfinite', 'impact', 'drop_wrench', 'drop_zone', 'backwards', 'nan_time', 'twist'];
  const step = fc.record({
    dt: fc.double({ min: 0.0005, max: 0.05, noNaN: true }),
    // Mostly clean samples so that releases happen too.
    fault: fc.oneof({ weight: 12, arbitrary: fc.constant<Fault>('none') }, { weight: 1, arbitrary: fc.constantFrom(...FAULTS) }),
    back: fc.double({ min: 0.001, max: 2, noNaN: true }),
    reset: fc.boolean(),
    // Within the limits (|v| ≤ 0.18 m/s < 0.25, |ω| ≤ 0.18 rad/s < 0.5) unless the fault says otherwise.
    twist: fc.array(fc.double({ min: -0.1, max: 0.1, noNaN: true }), { minLength: 6, maxLength: 6 }),
  });

  it('held ⇒ twist all zeros; held falls only through a granted reset, and only after release_clear_s clear', () => {
    // watchdog.ts module comment (the invariants the watchdog states about itself)
    let granted = 0;
    let refused = 0;
    fc.assert(
      fc.property(
        fc.double({ min: 0.05, max: 0.3, noNaN: true }),
        fc.constantFrom<'hold' | 'report'>('hold', 'report'),
        fc.array(step, { minLength: 1, maxLength: 300 }),
        (release, onImpact, steps) => {
          const p = params({ release_clear_s: release, on_impact: onImpact, linear_speed_limit_m_s: 0.25, angular_speed_limit_rad_s: 0.5 });
          const b = new Bench(p);
          let clock = 0;
          b.sample(0);
          /** Latest monotonic time of a fault that is detected on the sample itself (a lower bound of the watchdog's own). */
          let lastBad = Number.NEGATIVE_INFINITY;
          let pendingUnknownTime = false;
          for (const s of steps) {
            const before = b.wd.held;
            let t: number;
            if (s.fault === 'backwards') t = clock - s.back;
            else if (s.fault === 'nan_time') t = Number.NaN;
            else t = clock += s.dt;
            const fresh = s.fault === 'drop_wrench' ? [1, 2, 3] : s.fault === 'drop_zone' ? [0, 1, 2] : [0, 1, 2, 3];
            b.sample(
              t,
              (x) => {
                switch (s.fault) {
                  case 'force': x.compensated[0] = 151; break;
                  case 'torque': x.compensated[5] = -26; break;
                  case 'corr_force': x.correction[1] = 61; break;
                  case 'corr_torque': x.correction[3] = 16; break;
                  case 'joint': x.jointVelocity[1] = 1.01; break;
                  case 'nan_wrench': x.compensated[2] = Number.NaN; break;
                  case 'joint_nonfinite': x.jointFinite = false; break;
                  case 'pose_nonfinite': x.poseFinite = false; break;
                  case 'impact': x.impactFlag = true; x.impactScore = 1.5; break;
                  default: break;
                }
              },
              fresh,
            );
            const instant = ['force', 'torque', 'corr_force', 'corr_torque', 'joint', 'nan_wrench', 'joint_nonfinite', 'pose_nonfinite', 'backwards', 'twist'].includes(s.fault) || (s.fault === 'impact' && onImpact === 'hold');
            if (s.fault === 'nan_time') pendingUnknownTime = true;
            else if (pendingUnknownTime) {
              lastBad = Math.max(lastBad, clock);
              pendingUnknownTime = false;
            }
            if (instant) lastBad = clock;
            const tw = Float64Array.from(s.twist);
            if (s.fault === 'twist') tw[0] = 0.3;
            b.wd.checkOutput(t, tw);
            if (b.wd.held) expect(allExactZero(tw)).toBe(true);
            if (before && !b.wd.held) throw new Error('held fell without a reset');
            if (s.reset) {
              const wasHeld = b.wd.held;
              const r = b.wd.requestReset();
              if (wasHeld && r.released) {
                granted++;
                expect(pendingUnknownTime).toBe(false);
                expect(clock - lastBad).toBeGreaterThanOrEqual(release);
                expect(b.wd.trips).toEqual([]);
              }
              if (wasHeld && !r.released) {
                refused++;
                expect(b.wd.held).toBe(true);
              }
              expect(r.released).toBe(!b.wd.held);
            }
          }
        },
      ),
      { numRuns: 200 },
    );
    // Not vacuous: the runs both granted and refused resets of a hold.
    expect(granted).toBeGreaterThan(0);
    expect(refused).toBeGreaterThan(0);
  });
});
