/**
 * Physics of the simulated cell, checked against handbook mechanics: statics of a held beam,
 * a pure squeeze through a rigid body, and dissipation without commands.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import type { MainModule } from 'mujoco-js';
import { STANDARD_GRAVITY } from '../../src/core/filter/index.js';
import { buildArmConfig, type ArmConfig } from '../../src/params/config.js';
import { loadParamsFile } from '../../src/params/load.js';
import { SimCell } from '../../src/sim/cell.js';
import { runEpisodeWith } from '../../src/sim/episode.js';
import { loadMujoco } from '../../src/sim/mujoco.js';
import { simOptions } from '../../src/sim/options.js';
import { sampleWorld, type World } from '../../src/sim/world.js';
import { ARM_MODELS, type ArmModel } from '../../src/sim/options.js';

let mj: MainModule;
let left: ArmConfig;
let right: ArmConfig;
beforeAll(async () => {
  mj = await loadMujoco();
  const file = loadParamsFile('config/demo_cell.yaml');
  left = buildArmConfig(file, 'left').config;
  right = buildArmConfig(file, 'right').config;
});

/** A world with no obstacle, no jitter, and sensors without bias or drift. */
function quietWorld(seed = 5): World {
  const o = simOptions({ start_jitter_m: 0, goal_jitter_m: 0, occupancy_probability: 0, sensor: { bias_force_n: 0, bias_torque_nm: 0, drift_force_n_s: 0, drift_torque_nm_s: 0 } });
  return sampleWorld(left.task, o, seed);
}

const quietSensors = { bias_force_n: 0, bias_torque_nm: 0, drift_force_n_s: 0, drift_torque_nm_s: 0 };

/** Cell-frame force of sample i from a record's sensor-frame wrench and tool pose. */
function cellForce(wrench: Float64Array, pose: Float64Array, i: number): [number, number, number] {
  const f = [wrench[6 * i]!, wrench[6 * i + 1]!, wrench[6 * i + 2]!];
  const [qx, qy, qz, qw] = [pose[7 * i + 3]!, pose[7 * i + 4]!, pose[7 * i + 5]!, pose[7 * i + 6]!];
  const R = [
    [1 - 2 * (qy * qy + qz * qz), 2 * (qx * qy - qz * qw), 2 * (qx * qz + qy * qw)],
    [2 * (qx * qy + qz * qw), 1 - 2 * (qx * qx + qz * qz), 2 * (qy * qz - qx * qw)],
    [2 * (qx * qz - qy * qw), 2 * (qy * qz + qx * qw), 1 - 2 * (qx * qx + qy * qy)],
  ];
  return [0, 1, 2].map((r) => R[r]![0]! * f[0]! + R[r]![1]! * f[1]! + R[r]![2]! * f[2]!) as [number, number, number];
}

describe.each(ARM_MODELS.map((m) => [m]))('%s', (arm_model: ArmModel) => {
describe('beam held still (handbook mechanics: static equilibrium)', () => {
  it('the vertical wrist forces sum to the weight carried below the sensors within sensor noise', () => {
    const noise = 0.2;
    const r = runEpisodeWith(mj, {
      left, right, strategy: { name: 'centralized', k: null }, seed: 5, world: quietWorld(), duration_s: 1.0,
      options: { arm_model, sensor: { ...quietSensors, noise_force_n: noise }, settle_s: 10 },
    });
    const rec = r.record!;
    const o = simOptions();
    // The sensors carry the beam and the two grippers below them; the beam pushes the arms down.
    const weight = (left.task.object.mass_kg + 2 * o.tool_mass_kg) * STANDARD_GRAVITY;
    let sum = 0;
    let n = 0;
    for (let i = 200; i < rec.samples; i++) {
      const fl = cellForce(rec.left.wrench, rec.left.toolPose, i);
      const fr = cellForce(rec.right.wrench, rec.right.toolPose, i);
      const fz = fl[2] + fr[2];
      // Every sample within 5 sigma of the sum of two independent noisy axes.
      expect(Math.abs(fz + weight)).toBeLessThan(5 * noise * Math.SQRT2);
      sum += fz;
      n++;
    }
    // The mean within 5 standard errors.
    expect(Math.abs(sum / n + weight)).toBeLessThan((5 * noise * Math.SQRT2) / Math.sqrt(n));
    // The noise-free sensors agree to well below the noise (the beam is at rest).
    const last = rec.samples - 1;
    const tz = rec.left.forceCell[3 * last + 2]! + rec.right.forceCell[3 * last + 2]!;
    expect(Math.abs(tz + weight)).toBeLessThan(1e-3);
  });

  it('each arm carries half the beam when the grasps are symmetric (moment balance)', () => {
    const r = runEpisodeWith(mj, {
      left, right, strategy: { name: 'centralized', k: null }, seed: 5, world: quietWorld(), duration_s: 0.5,
      options: { arm_model, sensor: { ...quietSensors, noise_force_n: 0, noise_torque_nm: 0 }, settle_s: 10 },
    });
    const rec = r.record!;
    const last = rec.samples - 1;
    const o = simOptions();
    const half = (left.task.object.mass_kg / 2 + o.tool_mass_kg) * STANDARD_GRAVITY;
    expect(rec.left.forceCell[3 * last + 2]!).toBeCloseTo(-half, 3);
    expect(rec.right.forceCell[3 * last + 2]!).toBeCloseTo(-half, 3);
    // Rigid-body statics: two vertical supports, no moment needed at either grasp.
    for (const a of [rec.left, rec.right]) for (let k = 3; k < 6; k++) expect(Math.abs(a.wrenchTrue[6 * last + k]!)).toBeLessThan(1e-3);
  });
});

describe('pure squeeze (handbook mechanics: internal force of a rigid body between two dampers)', () => {
  it('gives equal and opposite forces along the beam, of size c * relative speed with c = D / 2', () => {
    const v = 0.05;
    const D = simOptions().admittance_damping_n_s_m;
    const r = runEpisodeWith(mj, {
      left, right, strategy: { name: 'centralized', k: null }, seed: 5, world: quietWorld(), duration_s: 2.0,
      options: { arm_model, sensor: { ...quietSensors, noise_force_n: 0, noise_torque_nm: 0 }, settle_s: 0 },
      // Left sits at +y, right at -y: commanding them toward each other squeezes the beam.
      commandOverride: (t, side, out) => {
        out[0] = 0;
        out[1] = t < 0.6 ? 0 : side === 'left' ? -v : v;
      },
    });
    const rec = r.record!;
    const i = rec.samples - 1; // 1.4 s into the squeeze: many admittance time constants M / D
    const fl = [rec.left.forceCell[3 * i]!, rec.left.forceCell[3 * i + 1]!];
    const fr = [rec.right.forceCell[3 * i]!, rec.right.forceCell[3 * i + 1]!];
    // Equal and opposite along the beam (y): Newton's third law through a beam at rest.
    expect(fl[1]! + fr[1]!).toBeCloseTo(0, 3);
    expect(fl[1]!).toBeGreaterThan(0); // the beam pushes the left arm outward (+y)
    // Quasi-static balance: D (u_l - v) = -D (u_r - v) with a common v = 0, so each arm feels D * v_rel / 2.
    const c = D / 2;
    expect(fl[1]!).toBeCloseTo(c * 2 * v, 2);
    expect(rec.internalForce[i]!).toBeCloseTo(c * 2 * v, 2);
    // No component across the beam and the beam does not move.
    expect(Math.abs(fl[0]!)).toBeLessThan(1e-3);
    expect(Math.hypot(rec.beamVelocity[6 * i]!, rec.beamVelocity[6 * i + 1]!)).toBeLessThan(1e-4);
  });

  it('a partner moving alone gives f = c (v_partner - v_own) on each arm (the coupling model of the step)', () => {
    const v = 0.08;
    const D = simOptions().admittance_damping_n_s_m;
    const r = runEpisodeWith(mj, {
      left, right, strategy: { name: 'centralized', k: null }, seed: 5, world: quietWorld(), duration_s: 2.0,
      options: { arm_model, sensor: { ...quietSensors, noise_force_n: 0, noise_torque_nm: 0 }, settle_s: 0 },
      commandOverride: (_t, side, out) => {
        out[0] = side === 'left' ? v : 0;
        out[1] = 0;
      },
    });
    const rec = r.record!;
    const i = rec.samples - 1;
    const c = D / 2;
    expect(rec.left.forceCell[3 * i]!).toBeCloseTo(c * (0 - v), 2);
    expect(rec.right.forceCell[3 * i]!).toBeCloseTo(c * (v - 0), 2);
  });
});
});

describe('dissipation (handbook mechanics: a passive system with dampers loses energy)', () => {
  it('tool point: with zero commands the mechanical energy never grows', () => {
    const o = simOptions({ energy: true, start_jitter_m: 0, goal_jitter_m: 0, occupancy_probability: 0 });
    const cell = new SimCell(mj, left.task, quietWorld(), o);
    try {
      // Set the team moving (and squeezing), then let go.
      let prev = Number.POSITIVE_INFINITY;
      let worst = 0;
      let first = 0;
      for (let k = 0; k < 1500; k++) {
        cell.step1();
        const { potential, kinetic } = cell.energy();
        const e = potential + kinetic;
        if (k < 300) {
          cell.setCommand('left', 0.12, -0.03);
          cell.setCommand('right', 0.1, 0.03);
        } else {
          cell.setCommand('left', 0, 0);
          cell.setCommand('right', 0, 0);
          if (k === 301) first = e;
          if (k > 301) worst = Math.max(worst, e - prev);
          prev = e;
        }
        cell.step2();
      }
      const { potential, kinetic } = cell.energy();
      expect(worst).toBeLessThanOrEqual(1e-9);
      expect(potential + kinetic).toBeLessThan(first);
      expect(kinetic).toBeLessThan(1e-6);
    } finally {
      cell.dispose();
    }
  });
});
