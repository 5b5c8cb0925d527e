/**
 * Issue 8 measurements, on seeded sets (every seed below is named in the JSON):
 *   (a) belief calibration on the demo cell (MuJoCo, alternating, the sim's default sensor
 *       noise, bias and drift) over 40 worlds;
 *   (b) commitment agreement at the role switches, 8 noise seeds x 4 worlds (every occupancy of
 *       the two zones) x 20 s, at a correction-band disturbance of 0, 1.5 and 4 N, in the
 *       kinematic cell and in the MuJoCo cell;
 *   (c) partner-hold detection: one NaN wrench sample on either arm at a random time in either
 *       role (48 episodes per cell), the time until the partner's twist is zero for good;
 *   (d) time with both arms in the same role, adaptive and alternating, on the worlds of (a).
 *
 * (a) and (b) run twice: with config/demo_cell.yaml as shipped (belief.disturbance_force_n
 * = 0, no slow disturbance declared), and with the cell declaring a slow disturbance of
 * DECLARED_DISTURBANCE_N (belief.disturbance_force_n, time constant belief.disturbance_time_s
 * as shipped: the simulated disturbance's 0.2 s), on every disturbance (0, 1.5, 4 N), so the
 * figures show a declaration that is right (1.5 N), absent (0 N) and too small (4 N).
 * ANTIPHON_ISSUE8_PARTS=abd leaves out (c) (the default, abcd, runs all four; (a) and (d) share
 * their runs and always run).
 *
 *   npm run build && node --expose-gc dist/bench/run.js issue8
 *   ANTIPHON_BENCH_JOBS=1 node dist/bench/run.js issue8      (one worker; default 2)
 *
 * Prints a table and writes bench/results/issue8.json. About 8 to 14 minutes on 2 cores (shared).
 */
import { fileURLToPath } from 'node:url';
import type { ArmConfig } from '../src/params/config.js';
import { loadCell } from '../src/params/config.js';
import { pooledCalibration, type CalibrationSummary } from '../src/sim/belief-metrics.js';
import { partnerHoldAggregate, runJobs, type CompareJob, type RunOutcome } from '../src/sim/compare.js';
import { runKinematicCell } from '../src/sim/kinematic-cell.js';
import { commitmentSummary, percentile, type CommitmentSummary, type PartnerHoldSummary } from '../src/sim/measures.js';
import type { SimOptionsOverrides } from '../src/sim/options.js';
import type { StrategySpec } from '../src/sim/strategies.js';
import { worldSeed } from '../src/sim/world.js';
import { Rng } from '../src/util/rng.js';

/** Every seed of the sets, by name. */
export const SEEDS = {
  /** (a), (d): world i of 40 uses worldSeed(8, i). */
  calibration_batch: 8,
  calibration_worlds: 40,
  /** (b) kinematic: noise seeds 1..8; MuJoCo: world seeds worldSeed(80, i), i < 8, each with the four occupancies. */
  commitment_kinematic_seeds: [1, 2, 3, 4, 5, 6, 7, 8],
  commitment_mujoco_batch: 80,
  /** (c): injection times from Rng(8103); MuJoCo worlds worldSeed(81, i), kinematic noise seed 100 + i. */
  hold_times: 8103,
  hold_mujoco_batch: 81,
  hold_kinematic_seed_base: 100,
  hold_episodes: 48,
} as const;

const DISTURBANCES_N = [0, 1.5, 4] as const;
/** The slow disturbance the second configuration declares (belief.disturbance_force_n), N. */
export const DECLARED_DISTURBANCE_N = 1.5;
const COMMIT_DURATION_S = 20;
const HOLD_DURATION_S = 20;
const OCCUPANCIES: readonly (readonly boolean[])[] = [[false, false], [true, false], [false, true], [true, true]];

function log(msg: string): void {
  process.stderr.write(`[issue8] ${msg}\n`);
}

interface HoldPlan {
  readonly arm: 'left' | 'right';
  readonly role: 'speaker' | 'listener';
  readonly t_s: number;
}

/**
 * Injection times: episode i puts the fault on the left arm for even i, else the right; in the
 * speaker role for i mod 4 < 2, else the listener role; in a random slot from 4 to 15 of the
 * alternating clock (0.5 s slots) of the parity that gives that role, at a random point 0.05 to
 * 0.45 s into it (not at a boundary).
 */
export function holdPlans(n: number, seed: number, period_s: number, phases: { left: number; right: number }): HoldPlan[] {
  const rng = new Rng(seed);
  const out: HoldPlan[] = [];
  for (let i = 0; i < n; i++) {
    const arm = i % 2 === 0 ? 'left' : 'right';
    const role = i % 4 < 2 ? 'speaker' : 'listener';
    // The arm speaks in slots where (slot + phase) is even.
    let slot = 4 + rng.int(12);
    const speaks = ((slot + phases[arm]) & 1) === 0;
    if (speaks !== (role === 'speaker')) slot += 1;
    out.push({ arm, role, t_s: slot * period_s + period_s * (0.1 + 0.8 * rng.uniform()) });
  }
  return out;
}

function holdFigures(all: readonly PartnerHoldSummary[]): Record<string, unknown> {
  const agg = partnerHoldAggregate(all);
  const byRole = (r: 'speaker' | 'listener') => partnerHoldAggregate(all.filter((p) => p.role_at_injection === r));
  const rolesSeen = { speaker: all.filter((p) => p.role_at_injection === 'speaker').length, listener: all.filter((p) => p.role_at_injection === 'listener').length };
  return { ...agg, held_arm_role_counts: rolesSeen, by_held_arm_role: { speaker: byRole('speaker'), listener: byRole('listener') }, arms: { left: all.filter((p) => p.arm === 'left').length, right: all.filter((p) => p.arm === 'right').length } };
}

export async function benchIssue8(jobs = Number(process.env['ANTIPHON_BENCH_JOBS'] ?? 2)): Promise<Record<string, unknown>> {
  const t0 = performance.now();
  const params = fileURLToPath(new URL('../../config/demo_cell.yaml', import.meta.url));
  const cell = loadCell(params);
  const left: ArmConfig = cell.left.config;
  const right: ArmConfig = cell.right.config;
  const rate = left.wrench_filter.sample_rate_hz;
  const period = left.roles.period_s;
  const k = Math.round(period * rate);
  const alternating: StrategySpec = { name: 'alternating', k };
  const adaptive: StrategySpec = { name: 'adaptive', k: null };
  const init = { left, right, options: {} as SimOptionsOverrides, duration_s: undefined };
  const declare = (c: ArmConfig): ArmConfig => ({ ...c, belief: { ...c.belief, disturbance_force_n: DECLARED_DISTURBANCE_N } });
  const leftD = declare(left);
  const rightD = declare(right);
  const initD = { ...init, left: leftD, right: rightD };
  const parts = process.env['ANTIPHON_ISSUE8_PARTS'] ?? 'abcd';

  // (a) + (d): the 40 worlds with alternating and adaptive.
  log(`(a, d) calibration and same-role time: ${SEEDS.calibration_worlds} worlds x 2 strategies, MuJoCo, ${jobs} jobs`);
  const worlds = Array.from({ length: SEEDS.calibration_worlds }, (_, w) => worldSeed(SEEDS.calibration_batch, w));
  const listA: CompareJob[] = [];
  [alternating, adaptive].forEach((strategy, si) => worlds.forEach((seed, w) => listA.push({ id: si * worlds.length + w, world: w, seed, strategy })));
  const runsA = await runJobs(init, listA, jobs);
  log(`(a) again with belief.disturbance_force_n = ${DECLARED_DISTURBANCE_N}: ${worlds.length} worlds, alternating`);
  const runsAD = await runJobs(initD, listA.slice(0, worlds.length), jobs);
  const alt = runsA.slice(0, worlds.length);
  const ada = runsA.slice(worlds.length);
  const sameRole = (rs: readonly RunOutcome[]) => {
    const each = rs.map((r) => r.same_role_s);
    const time = rs.reduce((a, r) => a + r.sampled_s, 0);
    const total = each.reduce((a, b) => a + b, 0);
    return { runs: rs.length, total_s: total, max_per_run_s: Math.max(...each), p95_per_run_s: percentile(each, 0.95), runs_with_any: each.filter((x) => x > 0).length, fraction_of_time: time > 0 ? total / time : 0, successes: rs.filter((r) => r.success).length };
  };
  const calibration = {
    cell: 'mujoco tool_point, config/demo_cell.yaml',
    strategy: `alternating:${k}`,
    worlds: worlds.length,
    world_seeds: worlds,
    successes: alt.filter((r) => r.success).length,
    ...pooledCalibration(alt.map((r) => r.calibration)),
    adaptive: pooledCalibration(ada.map((r) => r.calibration)),
    declared: { disturbance_force_n: DECLARED_DISTURBANCE_N, successes: runsAD.filter((r) => r.success).length, ...pooledCalibration(runsAD.map((r) => r.calibration)) },
  };

  // (b) kinematic.
  log(`(b) commitments, kinematic cell: ${SEEDS.commitment_kinematic_seeds.length} seeds x 4 worlds x ${COMMIT_DURATION_S} s x ${DISTURBANCES_N.length} disturbances`);
  type KinRow = CommitmentSummary & { calibration: CalibrationSummary; successes: number; runs: number; peak_internal_n: { mean: number; max: number } };
  const kinematicSet = (l: ArmConfig, r: ArmConfig): Record<string, KinRow> => {
    const out: Record<string, KinRow> = {};
    for (const d of DISTURBANCES_N) {
      const sums = [];
      const cal = [];
      const peaks: number[] = [];
      let successes = 0;
      for (const seed of SEEDS.commitment_kinematic_seeds) {
        for (const occ of OCCUPANCIES) {
          const run = runKinematicCell(l, r, occ, { seed, duration_s: COMMIT_DURATION_S, disturbance_n: d });
          sums.push(run.measures!.commitment_sums);
          cal.push(run.measures!.calibration_sums);
          peaks.push(run.peakInternalN);
          if (run.success) successes++;
        }
      }
      out[`${d}`] = { ...commitmentSummary(sums), calibration: pooledCalibration(cal), successes, runs: peaks.length, peak_internal_n: { mean: peaks.reduce((a, b) => a + b, 0) / peaks.length, max: Math.max(...peaks) } };
    }
    return out;
  };
  const kin = kinematicSet(left, right);
  log(`(b) again with belief.disturbance_force_n = ${DECLARED_DISTURBANCE_N}, kinematic cell`);
  const kinD = kinematicSet(leftD, rightD);

  // (b) MuJoCo.
  log(`(b) commitments, MuJoCo cell: 8 worlds x 4 occupancies x ${DISTURBANCES_N.length} disturbances, ${jobs} jobs`);
  const mjWorlds = Array.from({ length: 8 }, (_, i) => worldSeed(SEEDS.commitment_mujoco_batch, i));
  const listB: CompareJob[] = [];
  for (const d of DISTURBANCES_N) {
    for (const seed of mjWorlds) {
      for (const occ of OCCUPANCIES) listB.push({ id: listB.length, world: listB.length, seed, strategy: alternating, occupied: occ, options: { disturbance_n: d } });
    }
  }
  const mujocoSet = async (i: typeof init) => {
    const runsB = await runJobs({ ...i, duration_s: COMMIT_DURATION_S }, listB, jobs);
    const mj: Record<string, CommitmentSummary & { calibration: CalibrationSummary; successes: number; runs: number }> = {};
    DISTURBANCES_N.forEach((d, di) => {
      const rs = runsB.slice(di * 32, (di + 1) * 32);
      mj[`${d}`] = { ...commitmentSummary(rs.map((r) => r.commitments)), calibration: pooledCalibration(rs.map((r) => r.calibration)), successes: rs.filter((r) => r.success).length, runs: rs.length };
    });
    return mj;
  };
  const mj = await mujocoSet(init);
  log(`(b) again with belief.disturbance_force_n = ${DECLARED_DISTURBANCE_N}, MuJoCo cell`);
  const mjD = await mujocoSet(initD);

  // (c) partner hold.
  const plans = holdPlans(SEEDS.hold_episodes, SEEDS.hold_times, period, { left: left.roles.phase, right: right.roles.phase });
  log(`(c) partner hold: ${plans.length} episodes per cell`);
  const listC: CompareJob[] = plans.map((p, i) => ({
    id: i,
    world: i,
    seed: worldSeed(SEEDS.hold_mujoco_batch, i),
    strategy: alternating,
    options: { inject_hold: { arm: p.arm, t_s: p.t_s }, hold_timeout_s: 0 },
  }));
  const runsC = parts.includes('c') ? await runJobs({ ...init, duration_s: HOLD_DURATION_S }, listC, jobs) : [];
  const holdMj = runsC.map((r) => r.partner_hold!);
  const holdKin: PartnerHoldSummary[] = (parts.includes('c') ? plans : []).map((p, i) => {
    const occ = OCCUPANCIES[i % 4]!;
    const r = runKinematicCell(left, right, occ, { seed: SEEDS.hold_kinematic_seed_base + i, duration_s: HOLD_DURATION_S, stopAtGoal: false, inject_hold: { arm: p.arm, t_s: p.t_s } });
    return r.measures!.partner_hold!;
  });

  const wall = (performance.now() - t0) / 1000;
  const result = {
    note: 'Measured on a machine shared with other jobs (2 cores); wall times are indicative only.',
    config: 'config/demo_cell.yaml',
    seeds: SEEDS,
    jobs,
    calibration,
    commitments: {
      duration_s: COMMIT_DURATION_S,
      strategy: `alternating:${k}`,
      disturbance_n: DISTURBANCES_N,
      kinematic: kin,
      mujoco: { world_seeds: mjWorlds, ...mj },
      declared: { disturbance_force_n: DECLARED_DISTURBANCE_N, kinematic: kinD, mujoco: mjD },
    },
    partner_hold: {
      duration_s: HOLD_DURATION_S,
      strategy: `alternating:${k}`,
      injections: plans,
      mujoco: { ...holdFigures(holdMj), world_seeds: listC.map((j) => j.seed), episodes: holdMj },
      kinematic: { ...holdFigures(holdKin), episodes: holdKin },
    },
    same_role: { alternating: sameRole(alt), adaptive: sameRole(ada) },
    wall_s: wall,
  };
  process.stdout.write(`\n${issue8Table(result)}\n`);
  return result;
}

const f = (v: number | null | undefined, d = 3) => (v === null || v === undefined ? '-' : v.toFixed(d));
const pc = (v: number | null | undefined, d = 2) => (v === null || v === undefined ? '-' : `${(100 * v).toFixed(d)} %`);

/** The printed table. */
export function issue8Table(r: {
  calibration: CalibrationSummary & { worlds: number; strategy: string; successes: number; adaptive: CalibrationSummary; declared: CalibrationSummary & { disturbance_force_n: number; successes: number } };
  commitments: {
    kinematic: Record<string, CommitmentSummary & { calibration: CalibrationSummary }>;
    mujoco: Record<string, unknown>;
    declared: { disturbance_force_n: number; kinematic: Record<string, unknown>; mujoco: Record<string, unknown> };
  };
  partner_hold: { mujoco: Record<string, unknown>; kinematic: Record<string, unknown> };
  same_role: Record<string, { total_s: number; max_per_run_s: number; runs_with_any: number; runs: number; fraction_of_time: number }>;
  wall_s: number;
}): string {
  const lines: string[] = [];
  const c = r.calibration;
  lines.push(`(a) belief calibration, MuJoCo demo cell, ${c.strategy}, ${c.worlds} worlds: ${c.updates} pairs, ECE ${f(c.ece)}, P(truth) < 0.05 in ${pc(c.p_truth_below_0_05_rate)} (goal: ECE <= 0.05, under 0.5 %)`);
  lines.push(`    adaptive on the same worlds: ECE ${f(c.adaptive.ece)}, P(truth) < 0.05 in ${pc(c.adaptive.p_truth_below_0_05_rate)}`);
  lines.push('    reliability: ' + c.bins.map((b) => `[${b.lo.toFixed(1)}) n=${b.count} conf ${f(b.mean_predicted, 2)} freq ${f(b.observed_frequency, 2)}`).join('; '));
  const cd = c.declared;
  lines.push(`    declaring a ${cd.disturbance_force_n} N slow disturbance (belief.disturbance_force_n; none is simulated here): ECE ${f(cd.ece)}, P(truth) < 0.05 in ${pc(cd.p_truth_below_0_05_rate)}, successes ${cd.successes} of ${c.worlds} (as shipped: ${c.successes})`);
  lines.push('    reliability: ' + cd.bins.map((b) => `[${b.lo.toFixed(1)}) n=${b.count} conf ${f(b.mean_predicted, 2)} freq ${f(b.observed_frequency, 2)}`).join('; '));
  lines.push('(b) commitments at the role switches (alternating; 8 seeds x 4 worlds x 20 s)');
  lines.push('    cell       declared N  dist N  switches  disagreeing  rate      just committed  rate      onsets  repair max s  p95 s  max slots  unrepaired  successes');
  const sets = [[0, r.commitments.kinematic, r.commitments.mujoco], [r.commitments.declared.disturbance_force_n, r.commitments.declared.kinematic, r.commitments.declared.mujoco]] as const;
  for (const [declared, kinSet, mjSet] of sets) {
    for (const [cellName, set] of [['kinematic', kinSet], ['mujoco', mjSet]] as const) {
      for (const d of DISTURBANCES_N) {
        const s = set[`${d}`] as (CommitmentSummary & { successes?: number; runs?: number }) | undefined;
        if (!s) continue;
        const succ = s.successes === undefined ? '-' : `${s.successes}/${s.runs}`;
        lines.push(`    ${cellName.padEnd(10)} ${String(declared).padStart(10)}  ${String(d).padStart(6)}  ${String(s.switches).padStart(8)}  ${String(s.disagreeing).padStart(11)}  ${pc(s.rate, 2).padStart(8)}  ${String(s.fresh_disagreeing).padStart(14)}  ${pc(s.fresh_rate, 2).padStart(8)}  ${String(s.onsets).padStart(6)}  ${f(s.repair_s.max).padStart(12)}  ${f(s.repair_s.p95).padStart(5)}  ${String(s.repair_slots_max ?? '-').padStart(9)}  ${String(s.unrepaired).padStart(10)}  ${succ.padStart(9)}`);
      }
    }
  }
  for (const [declared, kinSet, mjSet] of sets) {
    lines.push(`    belief calibration in the same runs, declared ${declared} N: ` + ([['kinematic', kinSet], ['mujoco', mjSet]] as const).flatMap(([cellName, set]) => DISTURBANCES_N.map((d) => {
      const cal = (set[`${d}`] as { calibration: CalibrationSummary }).calibration;
      return `${cellName} ${d} N: ECE ${f(cal.ece)}, P(truth) < 0.05 ${pc(cal.p_truth_below_0_05_rate)}`;
    })).join('; '));
  }
  lines.push('(c) partner-hold detection (one NaN wrench sample on one arm; partner twist zero to the end)');
  for (const cellName of ['mujoco', 'kinematic'] as const) {
    const h = r.partner_hold[cellName] as { runs: number; detected: number; never_rate: number; detection_s: { max: number | null; p95: number | null }; object_moved_m: { max: number | null; mean: number | null }; held_arm_role_counts: { speaker: number; listener: number } };
    if (!h.runs) {
      lines.push(`    ${cellName.padEnd(10)} not run (ANTIPHON_ISSUE8_PARTS without c)`);
      continue;
    }
    lines.push(`    ${cellName.padEnd(10)} ${h.runs} episodes (held arm speaker ${h.held_arm_role_counts.speaker}, listener ${h.held_arm_role_counts.listener}): detected ${h.detected}, never ${pc(h.never_rate, 1)}; detection max ${f(h.detection_s.max)} s, p95 ${f(h.detection_s.p95)} s; object moved after the hold: mean ${f(h.object_moved_m.mean)} m, max ${f(h.object_moved_m.max)} m`);
  }
  lines.push('(d) both arms in the same role (MuJoCo, worlds of (a))');
  for (const [name, s] of Object.entries(r.same_role)) {
    lines.push(`    ${name.padEnd(11)} total ${f(s.total_s)} s over ${s.runs} runs (${pc(s.fraction_of_time, 3)} of the time); max per run ${f(s.max_per_run_s)} s; runs with any ${s.runs_with_any}`);
  }
  lines.push(`wall time ${r.wall_s.toFixed(0)} s (shared machine)`);
  return lines.join('\n');
}
