/**
 * Linear team analysis on examples/linear-team.yaml: the method's stated facts, the worked
 * example's numbers as a cross-check, closed forms and internal consistency.
 */
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import {
  analyzeAlternating,
  analyzeFixed,
  analyzeNoise,
  analyzeTeam,
  biasOffset,
  buildTeam,
  centralizedTrajectory,
  gapGrowsWithPeriod,
  loadLinearTeam,
  monodromy,
  rmsGap,
  simulateTeam,
  stepMatrix,
  type LinearTeam,
} from '../../src/analysis/linear-team.js';
import { Rng } from '../../src/util/rng.js';

const EXAMPLE = fileURLToPath(new URL('../../examples/linear-team.yaml', import.meta.url));
const team: LinearTeam = loadLinearTeam(EXAMPLE);
const central = centralizedTrajectory(team);

const matVec = (M: number[][], v: number[]): number[] => M.map((r) => r.reduce((s, a, j) => s + a * v[j]!, 0));

describe('centralized reference', () => {
  it('spectral radius of A − BK ≈ 0.8995', () => {
    // worked example in shared/notes/linear-teams.md, reproduced here (tolerance a few %)
    expect(team.centralSpectralRadius).toBeGreaterThan(0.8995 * 0.98);
    expect(team.centralSpectralRadius).toBeLessThan(0.8995 * 1.02);
    // closed form for a symmetric 2×2 closed loop [[p, q], [q, p]]: eigenvalues p ± q
    const [[p, q]] = team.closedLoop as [[number, number]];
    expect(team.centralSpectralRadius).toBeCloseTo(Math.max(Math.abs(p + q), Math.abs(p - q)), 10);
  });
});

describe('fixed roles', () => {
  it('are unstable: spectral radius > 1, for either agent as the speaker', () => {
    // fact stated in the method's presentation: a team that never changes roles can become unstable
    const f1 = analyzeFixed(team, central);
    const f2 = analyzeFixed(buildTeam({ ...team.model, fixedSpeaker: 2 }), central);
    expect(f1.spectral_radius).toBeGreaterThan(1);
    expect(f1.stable).toBe(false);
    expect(f2.spectral_radius).toBeGreaterThan(1);
    // worked example in shared/notes/linear-teams.md, reproduced (≈ 1.0202, a few %)
    expect(Math.abs(f1.spectral_radius - 1.0202) / 1.0202).toBeLessThan(0.02);
    // the trajectory grows: gap far above the initial state
    expect(f1.gap).toBeGreaterThan(10);
  });

  it('spectral radius agrees with the 2×2 closed form of its state block', () => {
    // closed form: with agent 1 always speaking, x1' = A11 x1 + A12 x2 + B2 u2 (u2 = −K2 x, full
    // information), x2' = A21 x1 + A22 x2 + B1 u1 (u1 = −K11 x1); eigenvalues from trace and determinant
    const K = team.K;
    const A = team.model.A;
    const m11 = A[0]![0]! - 0.1 * K[1]![0]!;
    const m12 = A[0]![1]! - 0.1 * K[1]![1]!;
    const m21 = A[1]![0]! - 0.1 * K[0]![0]!;
    const m22 = A[1]![1]!;
    const tr = m11 + m22;
    const det = m11 * m22 - m12 * m21;
    const disc = tr * tr - 4 * det;
    const rho = disc >= 0 ? Math.max(Math.abs((tr + Math.sqrt(disc)) / 2), Math.abs((tr - Math.sqrt(disc)) / 2)) : Math.sqrt(det);
    expect(analyzeFixed(team, central).spectral_radius).toBeCloseTo(rho, 10);
  });
});

describe('alternating roles', () => {
  const results = Array.from({ length: 16 }, (_, i) => analyzeAlternating(team, i + 1, central));

  it('are stable for every period from 1 to 16 steps', () => {
    // fact stated in the method's presentation: switching roles at a set frequency works
    for (const r of results) {
      expect(r.spectral_radius, `period ${r.period_steps}`).toBeLessThan(1);
      expect(r.stable).toBe(true);
    }
  });

  it('come closer to centralized the faster they switch: the gap grows with the period', () => {
    // fact stated in the method's presentation: the faster the switching, the closer to the centralized team
    for (let i = 1; i < results.length; i++) expect(results[i]!.gap).toBeGreaterThan(results[i - 1]!.gap);
    expect(gapGrowsWithPeriod(results)).toBe(true);
    // at one step per slot the gap is small next to the size of the trajectory itself (7 %), at 16 it is not
    const size = rmsGap(central, central.map((x) => x.map(() => 0)));
    expect(results[0]!.gap / size).toBeLessThan(0.1);
    expect(results[15]!.gap / size).toBeGreaterThan(0.5);
  });

  it('reproduce the gaps of the worked example', () => {
    // worked example in shared/notes/linear-teams.md (RMS over k = 0..400, held estimates
    // starting at zero), reproduced here; tolerance 3 %
    const notes: [number, number][] = [
      [1, 0.0094],
      [2, 0.018],
      [4, 0.037],
      [8, 0.077],
      [16, 0.15],
      [32, 0.3],
    ];
    for (const [p, g] of notes) {
      const r = p <= 16 ? results[p - 1]! : analyzeAlternating(team, p, central);
      expect(Math.abs(r.gap - g) / g, `period ${p}: ${r.gap}`).toBeLessThan(0.03);
    }
  });

  it('the monodromy product reproduces the step-by-step simulation (same closed loop, two constructions)', () => {
    // internal consistency: z[2p] = Φ z[0] and z[k+1] = S z[k] agree with simulateTeam
    for (const p of [1, 3, 5]) {
      const traj = simulateTeam(team, { kind: 'alternating', period: p }, 4 * p);
      let z = [...team.model.x0, 0, 0];
      for (let k = 0; k < 4 * p; k++) {
        z = matVec(stepMatrix(team, (Math.floor(k / p) % 2) as 0 | 1), z);
        expect(z[0]).toBeCloseTo(traj[k + 1]![0]!, 12);
        expect(z[1]).toBeCloseTo(traj[k + 1]![1]!, 12);
      }
      const Phi = monodromy(team, { kind: 'alternating', period: p });
      const z2 = matVec(Phi, matVec(Phi, [...team.model.x0, 0, 0]));
      expect(z2[0]).toBeCloseTo(traj[4 * p]![0]!, 12);
      expect(z2[1]).toBeCloseTo(traj[4 * p]![1]!, 12);
    }
  });

  it('spectral radius of the monodromy is the asymptotic growth per cycle', () => {
    // textbook (Gelfand / power iteration): ‖Φᴺ z‖^(1/N) → ρ(Φ) for a generic z
    const p = 3;
    const Phi = monodromy(team, { kind: 'alternating', period: p });
    const rho = analyzeAlternating(team, p, central).spectral_radius;
    let z = [0.3, -1.1, 0.7, 0.2];
    let logGrowth = 0;
    const N = 200;
    for (let i = 0; i < N; i++) {
      z = matVec(Phi, z);
      const nz = Math.hypot(...z);
      logGrowth += Math.log(nz);
      z = z.map((v) => v / nz);
    }
    expect(Math.exp(logGrowth / N)).toBeCloseTo(rho, 2);
  });
});

describe('noise on the observed actions', () => {
  const opts = { std: 0.05, bias: 0.05, runs: 20, seed: 7 };
  const periods = [1, 2, 4];
  const noise = analyzeNoise(team, periods, opts, central);
  const clean = periods.map((p) => analyzeAlternating(team, p, central));

  it('names its seed and runs', () => {
    expect(noise.seed).toBe(7);
    expect(noise.runs).toBe(20);
  });

  it('unbiased noise: the state stays bounded, the mean goes to zero and the gap stays small (seed 7, 20 runs)', () => {
    // fact stated in the method's presentation: with zero-mean Gaussian noise on the observed
    // actions the team still converges to centralized-like behaviour
    noise.alternating.forEach((r, i) => {
      expect(r.unbiased.max_state_norm).toBeLessThan(1.5 * Math.hypot(...team.model.x0));
      expect(r.unbiased.mean_final_state_norm).toBeLessThan(0.02);
      expect(r.unbiased.final_state_norm).toBeLessThan(0.15);
      expect(r.unbiased.gap).toBeLessThan(clean[i]!.gap + 0.1);
    });
  });

  it('a bias leaves an offset: the mean state settles away from zero, at the closed-form offset', () => {
    // fact stated in the method's presentation: bias breaks it
    noise.alternating.forEach((r) => {
      expect(r.biased.mean_final_state_norm).toBeGreaterThan(5 * r.unbiased.mean_final_state_norm);
      expect(r.biased.gap).toBeGreaterThan(2 * r.unbiased.gap - 0.05);
      expect(r.biased.steady_offset).toBeGreaterThan(0.1);
      // closed form (biasOffset: periodic fixed point of the mean dynamics, z* = Φz* + d):
      // the run mean tends to it; 20 runs, seed 7, so allow a few standard errors
      expect(Math.abs(r.biased.mean_final_state_norm - r.biased.steady_offset)).toBeLessThan(0.03);
    });
  });

  it('the bias offset scales linearly with the bias (closed form) and matches a noise-free biased run', () => {
    // closed form: the mean dynamics are linear in the bias
    const a = biasOffset(team, 2, 0.05);
    const b = biasOffset(team, 2, 0.1);
    expect(b[0]).toBeCloseTo(2 * a[0]!, 12);
    expect(b[1]).toBeCloseTo(2 * a[1]!, 12);
    // closed form: with std 0 the biased simulation is the mean trajectory; 400 steps = 100 cycles
    const traj = simulateTeam(team, { kind: 'alternating', period: 2 }, 400, { std: 0, bias: 0.05, rng: new Rng(1) });
    expect(traj[400]![0]).toBeCloseTo(a[0]!, 8);
    expect(traj[400]![1]).toBeCloseTo(a[1]!, 8);
  });

  it('is reproducible from its seed', () => {
    // common practice: seeded generators give identical runs
    const again = analyzeNoise(team, [1], opts, central);
    expect(again.alternating[0]).toEqual(noise.alternating[0]);
  });

  it('without a shared held value, inference errors compound by K_own⁺K_part at each switch', () => {
    // closed form: mismatch e' = (K_s,part / K_s,own) e per role switch; here > 1, so even tiny
    // noise blows up when the listener reconstructs the held value from its own past state
    const factor = Math.abs(team.agents[0].Kpart[0]![0]! / team.agents[0].Kown[0]![0]!);
    expect(factor).toBeGreaterThan(1);
    const shared = simulateTeam(team, { kind: 'alternating', period: 1 }, 400, { std: 1e-9, bias: 0, rng: new Rng(3) }, 'shared');
    const recon = simulateTeam(team, { kind: 'alternating', period: 1 }, 400, { std: 1e-9, bias: 0, rng: new Rng(3) }, 'reconstructed');
    expect(Math.hypot(...shared[400]!)).toBeLessThan(1e-6);
    expect(Math.hypot(...recon[400]!)).toBeGreaterThan(1);
  });
});

describe('analyzeTeam', () => {
  it('runs the expectations of the example file', () => {
    // fact stated in the method's presentation (as written into the example's expect block)
    const r = analyzeTeam(team);
    expect(r.checks.map((c) => c.name).sort()).toEqual(['alternating_stable', 'fixed_stable', 'gap_grows_with_period']);
    expect(r.ok).toBe(true);
    expect(r.alternating.map((a) => a.period_steps)).toEqual([1, 2, 4, 8, 16]);
    expect(r.noise).toBeUndefined();
  });
});
