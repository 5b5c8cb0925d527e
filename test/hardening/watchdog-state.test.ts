/**
 * Hardening: the watchdog's state round-trips through snapshot()/restore() (replay seeks with
 * it), its reset answers say what they mean, and its clear timer never reads negative. Our own
 * behaviour (src/core/watchdog.ts); the oracle is a second watchdog fed the same inputs.
 */
import { describe, expect, it } from 'vitest';
import { CHECKS, Watchdog, type WatchdogInputs } from '../../src/core/watchdog.js';
import { loadCell, type WatchdogParams } from '../../src/params/config.js';
import { DEMO } from '../support/files.js';
import { requiredInputs } from '../support/watchdog.js';

const P: WatchdogParams = loadCell(DEMO).left.config.watchdog;

const inputs = (): WatchdogInputs => requiredInputs(6);

/** One scripted step: a sample at t with an optional fault, then the output check. */
type Step = { t: number; force?: number; joint?: number; zone?: boolean; twist?: number; fresh?: number[] };

function apply(wd: Watchdog, x: WatchdogInputs, s: Step): string {
  x.t_s = s.t;
  x.compensated.fill(0);
  x.compensated[0] = s.force ?? 0;
  x.jointVelocity.fill(0);
  x.jointVelocity[2] = s.joint ?? 0;
  x.zoneFinite = !s.zone;
  for (const k of s.fresh ?? [0, 1, 2, 3, 4]) x.lastSeen[k] = s.t;
  const stop = wd.checkInputs(x);
  const tw = Float64Array.of(s.twist ?? 0.1, 0, 0, 0, 0, 0.1);
  wd.checkOutput(s.t, tw);
  return JSON.stringify({ stop, held: wd.held, clear: wd.clearFor_s, waiting: wd.waitingForInputs, ready: wd.readyToRelease, tw: Array.from(tw), trips: wd.trips });
}

describe('watchdog snapshot and restore', () => {
  it('a restored watchdog continues exactly like the original (trips, worst values, clear timer, reset answers)', () => {
    const script: Step[] = [];
    for (let k = 0; k <= 300; k++) script.push({ t: k / 1000 });
    script.push({ t: 0.301, force: 2 * P.force_limit_n });
    script.push({ t: 0.302, joint: 2 * P.joint_velocity_limit_rad_s });
    script.push({ t: 0.303, zone: true });
    for (let k = 304; k <= 800; k++) script.push({ t: k / 1000 });
    // After the cut: the same checks again (worst value raised, no duplicate), then clean until release.
    const after: Step[] = [{ t: 0.801, force: 3 * P.force_limit_n }, { t: 0.802, twist: 2 * P.linear_speed_limit_m_s }];
    for (let k = 803; k <= 2000; k++) after.push({ t: k / 1000 });
    after.push({ t: 2.001, joint: 3 * P.joint_velocity_limit_rad_s });

    const a = new Watchdog(P);
    const xa = inputs();
    for (const s of script) apply(a, xa, s);
    const snap = a.snapshot();
    const b = new Watchdog(P);
    b.restore(structuredClone(snap));
    expect(b.snapshot()).toEqual(snap);
    const xb = inputs();
    xb.lastSeen.set(xa.lastSeen);
    for (const [n, s] of after.entries()) {
      expect(apply(b, xb, s), `step ${n}`).toBe(apply(a, xa, s));
      if (n === 500 || n === after.length - 2) expect(b.requestReset()).toEqual(a.requestReset());
      if (n === 1) {
        // The force is recorded once, at its worst value, with the time it first tripped.
        const force = b.trips.filter((r) => CHECKS[r.check] === 'force_raw');
        expect(force).toEqual([{ check: CHECKS.indexOf('force_raw'), input: 'wrench', value: 3 * P.force_limit_n, limit: P.force_limit_n, t_s: 0.301 }]);
      }
    }
    // Released before the last step, which holds again with only its own reason.
    expect(b.trips.map((r) => CHECKS[r.check])).toEqual(['joint_velocity']);
  });

  it('a snapshot is a copy (later trips do not change it), and every field survives the round trip', () => {
    const a = new Watchdog(P);
    const x = inputs();
    for (let k = 0; k <= 10; k++) apply(a, x, { t: k / 1000 });
    apply(a, x, { t: 0.011, force: 2 * P.force_limit_n });
    const snap = a.snapshot();
    const frozen = JSON.stringify(snap);
    apply(a, x, { t: 0.012, force: 5 * P.force_limit_n });
    apply(a, x, { t: 0.013, joint: 5 });
    expect(JSON.stringify(snap)).toBe(frozen);
    expect(snap).toMatchObject({ held: true, clearFor_s: 0, waiting: false, lastT: 0.011, lastBadT: 0.011, firstT: 0 });
    expect(snap.seen[CHECKS.indexOf('force_raw')]).toBe(1);
    expect(snap.trips).toEqual([{ check: CHECKS.indexOf('force_raw'), input: 'wrench', value: 2 * P.force_limit_n, limit: P.force_limit_n, t_s: 0.011 }]);
    // Restoring puts back the earlier state, dropping the later joint trip.
    a.restore(snap);
    expect(a.trips.map((r) => CHECKS[r.check])).toEqual(['force_raw']);
    expect(a.tripAt(0).value).toBe(2 * P.force_limit_n);
    expect(a.snapshot()).toEqual(snap);
  });
});

describe('watchdog reset answers and the clear timer', () => {
  it('says "not held" when there is nothing to release, how long is left when refused, "released" when granted', () => {
    const wd = new Watchdog(P);
    expect(wd.requestReset()).toEqual({ released: true, reason: 'not held' });
    const x = inputs();
    for (let k = 0; k <= 10; k++) apply(wd, x, { t: k / 1000 });
    apply(wd, x, { t: 0.011, force: 2 * P.force_limit_n });
    for (let k = 12; k <= 511; k++) apply(wd, x, { t: k / 1000 });
    expect(wd.requestReset()).toEqual({ released: false, reason: `conditions clear for ${(0.5).toFixed(3)} s of the ${P.release_clear_s} s required` });
    for (let k = 512; k <= 1012; k++) apply(wd, x, { t: k / 1000 });
    expect(wd.requestReset()).toEqual({ released: true, reason: 'released' });
    expect(wd.requestReset()).toEqual({ released: true, reason: 'not held' });
  });

  it('the clear timer never reads negative (a twist fault stamped ahead of the inputs)', () => {
    const wd = new Watchdog(P);
    const x = inputs();
    for (let k = 0; k <= 10; k++) apply(wd, x, { t: k / 1000 });
    wd.checkOutput(5, Float64Array.of(1, 0, 0, 0, 0, 0));
    expect(wd.held).toBe(true);
    apply(wd, x, { t: 0.011 });
    expect(wd.clearFor_s).toBe(0);
  });

  it('a fault from a sample in the past is dated at the latest time seen (the clear timer starts there)', () => {
    const wd = new Watchdog(P);
    const x = inputs();
    for (let k = 0; k <= 2000; k++) apply(wd, x, { t: k / 1000 });
    // A backwards sample (1.5 s after 2.0 s) with a force fault: dated 2.0 s, not 1.5 s.
    apply(wd, x, { t: 1.5, force: 2 * P.force_limit_n });
    expect(wd.trips.map((r) => CHECKS[r.check]).sort()).toEqual(['force_raw', 'time_backwards']);
    for (let k = 2001; k <= 2999; k++) apply(wd, x, { t: k / 1000 });
    expect(wd.requestReset().released).toBe(false);
    apply(wd, x, { t: 3.0 });
    apply(wd, x, { t: 3.001 });
    expect(wd.requestReset().released).toBe(true);
  });
});
