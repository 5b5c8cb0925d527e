/**
 * A simulated episode's holds and impact trips against the simulator's ground truth (the
 * world's knocks and the beam's contacts), for a sweep over worlds. The same counts as over
 * labelled bags (evaluate.ts), with the knocks as the labelled impacts:
 *   - a knock is detected when either arm's hold carries an impact trip from the knock's start
 *     to IMPACT_EXPLAINED_S after its end; the delay is from the knock's start to that trip. A
 *     knock that comes while a hold with an impact trip is in force (the watchdog keeps the
 *     first trip of a kind per hold, so a second knock leaves no trip of its own) is detected
 *     too, with no delay counted;
 *   - a hold is explained when it starts in such a window (or its impact trip lies in one), or
 *     at or after the run's first contact with an obstacle (from then on the holds are the
 *     contact's; the contact counts in the collision rate); a partner-only hold (partner_stop,
 *     partner_hold) up to the partner window after a hold of the other arm is that hold's
 *     consequence and is not counted a second time; every other hold is a false hold;
 *   - for the ROC: the run is cut into 1 s bins; bins that overlap no knock window are the
 *     negatives, and those holding the start of a false hold are the false positives.
 * Pure: a function of the episode summary and the partner window.
 */
import { IMPACT_EXPLAINED_S } from '../sim/belief-timing.js';
import type { EpisodeSummary } from '../sim/episode.js';
import { markFalseHold, rocBins, rocCounts } from './roc-bins.js';

export interface WorldTruthCounts {
  readonly knocks: number;
  readonly detected: number;
  /** Detection delays of the detected knocks, s. */
  readonly delays_s: readonly number[];
  readonly holds: number;
  readonly false_holds: number;
  readonly negative_bins: number;
  readonly false_bins: number;
}

const PARTNER_ONLY = new Set(['partner_stop', 'partner_hold']);

export function worldTruth(s: Pick<EpisodeSummary, 'duration_s' | 'world' | 'holds' | 'collisions'>, partnerWindow_s: number): WorldTruthCounts {
  const windows = s.world.knocks.map((k) => [k.t_s - 1e-9, k.t_s + k.duration_s + IMPACT_EXPLAINED_S, k.t_s] as const);
  const inWindow = (t: number): boolean => windows.some(([a, b]) => t >= a && t <= b);
  const events = [...s.holds.events].sort((a, b) => a.start_s - b.start_s || (a.arm < b.arm ? -1 : a.arm > b.arm ? 1 : 0));
  let detected = 0;
  const delays: number[] = [];
  for (const [a, b, t0] of windows) {
    let first = Number.POSITIVE_INFINITY;
    for (const e of events) for (const r of e.reasons) if (r.check === 'impact' && r.t_s >= a && r.t_s <= b && r.t_s < first) first = r.t_s;
    if (first !== Number.POSITIVE_INFINITY) {
      detected++;
      delays.push(Math.max(0, first - t0));
    } else if (events.some((e) => e.start_s <= t0 && (e.end_s === null || e.end_s >= t0) && e.reasons.some((r) => r.check === 'impact' && r.t_s <= t0))) detected++;
  }
  const contactFrom = s.collisions.first_s === null ? Number.POSITIVE_INFINITY : s.collisions.first_s - 0.05;
  const roc = rocBins(s.duration_s, windows.map(([, b, t0]) => [t0, b] as const));
  const last = new Map<string, number>();
  let falseHolds = 0;
  for (const e of events) {
    const other = last.get(e.arm === 'left' ? 'right' : 'left');
    last.set(e.arm, e.start_s);
    const impactIn = e.reasons.some((r) => r.check === 'impact' && inWindow(r.t_s));
    if (inWindow(e.start_s) || impactIn || e.start_s >= contactFrom) continue;
    const partnerOnly = e.reasons.length > 0 && e.reasons.every((r) => PARTNER_ONLY.has(r.check));
    if (partnerOnly && other !== undefined && e.start_s - other <= partnerWindow_s) continue;
    falseHolds++;
    markFalseHold(roc, e.start_s);
  }
  return { knocks: windows.length, detected, delays_s: delays, holds: events.length, false_holds: falseHolds, ...rocCounts(roc) };
}
