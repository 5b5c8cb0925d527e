/** Reproducibility (common practice: a seeded simulation names its seed and repeats bit for bit). */
import { beforeAll, describe, expect, it } from 'vitest';
import type { MainModule } from 'mujoco-js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';
import { runEpisodeWith } from '../../src/sim/episode.js';
import { loadMujoco } from '../../src/sim/mujoco.js';

let mj: MainModule;
let left: ArmConfig;
let right: ArmConfig;
beforeAll(async () => {
  mj = await loadMujoco();
  const cell = loadCell('config/demo_cell.yaml');
  left = cell.left.config;
  right = cell.right.config;
});

describe('determinism', () => {
  it('the same seed gives the same summary and identical recorded arrays', () => {
    const run = () => runEpisodeWith(mj, { left, right, strategy: { name: 'alternating', k: 200 }, seed: 11, duration_s: 3 });
    const a = run();
    const b = run();
    expect(JSON.stringify(b.summary)).toBe(JSON.stringify(a.summary));
    expect(b.xml).toBe(a.xml);
    const ca = a.record!.channels();
    const cb = b.record!.channels();
    expect(cb.map((c) => c.name)).toEqual(ca.map((c) => c.name));
    for (let k = 0; k < ca.length; k++) {
      const x = ca[k]!.data;
      const y = cb[k]!.data;
      expect(y.length, ca[k]!.name).toBe(x.length);
      expect(Buffer.from(y.buffer, y.byteOffset, y.byteLength).equals(Buffer.from(x.buffer, x.byteOffset, x.byteLength)), ca[k]!.name).toBe(true);
    }
    // Nothing is decimated: one row per wrench sample.
    expect(a.record!.samples).toBe(a.summary.samples);
    expect(a.record!.t[1]! - a.record!.t[0]!).toBeCloseTo(1 / left.wrench_filter.sample_rate_hz, 12);
  });

  it('the six-joint arm repeats bit for bit too', () => {
    const run = () => runEpisodeWith(mj, { left, right, strategy: { name: 'alternating', k: 500 }, seed: 7, duration_s: 2, options: { arm_model: 'six_joint' } });
    const a = run();
    const b = run();
    expect(JSON.stringify(b.summary)).toBe(JSON.stringify(a.summary));
    const x = a.record!.left.jointVelocity;
    const y = b.record!.left.jointVelocity;
    expect(a.record!.jointCount).toBe(6);
    expect(x.length).toBe(6 * a.record!.samples);
    expect(Buffer.from(y.buffer, y.byteOffset, y.byteLength).equals(Buffer.from(x.buffer, x.byteOffset, x.byteLength))).toBe(true);
  });

  it('recording does not change the outcome', () => {
    const on = runEpisodeWith(mj, { left, right, strategy: { name: 'fixed', k: null }, seed: 4, duration_s: 2 });
    const off = runEpisodeWith(mj, { left, right, strategy: { name: 'fixed', k: null }, seed: 4, duration_s: 2, options: { record: false } });
    expect(off.record).toBeNull();
    expect(JSON.stringify(off.summary)).toBe(JSON.stringify(on.summary));
  });

  it('another seed draws another world', () => {
    const a = runEpisodeWith(mj, { left, right, strategy: { name: 'centralized', k: null }, seed: 1, duration_s: 0.2, options: { record: false } });
    const b = runEpisodeWith(mj, { left, right, strategy: { name: 'centralized', k: null }, seed: 2, duration_s: 0.2, options: { record: false } });
    expect(b.summary.world.start_m).not.toEqual(a.summary.world.start_m);
  });
});

describe('sampling', () => {
  it('samples the wrist sensors at the configured rate while the physics runs at 1 kHz (common practice: a 500 Hz sensor)', () => {
    const slow = (c: ArmConfig): ArmConfig => ({ ...c, wrench_filter: { ...c.wrench_filter, sample_rate_hz: 500 } });
    const r = runEpisodeWith(mj, { left: slow(left), right: slow(right), strategy: { name: 'alternating', k: 100 }, seed: 3, duration_s: 1.001 });
    const rec = r.record!;
    expect(rec.sample_rate_hz).toBe(500);
    expect(rec.samples).toBe(501);
    expect(rec.t[1]! - rec.t[0]!).toBeCloseTo(0.002, 12);
    expect(rec.left.tared[rec.samples - 1]).toBe(1);
  });
});
