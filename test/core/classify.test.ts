/**
 * Labelling a wrench log (src/core/classify.ts) on invented logs of our own scenario (a 1 kHz
 * wrist sensor under the beam): untared until the start-up tare, then impact while the impact
 * flag is up, correction above the force or torque level (strictly above), quiet otherwise; one
 * impact entry per run of impact samples with its start, end and peak score. The filter is the
 * arm step's own (WrenchFilter), run alongside as the reference for the per-sample values.
 */
import { describe, expect, it } from 'vitest';
import { LABELS, LABEL_UNTARED, classifyWrench } from '../../src/core/classify.js';
import { WrenchFilter, wrenchFilterConfig } from '../../src/core/filter/index.js';

const FS = 1000;
const CFG = wrenchFilterConfig({ sample_rate_hz: FS });

/** n samples at 1 kHz with a still bias, then `edit` per sample. */
function log(n: number, edit?: (k: number, w: Float64Array) => void): { t: Float64Array; w: Float64Array } {
  const t = new Float64Array(n);
  const w = new Float64Array(6 * n);
  for (let k = 0; k < n; k++) {
    t[k] = k / FS;
    const s = w.subarray(6 * k, 6 * k + 6);
    s.set([0.4, -0.3, -11.8, 0.02, 0.01, 0]);
    edit?.(k, s);
  }
  return { t, w };
}

/** The filter run alongside: correction norms, score and flag per sample. */
function reference(w: Float64Array, n: number): { f: Float64Array; tq: Float64Array; flag: Uint8Array; score: Float64Array; taredAt: number } {
  const filt = new WrenchFilter(CFG);
  const f = new Float64Array(n);
  const tq = new Float64Array(n);
  const flag = new Uint8Array(n);
  const score = new Float64Array(n);
  let taredAt = -1;
  for (let k = 0; k < n; k++) {
    filt.step(w.subarray(6 * k, 6 * k + 6));
    if (taredAt < 0 && filt.tared) taredAt = k;
    const c = filt.correction;
    f[k] = Math.hypot(c[0]!, c[1]!, c[2]!);
    tq[k] = Math.hypot(c[3]!, c[4]!, c[5]!);
    flag[k] = filt.impactFlag ? 1 : 0;
    score[k] = filt.impactScore;
  }
  return { f, tq, flag, score, taredAt };
}

describe('classifyWrench', () => {
  it('keeps the label indices stable', () => {
    expect(LABELS).toEqual(['quiet', 'correction', 'impact', 'untared']);
    expect(LABEL_UNTARED).toBe(3);
  });

  it('labels untared until the start-up tare, then quiet on a still log', () => {
    const n = 900;
    const { t, w } = log(n);
    const r = classifyWrench(t, w, CFG, 5, 0.5);
    const ref = reference(w, n);
    // The still window is 0.5 s: the tare completes on its 500th sample.
    expect(ref.taredAt).toBe(CFG.tare.window_s * FS - 1);
    expect(r.tared_at_s).toBe(t[ref.taredAt]);
    for (let k = 0; k < n; k++) expect(r.labels[k], `sample ${k}`).toBe(k < ref.taredAt ? LABEL_UNTARED : 0);
    expect(r.impacts).toEqual([]);
    expect(r.scores.length).toBe(n);
    for (let k = 0; k < n; k++) expect(r.scores[k]).toBe(ref.score[k]);
  });

  it('says null when the log never holds still long enough to tare', () => {
    const n = 800;
    const { t, w } = log(n, (k, s) => {
      s[0] = 10 * Math.sin(k / 20); // a 20 N peak-to-peak wobble: never still
    });
    const r = classifyWrench(t, w, CFG, 5, 0.5);
    expect(r.tared_at_s).toBeNull();
    expect([...r.labels].every((l) => l === LABEL_UNTARED)).toBe(true);
  });

  it('labels a slow push as correction strictly above the force level, and torque likewise', () => {
    const n = 2500;
    // From 0.8 s a slow 20 N push along x and a 1 N·m twist about z, ramped in over 1 s.
    const { t, w } = log(n, (k, s) => {
      const a = Math.min(1, Math.max(0, (k - 800) / 1000));
      s[0] = s[0]! + 20 * a;
      s[5] = s[5]! + 1 * a;
    });
    const ref = reference(w, n);
    const k0 = 2000; // well into the push, no impact
    expect(ref.flag[k0]).toBe(0);
    // Force level exactly at the correction norm of sample k0: not above, so not correction
    // (torque level out of reach); one step below it: correction.
    const atF = classifyWrench(t, w, CFG, ref.f[k0]!, 1e9);
    expect(atF.labels[k0]).toBe(0);
    const belowF = classifyWrench(t, w, CFG, ref.f[k0]! * (1 - 1e-12), 1e9);
    expect(belowF.labels[k0]).toBe(1);
    // The same for the torque level.
    const atT = classifyWrench(t, w, CFG, 1e9, ref.tq[k0]!);
    expect(atT.labels[k0]).toBe(0);
    const belowT = classifyWrench(t, w, CFG, 1e9, ref.tq[k0]! * (1 - 1e-12));
    expect(belowT.labels[k0]).toBe(1);
    // Every sample after the tare: correction exactly where the reference norms pass the levels.
    const r = classifyWrench(t, w, CFG, 5, 0.5);
    for (let k = ref.taredAt; k < n; k++) {
      const want = ref.flag[k] ? 2 : ref.f[k]! > 5 || ref.tq[k]! > 0.5 ? 1 : 0;
      expect(r.labels[k], `sample ${k}`).toBe(want);
    }
    expect(r.labels[n - 1]).toBe(1);
  });

  it('lists one impact per run of flagged samples, with start, end and peak score', () => {
    const n = 2000;
    // Two knocks of 60 N on y, 5 ms long, at 0.9 s and 1.5 s; the flag falls between them.
    const knocks = [900, 1500];
    const { t, w } = log(n, (k, s) => {
      for (const k0 of knocks) if (k >= k0 && k < k0 + 5) s[1] = s[1]! + 60 * (k === k0 + 3 ? 1.5 : 1);
    });
    const ref = reference(w, n);
    const r = classifyWrench(t, w, CFG, 5, 0.5);
    // The runs of the reference flag.
    const runs: { start: number; end: number; peak: number }[] = [];
    for (let k = 0; k < n; k++) {
      if (!ref.flag[k]) continue;
      if (k === 0 || !ref.flag[k - 1]) runs.push({ start: k, end: k, peak: ref.score[k]! });
      const run = runs[runs.length - 1]!;
      run.end = k;
      run.peak = Math.max(run.peak, ref.score[k]!);
    }
    expect(runs.length).toBe(2);
    expect(r.impacts).toEqual(runs.map((x) => ({ start_s: t[x.start], end_s: t[x.end], peak_score: x.peak })));
    for (const x of runs) {
      for (let k = x.start; k <= x.end; k++) expect(r.labels[k]).toBe(2);
      expect(r.labels[x.end + 1]).not.toBe(2);
      expect(r.impacts.find((i) => i.start_s === t[x.start])!.peak_score).toBeGreaterThan(r.scores[x.start]!);
    }
  });

  it('ends an impact that lasts to the end of the log at the last sample', () => {
    const n = 700;
    // A 60 N knock on the last 5 samples: the flag is still up when the log ends.
    const { t, w } = log(n, (k, s) => {
      if (k >= n - 5) s[1] = s[1]! + 60;
    });
    const r = classifyWrench(t, w, CFG, 5, 0.5);
    expect(r.impacts.length).toBe(1);
    expect(r.impacts[0]!.end_s).toBe(t[n - 1]);
    expect(r.labels[n - 1]).toBe(2);
  });
});
