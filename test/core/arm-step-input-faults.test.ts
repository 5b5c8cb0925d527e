/**
 * The arm step's other inputs through its public interface: the tool pose (normalised once,
 * faults keep the previous pose), the zone view and the joint states stamped with a NaN time,
 * the partner's one-bit hold signal (watchdog.hold_link) and the output switch. Demo cell,
 * invented still wrenches. Our own design (DEVELOPERS.md, SAFETY.md): a non-finite input is a
 * non_finite trip of that input; a NaN arrival time never erases when the input last arrived.
 * Reference (handbook fact): q and any positive multiple of q describe the same rotation; the
 * unit quaternion (1/2, 1/2, 1/2, 1/2) is a 120 degree turn about (1, 1, 1).
 */
import { describe, expect, it } from 'vitest';
import { ArmStep, ZONE_FREE } from '../../src/core/arm-step.js';
import { CHECKS } from '../../src/core/watchdog.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const withZones = cell.left.config;
const cfg: ArmConfig = { ...withZones, task: { ...withZones.task, zones: [] } };

/** The trips of one input, by check name. */
function tripsOf(s: ArmStep, input: string): string[] {
  return s.watchdog.trips.filter((r) => r.input === input).map((r) => CHECKS[r.check]!);
}

/** The demo arm with a 0.8 kg gripper modelled below the sensor (invented), so the orientation shows in the payload model. */
const gripper: ArmConfig = { ...cfg, wrench_filter: { ...cfg.wrench_filter, payload: { ...cfg.wrench_filter.payload, enabled: true, mass_kg: 0.8 } } };

/** An arm fed a still beam and the tool pose (x, y, z, quaternion) at 1 kHz for `ms` samples. */
function posed(ms: number, q: readonly [number, number, number, number] = [0, 0, 0, 1]) {
  const s = new ArmStep(gripper, { required: { zone_view: false } });
  const w = new Float64Array(6);
  let k = 0;
  const run = (n: number, fx = 0) => {
    for (let i = 0; i < n; i++, k++) {
      s.setToolPose(k / 1000, 0.25, 0.55, 0.9, ...q);
      w[0] = fx;
      s.step(k / 1000, w);
    }
  };
  run(ms);
  return { s, run, next: () => k };
}

describe('ArmStep.setToolPose', () => {
  it('a unit quaternion with every component set is no norm fault', () => {
    const { s } = posed(1000, [0.5, 0.5, 0.5, 0.5]);
    expect(s.watchdog.trips).toEqual([]);
    expect(s.out.held).toBe(false);
  });

  it('a quaternion off unit within the tolerance is normalised: the same payload model and cell rotation as the unit one', () => {
    // Norm 1.008, within watchdog.quaternion_norm_tolerance (0.01): no fault, the same rotation.
    const u = [0.5, 0.5, 0.5, 0.5] as const;
    const a = posed(600, u);
    const b = posed(600, [u[0] * 1.008, u[1] * 1.008, u[2] * 1.008, u[3] * 1.008]);
    a.run(300, 3);
    b.run(300, 3);
    expect(b.s.watchdog.trips).toEqual([]);
    const pa = Array.from(a.s.filter.payloadWrench);
    const pb = Array.from(b.s.filter.payloadWrench);
    // The payload model is on: 0.8 kg x 9.80665 m/s^2 (standard gravity, ISO 80000-3) in the sensor frame.
    expect(Math.hypot(pa[0]!, pa[1]!, pa[2]!)).toBeCloseTo(0.8 * 9.80665, 9);
    for (let i = 0; i < 6; i++) expect(pb[i]).toBeCloseTo(pa[i]!, 10);
    const fa = new Float64Array(3);
    const fb = new Float64Array(3);
    a.s.cellCorrection(fa);
    b.s.cellCorrection(fb);
    expect(Math.hypot(fa[0]!, fa[1]!, fa[2]!)).toBeGreaterThan(1); // a correction to rotate
    for (let i = 0; i < 3; i++) expect(fb[i]).toBeCloseTo(fa[i]!, 9);
  });

  it('a zero quaternion is a norm fault and keeps the previous orientation', () => {
    const h = Math.SQRT1_2;
    const { s, run, next } = posed(600, [0, 0, h, h]);
    run(300, 3); // 3 N along the sensor x axis: along the cell y axis (90 degrees about z)
    const before = new Float64Array(3);
    s.cellCorrection(before);
    expect(before[1]).toBeGreaterThan(1);
    const payload = Array.from(s.filter.payloadWrench);
    s.setToolPose(next() / 1000, 0.25, 0.55, 0.9, 0, 0, 0, 0);
    const after = new Float64Array(3);
    s.cellCorrection(after);
    expect(Array.from(after)).toEqual(Array.from(before));
    expect(Array.from(s.filter.payloadWrench)).toEqual(payload);
    s.step(next() / 1000, new Float64Array(6));
    expect(tripsOf(s, 'tool_pose')).toEqual(['quaternion_norm']);
  });

  it('an infinite quaternion component is a non-finite input (not only a norm fault); the pose is kept', () => {
    const { s, next } = posed(1000);
    const x0 = s.out.objectX;
    s.setToolPose(next() / 1000, 0.4, 0.55, 0.9, Number.POSITIVE_INFINITY, 0, 0, 1);
    const f = new Float64Array(3);
    s.cellCorrection(f);
    expect(f.every(Number.isFinite)).toBe(true);
    s.step(next() / 1000, new Float64Array(6));
    expect(tripsOf(s, 'tool_pose').sort()).toEqual(['non_finite', 'quaternion_norm']);
    expect(s.out.objectX).toBe(x0);
  });

  it('a NaN position is a non-finite input; the object stays where the last good pose put it', () => {
    const { s, next } = posed(1000);
    const x0 = s.out.objectX;
    expect(Number.isFinite(x0)).toBe(true);
    s.setToolPose(next() / 1000, Number.NaN, 0.55, 0.9, 0, 0, 0, 1);
    s.step(next() / 1000, new Float64Array(6));
    expect(tripsOf(s, 'tool_pose')).toEqual(['non_finite']);
    expect(s.out.objectX).toBe(x0);
  });
});

describe('NaN arrival times never erase the last arrival', () => {
  it('joint states: the trip is non_finite, not a lost (stale) input', () => {
    const s = new ArmStep(cfg, { jointCount: 6, required: { tool_pose: false, zone_view: false } });
    const w = new Float64Array(6);
    const q = new Float64Array(6);
    for (let k = 0; k < 20; k++) {
      s.setJointState(k / 1000, q, 6);
      s.step(k / 1000, w);
    }
    s.setJointState(Number.NaN, q, 6);
    s.step(0.02, w);
    expect(s.out.held).toBe(true);
    expect(tripsOf(s, 'joint_states')).toEqual(['non_finite']);
  });

  it('zone view: the trip is non_finite, not a lost (stale) input', () => {
    const s = new ArmStep(withZones, { required: { tool_pose: false } });
    const w = new Float64Array(6);
    const free = [ZONE_FREE, ZONE_FREE];
    for (let k = 0; k < 20; k++) {
      s.setZoneView(k / 1000, free);
      s.step(k / 1000, w);
    }
    s.setZoneView(Number.NaN, free);
    s.step(0.02, w);
    expect(s.out.held).toBe(true);
    expect(tripsOf(s, 'zone_view')).toEqual(['non_finite']);
  });
});

describe('ArmStep.setPartnerHold (watchdog.hold_link.enabled)', () => {
  const linked: ArmConfig = { ...cfg, watchdog: { ...cfg.watchdog, hold_link: { enabled: true } } };
  const STALE = linked.watchdog.stale_after_s.hold_link;

  function link() {
    const s = new ArmStep(linked, { required: { tool_pose: false, zone_view: false } });
    const w = new Float64Array(6);
    let k = 0;
    const run = (n: number, held: boolean, stamp = true) => {
      for (let i = 0; i < n; i++, k++) {
        s.setPartnerHold(stamp ? k / 1000 : Number.NaN, held);
        s.step(k / 1000, w);
      }
    };
    return { s, run, speed: () => Math.hypot(s.out.twist[0]!, s.out.twist[1]!) };
  }

  it('a partner that is not held lets the arm move; a held partner holds it (partner_hold)', () => {
    const { s, run, speed } = link();
    run(1500, false);
    expect(s.out.held).toBe(false);
    expect(s.out.inhibited).toBe(false);
    expect(speed()).toBeGreaterThan(0.05);
    run(1, true);
    expect(s.out.held).toBe(true);
    expect(speed()).toBe(0);
    expect(tripsOf(s, 'hold_link')).toEqual(['partner_hold']);
    expect(s.out.heldOwn).toBe(false);
  });

  it('the arm waits (inhibited, not held) until the first hold signal arrives', () => {
    const s = new ArmStep(linked, { required: { tool_pose: false, zone_view: false } });
    const w = new Float64Array(6);
    for (let k = 0; k < 1000; k++) s.step(k / 1000, w);
    expect(s.out.held).toBe(false);
    expect(s.out.inhibited).toBe(true);
    expect(s.out.twist.every((v) => v === 0)).toBe(true);
  });

  it('signals stamped NaN are no arrivals: the link goes stale only once the last real one is older than stale_after_s.hold_link', () => {
    const { s, run } = link();
    run(1000, false);
    run(1, false, false);
    expect(s.out.held).toBe(false);
    expect(s.watchdog.trips).toEqual([]);
    run(Math.round(STALE * 1000) - 10, false, false);
    expect(s.out.held).toBe(false);
    run(20, false, false);
    expect(s.out.held).toBe(true);
    expect(tripsOf(s, 'hold_link')).toEqual(['stale_input']);
  });
});

describe('ArmStep.setOutputEnabled', () => {
  it('withheld, the arm stands; enabled again, it moves', () => {
    const s = new ArmStep(cfg, { required: { tool_pose: false, zone_view: false } });
    const w = new Float64Array(6);
    let k = 0;
    const run = (n: number) => {
      for (let i = 0; i < n; i++, k++) s.step(k / 1000, w);
    };
    s.setOutputEnabled(false);
    run(1500);
    expect(s.out.twist.every((v) => v === 0)).toBe(true);
    s.setOutputEnabled(true);
    run(500);
    expect(Math.hypot(s.out.twist[0]!, s.out.twist[1]!)).toBeGreaterThan(0.05);
  });
});
