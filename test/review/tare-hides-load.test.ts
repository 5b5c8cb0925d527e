/**
 * Review finding: a tare accepted any load at any time, and the force limits applied to tared
 * values. A tare taken under a steady 50 N squeeze raised every limit by 50 N: a later 105 N
 * squeeze (limit 60 N) ran with a non-zero twist.
 *
 * Our own synthetic wrench streams (invented data); limits are the demo cell's
 * (config/demo_cell.yaml: correction_force_limit_n 60 N; tare bounds 40 N absolute and 5 N
 * change from the start-up bias).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { ArmStep, TARE_OUTCOME_REFUSED, TARE_OUTCOME_TAKEN } from '../../src/core/arm-step.js';
import { SosCascade } from '../../src/core/filter/index.js';
import { CHECK, CHECKS } from '../../src/core/watchdog.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';
import { Rng } from '../../src/util/rng.js';

const cell = loadCell('config/demo_cell.yaml');
const noZones = (c: ArmConfig): ArmConfig => ({ ...c, task: { ...c.task, zones: [] } });
const make = () => new ArmStep(noZones(cell.left.config), { required: { tool_pose: false, zone_view: false } });
const speed = (s: ArmStep) => Math.hypot(s.out.twist[0]!, s.out.twist[1]!, s.out.twist[2]!);

describe('review: a tare cannot hide a load', () => {
  it('a tare under a 50 N squeeze is refused, and a later 105 N squeeze holds', () => {
    const s = make();
    const w = new Float64Array(6);
    let k = 0;
    // A squeeze builds up over half a second (a step would read as an impact).
    const run = (until: number, fy: number) => {
      for (; k / 1000 < until; k++) {
        w[1] = Math.min(fy, w[1]! + fy / 500);
        s.step(k / 1000, w);
      }
    };
    run(0.6, 0); // start-up tare on the still beam at 0.5 s
    expect(s.out.tared).toBe(true);
    run(1.5, 0);
    expect(speed(s)).toBeGreaterThan(0); // moving toward the goal
    run(2.5, 50); // a steady 50 N squeeze, below the 60 N limit
    expect(s.out.held).toBe(false);
    // While moving: refused at once, with the reason.
    const moving = s.requestTare();
    expect(moving.status).toBe('refused');
    expect(moving.reason).toMatch(/moving/);
    // Held (a NaN sample latches a hold): accepted for a still window, then refused by the bound.
    w[0] = Number.NaN;
    s.step(k / 1000, w);
    k++;
    w[0] = 0;
    expect(s.out.held).toBe(true);
    expect(s.requestTare().status).toBe('pending');
    let outcome = 0;
    let reason = '';
    for (; k / 1000 < 3.5 && outcome === 0; k++) {
      w[1] = 50;
      s.step(k / 1000, w);
      outcome = s.out.tareOutcome;
      reason = s.out.tareReason;
    }
    expect(outcome).toBe(TARE_OUTCOME_REFUSED);
    expect(reason).toMatch(/max_bias_n|max_change_n/);
    expect(Math.abs(s.filter.bias[1]!)).toBeLessThan(1); // the start-up bias stays
    // A fresh arm: the 105 N squeeze trips force_correction with the limit of 60 N.
    const s2 = make();
    k = 0;
    for (; k < 600; k++) s2.step(k / 1000, new Float64Array(6));
    const sq = new Float64Array(6);
    for (; k < 2000; k++) {
      sq[1] = Math.min(105, ((k - 600) * 105) / 500);
      s2.step(k / 1000, sq);
    }
    expect(s2.out.held).toBe(true);
    expect(s2.watchdog.trips.some((r) => r.check === CHECK.force_correction && r.limit === 60)).toBe(true);
    expect(speed(s2)).toBe(0);
  });

  it('a re-tare within the bounds is taken and reported', () => {
    const s = make();
    const w = new Float64Array(6);
    for (let k = 0; k < 600; k++) s.step(k / 1000, w);
    w[0] = Number.NaN;
    s.step(0.6, w);
    w[0] = 0;
    expect(s.requestTare().status).toBe('pending');
    let taken = false;
    w[2] = 3; // a 3 N drift of the offset, within max_change_n = 5 N
    for (let k = 601; k < 1300; k++) {
      s.step(k / 1000, w);
      if (s.out.tareOutcome === TARE_OUTCOME_TAKEN) taken = true;
    }
    expect(taken).toBe(true);
    expect(s.filter.bias[2]).toBeCloseTo(3, 9);
    expect(s.filter.biasChange[2]).toBeCloseTo(3, 9);
  });

  it('property: whatever tares are requested during a squeeze profile, no squeeze above the limit runs with a non-zero twist', () => {
    // Reference: the true squeeze low-passed by an independent copy of the same Butterworth,
    // referred to the true sensor offset. Whenever it exceeds the limit by 1 N the twist is zero.
    const cfg = noZones(cell.left.config);
    const limit = cfg.watchdog.correction_force_limit_n;
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 1e6 }),
        // Plateaus long enough for a still window (a tare can be taken on them) and levels on both
        // sides of the limit; tare requests anywhere, often.
        fc.array(fc.record({ level: fc.double({ min: 0, max: 120, noNaN: true }), dur: fc.double({ min: 0.8, max: 2, noNaN: true }) }), { minLength: 2, maxLength: 6 }),
        fc.array(fc.double({ min: 0.6, max: 8, noNaN: true }), { minLength: 4, maxLength: 12 }),
        fc.array(fc.double({ min: 0.6, max: 8, noNaN: true }), { maxLength: 4 }),
        (seed, profile, tareAt, resetAt) => {
          const rng = new Rng(seed);
          const s = new ArmStep(cfg, { required: { tool_pose: false, zone_view: false } });
          const ref = new SosCascade(s.filter.sos, 1);
          const x = new Float64Array(1);
          const y = new Float64Array(1);
          const offset = [rng.range(-10, 10), rng.range(-10, 10), rng.range(-10, 10)];
          const w = new Float64Array(6);
          const tares = [...tareAt].sort((a, b) => a - b);
          const resets = [...resetAt].sort((a, b) => a - b);
          let seg = 0;
          let squeeze = 0;
          let segEnd = 1 + profile[0]!.dur;
          for (let k = 0; k < 9000; k++) {
            const t = k / 1000;
            while (t >= segEnd && seg + 1 < profile.length) segEnd += profile[++seg]!.dur;
            // Levels change as ramps of 100 N/s (steps would read as impacts and hold anyway).
            const target = t < 1 ? 0 : t >= segEnd ? 0 : profile[seg]!.level;
            squeeze += Math.max(-0.1, Math.min(0.1, target - squeeze));
            w[0] = offset[0]! + 0.2 * rng.normal();
            w[1] = offset[1]! + squeeze + 0.2 * rng.normal();
            w[2] = offset[2]! + 0.2 * rng.normal();
            if (k === 0) ref.resetTo(Float64Array.of(0));
            x[0] = squeeze;
            ref.process(x, y);
            while (tares.length && tares[0]! <= t) { tares.shift(); s.requestTare(); }
            while (resets.length && resets[0]! <= t) { resets.shift(); s.requestReset(); }
            s.step(t, w);
            if (Math.abs(y[0]!) > limit + 1 && speed(s) !== 0) {
              throw new Error(`squeeze ${y[0]!.toFixed(1)} N > ${limit} N ran at ${speed(s)} m/s at t = ${t}; trips ${s.watchdog.trips.map((r) => CHECKS[r.check]).join(',')}`);
            }
          }
        },
      ),
      { seed: 8, numRuns: 60 },
    );
  });
});
