/**
 * Work shared across the candidates of a sweep over bags, without changing any result.
 *
 * What each stage reads: the arm step's wrench filter reads the wrench rows, the tool
 * orientations and `wrench_filter.*`; of its outputs, only the impact flag, score and
 * torque-or-force label depend on `wrench_filter.impact.*` (the cascade, the tare and the
 * bands do not: src/core/filter/wrench-filter.ts computes the score after them). Downstream,
 * the watchdog reads the score and the label only when the flag is up, as the value it records
 * for the trip, and the sweep's counts (evaluate.ts) read neither. So two candidates whose
 * configurations differ only in `wrench_filter.impact.*` give exactly the same counts on a bag
 * whenever their impact flags are the same at every wrench sample of both arms.
 *
 * The evaluator therefore keeps, per bag, the counts of the candidates it ran in full, grouped
 * by their configuration without `wrench_filter.impact.*`; for a new candidate it finds each
 * arm's impact-flag trace and reuses the counts of a member of its group whose traces are
 * equal; otherwise it runs the candidate in full. A trace comes from the core's own
 * WrenchFilter driven as the arm step drives it (same rows, same orientations, same skipped
 * samples; one per distinct `wrench_filter.*` and bag, cached), or, cheaper, is known to be all
 * zeros from the impact band's largest norms (one filter pass per `wrench_filter.*` without
 * `impact.*`: impactBandMaxima). A bag on which a filter would
 * re-tare after its first tare (never: the sweep asks for none) is always run in full.
 */
import { WRENCH_ABS_MAX } from '../core/arm-step.js';
import { WrenchFilter, type WrenchFilterConfig } from '../core/filter/index.js';
import type { ArmConfig } from '../params/config.js';
import { KIND_POSE, KIND_WRENCH, type DecodedArm, type DecodedBag } from './columns.js';
import { evaluateBag, metricsFromBags, type BagCounts, type CandidateMetrics } from './evaluate.js';
import type { Label } from './labels.js';

/**
 * Drive the core's WrenchFilter over one arm's wrench rows and tool orientations exactly as the
 * arm step drives it (ArmStep.step and setToolPose): `after` sees the filter after every wrench
 * sample, with the sample's index. False when the filter would re-tare after its first tare
 * (a pending tare there can be cancelled by the arm's motion, which this does not model).
 */
function driveFilter(bag: DecodedBag, arm: 'left' | 'right', config: ArmConfig, after: (f: WrenchFilter, i: number) => void): boolean {
  const d: DecodedArm = bag.arms[arm];
  const f = new WrenchFilter(config.wrench_filter as unknown as WrenchFilterConfig);
  const row = new Float64Array(6);
  const want = arm === 'left' ? 0 : 4;
  const order = bag.order;
  const index = bag.index;
  const t0s = bag.t0s;
  for (let e = 0; e < bag.count; e++) {
    const code = order[e]!;
    if ((code & 4) !== want) continue;
    const i = index[e]!;
    const kind = code & 3;
    if (kind === KIND_WRENCH) {
      if (f.tarePending && f.tared) return false;
      f.tareOutcome = 0;
      const w = d.wrench;
      let finite = true;
      for (let k = 0; k < 6; k++) {
        const v = w[6 * i + k]!;
        row[k] = v;
        if (!(Math.abs(v) <= WRENCH_ABS_MAX)) finite = false;
      }
      if (finite) f.step(row);
      after(f, i);
    } else if (kind === KIND_POSE) {
      // The quaternion normalised once, only a finite pose kept.
      const p = d.pose;
      const o = 7 * i;
      const x = p[o]!, y = p[o + 1]!, z = p[o + 2]!, qx = p[o + 3]!, qy = p[o + 4]!, qz = p[o + 5]!, qw = p[o + 6]!;
      const nn = Math.sqrt(qx * qx + qy * qy + qz * qz + qw * qw);
      const finite = Number.isFinite(t0s + d.poseRel[i]!) && Number.isFinite(x) && Number.isFinite(y) && Number.isFinite(z) && Number.isFinite(nn);
      if (finite && nn > 1e-9) {
        const inv = 1 / nn;
        f.setOrientation(qx * inv, qy * inv, qz * inv, qw * inv);
      }
    }
  }
  return true;
}

/** The impact flag after each wrench sample of one arm (1: up), or null when the filter would re-tare (no proof: run in full). */
export function impactFlagTrace(bag: DecodedBag, arm: 'left' | 'right', config: ArmConfig): Uint8Array | null {
  const trace = new Uint8Array(bag.arms[arm].wrenchRel.length);
  return driveFilter(bag, arm, config, (f, i) => (trace[i] = f.impactFlag ? 1 : 0)) ? trace : null;
}

/**
 * The largest impact-band force and torque norms over one arm's samples, computed as the
 * filter computes them before it scales them by 1 / impact.force_n and 1 / impact.torque_nm.
 * They do not depend on `wrench_filter.impact.*`. Multiplying by a positive number is
 * monotone in floating point too, so when max_f / force_n and max_t / torque_nm (as the filter
 * rounds them) are both below 1, no sample scores 1 and the flag never rises: its trace is all
 * zeros, known without running the detector. NaN (or a re-tare: null) proves nothing.
 */
export function impactBandMaxima(bag: DecodedBag, arm: 'left' | 'right', config: ArmConfig): { force: number; torque: number } | null {
  let force = 0, torque = 0;
  const ok = driveFilter(bag, arm, config, (f) => {
    const imp = f.impact;
    force = Math.max(force, Math.sqrt(imp[0]! * imp[0]! + imp[1]! * imp[1]! + imp[2]! * imp[2]!));
    torque = Math.max(torque, Math.sqrt(imp[3]! * imp[3]! + imp[4]! * imp[4]! + imp[5]! * imp[5]!));
  });
  return ok ? { force, torque } : null;
}

function sameBytes(a: Uint8Array, b: Uint8Array): boolean {
  if (a.length !== b.length) return false;
  for (let k = 0; k < a.length; k++) if (a[k] !== b[k]) return false;
  return true;
}

/** Configuration values as text, exactly: non-finite numbers, maps, sets and typed arrays kept apart. */
function exact(_k: string, v: unknown): unknown {
  if (typeof v === 'number' && !Number.isFinite(v)) return `#${v}`;
  if (v instanceof Map) return { '#map': [...v] };
  if (v instanceof Set) return { '#set': [...v] };
  if (ArrayBuffer.isView(v)) return { '#typed': Array.from(v as unknown as ArrayLike<number>) };
  return v;
}

/** A configuration without `wrench_filter.impact.*`, as text: candidates with the same key may share counts. */
export function restKey(left: ArmConfig, right: ArmConfig): string {
  const strip = (c: ArmConfig) => ({ ...c, wrench_filter: { ...c.wrench_filter, impact: null } });
  return JSON.stringify([strip(left), strip(right)], exact);
}

interface Ran {
  readonly left: Uint8Array;
  readonly right: Uint8Array;
  readonly counts: BagCounts;
}

/** Counts of shared and full evaluations (for the benchmark). */
export interface ShareStats {
  /** Candidate-bags run in full, and those that reused another's counts. */
  full: number;
  shared: number;
  /** Filter passes: impact-flag traces, and impact-band maxima. */
  traces: number;
  maxima: number;
}

/** A sweep's candidates over decoded bags, sharing what may be shared (see the file comment). Stateful: keep one per worker. */
export class SharedEvaluator {
  readonly stats: ShareStats = { full: 0, shared: 0, traces: 0, maxima: 0 };
  private readonly traces: Map<string, Uint8Array | null>[];
  private readonly ran: Map<string, Ran[]>[];
  private readonly maxima: Map<string, { force: number; torque: number } | null>[];
  private readonly zeros = new Map<number, Uint8Array>();

  constructor(
    readonly bags: readonly DecodedBag[],
    readonly labels: readonly (readonly Label[])[],
    readonly tolerance_s: number,
    /** false: every candidate in full (the reference the shared results are tested against). */
    readonly share = true,
  ) {
    this.traces = bags.map(() => new Map());
    this.ran = bags.map(() => new Map());
    this.maxima = bags.map(() => new Map());
  }

  private trace(b: number, arm: 'left' | 'right', c: ArmConfig): Uint8Array | null {
    const bag = this.bags[b]!;
    const im = c.wrench_filter.impact;
    const restKey = `${arm} ${JSON.stringify({ ...c.wrench_filter, impact: null }, exact)}`;
    const maxima = this.maxima[b]!;
    if (!maxima.has(restKey)) {
      maxima.set(restKey, impactBandMaxima(bag, arm, c));
      this.stats.maxima++;
    }
    const m = maxima.get(restKey)!;
    // The filter's own scaling: the norm times 1 / force_n (1 / torque_nm).
    if (m && m.force * (1 / im.force_n) < 1 && m.torque * (1 / im.torque_nm) < 1) {
      const n = bag.arms[arm].wrenchRel.length;
      let z = this.zeros.get(n);
      if (!z) this.zeros.set(n, (z = new Uint8Array(n)));
      return z;
    }
    const key = `${arm} ${JSON.stringify(c.wrench_filter, exact)}`;
    const cache = this.traces[b]!;
    if (!cache.has(key)) {
      cache.set(key, impactFlagTrace(bag, arm, c));
      this.stats.traces++;
    }
    return cache.get(key)!;
  }

  /** One bag's counts of a candidate. */
  counts(b: number, left: ArmConfig, right: ArmConfig): BagCounts {
    const bag = this.bags[b]!;
    if (!this.share) {
      this.stats.full++;
      return evaluateBag(bag, left, right, this.labels[b]!, this.tolerance_s);
    }
    const key = restKey(left, right);
    const tl = this.trace(b, 'left', left);
    const tr = this.trace(b, 'right', right);
    const group = this.ran[b]!.get(key);
    if (tl && tr && group) {
      for (const r of group) {
        if (sameBytes(r.left, tl) && sameBytes(r.right, tr)) {
          this.stats.shared++;
          return r.counts;
        }
      }
    }
    const counts = evaluateBag(bag, left, right, this.labels[b]!, this.tolerance_s);
    this.stats.full++;
    if (tl && tr) {
      if (group) group.push({ left: tl, right: tr, counts });
      else this.ran[b]!.set(key, [{ left: tl, right: tr, counts }]);
    }
    return counts;
  }

  /** A candidate's metrics over every bag. */
  metrics(left: ArmConfig, right: ArmConfig): CandidateMetrics {
    return metricsFromBags(this.bags.map((_, b) => this.counts(b, left, right)));
  }
}
