/**
 * Hardening: the impact detector bracketed at its SHIPPED values (config/demo_cell.yaml
 * through the project's own loader, and the schema defaults). Our own behaviour, as the
 * module states it (src/core/filter/wrench-filter.ts): impactScore = max(|f_impact| / force_n,
 * |τ_impact| / torque_nm); the flag rises once the score has stayed ≥ 1 for min_duration_s
 * (in samples), and falls once it has stayed < release_ratio for hold_s.
 *
 * A steady score is made with a Nyquist-rate input (+A, −A, ...) whose amplitude changes
 * smoothly: the Butterworth low-pass (bilinear transform) has its zeros at z = −1, so such an
 * input lies wholly in the impact band once settled, and the score is A / level (checked to
 * 1e-5 below).
 */
import { describe, expect, it } from 'vitest';
import { WrenchFilter, type WrenchFilterConfig } from '../../src/core/filter/wrench-filter.js';
import { buildArmConfig, loadCell } from '../../src/params/config.js';
import { DEMO } from '../support/files.js';

const asFilterConfig = (c: unknown) => c as WrenchFilterConfig;
const SOURCES: [string, WrenchFilterConfig][] = [
  ['config/demo_cell.yaml', asFilterConfig(loadCell(DEMO).left.config.wrench_filter)],
  ['schema defaults', asFilterConfig(buildArmConfig(undefined, 'left').config.wrench_filter)],
];

/** A shipped filter, tared on a still window of zeros (bias 0), with its state saved. */
function tared(cfg: WrenchFilterConfig): { f: WrenchFilter; snap: Float64Array } {
  const f = new WrenchFilter(cfg);
  const z = new Float64Array(6);
  for (let i = 0; i < f.tareWindowSamples && !f.tared; i++) f.step(z);
  expect(f.tared).toBe(true);
  expect(Array.from(f.bias)).toEqual([0, 0, 0, 0, 0, 0]);
  return { f, snap: f.snapshot() };
}

/** Feeds `amps[k]` with alternating sign on `axis`; returns the score and flag after each sample. */
function feed(f: WrenchFilter, axis: number, amps: readonly number[], start = 0): { score: number[]; flag: boolean[] } {
  const s = new Float64Array(6);
  const score: number[] = [];
  const flag: boolean[] = [];
  for (const [k, a] of amps.entries()) {
    s.fill(0);
    s[axis] = (k + start) % 2 === 0 ? a : -a;
    f.step(s);
    score.push(f.impactScore);
    flag.push(f.impactFlag);
  }
  return { score, flag };
}

/**
 * The amplitude of the last sample of `prefix + [A]` at which the score of that sample is
 * exactly `target` (bisection over doubles; found for every case used here), and the double
 * just below it.
 */
function exactAmplitude(f: WrenchFilter, snap: Float64Array, axis: number, prefix: readonly number[], target: number, guess: number): { at: number; below: number } {
  f.restore(snap);
  feed(f, axis, prefix);
  const after = f.snapshot();
  const last = (a: number) => {
    f.restore(after);
    return feed(f, axis, [a], prefix.length).score[0]!;
  };
  let lo = guess * 0.95;
  let hi = guess * 1.05;
  expect(last(lo)).toBeLessThan(target);
  expect(last(hi)).toBeGreaterThan(target);
  for (let i = 0; i < 200; i++) {
    const m = (lo + hi) / 2;
    if (m === lo || m === hi) break;
    if (last(m) >= target) hi = m;
    else lo = m;
  }
  expect(last(hi), `an amplitude with score exactly ${target}`).toBe(target);
  expect(last(lo)).toBeLessThan(target);
  return { at: hi, below: lo };
}

const rep = (n: number, a: number) => Array.from({ length: n }, () => a);

describe('shipped impact values, pinned', () => {
  it.each(SOURCES)('%s', (_src, cfg) => {
    // Our own choices for the demo cell: 15 N (knocks are broadband), 6 N·m (near force_n × the
    // 0.55 m grasp lever), release at half the rise level, 3 ms to rise, 50 ms to fall.
    expect(cfg.sample_rate_hz).toBe(1000);
    expect(cfg.impact).toEqual({ force_n: 15, torque_nm: 6, release_ratio: 0.5, min_duration_s: 0.003, hold_s: 0.05 });
    const f = new WrenchFilter(cfg);
    expect(f.riseSamples).toBe(3);
    expect(f.holdSamples).toBe(50);
  });
});

describe.each(SOURCES)('impact detector bracketed at the shipped values: %s', (_src, cfg) => {
  const FORCE = cfg.impact.force_n;
  const TORQUE = cfg.impact.torque_nm;
  const N = Math.max(1, Math.round(cfg.impact.min_duration_s * cfg.sample_rate_hz));
  const H = Math.max(1, Math.round(cfg.impact.hold_s * cfg.sample_rate_hz));
  const R = cfg.impact.release_ratio;
  const AXES = [0, 1, 2, 3, 4, 5].map((axis) => ({ axis, level: axis < 3 ? FORCE : TORQUE, unit: axis < 3 ? 'N' : 'N·m' }));

  it('the score is max(|f_impact| / force_n, |τ_impact| / torque_nm) on every sample, and impact = compensated − correction exactly', () => {
    const { f } = tared(cfg);
    const s = new Float64Array(6);
    let x = 12345;
    const rnd = () => ((x = (x * 1103515245 + 12345) % 2147483648) / 2147483648 - 0.5) * 40;
    let split = 0;
    let worst = 0;
    for (let k = 0; k < 400; k++) {
      for (let a = 0; a < 6; a++) s[a] = rnd() * (a < 3 ? 1 : 0.4);
      f.step(s);
      for (let a = 0; a < 6; a++) if (f.impact[a] !== f.compensated[a]! - f.correction[a]!) split++;
      const i = f.impact;
      const want = Math.max(Math.hypot(i[0]!, i[1]!, i[2]!) / FORCE, Math.hypot(i[3]!, i[4]!, i[5]!) / TORQUE);
      worst = Math.max(worst, Math.abs(f.impactScore - want) / want);
    }
    expect(split).toBe(0);
    expect(worst).toBeLessThanOrEqual(1e-12);
  });

  /** Smooth (raised-cosine) change of the amplitude from a to b over n samples, then `hold` samples at b. */
  const ramp = (a: number, b: number, n: number, hold = 0) => [
    ...Array.from({ length: n }, (_, k) => a + ((b - a) * (1 - Math.cos((Math.PI * (k + 1)) / n))) / 2),
    ...rep(hold, b),
  ];
  const RAMP = 500;

  it.each(AXES)('axis $axis: a steady score just below 1 never flags; just above, after the smooth ramp, flags N samples after it reaches 1', ({ axis, level }) => {
    const { f, snap } = tared(cfg);
    const lo = feed(f, axis, ramp(0, level * (1 - 1e-3), RAMP, 300));
    // After the ramp the score is A / level to within 1e-5 (the band split does not leak).
    const dev = (v: number[], want: number) => Math.max(...v.map((x) => Math.abs(x - want)));
    expect(dev(lo.score.slice(RAMP), 1 - 1e-3)).toBeLessThan(1e-5);
    expect(lo.flag.includes(true)).toBe(false);
    f.restore(snap);
    const hi = feed(f, axis, ramp(0, level * (1 + 1e-3), RAMP, 300));
    expect(dev(hi.score.slice(RAMP), 1 + 1e-3)).toBeLessThan(1e-5);
    const first = hi.score.findIndex((v) => v >= 1);
    expect(first).toBeGreaterThan(RAMP / 2);
    expect(hi.score.slice(first).every((v) => v >= 1)).toBe(true);
    expect(hi.flag.indexOf(true), `first flagged sample, N = ${N}`).toBe(first + N - 1);
    expect(hi.flag.slice(first + N - 1).every(Boolean)).toBe(true);
  });

  it.each(AXES)('axis $axis: a score of exactly 1 counts as "at or above" (the flag rises on sample N), the next double below does not', ({ axis, level }) => {
    const { f, snap } = tared(cfg);
    // Settled just below the level, then N − 1 samples above, then one sample at exactly 1.
    const pre = [...ramp(0, level * 0.99, RAMP, 200), ...rep(N - 1, level * 1.01)];
    const { at, below } = exactAmplitude(f, snap, axis, pre, 1, level);
    // The amplitude that scores exactly 1 is the shipped level, up to the band split's response to the step.
    expect(Math.abs(at / level - 1)).toBeLessThan(1e-3);
    f.restore(snap);
    const a = feed(f, axis, [...pre, at]);
    expect(a.score.slice(-N).every((v) => v >= 1)).toBe(true);
    expect(a.score[a.score.length - 1]).toBe(1);
    expect(a.flag[a.flag.length - 1]).toBe(true);
    expect(a.flag.slice(0, -1).includes(true)).toBe(false);
    f.restore(snap);
    const b = feed(f, axis, [...pre, below]);
    expect(b.flag.includes(true)).toBe(false);
  });

  it('a contact step twice the level flags on sample N exactly (not N + 1), and a burst shorter than N never flags', () => {
    const { f, snap } = tared(cfg);
    for (const axis of [0, 5]) {
      const level = axis < 3 ? FORCE : TORQUE;
      f.restore(snap);
      const step = feed(f, axis, rep(N + 3, 2 * level));
      expect(step.score.every((v) => v > 1.9)).toBe(true);
      expect(step.flag.indexOf(true)).toBe(N - 1);
      f.restore(snap);
      const short = feed(f, axis, [...rep(N - 1, 2 * level), ...rep(200, 0)]);
      expect(short.flag.includes(true)).toBe(false);
      // N − 1 samples above, one clearly below, then above again: the count restarts.
      f.restore(snap);
      const dip = feed(f, axis, [...rep(N - 1, 2 * level), 0.5 * level, ...rep(N + 1, 2 * level)]);
      expect(dip.score[N - 1]).toBeLessThan(1);
      expect(dip.flag.indexOf(true)).toBe(N - 1 + N);
    }
  });

  it('release: the flag falls on exactly the H-th sample below release_ratio, and a score between release_ratio and 1 keeps it up', () => {
    const { f, snap } = tared(cfg);
    const A = FORCE * 2;
    const keep = FORCE * R * (1 + 1e-3);
    // Rise, then smoothly down to a score just above the release level, held a long time: the flag stays up.
    const upIn = [...rep(N, A), ...ramp(A, keep, RAMP, 5 * H)];
    const up = feed(f, 0, upIn);
    expect(up.flag.indexOf(true)).toBe(N - 1);
    expect(Math.min(...up.score.slice(N))).toBeGreaterThanOrEqual(R);
    expect(up.flag.slice(N - 1).every(Boolean)).toBe(true);
    // Then a small step to just below the release level: it falls on the H-th such sample exactly.
    const down = feed(f, 0, rep(H + 5, FORCE * R * (1 - 1e-3)), upIn.length);
    expect(Math.max(...down.score)).toBeLessThan(R);
    expect(down.flag.indexOf(false), `H = ${H}`).toBe(H - 1);
    expect(down.flag.slice(H - 1).includes(true)).toBe(false);
    // Quiet input after a knock: the same H samples.
    f.restore(snap);
    const quiet = feed(f, 0, [...rep(N, A), ...rep(H + 5, 0)]);
    expect(Math.max(...quiet.score.slice(N))).toBeLessThan(R);
    expect(quiet.flag.lastIndexOf(true)).toBe(N - 1 + H - 1);
  });

  it('release: a score of exactly release_ratio is not "below" (it restarts the hold count)', () => {
    const { f, snap } = tared(cfg);
    const low = FORCE * R * 0.3;
    const pre = [...rep(N, 2 * FORCE), ...rep(H - 1, low)];
    const { at, below } = exactAmplitude(f, snap, 0, pre, R, FORCE * R);
    f.restore(snap);
    const a = feed(f, 0, [...pre, at, ...rep(H, low)]);
    expect(Math.max(...a.score.slice(N, N + H - 1))).toBeLessThan(R);
    expect(a.score[N + H - 1]).toBe(R);
    // The count restarts after the sample at exactly R: H − 1 more quiet samples keep the flag up, the H-th drops it.
    expect(a.flag.slice(N - 1, N + H + H - 1).every(Boolean)).toBe(true);
    expect(a.flag[N + H + H - 1]).toBe(false);
    f.restore(snap);
    const b = feed(f, 0, [...pre, below]);
    expect(b.flag[N + H - 1]).toBe(false);
  });

  it('the torque level does not stand in for the force level (a force at the torque level scores below 1, and vice versa)', () => {
    const { f, snap } = tared(cfg);
    // TORQUE newtons on a force axis score TORQUE / FORCE; FORCE newton-metres on a torque axis FORCE / TORQUE.
    const force = feed(f, 1, ramp(0, TORQUE, RAMP, 100));
    expect(force.score[force.score.length - 1]).toBeCloseTo(TORQUE / FORCE, 5);
    expect(force.flag.includes(true)).toBe(false);
    f.restore(snap);
    const torque = feed(f, 4, ramp(0, FORCE, RAMP, 100));
    expect(torque.score[torque.score.length - 1]).toBeCloseTo(FORCE / TORQUE, 5);
    expect(torque.flag[torque.flag.length - 1]).toBe(true);
  });
});
