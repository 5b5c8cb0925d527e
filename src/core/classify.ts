/**
 * Labelling a wrench log sample by sample: `untared` until the filter's start-up tare has
 * completed (before it, the correction band still carries the sensor bias and the payload weight,
 * so it says nothing about the partner), then `impact` while the impact flag is up,
 * `correction` while the correction band carries a force or torque above its level, `quiet`
 * otherwise. Uses exactly the wrench filter of the arm step. Impacts are listed from the tare on.
 */
import { WrenchFilter, type WrenchFilterConfig } from './filter/index.js';

/** Indices are stable: `untared` was added last. */
export const LABELS = ['quiet', 'correction', 'impact', 'untared'] as const;
export const LABEL_UNTARED = 3;
export type Label = (typeof LABELS)[number];

export interface ClassifyResult {
  /** Index into LABELS per sample. */
  readonly labels: Uint8Array;
  readonly scores: Float64Array;
  readonly impacts: { start_s: number; end_s: number; peak_score: number }[];
  /** Time the first tare completed, or null when the log never held still long enough. */
  readonly tared_at_s: number | null;
}

export function classifyWrench(
  t: Float64Array,
  wrench: Float64Array,
  config: WrenchFilterConfig,
  correctionForceN: number,
  correctionTorqueNm: number,
): ClassifyResult {
  const f = new WrenchFilter(config);
  const n = t.length;
  const labels = new Uint8Array(n);
  const scores = new Float64Array(n);
  const impacts: { start_s: number; end_s: number; peak_score: number }[] = [];
  let open: { start_s: number; end_s: number; peak_score: number } | null = null;
  let taredAt: number | null = null;
  for (let k = 0; k < n; k++) {
    f.step(wrench.subarray(6 * k, 6 * k + 6));
    if (taredAt === null && f.tared) taredAt = t[k]!;
    scores[k] = f.impactScore;
    const c = f.correction;
    if (taredAt === null) {
      labels[k] = LABEL_UNTARED;
    } else if (f.impactFlag) {
      labels[k] = 2;
      if (!open) {
        open = { start_s: t[k]!, end_s: t[k]!, peak_score: f.impactScore };
        impacts.push(open);
      }
      open.end_s = t[k]!;
      if (f.impactScore > open.peak_score) open.peak_score = f.impactScore;
    } else {
      open = null;
      labels[k] = Math.hypot(c[0]!, c[1]!, c[2]!) > correctionForceN || Math.hypot(c[3]!, c[4]!, c[5]!) > correctionTorqueNm ? 1 : 0;
    }
  }
  return { labels, scores, impacts, tared_at_s: taredAt };
}
