/**
 * Hardening: every watchdog threshold bracketed at its SHIPPED value (config/demo_cell.yaml
 * through the project's own loader, and the schema defaults): just below (no trip), at the
 * value (no trip: every limit is "largest allowed", SAFETY.md), and just above (trip with the
 * right reason). A limit moved by a few per cent, or a `>` turned into `>=`, fails here.
 *
 * The shipped values are also written out as literals, each with its source, so that a
 * changed default is a deliberate edit of this file too.
 */
import { describe, expect, it } from 'vitest';
import { CHECK, CHECKS, INPUT, INPUTS, Watchdog, type WatchdogInputs } from '../../src/core/watchdog.js';
import { buildArmConfig, loadCell, type WatchdogParams } from '../../src/params/config.js';
import { DEMO } from '../support/files.js';
import { requiredInputs } from '../support/watchdog.js';

const SOURCES: [string, WatchdogParams][] = [
  ['config/demo_cell.yaml (left)', loadCell(DEMO).left.config.watchdog],
  ['config/demo_cell.yaml (right)', loadCell(DEMO).right.config.watchdog],
  ['schema defaults', buildArmConfig(undefined, 'left').config.watchdog],
];

/** Relative step for "just below" and "just above": far from rounding, far below any plausible edit. */
const REL = 1e-9;

const inputs = (): WatchdogInputs => requiredInputs(7);

/** A watchdog fed clean, fresh samples on a 1 ms grid; `at` changes one sample. */
class Feed {
  readonly wd: Watchdog;
  readonly x = inputs();
  constructor(p: WatchdogParams) {
    this.wd = new Watchdog(p);
  }
  sample(t: number, mutate?: (x: WatchdogInputs) => void, fresh: readonly number[] = [0, 1, 2, 3, 4]): boolean {
    const x = this.x;
    x.t_s = t;
    x.compensated.fill(0);
    x.correction.fill(0);
    x.jointVelocity.fill(0);
    x.impactFlag = false;
    x.impactScore = 0;
    x.jointFinite = x.poseFinite = x.zoneFinite = true;
    for (const k of fresh) x.lastSeen[k] = t;
    mutate?.(x);
    return this.wd.checkInputs(x);
  }
  /** Clean samples k/1000 s for k in [k0, k1]. */
  run(k0: number, k1: number): void {
    for (let k = k0; k <= k1; k++) this.sample(k / 1000);
  }
  names(): string[] {
    return this.wd.trips.map((r) => CHECKS[r.check]!);
  }
}

const below = (v: number) => v * (1 - REL);
const above = (v: number) => v * (1 + REL);

describe('shipped watchdog values, pinned', () => {
  it('config/demo_cell.yaml and the schema defaults carry these limits', () => {
    for (const [src, p] of SOURCES) {
      // Our own safety choices for the demo cell (src/params/schema.ts, config/demo_cell.yaml),
      // except the linear speed: 0.25 m/s is the reduced speed of ISO 10218-1 (from memory).
      // (toMatchObject: a new watchdog parameter does not break this pin; a changed value does.)
      expect(p, src).toMatchObject({
        force_limit_n: 150,
        torque_limit_nm: 25,
        correction_force_limit_n: 60,
        correction_torque_limit_nm: 15,
        joint_velocity_limit_rad_s: 1,
        linear_speed_limit_m_s: 0.25,
        angular_speed_limit_rad_s: 0.5,
        stale_after_s: { wrench: 0.02, joint_states: 0.05, tool_pose: 0.05, zone_view: 0.5 },
        on_impact: 'hold',
        release_clear_s: 1,
      });
    }
  });
});

describe.each(SOURCES)('watchdog thresholds bracketed at the shipped values: %s', (_src, p) => {
  type Axis = { name: string; check: string; limit: number; set: (x: WatchdogInputs, v: number) => void; input: string };
  const axes: Axis[] = [];
  for (let a = 0; a < 3; a++) {
    axes.push({ name: `raw force axis ${a}`, check: 'force_raw', limit: p.force_limit_n, input: 'wrench', set: (x, v) => void (x.compensated[a] = v) });
    axes.push({ name: `raw torque axis ${a}`, check: 'torque_raw', limit: p.torque_limit_nm, input: 'wrench', set: (x, v) => void (x.compensated[3 + a] = v) });
    axes.push({ name: `correction force axis ${a}`, check: 'force_correction', limit: p.correction_force_limit_n, input: 'wrench', set: (x, v) => void (x.correction[a] = v) });
    axes.push({ name: `correction torque axis ${a}`, check: 'torque_correction', limit: p.correction_torque_limit_nm, input: 'wrench', set: (x, v) => void (x.correction[3 + a] = v) });
  }
  for (let j = 0; j < 7; j++) {
    axes.push({ name: `joint ${j} velocity`, check: 'joint_velocity', limit: p.joint_velocity_limit_rad_s, input: `joint_states[${j}]`, set: (x, v) => void (x.jointVelocity[j] = v) });
  }

  it.each(axes)('$name: below and at the limit pass, just above trips (either sign)', (ax) => {
    for (const sign of [1, -1]) {
      for (const v of [below(ax.limit), ax.limit]) {
        const f = new Feed(p);
        f.run(0, 10);
        expect(f.sample(0.011, (x) => ax.set(x, sign * v)), `${ax.name} = ${sign * v}`).toBe(false);
        expect(f.wd.held).toBe(false);
        expect(f.wd.tripsLength).toBe(0);
      }
      const f = new Feed(p);
      f.run(0, 10);
      const v = sign * above(ax.limit);
      expect(f.sample(0.011, (x) => ax.set(x, v)), `${ax.name} = ${v}`).toBe(true);
      expect(f.names()).toEqual([ax.check]);
      expect(f.wd.tripAt(0)).toEqual({ check: CHECK[ax.check as keyof typeof CHECK], input: ax.input, value: Math.abs(v), limit: ax.limit, t_s: 0.011 });
    }
  });

  it('the force and torque norms are Euclidean over three axes (an equal split at the limit passes, just above trips)', () => {
    // |(v, v, v)| = v·√3: the norm is the 3-axis Euclidean one (common practice for a wrench magnitude).
    for (const [label, check, limit, off] of [
      ['raw force', 'force_raw', p.force_limit_n, 0],
      ['raw torque', 'torque_raw', p.torque_limit_nm, 3],
    ] as const) {
      const f = new Feed(p);
      f.run(0, 5);
      const v = (0.999999 * limit) / Math.sqrt(3);
      expect(f.sample(0.006, (x) => x.compensated.fill(v, off, off + 3)), label).toBe(false);
      const g = new Feed(p);
      g.run(0, 5);
      const w = (1.000001 * limit) / Math.sqrt(3);
      expect(g.sample(0.006, (x) => x.compensated.fill(w, off, off + 3)), label).toBe(true);
      expect(g.names()).toEqual([check]);
      expect(g.wd.tripAt(0).value).toBeCloseTo(1.000001 * limit, 9);
    }
    for (const [label, check, limit, off] of [
      ['correction force', 'force_correction', p.correction_force_limit_n, 0],
      ['correction torque', 'torque_correction', p.correction_torque_limit_nm, 3],
    ] as const) {
      const f = new Feed(p);
      f.run(0, 5);
      expect(f.sample(0.006, (x) => x.correction.fill((0.999999 * limit) / Math.sqrt(3), off, off + 3)), label).toBe(false);
      const g = new Feed(p);
      g.run(0, 5);
      expect(g.sample(0.006, (x) => x.correction.fill((1.000001 * limit) / Math.sqrt(3), off, off + 3)), label).toBe(true);
      expect(g.names()).toEqual([check]);
    }
  });

  it('only the joints the message carries count (a value past jointCount is ignored)', () => {
    const f = new Feed(p);
    f.run(0, 5);
    f.x.jointCount = 3;
    expect(f.sample(0.006, (x) => void (x.jointVelocity[3] = 10 * p.joint_velocity_limit_rad_s))).toBe(false);
    expect(f.sample(0.007, (x) => void (x.jointVelocity[2] = -above(p.joint_velocity_limit_rad_s)))).toBe(true);
    expect(f.names()).toEqual(['joint_velocity']);
    expect(f.wd.tripAt(0).input).toBe('joint_states[2]');
  });

  it('twist limits: at the limit passes unchanged, just above trips and zeroes the twist', () => {
    for (const [label, check, limit, off] of [
      ['linear', 'twist_linear', p.linear_speed_limit_m_s, 0],
      ['angular', 'twist_angular', p.angular_speed_limit_rad_s, 3],
    ] as const) {
      for (let a = 0; a < 3; a++) {
        for (const v of [below(limit), limit, -limit]) {
          const f = new Feed(p);
          f.run(0, 5);
          const tw = new Float64Array(6);
          tw[off + a] = v;
          f.wd.checkOutput(0.005, tw);
          expect(tw[off + a], `${label} axis ${a} = ${v}`).toBe(v);
          expect(f.wd.held).toBe(false);
        }
        const f = new Feed(p);
        f.run(0, 5);
        const tw = new Float64Array(6);
        tw[off + a] = -above(limit);
        tw[(off + 3 + a) % 6] = 0.01;
        f.wd.checkOutput(0.005, tw);
        expect(f.wd.held, `${label} axis ${a}`).toBe(true);
        expect(f.names()).toEqual([check]);
        expect(f.wd.tripAt(0)).toMatchObject({ input: 'recommended_twist', value: above(limit), limit, t_s: 0.005 });
        expect(Array.from(tw)).toEqual([0, 0, 0, 0, 0, 0]);
      }
      // Euclidean over three axes.
      const f = new Feed(p);
      f.run(0, 5);
      const tw = new Float64Array(6);
      tw.fill((1.000001 * limit) / Math.sqrt(3), off, off + 3);
      f.wd.checkOutput(0.005, tw);
      expect(f.names(), label).toEqual([check]);
      const g = new Feed(p);
      g.run(0, 5);
      const ok = new Float64Array(6);
      ok.fill((0.999999 * limit) / Math.sqrt(3), off, off + 3);
      g.wd.checkOutput(0.005, ok);
      expect(g.wd.held, label).toBe(false);
    }
    // A NaN twist is not "within the limit".
    const f = new Feed(p);
    f.run(0, 5);
    f.wd.checkOutput(0.005, Float64Array.of(Number.NaN, 0, 0, 0, 0, 0));
    expect(f.names()).toEqual(['twist_linear']);
    const g = new Feed(p);
    g.run(0, 5);
    g.wd.checkOutput(0.005, Float64Array.of(0, 0, 0, 0, 0, Number.NaN));
    expect(g.names()).toEqual(['twist_angular']);
  });

  it('a tripping twist restarts the clear timer', () => {
    const f = new Feed(p);
    f.run(0, 1000);
    f.wd.checkOutput(1.0, Float64Array.of(above(p.linear_speed_limit_m_s), 0, 0, 0, 0, 0));
    expect(f.wd.clearFor_s).toBe(0);
    f.run(1001, 1000 + Math.round(p.release_clear_s * 1000) - 1);
    expect(f.wd.requestReset().released).toBe(false);
    f.run(1000 + Math.round(p.release_clear_s * 1000), 1000 + Math.round(p.release_clear_s * 1000));
    expect(f.wd.requestReset().released).toBe(true);
  });

  it.each(INPUTS.map((name, k) => ({ name, k })))('staleness of $name: an age at the limit passes, just above trips (sample and tick)', ({ name, k }) => {
    const limit = p.stale_after_s[name];
    // Last arrival at 1 s exactly; the other inputs stay fresh.
    const others = [0, 1, 2, 3, 4].filter((j) => j !== k);
    for (const [age, trips] of [[below(limit), false], [limit, false], [above(limit), true]] as const) {
      for (const via of ['sample', 'tick'] as const) {
        const f = new Feed(p);
        f.sample(1);
        const t = 1 + age;
        if (t - 1 !== age && age === limit) continue; // (1 + limit) − 1 not exact in binary: bracket only
        const held = via === 'sample' ? f.sample(t, undefined, others) : (f.x.lastSeen.fill(t).set([1], k), f.wd.tick(t, f.x.lastSeen, f.x.required));
        expect(held, `${name} ${via} age ${age}`).toBe(trips);
        if (trips) {
          expect(f.names()).toEqual(['stale_input']);
          expect(f.wd.tripAt(0)).toMatchObject({ input: name, limit, t_s: t });
          expect(f.wd.tripAt(0).value).toBeCloseTo(age, 12);
        }
      }
    }
    // Exactly at the limit, without binary rounding: last arrival 0, now = limit.
    for (const via of ['sample', 'tick'] as const) {
      const f = new Feed(p);
      f.x.required.fill(0);
      f.x.required[k] = 1;
      f.sample(0);
      expect(via === 'sample' ? f.sample(limit, undefined, []) : f.wd.tick(limit, f.x.lastSeen, f.x.required), `${name} ${via} at ${limit}`).toBe(false);
      expect(via === 'sample' ? f.sample(above(limit), undefined, []) : f.wd.tick(above(limit), f.x.lastSeen, f.x.required), `${name} ${via} just above`).toBe(true);
      expect(f.wd.tripAt(0)).toMatchObject({ check: CHECK.stale_input, input: name, value: above(limit), limit });
    }
  });

  it('an input that is not required never goes stale; a required one never seen keeps the arm waiting, not latched', () => {
    const f = new Feed(p);
    f.x.required[INPUT.zone_view] = 0;
    f.sample(0);
    expect(f.sample(100, undefined, [0, 1, 2, 4])).toBe(false);
    expect(f.wd.held).toBe(false);
    const g = new Feed(p);
    expect(g.sample(0, undefined, [0, 1, 2])).toBe(true);
    expect(g.wd.waitingForInputs).toBe(true);
    expect(g.wd.held).toBe(false);
    expect(g.wd.tick(0.001, g.x.lastSeen, g.x.required)).toBe(true);
    expect(g.wd.held).toBe(false);
    expect(g.sample(0.002)).toBe(false);
    expect(g.wd.waitingForInputs).toBe(false);
  });

  it('release_clear_s: a reset just before the clear time is refused, at it and after granted', () => {
    const n = Math.round(p.release_clear_s * 1000);
    for (const [extra, released] of [[-1, false], [0, true], [1, true]] as const) {
      const f = new Feed(p);
      f.run(0, 2000);
      f.sample(2.0, (x) => void (x.compensated[0] = 2 * p.force_limit_n));
      expect(f.wd.held).toBe(true);
      f.run(2001, 2000 + n + extra);
      // clearFor_s = t − t_fault, with t on the integer grid (k/1000) so at the limit it is exact.
      expect(f.wd.readyToRelease, `${extra} ms`).toBe(released);
      const r = f.wd.requestReset();
      expect(r.released, `${extra} ms: ${r.reason}`).toBe(released);
      expect(f.wd.held).toBe(!released);
      if (!released) expect(r.reason).toMatch(new RegExp(`of the ${p.release_clear_s} s required`));
    }
    // In exact arithmetic: fault at 2 s, clean until 3 s = 2 + 1 s.
    const f = new Feed(p);
    f.sample(2, (x) => void (x.correction[1] = -above(p.correction_force_limit_n)));
    f.sample(2 + below(p.release_clear_s));
    expect(f.wd.requestReset().released).toBe(false);
    f.sample(2 + p.release_clear_s);
    expect(f.wd.clearFor_s).toBe(p.release_clear_s);
    expect(f.wd.requestReset()).toEqual({ released: true, reason: 'released' });
  });

  it('on_impact: hold latches on the flag, with the score as value and 1 as limit; report does not', () => {
    const f = new Feed(p);
    f.run(0, 5);
    expect(f.sample(0.006, (x) => { x.impactScore = 0.99; })).toBe(false);
    expect(f.sample(0.007, (x) => { x.impactFlag = true; x.impactScore = 1.25; })).toBe(p.on_impact === 'hold');
    if (p.on_impact === 'hold') expect(f.wd.tripAt(0)).toEqual({ check: CHECK.impact, input: 'wrench.force', value: 1.25, limit: 1, t_s: 0.007 });
    const r = new Feed({ ...p, on_impact: 'report' });
    r.run(0, 5);
    expect(r.sample(0.006, (x) => { x.impactFlag = true; x.impactScore = 3; })).toBe(false);
    expect(r.wd.tripsLength).toBe(0);
  });
});
