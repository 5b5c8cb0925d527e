/**
 * How fast and how wrongly each arm's belief tracks the zones only its partner sees, against the
 * world's truth over time (which changes in families with occupancy changes). Pure: fed per
 * sample with the arms' marginals and per area-sensor reading with the partner's own view;
 * tested on streams with a known answer (test/sim/belief-timing.test.ts).
 *
 * - time to correct: a hidden zone is *determined* at the first reading of the partner's own
 *   area sensor that shows its true state (at the start, and again after each change of the
 *   zone). From then until this arm's marginal on the truth (p if occupied, 1 − p if free)
 *   first exceeds 0.9 is one time to correct. One still open when the zone changes again or the
 *   episode ends is *unresolved* (not in the times).
 * - confident wrong: the time with the marginal on the truth below 0.1, one sample period per
 *   sample, summed over both arms and their hidden zones.
 */
import { percentile } from './measures.js';

export const CORRECT_ABOVE = 0.9;
export const WRONG_BELOW = 0.1;

export interface BeliefTimingSums {
  /** Every resolved time to correct, s (both arms, every hidden zone, every determination). */
  readonly times_s: readonly number[];
  readonly unresolved: number;
  readonly confident_wrong_s: number;
}

export interface BeliefTimingSummary {
  readonly time_to_correct_s: { readonly median: number | null; readonly p95: number | null; readonly max: number | null; readonly count: number; readonly unresolved: number };
  readonly confident_wrong_s: number;
}

type Side = 'left' | 'right';

export class BeliefTiming {
  private readonly truth: Record<Side, Uint8Array>;
  private readonly since: Record<Side, Float64Array>;
  private readonly determined: Record<Side, Uint8Array>;
  private readonly times: number[] = [];
  private unresolved = 0;
  private wrong = 0;

  /**
   * `hidden[side]`: the zones (task order) that arm infers, in its belief's bit order;
   * `occupied`: the truth at the start, task order; `period_s`: the sample period.
   */
  constructor(
    private readonly hidden: Record<Side, Int32Array>,
    occupied: readonly boolean[],
    private readonly period_s: number,
  ) {
    const t = (s: Side) => Uint8Array.from(hidden[s], (z) => (occupied[z] ? 1 : 0));
    this.truth = { left: t('left'), right: t('right') };
    this.since = { left: new Float64Array(hidden.left.length).fill(Number.NaN), right: new Float64Array(hidden.right.length).fill(Number.NaN) };
    this.determined = { left: new Uint8Array(hidden.left.length), right: new Uint8Array(hidden.right.length) };
  }

  /** A reading of `reader`'s own area sensor of zone `zone` at t: 1 occupied, 0 free, anything else unknown. */
  reading(reader: Side, zone: number, state: number, t: number): void {
    if (state !== 0 && state !== 1) return;
    const s: Side = reader === 'left' ? 'right' : 'left';
    const b = this.hidden[s].indexOf(zone);
    if (b < 0 || this.determined[s][b] || state !== this.truth[s][b]) return;
    this.determined[s][b] = 1;
    this.since[s][b] = t;
  }

  /** Zone `zone` changed state at t. */
  zoneChanged(zone: number, occupied: boolean): void {
    for (const s of ['left', 'right'] as const) {
      const b = this.hidden[s].indexOf(zone);
      if (b < 0) continue;
      if (!Number.isNaN(this.since[s][b]!)) this.unresolved++;
      this.truth[s][b] = occupied ? 1 : 0;
      this.determined[s][b] = 0;
      this.since[s][b] = Number.NaN;
    }
  }

  /** Once per sample with each arm's marginals (P(occupied) per hidden zone, bit order). */
  sample(t: number, left: ArrayLike<number>, right: ArrayLike<number>): void {
    this.arm('left', t, left);
    this.arm('right', t, right);
  }

  private arm(s: Side, t: number, m: ArrayLike<number>): void {
    const truth = this.truth[s];
    const since = this.since[s];
    for (let b = 0; b < truth.length; b++) {
      const p = truth[b] ? m[b]! : 1 - m[b]!;
      if (!Number.isNaN(since[b]!) && p > CORRECT_ABOVE) {
        this.times.push(t - since[b]!);
        since[b] = Number.NaN;
      }
      if (p < WRONG_BELOW) this.wrong += this.period_s;
    }
  }

  finish(): BeliefTimingSums {
    let open = 0;
    for (const s of ['left', 'right'] as const) for (const v of this.since[s]) if (!Number.isNaN(v)) open++;
    return { times_s: [...this.times], unresolved: this.unresolved + open, confident_wrong_s: this.wrong };
  }
}

/** Summary of one episode's sums, or of many pooled. */
export function beliefTimingSummary(all: readonly BeliefTimingSums[]): BeliefTimingSummary {
  const times = all.flatMap((a) => a.times_s);
  let unresolved = 0;
  let wrong = 0;
  for (const a of all) {
    unresolved += a.unresolved;
    wrong += a.confident_wrong_s;
  }
  return {
    time_to_correct_s: { median: percentile(times, 0.5), p95: percentile(times, 0.95), max: times.length ? Math.max(...times) : null, count: times.length, unresolved },
    confident_wrong_s: wrong,
  };
}

/** A knock or a collision onset this close before an impact trip explains it, s. */
export const IMPACT_EXPLAINED_S = 0.5;

/**
 * Holds with an impact trip that nothing explains: no knock running or ended within
 * `IMPACT_EXPLAINED_S` before the trip, and no collision onset from 0.05 s after to
 * `IMPACT_EXPLAINED_S` before it.
 */
export function countFalseImpactHolds(
  holds: readonly { readonly reasons: readonly { readonly check: string; readonly t_s: number }[] }[],
  knocks: readonly { readonly t_s: number; readonly duration_s: number }[],
  collisionOnsets: readonly number[],
): number {
  const explained = (t: number) => knocks.some((k) => t >= k.t_s - 1e-9 && t <= k.t_s + k.duration_s + IMPACT_EXPLAINED_S) || collisionOnsets.some((c) => t >= c - 0.05 && t <= c + IMPACT_EXPLAINED_S);
  return holds.filter((e) => e.reasons.some((r) => r.check === 'impact' && !explained(r.t_s))).length;
}
