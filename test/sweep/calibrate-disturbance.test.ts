/**
 * The correction band's slow disturbance from `calibrate` (src/sweep/calibrate.ts).
 *
 * - The method against time-series facts: a first-order autoregression x_k = a x_(k−1) + e_k has
 *   the stationary variance σe² / (1 − a²) and the autocovariance σx² a^lag (Box–Jenkins, any
 *   time-series text; from memory). White noise adds to lag 0 only. A Butterworth low-pass leaves
 *   the long-lag autocovariance of such a slow process at σx² a^lag times
 *   |H|² = 1 / (1 + (ω/ωc)^(2n)) continued to ω = j/τ, here 1 − 1e-8 (the Butterworth magnitude
 *   response; common practice): so through the correction band's filter the fit must still find σx and τ.
 * - calibrate on bags of our own synthetic kinematic cell (invented data; src/sim/demo-bag.ts):
 *   an Ornstein–Uhlenbeck force of known standard deviation on each wrist's x and y, time
 *   constant 0.2 s (src/sim/kinematic-cell.ts), and one bag without it.
 *
 * Intervals at 95 %: of k independent cases a few miss by chance. "At most one of six misses"
 * fails by chance with probability 3.3 % (binomial n = 6, p = 0.05), "at most one of four" 1.4 %.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { register as calibrate } from '../../src/cli/calibrate.js';
import { register as checkConfig } from '../../src/cli/check-config.js';
import { butterworthSos, SosCascade } from '../../src/core/filter/butterworth.js';
import { loadCell } from '../../src/params/config.js';
import { writeDemoBag } from '../../src/sim/demo-bag.js';
import { CALIBRATION_BLOCKS, disturbanceLags, estimateDisturbance, fitExponentialAutocov } from '../../src/sweep/calibrate.js';
import { resetLogging } from '../../src/util/log.js';
import { Rng } from '../../src/util/rng.js';
import { runRegistered } from '../support/run-command.js';

/** Student's t, 97.5 %, 19 degrees of freedom (SciPy stats.t.ppf(0.975, 19) = 2.093). */
const T19 = 2.093;
const FS = 1000;

/** Four independent AR(1) series of n samples (σx, τ), plus white noise, optionally through the demo cell's band filter; each about its mean. */
function ar1Series(seed: number, n: number, sx: number, tau: number, noise: number, filtered: boolean): Float64Array[] {
  const rng = new Rng(seed);
  const a = Math.exp(-1 / (tau * FS));
  const sos = butterworthSos(4, 5, FS);
  const out: Float64Array[] = [];
  for (let s = 0; s < 4; s++) {
    const r = new Float64Array(n);
    const c = new SosCascade(sos, 1);
    const xi = new Float64Array(1), yo = new Float64Array(1);
    let x = sx * rng.normal();
    let m = 0;
    for (let i = 0; i < n; i++) {
      x = a * x + sx * Math.sqrt(1 - a * a) * rng.normal();
      xi[0] = x + noise * rng.normal();
      if (filtered) c.process(xi, yo);
      else yo[0] = xi[0];
      r[i] = yo[0]!;
      m += r[i]!;
    }
    m /= n;
    for (let i = 0; i < n; i++) r[i] = r[i]! - m;
    out.push(r);
  }
  return out;
}

describe('the disturbance fit against the autocovariance of a first-order autoregression', () => {
  it('fits σx² a^lag exactly when given it', () => {
    // Exact autocovariances (Box–Jenkins, from memory): σx² a^lag with a = e^(−1/(τ fs)).
    const lags = Array.from({ length: 11 }, (_, k) => 0.1 + 0.05 * k);
    for (const [sx, tau] of [[1.5, 0.2], [0.3, 1.0], [4, 0.05]] as const) {
      const g = lags.map((l) => sx * sx * Math.exp(-l / tau));
      const f = fitExponentialAutocov(lags, g);
      expect(Math.sqrt(f.variance)).toBeCloseTo(sx, 6);
      expect(f.time_s).toBeCloseTo(tau, 6);
    }
    // Nothing exponential to fit: all ≤ 0.
    expect(fitExponentialAutocov(lags, lags.map(() => -1e-4)).variance).toBe(0);
  });

  const sos = butterworthSos(4, 5, FS);
  for (const filtered of [false, true]) {
    it(`recovers σx = 1.2 and τ = 0.3 s within their intervals from AR(1) plus white noise${filtered ? ' through the 5 Hz 4th-order band filter' : ''}`, () => {
      // Unfiltered: white noise only at lag 0, so lags from 1 sample on are exactly σx² a^lag.
      const lags = filtered ? disturbanceLags(sos, FS) : Array.from({ length: 11 }, (_, k) => 1 + 50 * k);
      let sdMiss = 0, tauMiss = 0;
      for (let seed = 1; seed <= 6; seed++) {
        const d = estimateDisturbance(ar1Series(seed, 100_000, 1.2, 0.3, 0.5, filtered), new Uint8Array(100_000).fill(1), FS, lags, CALIBRATION_BLOCKS, T19, true);
        expect(d.significant).toBe(true);
        expect(Math.abs(d.sd_n - 1.2), `seed ${seed}: ${d.sd_n}`).toBeLessThan(0.12);
        expect(Math.abs(d.time_s - 0.3), `seed ${seed}: ${d.time_s}`).toBeLessThan(0.06);
        if (1.2 < d.sd_ci95[0] || 1.2 > d.sd_ci95[1]) sdMiss++;
        if (0.3 < d.time_ci95[0] || 0.3 > d.time_ci95[1]) tauMiss++;
      }
      expect(sdMiss).toBeLessThanOrEqual(1);
      expect(tauMiss).toBeLessThanOrEqual(1);
    });
  }

  it('finds none in filtered white noise, with an upper bound at the band noise', () => {
    // White noise of SD 0.5 through the band: SD 0.5 √(2 B / fs), B the filter's noise
    // bandwidth, 1.026 fc for a 4th-order Butterworth (common practice): about 0.051.
    const d = estimateDisturbance(ar1Series(7, 100_000, 0, 0.3, 0.5, true), new Uint8Array(100_000).fill(1), FS, disturbanceLags(sos, FS), CALIBRATION_BLOCKS, T19, true);
    expect(d.significant).toBe(false);
    expect(d.sd_n).toBe(0);
    expect(d.sd_ci95[1]).toBeGreaterThan(0.048);
    expect(d.sd_ci95[1]).toBeLessThan(0.056);
    expect(Number.isNaN(d.time_s)).toBe(true);
  });

  it('skips pairs with an unusable sample and rejects series of unequal length', () => {
    const s = ar1Series(8, 20_000, 1, 0.2, 0.2, false);
    const u = new Uint8Array(20_000).fill(1);
    // Poison a stretch and mark it unusable: the estimate must not see it.
    for (const r of s) for (let i = 5000; i < 6000; i++) r[i] = 1e6;
    u.fill(0, 5000, 6000);
    const d = estimateDisturbance(s, u, FS, disturbanceLags(sos, FS), CALIBRATION_BLOCKS, T19, true);
    expect(d.sd_n).toBeGreaterThan(0.7);
    expect(d.sd_n).toBeLessThan(1.3);
    expect(() => estimateDisturbance([new Float64Array(10), new Float64Array(9)], new Uint8Array(10), FS, [1], 2, T19)).toThrow(/every series needs 10 samples/);
  });
});

describe('calibrate on bags of the kinematic demo cell with a known disturbance', () => {
  let dir: string;
  const cell = loadCell('config/demo_cell.yaml');
  const bags: Record<string, string> = {};
  const cases: [string, number, number, number][] = [
    ['d15s1', 1.5, 1, 40], ['d15s2', 1.5, 2, 40], ['d15s3', 1.5, 3, 40], ['d15s4', 1.5, 4, 40],
    ['d08s1', 0.8, 1, 40], ['d0s1', 0, 1, 20],
  ];
  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'antiphon-calib-dist-'));
    for (const [name, d, seed, duration] of cases) {
      bags[name] = join(dir, name);
      await writeDemoBag(bags[name]!, { left: cell.left.config, right: cell.right.config, occupied: [true, false], seed, duration_s: duration, disturbance_n: d });
    }
  }, 300_000);
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  type Est = Record<string, { value: number; ci95: [number, number]; unit: string; from: string }>;
  const run = async (name: string, extra: string[] = []): Promise<Est> => {
    resetLogging();
    const r = await runRegistered(calibrate, 'calibrate', [bags[name]!, '--params', 'config/demo_cell.yaml', '--json', ...extra]);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    return JSON.parse(r.stdout).estimates as Est;
  };

  it('recovers a 1.5 N disturbance and its 0.2 s time within their intervals (at most one of four bags misses)', async () => {
    let sdMiss = 0, tMiss = 0;
    for (const name of ['d15s1', 'd15s2', 'd15s3', 'd15s4']) {
      const e = await run(name);
      const f = e['belief.disturbance_force_n']!, t = e['belief.disturbance_time_s']!;
      expect(f.unit).toBe('N');
      expect(t.unit).toBe('s');
      expect(Math.abs(f.value - 1.5), `${name}: ${f.value} [${f.ci95}]`).toBeLessThan(0.2);
      expect(t.value, `${name}: ${t.value} [${t.ci95}]`).toBeGreaterThan(0.12);
      expect(t.value, `${name}: ${t.value} [${t.ci95}]`).toBeLessThan(0.3);
      if (1.5 < f.ci95[0] || 1.5 > f.ci95[1]) sdMiss++;
      if (0.2 < t.ci95[0] || 0.2 > t.ci95[1]) tMiss++;
    }
    expect(sdMiss).toBeLessThanOrEqual(1);
    expect(tMiss).toBeLessThanOrEqual(1);
  }, 120_000);

  it('recovers 0.8 N', async () => {
    const e = await run('d08s1');
    const f = e['belief.disturbance_force_n']!;
    expect(0.8).toBeGreaterThanOrEqual(f.ci95[0]);
    expect(0.8).toBeLessThanOrEqual(f.ci95[1]);
    expect(e['belief.disturbance_time_s']!.value).toBeGreaterThan(0.1);
  }, 60_000);

  it('finds none in a clean cell: 0, with an upper bound far below 1.5 N and no time', async () => {
    const e = await run('d0s1');
    const f = e['belief.disturbance_force_n']!;
    expect(f.value).toBe(0);
    expect(f.ci95[0]).toBe(0);
    // The residual is the band-filtered sensor noise: 0.2 N white, about 0.02 N in the band.
    expect(f.ci95[1]).toBeLessThan(0.05);
    expect(e['belief.disturbance_time_s']).toBeUndefined();
  }, 60_000);

  it('--out writes both keys with comments (a clean cell only the force, 0), and the file loads with check-config', async () => {
    const base = readFileSync('config/demo_cell.yaml', 'utf8').split('\n');
    for (const [name, keys] of [['d15s1', ['damping_n_s_m', 'disturbance_force_n', 'disturbance_time_s']], ['d0s1', ['damping_n_s_m', 'disturbance_force_n']]] as const) {
      const outFile = join(dir, `${name}.yaml`);
      const e = await run(name, ['--out', outFile]);
      const out = readFileSync(outFile, 'utf8').split('\n');
      expect(out.length).toBe(base.length);
      const changed = out.filter((l, k) => l !== base[k]);
      expect(changed.map((l) => l.trim().split(':')[0]).sort()).toEqual([...keys].sort());
      for (const l of changed) expect(l).toMatch(/^\s+[a-z_]+: [0-9.]+ {2}# calibrated from .*95 % interval/);
      resetLogging();
      expect((await runRegistered(checkConfig, 'check-config', [outFile])).code).toBe(0);
      const cal = loadCell(outFile);
      for (const arm of [cal.left.config, cal.right.config]) {
        expect(arm.belief.disturbance_force_n).toBeCloseTo(e['belief.disturbance_force_n']!.value, 2);
        expect(arm.belief.disturbance_time_s).toBeCloseTo(e['belief.disturbance_time_s']?.value ?? 0.2, 2);
      }
    }
  }, 120_000);
});
