/**
 * Linear team analysis: two decentralized controllers share x[k+1] = A x + B1 u1 + B2 u2;
 * agent i observes only the states in its index list (the two lists partition the state).
 * The centralized reference is the LQR law u = −K x with K from the DARE on (A, [B1 B2], Q, R).
 *
 * Roles in one step (speaker s, listener l):
 *  - the speaker acts on what it observes plus common knowledge:
 *      u_s = −K_s,own x_s − K_s,part h_s,
 *    with h_s the partner's state as the speaker inferred it in its last listening slot, held
 *    since (zero before it has ever listened — both agents know that too);
 *  - the listener knows the speaker's policy and the value h_s (it is the listener's own past
 *    state, inferred exactly when there is no noise), so it inverts the speaker's action:
 *      x̂_s = −K_s,own⁺ (ũ_s + K_s,part h_s),
 *    where ũ_s is the action as the listener sees it (plus noise, if any) and K⁺ the left
 *    pseudo-inverse (the speaker's gain on its own block must be full column rank). With noise,
 *    h_s is taken as common knowledge by default; the alternative, where the listener uses its
 *    own copy c_l (its true state when the partner last inferred it), is `CommonKnowledge`
 *    'reconstructed' — there inference errors compound from slot to slot (see simulateTeam);
 *  - the listener then acts with the full centralized row on (x̂_s, x_l): u_l = −K_l [x̂_s; x_l],
 *    and stores h_l = x̂_s (updated every listening step, so after the slot it holds the value
 *    inferred in the slot's last step); the speaker stores c_s = x_s, its copy of that value.
 *  Both actions are applied in the same step.
 *
 * Without noise c_l = h_s, so the closed loop is linear in the augmented state
 *   z = [x; h1; h2]   (h1: agent 1's held estimate of agent 2's block; h2: agent 2's of agent 1's).
 *
 * Schedules: fixed (one agent always speaks; it never listens, so its h stays zero and it acts on
 * its own observation only) or alternating (agent 1 speaks for `period` steps, then agent 2 for
 * `period` steps, and so on).
 *
 * Monodromy: for alternating roles with period p the closed loop is 2p-periodic, so the
 * one-period (monodromy) matrix is the product of the 2p step matrices of a full cycle,
 * Φ = S₂ᵖ S₁ᵖ (agent 1 speaks first). Only after a full cycle has every agent spoken and listened
 * once and the system returns to the same phase; the p-step product alone is not a period of the
 * system. The team is stable iff ρ(Φ) < 1 (Floquet). Because ρ(Φ) shrinks with the cycle length,
 * we also give the per-step rate ρ(Φ)^(1/2p), comparable to the centralized ρ(A − BK). For fixed
 * roles the system is time-invariant and Φ is the one-step matrix.
 *
 * Gap: RMS over k = 0..steps of ‖x_team[k] − x_central[k]‖ from the same x0 (steps + 1 samples).
 */
import { closest } from 'fastest-levenshtein';
import { LineCounter, isMap, isScalar, isSeq, type Node } from 'yaml';
import { InputError, type Place, type Problem } from '../util/errors.js';
import { INPUT_LIMITS, readInputText } from '../util/read-input.js';
import { parseYamlDocument } from '../util/yaml.js';
import { Rng } from '../util/rng.js';
import { DareError, rank, solve, solveDare, spectralRadius, type Mat } from './dare.js';
import * as math from 'mathjs';

export const DEFAULT_PERIODS: readonly number[] = [1, 2, 4, 8, 16];
export const MAX_PERIOD = 100_000;
export const MAX_STEPS = 1_000_000;
/**
 * Documented size limits of `analyze` (README "Input limits"): states of the model (the
 * augmented closed loop has up to 2n, so eigenvalues of 64×64 matrices), noisy runs per
 * period, and the total of simulated steps of one analysis:
 * steps × (1 + periods × (1 + 2 × runs with noise)).
 */
export const MAX_STATES = 32;
export const MAX_RUNS = 1000;
export const MAX_SIMULATED_STEPS = 20_000_000;

/** Steps one analysis simulates: the fixed schedule, each period, and with noise 2 × runs per period. */
export function simulatedSteps(steps: number, periods: number, runs?: number): number {
  return steps * (1 + periods * (1 + (runs !== undefined ? 2 * runs : 0)));
}

/** What the model file says. Index lists are 0-based. */
export interface LinearTeamModel {
  readonly A: Mat;
  readonly B1: Mat;
  readonly B2: Mat;
  readonly Q: Mat;
  readonly R: Mat;
  /** States observed by agent 1 and agent 2 (0-based, a partition of 0..n−1). */
  readonly observes: readonly [readonly number[], readonly number[]];
  readonly x0: readonly number[];
  readonly steps: number;
  readonly periods?: readonly number[];
  /** Which agent always speaks under fixed roles (default 1). */
  readonly fixedSpeaker?: 1 | 2;
  readonly expect?: TeamExpectations;
}

/** Optional expectations in the model file; a failed one makes `analyze` exit 1. */
export interface TeamExpectations {
  readonly fixed_stable?: boolean;
  readonly alternating_stable?: boolean;
  readonly gap_grows_with_period?: boolean;
}

/** One agent's blocks of the centralized gain. */
export interface AgentBlocks {
  /** Observed state indices. */
  readonly obs: readonly number[];
  /** Its input indices within u = [u1; u2]. */
  readonly inputs: readonly number[];
  /** Its actuation matrix (n × m_i). */
  readonly Bi: Mat;
  /** Its rows of K (m_i × n). */
  readonly Krows: Mat;
  /** Its rows of K on its own observed columns (m_i × n_i). */
  readonly Kown: Mat;
  /** Its rows of K on the partner's observed columns (m_i × n_j). */
  readonly Kpart: Mat;
  /** Left pseudo-inverse of Kown (n_i × m_i): what a listener uses to invert the action. */
  readonly KownInv: Mat;
}

/** A model with its centralized solution: what the analyses run on. */
export interface LinearTeam {
  readonly model: LinearTeamModel;
  readonly n: number;
  /** B = [B1 B2]. */
  readonly B: Mat;
  readonly P: Mat;
  readonly K: Mat;
  /** A − BK. */
  readonly closedLoop: Mat;
  readonly centralSpectralRadius: number;
  readonly agents: readonly [AgentBlocks, AgentBlocks];
}

export type Schedule = { readonly kind: 'fixed'; readonly speaker: 0 | 1 } | { readonly kind: 'alternating'; readonly period: number };

/** The speaking agent (0 or 1) at step k. */
export function speakerAt(schedule: Schedule, k: number): 0 | 1 {
  if (schedule.kind === 'fixed') return schedule.speaker;
  return (Math.floor(k / schedule.period) % 2) as 0 | 1;
}

// ---------------------------------------------------------------------------------------------
// Small dense helpers (plain arrays, used in the simulation loops)

function zeros(r: number, c: number): Mat {
  return Array.from({ length: r }, () => new Array<number>(c).fill(0));
}

function matVec(M: Mat, v: readonly number[]): number[] {
  return M.map((row) => {
    let s = 0;
    for (let j = 0; j < row.length; j++) s += row[j]! * v[j]!;
    return s;
  });
}

function pick(v: readonly number[], idx: readonly number[]): number[] {
  return idx.map((i) => v[i]!);
}

function cols(M: Mat, idx: readonly number[]): Mat {
  return M.map((row) => idx.map((j) => row[j]!));
}

function norm(v: readonly number[]): number {
  let s = 0;
  for (const x of v) s += x * x;
  return Math.sqrt(s);
}

function toArr(m: unknown): Mat {
  const v = math.isMatrix(m) ? (m.toArray() as number[][]) : (m as number[][]);
  return v.map((row) => row.map(Number));
}

// ---------------------------------------------------------------------------------------------
// Building the team

/** Where a model key lives, for error messages; the loader passes a YAML-aware one. */
export type Locator = (path: readonly (string | number)[]) => Place;

const plainLocator: Locator = (path) => ({ key: keyName(path) });

function keyName(path: readonly (string | number)[]): string {
  let s = '';
  for (const p of path) s += typeof p === 'number' ? `[${p}]` : s === '' ? p : `.${p}`;
  return s;
}

/**
 * Solve the centralized problem and cut the gain into the agents' blocks. Throws InputError when
 * the DARE has no stabilizing solution or a speaker's action cannot be inverted by its listener
 * (its gain on its own observed block is not full column rank).
 */
export function buildTeam(model: LinearTeamModel, locate: Locator = plainLocator): LinearTeam {
  const n = model.A.length;
  const m1 = model.B1[0]?.length ?? 0;
  const m2 = model.B2[0]?.length ?? 0;
  const B: Mat = model.A.map((_, i) => [...model.B1[i]!, ...model.B2[i]!]);
  let sol;
  try {
    sol = solveDare(model.A, B, model.Q, model.R);
  } catch (err) {
    if (err instanceof DareError) {
      const key = err.code === 'dare.bad_weights' ? (err.message.startsWith('R') ? 'R' : 'Q') : err.code === 'dare.not_stabilizable' ? 'B1' : 'A';
      throw new InputError({ code: `model.${err.code.slice(5)}`, message: err.message, where: locate([key]), hint: err.hint });
    }
    throw err;
  }
  const K = sol.K;
  const inputs: [number[], number[]] = [
    Array.from({ length: m1 }, (_, i) => i),
    Array.from({ length: m2 }, (_, i) => m1 + i),
  ];
  const problems: Problem[] = [];
  const agents = ([0, 1] as const).map((i) => {
    const obs = model.observes[i];
    const part = model.observes[1 - i]!;
    const Krows = inputs[i].map((r) => K[r]!.slice());
    const Kown = cols(Krows, obs);
    const Kpart = cols(Krows, part);
    const r = rank(Kown, 1e-9);
    let KownInv: Mat = zeros(obs.length, inputs[i].length);
    if (r < obs.length) {
      problems.push({
        code: 'model.singular_speaker',
        message:
          `agent ${i + 1} as speaker: its gain on its observed states [${obs.join(', ')}] has rank ${r} < ${obs.length}, ` +
          `so the listener cannot invert its action to recover them`,
        where: locate(['observes', `agent${i + 1}`]),
        hint:
          `a speaker needs at least as many inputs as states it observes (B${i + 1} has ${inputs[i].length}) ` +
          `and a full-column-rank gain on them; give B${i + 1} more input columns or move states to the partner's list`,
      });
    } else {
      const Kt = math.transpose(Kown);
      KownInv = solve(toArr(math.multiply(Kt, Kown) as Mat), toArr(Kt as unknown as Mat));
    }
    return { obs: obs.slice(), inputs: inputs[i], Bi: i === 0 ? model.B1 : model.B2, Krows, Kown, Kpart, KownInv } satisfies AgentBlocks;
  }) as unknown as [AgentBlocks, AgentBlocks];
  if (problems.length > 0) throw new InputError(problems);
  const BK = toArr(math.multiply(B, K));
  const closedLoop = model.A.map((row, i) => row.map((a, j) => a - BK[i]![j]!));
  return { model, n, B, P: sol.P, K, closedLoop, centralSpectralRadius: sol.closedLoopSpectralRadius, agents };
}

// ---------------------------------------------------------------------------------------------
// The decentralized closed loop as linear maps of the augmented state z = [x; h1; h2]

/** Offsets of h1 (agent 1's estimate of agent 2's block) and h2 in z; total size. */
export function augmentedLayout(team: LinearTeam): { h: [number, number]; size: number } {
  const n1 = team.agents[0].obs.length;
  const n2 = team.agents[1].obs.length;
  return { h: [team.n, team.n + n2], size: team.n + n2 + n1 };
}

/** The one-step map z → z' with agent `s` (0 or 1) speaking, noise-free. */
export function stepMatrix(team: LinearTeam, s: 0 | 1): Mat {
  const l = (1 - s) as 0 | 1;
  const { h, size } = augmentedLayout(team);
  const n = team.n;
  const sp = team.agents[s];
  const li = team.agents[l];
  // u_s = F z, u_l = G z
  const F = zeros(sp.inputs.length, size);
  sp.obs.forEach((c, j) => sp.Kown.forEach((row, r) => (F[r]![c] = -row[j]!)));
  li.obs.forEach((_, j) => sp.Kpart.forEach((row, r) => (F[r]![h[s] + j] = -row[j]!)));
  const G = zeros(li.inputs.length, size);
  li.Krows.forEach((row, r) => row.forEach((k, c) => (G[r]![c] = -k)));
  const S = zeros(size, size);
  for (let i = 0; i < n; i++) {
    for (let c = 0; c < n; c++) S[i]![c] = team.model.A[i]![c]!;
    for (let c = 0; c < size; c++) {
      let v = 0;
      for (let r = 0; r < sp.inputs.length; r++) v += sp.Bi[i]![r]! * F[r]![c]!;
      for (let r = 0; r < li.inputs.length; r++) v += li.Bi[i]![r]! * G[r]![c]!;
      S[i]![c]! += v;
    }
  }
  // listener stores what it inferred: h_l ← x_s (exact without noise)
  sp.obs.forEach((c, j) => (S[h[l] + j]![c] = 1));
  // speaker's held estimate stays
  li.obs.forEach((_, j) => (S[h[s] + j]![h[s] + j] = 1));
  return S;
}

/**
 * How noise ε on the observed action enters one step with agent `s` speaking ('shared' common
 * knowledge): the listener's inference becomes x̂_s = x_s − K_s,own⁺ ε, so
 *   x' gains B_l (−K_l,s)(−K_s,own⁺ ε) and h_l' gains −K_s,own⁺ ε;   z' = S_s z + E_s ε.
 */
export function noiseInputMatrix(team: LinearTeam, s: 0 | 1): Mat {
  const l = (1 - s) as 0 | 1;
  const { h, size } = augmentedLayout(team);
  const sp = team.agents[s];
  const li = team.agents[l];
  const m = sp.inputs.length;
  const E = zeros(size, m);
  const Kls = cols(li.Krows, sp.obs); // m_l × n_s
  const KlsInv = toArr(math.multiply(Kls, sp.KownInv)); // m_l × m_s
  const BlKK = toArr(math.multiply(li.Bi, KlsInv)); // n × m_s
  for (let i = 0; i < team.n; i++) for (let r = 0; r < m; r++) E[i]![r] = BlKK[i]![r]!;
  sp.obs.forEach((_, j) => {
    for (let r = 0; r < m; r++) E[h[l] + j]![r] = -sp.KownInv[j]![r]!;
  });
  return E;
}

/**
 * Closed form of the offset a constant noise mean (`bias` on every action component) leaves
 * under alternating roles: the periodic steady state z* at the start of a cycle solves
 *   z* = Φ z* + Σ_k (S_{2p−1} ⋯ S_{k+1}) E_k b,
 * returned as its state part x*. The mean of the noisy team tends to it (the noise enters
 * linearly), so zero-mean noise leaves no offset and a bias does.
 */
export function biasOffset(team: LinearTeam, period: number, bias: number): number[] {
  const schedule: Schedule = { kind: 'alternating', period };
  const size = augmentedLayout(team).size;
  let d = new Array<number>(size).fill(0);
  for (let k = 0; k < 2 * period; k++) {
    const s = speakerAt(schedule, k);
    const e = matVec(noiseInputMatrix(team, s), team.agents[s].inputs.map(() => bias));
    d = matVec(stepMatrix(team, s), d).map((v, i) => v + e[i]!);
  }
  const Phi = monodromy(team, schedule);
  const IminusPhi = Phi.map((row, i) => row.map((v, j) => (i === j ? 1 : 0) - v));
  const z = solve(IminusPhi, d.map((v) => [v])).map((r) => r[0]!);
  return z.slice(0, team.n);
}

/**
 * The monodromy matrix of a schedule: the one-step matrix for fixed roles, the product over
 * the 2p steps of a full speaker/listener cycle for alternating roles with period p (see the
 * module comment for why the full cycle).
 */
export function monodromy(team: LinearTeam, schedule: Schedule): Mat {
  if (schedule.kind === 'fixed') return stepMatrix(team, schedule.speaker);
  const p = schedule.period;
  if (p > 64) {
    // Φ = S₂ᵖ S₁ᵖ by repeated squaring: 2 log₂ p products instead of 2p.
    return matMul(matPow(stepMatrix(team, 1), p), matPow(stepMatrix(team, 0), p));
  }
  let Phi: Mat = toArr(math.identity(augmentedLayout(team).size));
  for (let k = 0; k < 2 * p; k++) Phi = toArr(math.multiply(stepMatrix(team, speakerAt(schedule, k)), Phi));
  return Phi;
}

function matMul(a: Mat, b: Mat): Mat {
  const n = a.length;
  const m = b[0]?.length ?? 0;
  const inner = b.length;
  const out = zeros(n, m);
  for (let i = 0; i < n; i++) {
    const ai = a[i]!;
    const oi = out[i]!;
    for (let k = 0; k < inner; k++) {
      const v = ai[k]!;
      if (v === 0) continue;
      const bk = b[k]!;
      for (let j = 0; j < m; j++) oi[j]! += v * bk[j]!;
    }
  }
  return out;
}

function matPow(S: Mat, p: number): Mat {
  let result: Mat | undefined;
  let base = S;
  for (let e = p; e > 0; e = Math.floor(e / 2)) {
    if (e % 2 === 1) result = result ? matMul(base, result) : base;
    if (e > 1) base = matMul(base, base);
  }
  return result!;
}

// ---------------------------------------------------------------------------------------------
// Simulation

export interface ActionNoise {
  /** Standard deviation of the Gaussian noise on each observed action component. */
  readonly std: number;
  /** Its mean (0 = unbiased). */
  readonly bias: number;
  readonly rng: Rng;
}

/** x[k+1] = (A − BK) x[k] from x0, steps + 1 states. */
export function centralizedTrajectory(team: LinearTeam, steps = team.model.steps): number[][] {
  const out: number[][] = [team.model.x0.slice()];
  let x = team.model.x0.slice();
  for (let k = 0; k < steps; k++) {
    x = matVec(team.closedLoop, x);
    out.push(x);
  }
  return out;
}

/**
 * How the listener knows the value h_s the speaker holds (it needs it to invert the action).
 *  - 'shared' (default): h_s is common knowledge exactly — the listener uses the very value the
 *    speaker holds. Without noise this is what the listener reproduces anyway (its own past
 *    state, inferred exactly); with noise it keeps the held value common by assumption.
 *  - 'reconstructed': the listener uses its own copy c_l, its true state at the step the speaker
 *    last inferred it. Without noise c_l = h_s; with noise the mismatch e = h_s − c_l is carried
 *    into the next inference and grows by K_s,own⁺ K_s,part at every role switch
 *    (e' = K_s,own⁺ K_s,part e), so rounding alone can blow it up when that map exceeds one.
 */
export type CommonKnowledge = 'shared' | 'reconstructed';

/**
 * The decentralized team from x0 under a schedule, steps + 1 states. With `noise`, the listener
 * sees the speaker's action plus N(bias, std²) per component (the applied action is exact).
 */
export function simulateTeam(
  team: LinearTeam,
  schedule: Schedule,
  steps = team.model.steps,
  noise?: ActionNoise,
  commonKnowledge: CommonKnowledge = 'shared',
): number[][] {
  const A = team.model.A;
  let x = team.model.x0.slice();
  // h[i]: agent i's held estimate of its partner's block; c[i]: agent i's copy of h[partner].
  const h: number[][] = [team.agents[1].obs.map(() => 0), team.agents[0].obs.map(() => 0)];
  const c: number[][] = [team.agents[0].obs.map(() => 0), team.agents[1].obs.map(() => 0)];
  const out: number[][] = [x.slice()];
  for (let k = 0; k < steps; k++) {
    const s = speakerAt(schedule, k);
    const l = (1 - s) as 0 | 1;
    const sp = team.agents[s];
    const li = team.agents[l];
    const xs = pick(x, sp.obs);
    const xl = pick(x, li.obs);
    const kownX = matVec(sp.Kown, xs);
    const kpartH = matVec(sp.Kpart, h[s]!);
    const us = kownX.map((v, r) => -(v + kpartH[r]!));
    const seen = noise ? us.map((v) => v + noise.bias + noise.std * noise.rng.normal()) : us;
    const known = commonKnowledge === 'shared' ? kpartH : matVec(sp.Kpart, c[l]!);
    const xsHat = matVec(
      sp.KownInv,
      seen.map((v, r) => v + known[r]!),
    ).map((v) => -v);
    const full = new Array<number>(team.n).fill(0);
    sp.obs.forEach((i, j) => (full[i] = xsHat[j]!));
    li.obs.forEach((i, j) => (full[i] = xl[j]!));
    const ul = matVec(li.Krows, full).map((v) => -v);
    h[l] = xsHat;
    c[s] = xs;
    const Ax = matVec(A, x);
    const Bs = matVec(sp.Bi, us);
    const Bl = matVec(li.Bi, ul);
    x = Ax.map((v, i) => v + Bs[i]! + Bl[i]!);
    out.push(x);
  }
  return out;
}

/** RMS over all samples of ‖a[k] − b[k]‖ (trajectories of equal length). */
export function rmsGap(a: readonly (readonly number[])[], b: readonly (readonly number[])[]): number {
  let s = 0;
  for (let k = 0; k < a.length; k++) {
    const ak = a[k]!;
    const bk = b[k]!;
    for (let i = 0; i < ak.length; i++) s += (ak[i]! - bk[i]!) ** 2;
  }
  return Math.sqrt(s / a.length);
}

// ---------------------------------------------------------------------------------------------
// Analyses

export interface ScheduleResult {
  readonly spectral_radius: number;
  readonly stable: boolean;
  readonly gap: number;
}

export interface FixedResult extends ScheduleResult {
  /** The agent (1 or 2) that always speaks. */
  readonly speaker: 1 | 2;
}

export interface AlternatingResult extends ScheduleResult {
  readonly period_steps: number;
  /** ρ(Φ)^(1/2p): the per-step rate, comparable to the centralized spectral radius. */
  readonly spectral_radius_per_step: number;
}

export function analyzeSchedule(team: LinearTeam, schedule: Schedule, central = centralizedTrajectory(team)): ScheduleResult {
  const rho = spectralRadius(monodromy(team, schedule));
  const gap = rmsGap(simulateTeam(team, schedule), central);
  return { spectral_radius: rho, stable: rho < 1, gap };
}

export function analyzeFixed(team: LinearTeam, central = centralizedTrajectory(team)): FixedResult {
  const speaker = team.model.fixedSpeaker ?? 1;
  return { speaker, ...analyzeSchedule(team, { kind: 'fixed', speaker: (speaker - 1) as 0 | 1 }, central) };
}

export function analyzeAlternating(team: LinearTeam, period: number, central = centralizedTrajectory(team)): AlternatingResult {
  const r = analyzeSchedule(team, { kind: 'alternating', period }, central);
  return {
    period_steps: period,
    spectral_radius: r.spectral_radius,
    spectral_radius_per_step: r.spectral_radius ** (1 / (2 * period)),
    stable: r.stable,
    gap: r.gap,
  };
}

export interface NoiseOptions {
  readonly std: number;
  readonly bias: number;
  readonly runs: number;
  readonly seed: number;
  /** How the listener knows the speaker's held value (default 'shared'). */
  readonly commonKnowledge?: CommonKnowledge;
}

export interface NoiseVariant {
  /** Mean of the noise on the observed actions. */
  readonly mean: number;
  /** Mean over runs of ‖x[steps]‖. */
  readonly final_state_norm: number;
  /** ‖mean over runs of x[steps]‖: zero-mean noise averages out, a bias leaves an offset. */
  readonly mean_final_state_norm: number;
  /** Mean over runs of the RMS gap to the (noise-free) centralized trajectory. */
  readonly gap: number;
  /** RMS gap of the run-averaged trajectory to the centralized one. */
  readonly mean_trajectory_gap: number;
  /** Largest ‖x[k]‖ over all runs and steps. */
  readonly max_state_norm: number;
  /** ‖x*‖ of the closed-form steady offset the noise mean leaves (see biasOffset); 0 when unbiased. */
  readonly steady_offset: number;
}

export interface NoisePeriodResult {
  readonly period_steps: number;
  readonly unbiased: NoiseVariant;
  readonly biased: NoiseVariant;
}

export interface NoiseResult {
  readonly std: number;
  readonly bias: number;
  readonly runs: number;
  readonly seed: number;
  readonly common_knowledge: CommonKnowledge;
  /** How the runs' generators are seeded. */
  readonly seeding: string;
  readonly alternating: readonly NoisePeriodResult[];
}

/**
 * Noisy observed actions under alternating roles, `runs` runs per period. Run r draws its noise
 * from Rng(seed + r); the unbiased and the biased variant use the same draws (the biased one is
 * shifted by `bias`), so they differ by the bias alone.
 */
export function noiseVariant(
  team: LinearTeam,
  schedule: Schedule,
  std: number,
  mean: number,
  runs: number,
  seed: number,
  central = centralizedTrajectory(team),
  commonKnowledge: CommonKnowledge = 'shared',
): NoiseVariant {
  const steps = team.model.steps;
  const sum: number[][] = central.map((x) => x.map(() => 0));
  let finalNorm = 0;
  let gap = 0;
  let maxNorm = 0;
  for (let r = 0; r < runs; r++) {
    const traj = simulateTeam(team, schedule, steps, { std, bias: mean, rng: new Rng((seed + r) >>> 0) }, commonKnowledge);
    traj.forEach((x, k) => {
      x.forEach((v, i) => (sum[k]![i]! += v));
      maxNorm = Math.max(maxNorm, norm(x));
    });
    finalNorm += norm(traj[steps]!);
    gap += rmsGap(traj, central);
  }
  const meanTraj = sum.map((x) => x.map((v) => v / runs));
  return {
    mean,
    final_state_norm: finalNorm / runs,
    mean_final_state_norm: norm(meanTraj[steps]!),
    gap: gap / runs,
    mean_trajectory_gap: rmsGap(meanTraj, central),
    max_state_norm: maxNorm,
    // the closed form holds for the linear 'shared' loop; the reconstructed one has no such steady state here
    steady_offset: schedule.kind === 'alternating' && mean !== 0 && commonKnowledge === 'shared' ? norm(biasOffset(team, schedule.period, mean)) : 0,
  };
}

export function analyzeNoise(team: LinearTeam, periods: readonly number[], opts: NoiseOptions, central = centralizedTrajectory(team), onVariant?: () => void): NoiseResult {
  const variant = (schedule: Schedule, bias: number): NoiseVariant => {
    const v = noiseVariant(team, schedule, opts.std, bias, opts.runs, opts.seed, central, opts.commonKnowledge);
    onVariant?.();
    return v;
  };
  return {
    std: opts.std,
    bias: opts.bias,
    runs: opts.runs,
    seed: opts.seed,
    common_knowledge: opts.commonKnowledge ?? 'shared',
    seeding: 'run r (0-based) draws from Rng(seed + r); unbiased and biased runs share the draws',
    alternating: periods.map((p) => {
      const schedule: Schedule = { kind: 'alternating', period: p };
      return {
        period_steps: p,
        unbiased: variant(schedule, 0),
        biased: variant(schedule, opts.bias),
      };
    }),
  };
}

export interface CheckResult {
  readonly name: keyof TeamExpectations;
  readonly expected: boolean;
  readonly actual: boolean;
  readonly ok: boolean;
}

export interface TeamReport {
  readonly model: { readonly file?: string; readonly states: number; readonly steps: number };
  readonly centralized: { readonly spectral_radius: number };
  readonly fixed: FixedResult;
  readonly alternating: readonly AlternatingResult[];
  readonly noise?: NoiseResult;
  readonly checks: readonly CheckResult[];
  readonly ok: boolean;
}

/** True when the gap strictly grows along the periods sorted ascending. */
export function gapGrowsWithPeriod(alternating: readonly AlternatingResult[]): boolean {
  const sorted = [...alternating].sort((a, b) => a.period_steps - b.period_steps);
  return sorted.every((r, i) => i === 0 || r.gap > sorted[i - 1]!.gap);
}

export interface AnalyzeOptions {
  readonly periods?: readonly number[];
  readonly noise?: NoiseOptions;
  readonly file?: string;
  /** Called as the analysis goes: simulated steps done of the total. */
  readonly onProgress?: (done: number, total: number) => void;
}

/** Refuse an analysis beyond the documented limits (runs, total simulated steps). */
export function checkAnalysisSize(steps: number, periods: readonly number[], noise?: NoiseOptions): void {
  if (noise && (!Number.isInteger(noise.runs) || noise.runs < 1 || noise.runs > MAX_RUNS))
    throw new InputError({ code: 'cli.bad_runs', message: `--runs must be a whole number from 1 to ${MAX_RUNS}, got ${noise.runs}`, where: { option: '--runs' } });
  const total = simulatedSteps(steps, periods.length, noise?.runs);
  if (total > MAX_SIMULATED_STEPS)
    throw new InputError({
      code: 'model.too_much_work',
      message: `this analysis would simulate ${total.toExponential(2)} steps (steps ${steps} × (1 + ${periods.length} periods${noise ? ` × (1 + 2 × ${noise.runs} runs)` : ''})), more than the limit of ${MAX_SIMULATED_STEPS.toExponential(0)}`,
      where: { key: 'steps' },
      hint: 'use fewer steps, periods or runs',
    });
}

export function analyzeTeam(team: LinearTeam, opts: AnalyzeOptions = {}): TeamReport {
  const periods = opts.periods ?? team.model.periods ?? DEFAULT_PERIODS;
  checkAnalysisSize(team.model.steps, periods, opts.noise);
  const total = simulatedSteps(team.model.steps, periods.length, opts.noise?.runs);
  let done = 0;
  const tick = (steps: number): void => {
    done += steps;
    opts.onProgress?.(done, total);
  };
  const central = centralizedTrajectory(team);
  const fixed = analyzeFixed(team, central);
  tick(team.model.steps);
  const alternating = periods.map((p) => {
    const r = analyzeAlternating(team, p, central);
    tick(team.model.steps);
    return r;
  });
  const noise = opts.noise ? analyzeNoise(team, periods, opts.noise, central, () => tick(team.model.steps * opts.noise!.runs)) : undefined;
  const checks: CheckResult[] = [];
  const ex = team.model.expect ?? {};
  const add = (name: keyof TeamExpectations, actual: boolean): void => {
    const expected = ex[name];
    if (expected !== undefined) checks.push({ name, expected, actual, ok: expected === actual });
  };
  add('fixed_stable', fixed.stable);
  add('alternating_stable', alternating.every((a) => a.stable));
  add('gap_grows_with_period', gapGrowsWithPeriod(alternating));
  return {
    model: { ...(opts.file !== undefined ? { file: opts.file } : {}), states: team.n, steps: team.model.steps },
    centralized: { spectral_radius: team.centralSpectralRadius },
    fixed,
    alternating,
    ...(noise ? { noise } : {}),
    checks,
    ok: checks.every((c) => c.ok),
  };
}

// ---------------------------------------------------------------------------------------------
// Loading the model file (YAML), with line and column of every bad value

const KNOWN_KEYS = ['A', 'B1', 'B2', 'Q', 'R', 'observes', 'x0', 'steps', 'periods', 'fixed_speaker', 'expect'] as const;
const REQUIRED_KEYS = ['A', 'B1', 'B2', 'Q', 'R', 'observes', 'x0', 'steps'] as const;
const EXPECT_KEYS = ['fixed_stable', 'alternating_stable', 'gap_grows_with_period'] as const;

class Reader {
  readonly problems: Problem[] = [];
  constructor(
    readonly file: string,
    readonly lc: LineCounter,
    readonly root: Node | null,
  ) {}

  place(node: unknown, path: readonly (string | number)[]): Place {
    const range = (node as { range?: [number, number, number] } | null | undefined)?.range;
    if (range) {
      const { line, col } = this.lc.linePos(range[0]);
      return { file: this.file, line, column: col, key: keyName(path) };
    }
    return { file: this.file, key: keyName(path) };
  }

  fail(code: string, message: string, node: unknown, path: readonly (string | number)[], hint?: string): undefined {
    this.problems.push({ code, message, where: this.place(node, path), ...(hint ? { hint } : {}) });
    return undefined;
  }

  number(node: unknown, path: readonly (string | number)[]): number | undefined {
    if (isScalar(node) && typeof node.value === 'number' && Number.isFinite(node.value)) return node.value;
    return this.fail('model.not_number', `${keyName(path)} must be a finite number`, node, path, 'write a plain number such as 0.05');
  }

  vector(node: unknown, path: readonly (string | number)[]): number[] | undefined {
    if (!isSeq(node) || node.items.length === 0)
      return this.fail('model.not_vector', `${keyName(path)} must be a non-empty list of numbers`, node, path, 'e.g. [1, -0.7]');
    const out = node.items.map((it, i) => this.number(it, [...path, i]));
    return out.every((v) => v !== undefined) ? (out as number[]) : undefined;
  }

  matrix(node: unknown, path: readonly (string | number)[]): Mat | undefined {
    if (!isSeq(node) || node.items.length === 0)
      return this.fail('model.not_matrix', `${keyName(path)} must be a matrix: a non-empty list of rows`, node, path, 'e.g. [[1, 0], [0, 1]]');
    const rows: (number[] | undefined)[] = node.items.map((row, i) => {
      if (!isSeq(row) || row.items.length === 0)
        return this.fail('model.not_matrix', `${keyName([...path, i])} must be a row: a non-empty list of numbers`, row, [...path, i], 'e.g. [0.1, 0]');
      const vals = row.items.map((it, j) => this.number(it, [...path, i, j]));
      return vals.every((v) => v !== undefined) ? (vals as number[]) : undefined;
    });
    if (!rows.every((r) => r !== undefined)) return undefined;
    const width = rows[0]!.length;
    const badRow = rows.findIndex((r) => r!.length !== width);
    if (badRow >= 0)
      return this.fail(
        'model.ragged_matrix',
        `${keyName(path)} row ${badRow} has ${rows[badRow]!.length} entries, row 0 has ${width}`,
        node.items[badRow],
        [...path, badRow],
        'every row of a matrix has the same length',
      );
    return rows as Mat;
  }

  shape(M: Mat | undefined, node: unknown, path: readonly (string | number)[], rows: number, colsWanted: number | undefined, why: string): boolean {
    if (!M) return false;
    const c = M[0]!.length;
    if (M.length !== rows || (colsWanted !== undefined && c !== colsWanted)) {
      this.fail(
        'model.dimension_mismatch',
        `${keyName(path)} is ${M.length}×${c}, expected ${rows}×${colsWanted ?? 'm'}`,
        node,
        path,
        why,
      );
      return false;
    }
    return true;
  }
}

/** Parse a model from YAML text; `file` names it in error places. Throws InputError. */
export function parseLinearTeamModel(text: string, file: string): { model: LinearTeamModel; locate: Locator } {
  const lc = new LineCounter();
  const doc = parseYamlDocument(text, { lineCounter: lc, prettyErrors: false });
  if (doc.errors.length > 0) {
    throw new InputError(
      doc.errors.map((e) => {
        const pos = e.linePos?.[0] ?? lc.linePos(e.pos[0]);
        return {
          code: 'model.yaml',
          message: `not valid YAML: ${e.message.split('\n')[0]}`,
          where: pos ? { file, line: pos.line, column: pos.col } : { file },
          hint: 'the model file is a YAML mapping; see examples/linear-team.yaml',
        };
      }),
    );
  }
  const root = doc.contents;
  const rd = new Reader(file, lc, root);
  if (!isMap(root))
    throw new InputError({ code: 'model.not_mapping', message: 'the model file must be a YAML mapping of keys', where: rd.place(root, []), hint: `keys: ${KNOWN_KEYS.join(', ')}` });

  const nodes = new Map<string, Node>();
  for (const pair of root.items) {
    const key = isScalar(pair.key) ? String(pair.key.value) : String(pair.key);
    if (!(KNOWN_KEYS as readonly string[]).includes(key)) {
      rd.fail('model.unknown_key', `unknown key '${key}'`, pair.key, [key], `did you mean '${closest(key, [...KNOWN_KEYS])}'? allowed: ${KNOWN_KEYS.join(', ')}`);
      continue;
    }
    nodes.set(key, pair.value as Node);
  }
  for (const k of REQUIRED_KEYS) if (!nodes.has(k)) rd.fail('model.missing_key', `missing key '${k}'`, root, [k], `required keys: ${REQUIRED_KEYS.join(', ')}`);
  if (rd.problems.length > 0) throw new InputError(rd.problems);

  const A = rd.matrix(nodes.get('A'), ['A']);
  let n = 0;
  if (A) {
    n = A.length;
    if (A[0]!.length !== n)
      rd.fail('model.not_square', `A must be square, got ${A.length}×${A[0]!.length}`, nodes.get('A'), ['A'], 'A is n×n: one row and one column per state');
    else if (n > MAX_STATES) {
      rd.fail('model.too_many_states', `A has ${n} states, more than the limit of ${MAX_STATES}`, nodes.get('A'), ['A'], `at most ${MAX_STATES} states (the analysis takes eigenvalues of 2n×2n matrices)`);
      throw new InputError(rd.problems);
    }
  }
  const B1 = rd.matrix(nodes.get('B1'), ['B1']);
  const B2 = rd.matrix(nodes.get('B2'), ['B2']);
  const Q = rd.matrix(nodes.get('Q'), ['Q']);
  const R = rd.matrix(nodes.get('R'), ['R']);
  const x0 = rd.vector(nodes.get('x0'), ['x0']);
  if (rd.problems.length > 0) throw new InputError(rd.problems);

  rd.shape(B1, nodes.get('B1'), ['B1'], n, undefined, `B1 has one row per state (${n}) and one column per input of agent 1`);
  rd.shape(B2, nodes.get('B2'), ['B2'], n, undefined, `B2 has one row per state (${n}) and one column per input of agent 2`);
  rd.shape(Q, nodes.get('Q'), ['Q'], n, n, `Q weighs the ${n} states`);
  const m = (B1?.[0]?.length ?? 0) + (B2?.[0]?.length ?? 0);
  rd.shape(R, nodes.get('R'), ['R'], m, m, `R weighs the ${m} inputs [u1; u2] (columns of B1 then B2)`);
  if (x0 && x0.length !== n) rd.fail('model.dimension_mismatch', `x0 has ${x0.length} entries, expected ${n}`, nodes.get('x0'), ['x0'], 'one entry per state');

  // observes: { agent1: [...], agent2: [...] }, a partition of 0..n-1
  const obsNode = nodes.get('observes');
  const observes: [number[], number[]] = [[], []];
  if (!isMap(obsNode)) {
    rd.fail('model.bad_observes', 'observes must be a mapping with agent1 and agent2', obsNode, ['observes'], 'e.g. observes: { agent1: [0], agent2: [1] } (0-based state indices)');
  } else {
    for (const pair of obsNode.items) {
      const key = isScalar(pair.key) ? String(pair.key.value) : String(pair.key);
      if (key !== 'agent1' && key !== 'agent2') rd.fail('model.unknown_key', `unknown key 'observes.${key}'`, pair.key, ['observes', key], 'allowed: agent1, agent2');
    }
    const owner = new Map<number, string>();
    (['agent1', 'agent2'] as const).forEach((a, ai) => {
      const node = obsNode.get(a, true);
      const path = ['observes', a];
      if (!isSeq(node) || node.items.length === 0) {
        rd.fail('model.bad_observes', `observes.${a} must be a non-empty list of state indices`, node ?? obsNode, path, `0-based indices from 0 to ${n - 1}; each agent observes at least one state`);
        return;
      }
      node.items.forEach((it, j) => {
        const v = isScalar(it) ? it.value : undefined;
        if (typeof v !== 'number' || !Number.isInteger(v) || v < 0 || v >= n) {
          rd.fail('model.bad_index', `observes.${a}[${j}] must be a state index from 0 to ${n - 1}`, it, [...path, j], '0-based state indices');
          return;
        }
        const prev = owner.get(v);
        if (prev !== undefined) {
          rd.fail('model.not_partition', `state ${v} is listed twice (already in ${prev})`, it, [...path, j], 'the two lists partition the state: each index in exactly one list, once');
          return;
        }
        owner.set(v, `observes.${a}`);
        observes[ai]!.push(v);
      });
    });
    if (rd.problems.length === 0) {
      const missing = Array.from({ length: n }, (_, i) => i).filter((i) => !owner.has(i));
      if (missing.length > 0)
        rd.fail('model.not_partition', `state${missing.length > 1 ? 's' : ''} ${missing.join(', ')} observed by neither agent`, obsNode, ['observes'], 'the two lists partition the state: each index in exactly one list');
    }
  }

  const stepsNode = nodes.get('steps');
  const steps = rd.number(stepsNode, ['steps']);
  if (steps !== undefined && (!Number.isInteger(steps) || steps < 1 || steps > MAX_STEPS))
    rd.fail('model.bad_steps', `steps must be a whole number from 1 to ${MAX_STEPS}, got ${steps}`, stepsNode, ['steps'], 'the horizon of the gap, e.g. 400');

  let periods: number[] | undefined;
  if (nodes.has('periods')) {
    const pn = nodes.get('periods');
    if (!isSeq(pn) || pn.items.length === 0) rd.fail('model.bad_period', 'periods must be a non-empty list of whole numbers of steps', pn, ['periods'], 'e.g. [1, 2, 4, 8, 16]');
    else {
      const vals = pn.items.map((it, i) => {
        const v = isScalar(it) ? it.value : undefined;
        if (typeof v !== 'number' || !Number.isInteger(v) || v < 1 || v > MAX_PERIOD)
          return rd.fail('model.bad_period', `periods[${i}] must be a whole number of steps from 1 to ${MAX_PERIOD}, got ${isScalar(it) ? String(it.value) : 'a non-number'}`, it, ['periods', i], 'a role period is a positive whole number of steps');
        return v;
      });
      if (vals.every((v) => v !== undefined)) periods = vals as number[];
    }
  }

  let fixedSpeaker: 1 | 2 | undefined;
  if (nodes.has('fixed_speaker')) {
    const fn = nodes.get('fixed_speaker');
    const v = isScalar(fn) ? fn.value : undefined;
    if (v === 1 || v === 2) fixedSpeaker = v;
    else rd.fail('model.bad_fixed_speaker', 'fixed_speaker must be 1 or 2', fn, ['fixed_speaker'], 'the agent that always speaks under fixed roles');
  }

  let expect: TeamExpectations | undefined;
  if (nodes.has('expect')) {
    const en = nodes.get('expect');
    if (!isMap(en)) rd.fail('model.bad_expect', 'expect must be a mapping of booleans', en, ['expect'], `keys: ${EXPECT_KEYS.join(', ')}`);
    else {
      const e: Record<string, boolean> = {};
      for (const pair of en.items) {
        const key = isScalar(pair.key) ? String(pair.key.value) : String(pair.key);
        if (!(EXPECT_KEYS as readonly string[]).includes(key)) {
          rd.fail('model.unknown_key', `unknown key 'expect.${key}'`, pair.key, ['expect', key], `did you mean '${closest(key, [...EXPECT_KEYS])}'? allowed: ${EXPECT_KEYS.join(', ')}`);
          continue;
        }
        const v = isScalar(pair.value) ? pair.value.value : undefined;
        if (typeof v !== 'boolean') rd.fail('model.bad_expect', `expect.${key} must be true or false`, pair.value, ['expect', key]);
        else e[key] = v;
      }
      expect = e;
    }
  }

  if (rd.problems.length > 0) throw new InputError(rd.problems);
  const model: LinearTeamModel = {
    A: A!,
    B1: B1!,
    B2: B2!,
    Q: Q!,
    R: R!,
    observes,
    x0: x0!,
    steps: steps!,
    ...(periods ? { periods } : {}),
    ...(fixedSpeaker ? { fixedSpeaker } : {}),
    ...(expect ? { expect } : {}),
  };
  const locate: Locator = (path) => rd.place(doc.getIn(path, true), path);
  return { model, locate };
}

/** Read, parse and build a team from a model file; every refusal is an InputError with file:line:col. */
export function loadLinearTeam(file: string): LinearTeam {
  const text = readInputText(file, { what: 'model file', code: 'model', maxBytes: INPUT_LIMITS.model, option: '--model' });
  const { model, locate } = parseLinearTeamModel(text, file);
  return buildTeam(model, locate);
}

/** Parse a comma-separated list of role periods (the --periods option). */
export function parsePeriodsOption(raw: string, option = '--periods'): number[] {
  const parts = raw.split(',').map((s) => s.trim());
  const out: number[] = [];
  for (const p of parts) {
    const v = Number(p);
    if (p === '' || !Number.isInteger(v) || v < 1 || v > MAX_PERIOD) {
      throw new InputError({
        code: 'cli.bad_period',
        message: `${option} must be a comma-separated list of whole numbers of steps from 1 to ${MAX_PERIOD}, got '${p}' in '${raw}'`,
        where: { option },
        hint: 'e.g. --periods 1,2,4,8,16',
      });
    }
    out.push(v);
  }
  return out;
}
