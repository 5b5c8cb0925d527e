/**
 * Properties of the whole arm step over random input streams, checked by the fault campaign's
 * invariant monitor (src/faults/invariants.ts): held ⇒ twist exactly zero; a limit violation,
 * a non-finite or backwards input held within one period; a stale input held within its timeout
 * plus one period; no reset released during a condition or its clear time; no non-finite output.
 * The invariants are stated by the watchdog itself (src/core/watchdog.ts, SAFETY.md); the inputs
 * are invented streams of our own. Fixed seeds, bounded runs.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { ArmStep, ZONE_FREE, ZONE_OCCUPIED, ZONE_UNKNOWN } from '../../src/core/arm-step.js';
import { FaultedArm } from '../../src/faults/inject.js';
import { INVARIANTS, InvariantMonitor } from '../../src/faults/invariants.js';
import { FAULT_KINDS, STREAMS, type Fault } from '../../src/faults/kinds.js';
import { loadCell } from '../../src/params/config.js';
import { DEMO } from '../support/files.js';

const cfg = loadCell(DEMO).left.config;
const RATE = cfg.wrench_filter.sample_rate_hz;
const inv = (m: InvariantMonitor) => Object.fromEntries(INVARIANTS.map((n, k) => [n, m.counts[k]]));

/** Any double, weighted toward the awkward ones. */
const wild = fc.oneof(
  { weight: 6, arbitrary: fc.double({ min: -50, max: 50, noNaN: true }) },
  { weight: 1, arbitrary: fc.constantFrom(Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY, -0, 1e300, -1e300, 5e-324) },
  { weight: 1, arbitrary: fc.double() },
);

type Op =
  | { op: 'wrench'; dt: number; w: number[] }
  | { op: 'pose'; dt: number; p: number[] }
  | { op: 'joint'; dt: number; v: number[] }
  | { op: 'zone'; dt: number; z: number[] }
  | { op: 'tick'; dt: number }
  | { op: 'reset' }
  | { op: 'tare' };

/** A time step: mostly one period forward, sometimes a gap, a jump back, a repeat or a non-finite stamp. */
const dt = fc.oneof(
  { weight: 20, arbitrary: fc.constant(1 / RATE) },
  { weight: 2, arbitrary: fc.double({ min: 0, max: 0.6, noNaN: true }) },
  { weight: 1, arbitrary: fc.double({ min: -0.5, max: 0, noNaN: true }) },
  { weight: 1, arbitrary: fc.constantFrom(Number.NaN, Number.POSITIVE_INFINITY) },
);
const op: fc.Arbitrary<Op> = fc.oneof(
  { weight: 10, arbitrary: fc.record({ op: fc.constant('wrench' as const), dt, w: fc.array(wild, { minLength: 6, maxLength: 6 }) }) },
  { weight: 3, arbitrary: fc.record({ op: fc.constant('pose' as const), dt: fc.constant(0), p: fc.array(wild, { minLength: 7, maxLength: 7 }) }) },
  { weight: 3, arbitrary: fc.record({ op: fc.constant('joint' as const), dt: fc.constant(0), v: fc.array(wild, { minLength: 3, maxLength: 3 }) }) },
  { weight: 1, arbitrary: fc.record({ op: fc.constant('zone' as const), dt: fc.constant(0), z: fc.array(fc.constantFrom(ZONE_FREE, ZONE_OCCUPIED, ZONE_UNKNOWN, 7, Number.NaN), { minLength: 2, maxLength: 2 }) }) },
  { weight: 2, arbitrary: fc.record({ op: fc.constant('tick' as const), dt }) },
  { weight: 2, arbitrary: fc.constant({ op: 'reset' as const }) },
  { weight: 1, arbitrary: fc.constant({ op: 'tare' as const }) },
);

/** A still, tared arm first (so the correction checks and the policy run), then the random stream. */
function warmUp(arm: ArmStep, m: InvariantMonitor): number {
  const w = new Float64Array(6);
  const v = new Float64Array(3);
  const [x, y] = cfg.task.start_m;
  let k = 0;
  for (; k < 1200; k++) {
    const t = k / RATE;
    if (k % 100 === 0) { arm.setZoneView(t, [ZONE_OCCUPIED, ZONE_FREE]); m.fedZoneView(t); }
    arm.setToolPose(t, x, y + 0.55, 0.9, 0, 0, 0, 1); m.fedToolPose(t, x, y + 0.55, 0.9, 0, 0, 0, 1);
    arm.setJointState(t, v, 3); m.fedJointState(t, v, 3);
    w[2] = -11.77;
    m.afterStep(t, t, w, arm, arm.step(t, w));
  }
  return k / RATE;
}

describe('arm step over random input streams (properties)', () => {
  it('keeps every invariant on raw random streams', () => {
    let held = 0;
    fc.assert(
      fc.property(fc.array(op, { minLength: 1, maxLength: 400 }), (ops) => {
        const arm = new ArmStep(cfg, { jointCount: 3 });
        const m = new InvariantMonitor('left', cfg, 3);
        let t = warmUp(arm, m);
        let now = t;
        const w = new Float64Array(6);
        for (const o of ops) {
          if ('dt' in o) {
            t = Number.isFinite(o.dt) ? (Number.isFinite(t) ? t : now) + o.dt : o.dt;
            if (o.dt > 0 && Number.isFinite(o.dt)) now += o.dt;
          }
          switch (o.op) {
            case 'wrench':
              w.set(o.w);
              m.afterStep(now, t, w, arm, arm.step(t, w));
              break;
            case 'tick':
              m.afterTick(now, t, arm.tick(t));
              break;
            case 'pose':
              arm.setToolPose(t, o.p[0]!, o.p[1]!, o.p[2]!, o.p[3]!, o.p[4]!, o.p[5]!, o.p[6]!);
              m.fedToolPose(t, o.p[0]!, o.p[1]!, o.p[2]!, o.p[3]!, o.p[4]!, o.p[5]!, o.p[6]!);
              break;
            case 'joint':
              arm.setJointState(t, o.v, 3);
              m.fedJointState(t, o.v, 3);
              break;
            case 'zone':
              arm.setZoneView(t, o.z);
              m.fedZoneView(t);
              break;
            case 'reset': {
              const was = arm.watchdog.held;
              m.afterReset(now, was, arm.requestReset().released);
              break;
            }
            case 'tare':
              arm.requestTare();
              break;
          }
          if (arm.out.held) held++;
        }
        expect(inv(m), m.violations.map((v) => v.detail).join('; ')).toEqual(Object.fromEntries(INVARIANTS.map((n) => [n, 0])));
      }),
      { seed: 1515, numRuns: 120 },
    );
    expect(held).toBeGreaterThan(0);
  });

  it('keeps every invariant under random injected faults with an impatient operator', () => {
    const fault: fc.Arbitrary<Fault> = fc.record({
      kind: fc.constantFrom(...FAULT_KINDS.filter((k) => k !== 'partner_death')),
      arm: fc.constant('left' as const),
      start_s: fc.double({ min: 0.2, max: 2.5, noNaN: true }),
      duration_s: fc.oneof(fc.double({ min: 0.001, max: 1.5, noNaN: true }), fc.constant(Number.POSITIVE_INFINITY)),
      magnitude: fc.double({ min: -2, max: 2, noNaN: true }),
      stream: fc.constantFrom(...STREAMS),
      axis: fc.integer({ min: 0, max: 2 }),
    });
    fc.assert(
      fc.property(fc.array(fault, { minLength: 1, maxLength: 4 }), fc.integer({ min: 1, max: 400 }), fc.double({ min: 0, max: 300, noNaN: true }), (faults, resetEvery, spikeN) => {
        const arm = new ArmStep(cfg, { jointCount: 3 });
        const m = new InvariantMonitor('left', cfg, 3);
        // Spikes and drifts sized in newtons.
        const scaled = faults.map((f) => (f.kind === 'spike' || f.kind === 'bias_drift' || f.kind === 'payload_slip' ? { ...f, magnitude: f.magnitude * spikeN } : f));
        const fa = new FaultedArm(arm, 'left', scaled, m);
        const w = new Float64Array(6);
        const v = new Float64Array(3);
        const [x, y] = cfg.task.start_m;
        for (let k = 0; k < 4000; k++) {
          const now = k / RATE;
          if (k % 100 === 0) fa.setZoneView(now, [ZONE_OCCUPIED, ZONE_FREE]);
          fa.setToolPose(now, x + 0.0001 * k, y + 0.55, 0.9, 0, 0, 0, 1);
          if (k % 2 === 0) fa.setJointState(now, v, 3);
          w.fill(0);
          w[2] = -11.77;
          fa.step(now, w);
          if (k % resetEvery === 0) fa.reset(now);
        }
        expect(inv(m), m.violations.map((q) => q.detail).join('; ')).toEqual(Object.fromEntries(INVARIANTS.map((n) => [n, 0])));
      }),
      { seed: 1516, numRuns: 40 },
    );
  });
});
