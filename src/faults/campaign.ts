/**
 * The fault campaign: N simulated episodes on the kinematic cell, each with one injected fault
 * (kinds in turn, every draw from the campaign seed), the invariants checked on every sample,
 * and a clock-skew curve (one arm's clock ahead of the other's, no other fault). Episodes go to
 * worker threads for `jobs` > 1; results are kept by episode index, so the figures do not
 * depend on `jobs`.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { ArmConfig } from '../params/config.js';
import { yieldToSignals } from '../util/interrupt.js';
import { Rng } from '../util/rng.js';
import { worldSeed } from '../sim/world.js';
import { runFaultEpisode } from './cell.js';
import { INVARIANTS } from './invariants.js';
import { FAULT_KINDS, SKEW_CURVE_S, drawFault, expectsHold, type Fault, type FaultKind } from './kinds.js';

export interface CampaignInit {
  readonly left: ArmConfig;
  readonly right: ArmConfig;
  readonly duration_s: number;
}

export interface CampaignJob {
  readonly id: number;
  /** A fault kind, or 'skew' for a point of the skew curve. */
  readonly kind: FaultKind | 'skew';
  readonly seed: number;
  /** The skew of a curve point, s. */
  readonly skew_s: number;
}

export interface EpisodeOutcome {
  readonly id: number;
  readonly kind: FaultKind | 'skew';
  readonly fault: Fault | null;
  readonly success: boolean;
  readonly end: string;
  readonly time_s: number;
  /** The arm that should react (the faulted one, or the survivor of a dead pipeline) held after the onset. */
  readonly held: boolean;
  readonly expected_hold: boolean;
  readonly reaction_s: number | null;
  readonly violations: number;
  readonly violation_counts: readonly number[];
  readonly examples: readonly string[];
  readonly peak_internal_n: number;
  readonly same_role_fraction: number;
}

const ONSET_S: readonly [number, number] = [3, 10];

/** One job, deterministic for its seed (main thread or worker). */
export function runCampaignJob(init: CampaignInit, j: CampaignJob): EpisodeOutcome {
  const rng = new Rng(j.seed);
  const zones = init.left.task.zones;
  const occupied = zones.map(() => rng.uniform() < 0.5);
  const st = init.left.watchdog.stale_after_s;
  const stale = { wrench: st.wrench, joint_states: st.joint_states, tool_pose: st.tool_pose, zone_view: st.zone_view };
  let fault: Fault | null = null;
  if (j.kind === 'skew') {
    const arm = rng.uniform() < 0.5 ? 'left' : 'right';
    if (j.skew_s > 0) fault = { kind: 'clock_skew', arm, start_s: 0, duration_s: Number.POSITIVE_INFINITY, magnitude: j.skew_s, stream: 'wrench', axis: 0 };
  } else {
    fault = drawFault(j.kind, rng, ONSET_S[0], ONSET_S[1], stale);
  }
  const r = runFaultEpisode(init.left, init.right, occupied, fault ? [fault] : [], { seed: rng.nextU32(), duration_s: init.duration_s });
  const watcher = fault === null ? r.left : fault.kind === 'partner_death' ? (fault.arm === 'left' ? r.right : r.left) : fault.arm === 'left' ? r.left : r.right;
  const heldAt = watcher.first_held_after_fault_s;
  const counts = INVARIANTS.map((_, k) => (r.left.violation_counts[k] ?? 0) + (r.right.violation_counts[k] ?? 0));
  return {
    id: j.id,
    kind: j.kind,
    fault,
    success: r.success,
    end: r.end,
    time_s: r.time_s,
    held: heldAt !== null,
    expected_hold: fault !== null && expectsHold(fault, stale),
    reaction_s: heldAt !== null && fault ? heldAt - fault.start_s : null,
    violations: r.left.violations + r.right.violations,
    violation_counts: counts,
    examples: [...r.left.examples, ...r.right.examples].slice(0, 4),
    peak_internal_n: r.peak_internal_n,
    same_role_fraction: r.same_role_fraction,
  };
}

export interface CampaignInput extends CampaignInit {
  readonly episodes: number;
  readonly seed: number;
  readonly jobs: number;
  readonly kinds?: readonly FaultKind[];
  /** Episodes per point of the skew curve (0: no curve). */
  readonly skew_episodes: number;
  readonly onProgress?: (done: number, total: number) => void;
  /** Stop handing out work (an interruption): finished episodes are kept. */
  readonly shouldStop?: () => boolean;
}

export interface KindRow {
  episodes: number;
  holds: number;
  reaction_s: { max: number | null; p99: number | null };
  violations: number;
  task_success: number;
  expected_holds: number;
  missed_holds: number;
}

export interface SkewPoint {
  skew_s: number;
  episodes: number;
  task_success: number;
  peak_internal_n: { mean: number; max: number };
  /** Mean over the episodes of the fraction of time both arms had the same role. */
  same_role_fraction: number;
  violations: number;
}

export interface CampaignResult {
  kinds: Record<string, KindRow>;
  violations: number;
  violations_by_invariant: Record<string, number>;
  episodes: number;
  episodes_done: number;
  seed: number;
  skew_curve: SkewPoint[];
  examples: string[];
  interrupted: boolean;
}

/** Nearest-rank quantile of sorted values. */
function quantile(sorted: readonly number[], q: number): number | null {
  if (sorted.length === 0) return null;
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil(q * sorted.length) - 1))]!;
}

export function campaignJobs(input: Pick<CampaignInput, 'episodes' | 'seed' | 'kinds' | 'skew_episodes'>): CampaignJob[] {
  const kinds = input.kinds ?? FAULT_KINDS;
  const jobs: CampaignJob[] = [];
  for (let i = 0; i < input.episodes; i++) jobs.push({ id: i, kind: kinds[i % kinds.length]!, seed: worldSeed(input.seed, i), skew_s: 0 });
  let id = input.episodes;
  SKEW_CURVE_S.forEach((skew, p) => {
    for (let e = 0; e < input.skew_episodes; e++) jobs.push({ id: id++, kind: 'skew', seed: worldSeed(input.seed ^ 0x5ce3, p * 100_003 + e), skew_s: skew });
  });
  return jobs;
}

export function aggregateCampaign(input: Pick<CampaignInput, 'episodes' | 'seed' | 'kinds'>, outcomes: readonly (EpisodeOutcome | undefined)[], interrupted: boolean): CampaignResult {
  const kinds: Record<string, KindRow> = {};
  const reactions: Record<string, number[]> = {};
  let total = 0;
  const byInv: Record<string, number> = Object.fromEntries(INVARIANTS.map((n) => [n, 0]));
  const examples: string[] = [];
  const skew = new Map<number, EpisodeOutcome[]>();
  let done = 0;
  for (const k of input.kinds ?? FAULT_KINDS) {
    kinds[k] = { episodes: 0, holds: 0, reaction_s: { max: null, p99: null }, violations: 0, task_success: 0, expected_holds: 0, missed_holds: 0 };
    reactions[k] = [];
  }
  for (const o of outcomes) {
    if (!o) continue;
    done++;
    total += o.violations;
    o.violation_counts.forEach((c, k) => (byInv[INVARIANTS[k]!]! += c));
    if (o.violations > 0 && examples.length < 10) examples.push(`episode ${o.id} (${o.kind}): ${o.examples.join('; ')}`);
    if (o.kind === 'skew') {
      const s = o.fault?.magnitude ?? 0;
      const list = skew.get(s) ?? [];
      list.push(o);
      skew.set(s, list);
      continue;
    }
    const row = kinds[o.kind]!;
    row.episodes++;
    if (o.held) row.holds++;
    if (o.expected_hold) {
      row.expected_holds++;
      if (!o.held) row.missed_holds++;
    }
    row.violations += o.violations;
    row.task_success += o.success ? 1 : 0;
    if (o.reaction_s !== null) reactions[o.kind]!.push(o.reaction_s);
  }
  for (const [k, row] of Object.entries(kinds)) {
    const r = reactions[k]!.sort((a, b) => a - b);
    row.reaction_s = { max: r.length ? r[r.length - 1]! : null, p99: quantile(r, 0.99) };
    row.task_success = row.episodes ? row.task_success / row.episodes : 0;
  }
  const curve: SkewPoint[] = [];
  for (const s of SKEW_CURVE_S) {
    const list = skew.get(s);
    if (!list) continue;
    const peaks = list.map((o) => o.peak_internal_n);
    curve.push({
      skew_s: s,
      episodes: list.length,
      task_success: list.filter((o) => o.success).length / list.length,
      peak_internal_n: { mean: peaks.reduce((a, b) => a + b, 0) / list.length, max: Math.max(...peaks) },
      same_role_fraction: list.reduce((a, o) => a + o.same_role_fraction, 0) / list.length,
      violations: list.reduce((a, o) => a + o.violations, 0),
    });
  }
  return { kinds, violations: total, violations_by_invariant: byInv, episodes: input.episodes, episodes_done: done, seed: input.seed, skew_curve: curve, examples, interrupted };
}

/** The built worker script (worker threads need JavaScript). */
export function campaignWorkerScript(): string {
  const here = fileURLToPath(import.meta.url);
  const c = here.endsWith('.ts') ? fileURLToPath(new URL('../../dist/src/faults/worker.js', import.meta.url)) : fileURLToPath(new URL('./worker.js', import.meta.url));
  if (!existsSync(c)) throw new Error(`the worker script ${c} is missing: build with 'npx tsc -p tsconfig.build.json'`);
  return c;
}

export async function runCampaign(input: CampaignInput): Promise<CampaignResult> {
  const jobs = campaignJobs(input);
  const init: CampaignInit = { left: input.left, right: input.right, duration_s: input.duration_s };
  const results: Array<EpisodeOutcome | undefined> = new Array(jobs.length);
  let done = 0;
  const stop = input.shouldStop ?? (() => false);
  const n = Math.max(1, Math.min(input.jobs, jobs.length));
  if (n === 1) {
    for (const j of jobs) {
      if (stop()) break;
      results[j.id] = runCampaignJob(init, j);
      input.onProgress?.(++done, jobs.length);
      // Let signals and timers run between episodes.
      await yieldToSignals();
    }
  } else {
    await new Promise<void>((resolve, reject) => {
      let next = 0;
      let busy = 0;
      let failed = false;
      const workers: Worker[] = [];
      const end = () => {
        for (const w of workers) void w.terminate();
        resolve();
      };
      const feed = (w: Worker) => {
        if (next < jobs.length && !stop()) {
          busy++;
          w.postMessage(jobs[next++]);
        } else if (busy === 0) end();
      };
      for (let i = 0; i < n; i++) {
        const w = new Worker(campaignWorkerScript(), { workerData: init });
        workers.push(w);
        w.on('message', (m: { type: 'ready' } | { type: 'result'; outcome: EpisodeOutcome } | { type: 'error'; message: string }) => {
          if (failed) return;
          if (m.type === 'error') {
            failed = true;
            for (const x of workers) void x.terminate();
            reject(new Error(`a fault episode failed in a worker: ${m.message}`));
            return;
          }
          if (m.type === 'result') {
            busy--;
            results[m.outcome.id] = m.outcome;
            input.onProgress?.(++done, jobs.length);
          }
          feed(w);
        });
        w.on('error', (err) => {
          if (failed) return;
          failed = true;
          for (const x of workers) void x.terminate();
          reject(err);
        });
      }
    });
  }
  return aggregateCampaign(input, results, done < jobs.length);
}
