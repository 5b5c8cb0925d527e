/**
 * simulate's summary.json in the one summary schema replay writes too (src/replay/summary.ts):
 * the same `schema`, `version`, `duration_s`, `arms[]` (from the replay of the episode's own bag,
 * so every per-arm field is computed by the same code as in replay), `holds` and trips, plus
 * what only a simulation knows (the world, success, collisions, the true internal force).
 */
import { ESTIMATED_SOURCE, INTERNAL_FORCE_SIGN, SUMMARY_SCHEMA, SUMMARY_VERSION, holdTotals, tripSummary, type HoldSummary } from '../replay/summary.js';
import type { EpisodeSummary } from './episode.js';

const r4 = (v: number) => (Number.isFinite(v) ? Math.round(v * 1e4) / 1e4 : null);

export const TRUE_SOURCE = 'true: the opposing component of the two wrist forces along the beam axis in the simulated cell, noise-free, after the settle time';

export function simulateSummaryJson(s: EpisodeSummary, replaySummary: Record<string, unknown> | null, replayMatches: boolean | null): Record<string, unknown> {
  const holds: HoldSummary[] = s.holds.events.map((e) => ({
    arm: e.arm,
    start_s: r4(e.start_s)!,
    end_s: e.end_s === null ? null : r4(e.end_s),
    reasons: e.reasons.map((r) => tripSummary(r)),
  }));
  const estimated = replaySummary?.['internal_force'] as Record<string, unknown> | undefined;
  const { holds: _h, internal_force: inf, ...rest } = s;
  return {
    schema: SUMMARY_SCHEMA,
    version: SUMMARY_VERSION,
    kind: 'simulate',
    ...rest,
    duration_s: r4(s.duration_s),
    internal_force: { peak_n: r4(inf.peak_n), mean_abs_n: r4(inf.mean_abs_n), source: TRUE_SOURCE, sign: INTERNAL_FORCE_SIGN },
    ...(estimated ? { internal_force_estimated: { ...estimated, source: ESTIMATED_SOURCE } } : {}),
    holds: { ...holdTotals(holds), false_impact: s.holds.false_impact },
    ...(replaySummary ? { arms: replaySummary['arms'] } : {}),
    ...(replayMatches === null ? {} : { bag_replay_matches_closed_loop: replayMatches }),
  };
}
