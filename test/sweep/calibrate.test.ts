/**
 * `antiphon calibrate` on a bag of our own synthetic kinematic cell (invented data) whose
 * values are known by construction (src/sim/kinematic-cell.ts): white sensor noise 0.2 N per
 * force axis and 0.02 N*m per torque axis, no sensor bias but the beam's weight share on z
 * (−m g / 2 with m = 2.4 kg, g = 9.80665 m/s², the standard gravity of ISO 80000-3), and tool-
 * point admittances of damping D, which give the coupling c = D / 2. The cell here runs with
 * D = 120 N*s/m (c = 60) while the parameters say 40, so the estimate cannot come from them; and
 * a correction-band disturbance of 0.5 N (Ornstein–Uhlenbeck, 0.2 s) on each wrist's x and y.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { register as calibrate } from '../../src/cli/calibrate.js';
import { register as checkConfig } from '../../src/cli/check-config.js';
import { loadCell } from '../../src/params/config.js';
import { DEMO_EPOCH_NS } from '../../src/sim/demo-bag.js';
import { InputBagWriter } from '../../src/sim/input-bag.js';
import { runKinematicCell } from '../../src/sim/kinematic-cell.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered } from '../support/run-command.js';

let dir: string;
let bag: string;
const D = 120;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-calibrate-'));
  bag = join(dir, 'cell');
  const cell = loadCell('config/demo_cell.yaml');
  const w = await InputBagWriter.create(bag, cell.left.config.task.zones.map((z) => z.name));
  const t0s = Number(DEMO_EPOCH_NS) / 1e9;
  const ns = (t: number) => DEMO_EPOCH_NS + BigInt(Math.round((t - t0s) * 1000)) * 1_000_000n;
  const pose = Float64Array.of(0, 0, 0, 0, 0, 0, 1);
  const names = { left: ['l_x', 'l_y', 'l_z'], right: ['r_x', 'r_y', 'r_z'] };
  runKinematicCell(cell.left.config, cell.right.config, [true, true], {
    seed: 11, duration_s: 20, t0_s: t0s, admittance_n_s_m: D, stopAtGoal: false, disturbance_n: 0.5,
    recorder: {
      wrench: (arm, t, v) => w.wrench(arm, ns(t), v),
      toolPose: (arm, t, x, y, z) => { pose[0] = x; pose[1] = y; pose[2] = z; w.toolPose(arm, ns(t), pose); },
      jointState: (arm, t, p, v) => w.jointState(arm, ns(t), names[arm], p, v),
      zoneView: (arm, t, s) => w.zoneView(arm, ns(t), s),
    },
  });
  await w.close();
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('calibrate on a simulated bag with known values', () => {
  let est: Record<string, { value: number; ci95: [number, number]; unit: string; from: string }>;
  it('prints every estimate as JSON, with units and sources', async () => {
    resetLogging();
    const r = await runRegistered(calibrate, 'calibrate', [bag, '--params', 'config/demo_cell.yaml', '--json', '--out', join(dir, 'calibrated.yaml')]);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    est = JSON.parse(r.stdout).estimates;
    for (const e of Object.values(est)) {
      expect(e.ci95[0]).toBeLessThanOrEqual(e.value);
      expect(e.ci95[1]).toBeGreaterThanOrEqual(e.value);
      expect(e.from.length).toBeGreaterThan(10);
    }
  }, 120_000);

  const inside = (key: string, truth: number) => {
    const e = est[key]!;
    expect(e, key).toBeDefined();
    expect(truth, `${key}: ${e.value} [${e.ci95}]`).toBeGreaterThanOrEqual(e.ci95[0]);
    expect(truth, `${key}: ${e.value} [${e.ci95}]`).toBeLessThanOrEqual(e.ci95[1]);
  };

  // 24 sensor intervals at 95 %: about 1.2 miss their truth by chance. At most 3 may miss
  // (binomial, n = 24, p = 0.05: P(more than 3) = 3 %), and none by more than twice its half-width.
  it('recovers the noise SD and the bias of every axis of both sensors within their intervals', () => {
    const w = (-2.4 * 9.80665) / 2;
    const truths: [string, number][] = [];
    for (const arm of ['left', 'right']) {
      for (const [a, sd] of [['fx', 0.2], ['fy', 0.2], ['fz', 0.2], ['tx', 0.02], ['ty', 0.02], ['tz', 0.02]] as const) truths.push([`sensor.${arm}.noise_sd.${a}`, sd]);
      for (const [a, b] of [['fx', 0], ['fy', 0], ['fz', w], ['tx', 0], ['ty', 0], ['tz', 0]] as const) truths.push([`sensor.${arm}.bias.${a}`, b]);
    }
    let misses = 0;
    for (const [key, truth] of truths) {
      const e = est[key]!;
      expect(e, key).toBeDefined();
      const half = (e.ci95[1] - e.ci95[0]) / 2;
      if (truth < e.ci95[0] || truth > e.ci95[1]) misses++;
      expect(Math.abs(truth - e.value), `${key}: ${e.value} [${e.ci95}]`).toBeLessThanOrEqual(2 * half);
    }
    expect(misses).toBeLessThanOrEqual(3);
  });

  it('recovers the coupling c = D/2 of tool-point arms within its interval', () => {
    inside('coupling.damping_n_s_m', D / 2);
    expect(est['coupling.damping_n_s_m']!.ci95[1] - est['coupling.damping_n_s_m']!.ci95[0]).toBeLessThan(D / 4);
  });

  it('recovers the 0.5 N correction-band disturbance within its interval', () => {
    inside('belief.disturbance_force_n', 0.5);
    expect(est['belief.disturbance_time_s']!.value).toBeGreaterThan(0.1);
  });

  it('--out changes only coupling.damping_n_s_m and the two belief.disturbance keys, with comments, and loads with check-config', async () => {
    const base = readFileSync('config/demo_cell.yaml', 'utf8').split('\n');
    const out = readFileSync(join(dir, 'calibrated.yaml'), 'utf8').split('\n');
    expect(out.length).toBe(base.length);
    const changed = out.filter((l, k) => l !== base[k]);
    expect(changed).toHaveLength(3);
    // In the file's order: belief before coupling.
    expect(changed[0]).toMatch(/^\s+disturbance_force_n: [0-9.]+ {2}# calibrated from .*95 % interval/);
    expect(changed[1]).toMatch(/^\s+disturbance_time_s: [0-9.]+ {2}# calibrated from .*95 % interval/);
    expect(changed[2]).toMatch(/^\s+damping_n_s_m: [0-9.]+ {2}# calibrated from .*95 % interval/);
    resetLogging();
    expect((await runRegistered(checkConfig, 'check-config', [join(dir, 'calibrated.yaml')])).code).toBe(0);
  });
});
