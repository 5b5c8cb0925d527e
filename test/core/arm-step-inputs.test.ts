/**
 * The arm step's tare gate and joint-state input through its public interface (ArmStep:
 * requestTare, setJointState, setOutputEnabled, step, out), on the demo cell's left arm without
 * zones and invented still wrenches. Our own design (DEVELOPERS.md, tare): a tare is accepted
 * while held, or while the recommended speed is at most wrench_filter.tare.still_twist_m_s and
 * every measured joint speed at most still_joint_rad_s (0.005 m/s and 0.02 rad/s by default);
 * joint speeds that are required but absent refuse it; a refusal says why.
 */
import { describe, expect, it } from 'vitest';
import { ArmStep, TARE_OUTCOME_REFUSED, TARE_OUTCOME_TAKEN } from '../../src/core/arm-step.js';
import { TARE_REFUSED_MOVING } from '../../src/core/filter/index.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const cfg: ArmConfig = { ...cell.left.config, task: { ...cell.left.config.task, zones: [] } };
const TP = cfg.wrench_filter.tare;

/** An arm with `joints` joints at rest, run `ms` samples of a still beam. */
function arm(ms: number, opts: { joints?: number; requireJoints?: boolean; outputOff?: boolean; config?: ArmConfig } = {}) {
  const joints = opts.joints ?? 6;
  const s = new ArmStep(opts.config ?? cfg, { jointCount: joints, required: { tool_pose: false, zone_view: false, ...(opts.requireJoints === undefined ? {} : { joint_states: opts.requireJoints }) } });
  if (opts.outputOff) s.setOutputEnabled(false);
  const w = new Float64Array(6);
  const q = new Float64Array(joints);
  let k = 0;
  const run = (n: number, qd?: number[]) => {
    for (let i = 0; i < n; i++, k++) {
      if (qd) q.set(qd);
      if (joints > 0) s.setJointState(k / 1000, q, joints);
      s.step(k / 1000, w);
    }
  };
  run(ms);
  return { s, run, speed: () => Math.hypot(s.out.twist[0]!, s.out.twist[1]!, s.out.twist[2]!) };
}

describe('ArmStep.requestTare', () => {
  it('says a tare is already waiting while the start-up tare is pending, and after an accepted request', () => {
    const { s, run } = arm(100);
    expect(s.out.tared).toBe(false);
    expect(s.requestTare()).toEqual({ status: 'pending', reason: 'a tare is already waiting for a still window' });
    run(500);
    expect(s.out.tared).toBe(true);
  });

  it('refuses while the arm cruises, naming the speed and the gate', () => {
    const { s, speed } = arm(1500);
    expect(speed()).toBeGreaterThan(0.1);
    const r = s.requestTare();
    expect(r.status).toBe('refused');
    expect(r.reason).toBe(`the arm is moving: recommended speed ${speed().toPrecision(3)} m/s exceeds wrench_filter.tare.still_twist_m_s = ${TP.still_twist_m_s} m/s; hold the arm first`);
    expect(s.filter.tarePending).toBe(false);
  });

  it('accepts just after the start-up tare, while the speed is still under the gate, then ends it when the arm speeds up', () => {
    const { s, run, speed } = arm(501);
    expect(s.out.tared).toBe(true);
    expect(speed()).toBeLessThanOrEqual(TP.still_twist_m_s);
    expect(s.requestTare()).toEqual({ status: 'pending', reason: 'waiting for a still window' });
    expect(s.requestTare()).toEqual({ status: 'pending', reason: 'a tare is already waiting for a still window' });
    // Each sample checks the command of the sample before: the tare ends on the first sample
    // after the command passed the gate, never while it was under it, and the sample's outputs
    // say so (outcome refused, with the reason).
    let refused = false;
    let prev = speed();
    for (let i = 0; i < 400 && !refused; i++) {
      run(1);
      if (!s.filter.tarePending) {
        refused = true;
        expect(prev).toBeGreaterThan(TP.still_twist_m_s);
        expect(s.filter.tareRefusedWhy).toBe(TARE_REFUSED_MOVING);
        expect(s.filter.tared).toBe(true);
        expect(s.out.tareOutcome).toBe(TARE_OUTCOME_REFUSED);
        expect(s.out.tareReason).toBe('the arm started moving while the tare waited for a still window');
      } else expect(prev).toBeLessThanOrEqual(TP.still_twist_m_s + 1e-12);
      prev = speed();
    }
    expect(refused).toBe(true);
  });

  it('accepts while held, whatever the speed', () => {
    const { s } = arm(1500);
    const w = new Float64Array(6);
    w[0] = Number.NaN;
    s.step(1.5, w); // a bad sample latches a hold
    expect(s.out.held).toBe(true);
    expect(s.requestTare()).toEqual({ status: 'pending', reason: 'waiting for a still window' });
  });

  it('with the output withheld the arm stands: accepted while the joints are at rest', () => {
    const { s, speed } = arm(1500, { outputOff: true });
    expect(speed()).toBe(0);
    expect(s.out.held).toBe(false);
    expect(s.requestTare().status).toBe('pending');
  });

  it('refuses for a joint above still_joint_rad_s (either sign), accepts one at it', () => {
    for (const [qd, ok] of [[0.5, false], [-0.5, false], [TP.still_joint_rad_s, true], [-TP.still_joint_rad_s, true], [TP.still_joint_rad_s * 1.01, false]] as const) {
      const { s, run } = arm(1000, { outputOff: true });
      run(1, [0, 0, qd, 0, 0, 0]);
      expect(s.out.held, `qd ${qd}`).toBe(false);
      const r = s.requestTare();
      if (ok) expect(r.status, `qd ${qd}`).toBe('pending');
      else expect(r).toEqual({ status: 'refused', reason: `joint 2 moves at ${Math.abs(qd).toPrecision(3)} rad/s, above wrench_filter.tare.still_joint_rad_s = ${TP.still_joint_rad_s} rad/s; hold the arm first` });
    }
    // The last joint counts too.
    const { s, run } = arm(1000, { outputOff: true });
    run(1, [0, 0, 0, 0, 0, 0.3]);
    expect(s.requestTare().reason).toMatch(/^joint 5 moves at 0\.300 rad\/s/);
  });

  it('refuses when joint speeds are required but the JointState carries none; accepts when they are not required', () => {
    const s = new ArmStep(cfg, { jointCount: 6, required: { tool_pose: false, zone_view: false } });
    s.setOutputEnabled(false);
    const w = new Float64Array(6);
    for (let k = 0; k < 1000; k++) {
      s.setJointState(k / 1000, [], 0);
      s.step(k / 1000, w);
    }
    expect(s.out.jointVelocityAvailable).toBe(false);
    expect(s.out.tared).toBe(true);
    if (!s.out.held) {
      expect(s.requestTare()).toEqual({ status: 'refused', reason: 'joint speeds are unknown (JointState carries no velocities), so the arm cannot be shown still; hold the arm first' });
    }
    const free = arm(1000, { joints: 0, requireJoints: false, outputOff: true });
    expect(free.s.out.jointVelocityAvailable).toBe(false);
    expect(free.s.requestTare().status).toBe('pending');
  });
});

describe('ArmStep.setJointState', () => {
  it('reports joint speeds available only when the message carries some, and reads at most the configured joints', () => {
    const { s, run } = arm(10);
    expect(s.out.jointVelocityAvailable).toBe(true);
    s.setJointState(0.0105, [0, 0, 0, 0, 0, 0, 9, 9], 8); // two more than the arm has: ignored
    run(1);
    expect(s.out.held).toBe(false);
    s.setJointState(0.012, [0, 0, 0, 0, 0, 0], 0);
    s.step(0.012, new Float64Array(6));
    expect(s.out.jointVelocityAvailable).toBe(false);
  });

  it('a non-finite joint speed or time is an input fault: the arm holds', () => {
    for (const [t, v] of [[0.02, Number.NaN], [0.02, Number.POSITIVE_INFINITY], [Number.NaN, 0]] as const) {
      const { s } = arm(20);
      s.setJointState(t, [0, v, 0, 0, 0, 0], 6);
      s.step(0.021, new Float64Array(6));
      expect(s.out.held, `t ${t} v ${v}`).toBe(true);
    }
  });
});

/** Run until the pending tare ends (at most `max` samples): its outcome, and the samples it took. */
function untilTareEnds(s: ArmStep, run: (n: number, qd?: number[]) => void, max: number, qd?: number[]) {
  for (let i = 0; i < max; i++) {
    run(1, qd);
    if (s.out.tareOutcome !== 0) return { outcome: s.out.tareOutcome, reason: s.out.tareReason, after: i + 1 };
  }
  return { outcome: 0, reason: '', after: max };
}

describe('ArmStep tare gate: held, inhibited, and a pending tare while the arm stands or moves', () => {
  it('accepts while held by a joint above the watchdog limit, and the tare stays pending through the hold', () => {
    // Held (joint_velocity trip: 1.5 rad/s > watchdog.joint_velocity_limit_rad_s 1.0): the arm's
    // twist is zero, so the tare may run whatever the joints report (our design, SAFETY.md).
    const fast = [0, 0, 1.5, 0, 0, 0];
    const { s, run } = arm(1000, { outputOff: true });
    expect(s.out.tared).toBe(true);
    run(1, fast);
    expect(s.out.held).toBe(true);
    expect(s.requestTare()).toEqual({ status: 'pending', reason: 'waiting for a still window' });
    const end = untilTareEnds(s, run, 1000, fast);
    expect(s.out.held).toBe(true);
    expect(end.outcome).toBe(TARE_OUTCOME_TAKEN);
  });

  it('accepts while inhibited (a required input never arrived), whatever the joints report', () => {
    // Waiting for the tool pose: the twist is held at zero (not latched).
    const s = new ArmStep(cfg, { jointCount: 6, required: { zone_view: false } });
    const w = new Float64Array(6);
    for (let k = 0; k < 1000; k++) {
      s.setJointState(k / 1000, [0, 0.5, 0, 0, 0, 0], 6);
      s.step(k / 1000, w);
    }
    expect(s.out.tared).toBe(true);
    expect(s.out.held).toBe(false);
    expect(s.out.inhibited).toBe(true);
    expect(s.requestTare().status).toBe('pending');
  });

  it('a pending tare ends, refused, on the first sample a joint moves above still_joint_rad_s; a joint at it keeps it pending', () => {
    const { s, run } = arm(1000, { outputOff: true });
    expect(s.requestTare().status).toBe('pending');
    const end = untilTareEnds(s, run, 10, [0, 0, 0, 0.3, 0, 0]);
    expect(end).toEqual({ outcome: TARE_OUTCOME_REFUSED, reason: 'the arm started moving while the tare waited for a still window', after: 1 });
    expect(s.out.held).toBe(false);
    // At the gate (not above it): the tare runs to its still window and is taken.
    const atGate = [0, 0, 0, -TP.still_joint_rad_s, 0, 0];
    run(1, atGate);
    expect(s.requestTare().status).toBe('pending');
    const at = untilTareEnds(s, run, 1000, atGate);
    expect(at.outcome).toBe(TARE_OUTCOME_TAKEN);
  });

  it('a JointState with fewer velocities than joints: the gate checks those it carried, not an older message\'s', () => {
    // `count` is the number of velocities the latest message carried (ArmStep.setJointState).
    const { s, run } = arm(1000, { outputOff: true });
    run(1, [0, 0, 0, 0, 0, 0.3]);
    expect(s.requestTare().status).toBe('refused');
    let k = 1001;
    const short = (n: number) => {
      for (let i = 0; i < n; i++, k++) {
        s.setJointState(k / 1000, [0, 0, 0, 0, 0], 5);
        s.step(k / 1000, new Float64Array(6));
      }
    };
    short(1);
    expect(s.requestTare()).toEqual({ status: 'pending', reason: 'waiting for a still window' });
    let outcome = 0;
    for (let i = 0; i < 1000 && outcome === 0; i++) {
      short(1);
      outcome = s.out.tareOutcome;
    }
    expect(outcome).toBe(TARE_OUTCOME_TAKEN);
  });

  it('joint speeds required but no longer carried end a pending tare; not required, the tare is taken', () => {
    // watchdog.require_joint_velocity off (the default): no hold, the gate alone refuses.
    expect(cfg.watchdog.require_joint_velocity).toBe(false);
    const { s } = arm(1000, { outputOff: true });
    expect(s.requestTare().status).toBe('pending');
    s.setJointState(1, [], 0);
    s.step(1, new Float64Array(6));
    expect(s.out.held).toBe(false);
    expect(s.out.tareOutcome).toBe(TARE_OUTCOME_REFUSED);
    expect(s.out.tareReason).toBe('the arm started moving while the tare waited for a still window');
    const free = arm(1000, { joints: 0, requireJoints: false, outputOff: true });
    expect(free.s.requestTare().status).toBe('pending');
    expect(untilTareEnds(free.s, free.run, 1000).outcome).toBe(TARE_OUTCOME_TAKEN);
  });

  it('gates of zero accept an arm that stands exactly still (zero is not above zero)', () => {
    // The schema allows still_twist_m_s = 0 and still_joint_rad_s = 0 (src/params/schema.ts).
    const zero: ArmConfig = { ...cfg, wrench_filter: { ...cfg.wrench_filter, tare: { ...TP, still_twist_m_s: 0, still_joint_rad_s: 0 } } };
    const { s, run, speed } = arm(1000, { outputOff: true, config: zero });
    expect(speed()).toBe(0);
    expect(s.requestTare()).toEqual({ status: 'pending', reason: 'waiting for a still window' });
    expect(untilTareEnds(s, run, 1000).outcome).toBe(TARE_OUTCOME_TAKEN);
  });
});

describe('ArmStep tare gate on a lift (3-D path): the vertical speed counts', () => {
  // Our own invented path: 0.2 m along x while rising 0.6 m (the tangent mostly vertical).
  const path = loadCell('examples/path_cell.yaml').left.config;
  const lift: ArmConfig = { ...path, task: { ...path.task, zones: [], start_m: [0, 0], goal_m: [0.2, 0], path: { waypoints_m: [0, 0, 0.9, 0.2, 0, 1.5], orientations_xyzw: [] } } };
  function lifting() {
    const s = new ArmStep(lift, { required: { zone_view: false } });
    const w = new Float64Array(6);
    let k = 0;
    const run = (n: number) => {
      for (let i = 0; i < n; i++, k++) {
        // The left tool 0.55 m along +y of the object's centre, at the start of the path.
        s.setToolPose(k / 1000, 0, 0.55, 0.9, 0, 0, 0, 1);
        s.step(k / 1000, w);
      }
    };
    return { s, run, tw: s.out.twist };
  }

  it('refuses while the arm rises, naming the whole linear speed', () => {
    const { s, run, tw } = lifting();
    run(1500);
    expect(s.out.held).toBe(false);
    expect(Math.abs(tw[2]!)).toBeGreaterThan(2 * Math.hypot(tw[0]!, tw[1]!));
    const lin = Math.hypot(tw[0]!, tw[1]!, tw[2]!);
    expect(lin).toBeGreaterThan(0.1);
    const r = s.requestTare();
    expect(r).toEqual({ status: 'refused', reason: `the arm is moving: recommended speed ${lin.toPrecision(3)} m/s exceeds wrench_filter.tare.still_twist_m_s = ${TP.still_twist_m_s} m/s; hold the arm first` });
  });

  it('a tare accepted just after the start-up tare ends, refused, once the rising speed passes the gate', () => {
    const { s, run, tw } = lifting();
    run(1);
    for (let i = 0; i < 1000 && !s.out.tared; i++) run(1);
    expect(s.out.tared).toBe(true);
    expect(s.requestTare().status).toBe('pending');
    let prev = Math.hypot(tw[0]!, tw[1]!, tw[2]!);
    let ended = false;
    for (let i = 0; i < 400 && !ended; i++) {
      run(1);
      if (s.out.tareOutcome === TARE_OUTCOME_REFUSED) {
        ended = true;
        expect(prev).toBeGreaterThan(TP.still_twist_m_s);
      } else expect(prev).toBeLessThanOrEqual(TP.still_twist_m_s + 1e-12);
      prev = Math.hypot(tw[0]!, tw[1]!, tw[2]!);
    }
    expect(ended).toBe(true);
  });
});
