/**
 * Review finding: the belief was about 9x overconfident. Every 10-sample window of the
 * correction band was scored as an independent observation; on white sensor noise successive
 * 100 Hz means of a 5 Hz band have a lag-1 autocorrelation of 0.98, and a 0.5 s sum has 9.2
 * times the variance that independence assumes.
 *
 * References:
 * - handbook fact: the noise-equivalent bandwidth of an order-n Butterworth low-pass with cut-off
 *   fc is B_N = fc (pi / 2n) / sin(pi / 2n), so white noise through it decorrelates after about
 *   fs / (2 B_N) samples;
 * - handbook fact (Gaussian signal detection): for a correctly specified Gaussian likelihood the
 *   log-likelihood ratio of the true hypothesis against another has variance equal to twice its
 *   mean. An over-counted one has variance / (2 mean) equal to the over-count.
 * Our own synthetic white noise (seeded) through the shipped filter.
 */
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { WrenchFilter, noiseCorrelationSamples, type WrenchFilterConfig } from '../../src/core/filter/index.js';
import { loadCell } from '../../src/params/config.js';
import { Rng } from '../../src/util/rng.js';

const cfg = loadCell('config/demo_cell.yaml').left.config;

describe('review: a calibrated belief', () => {
  it('the likelihood scale is the band\'s independent samples per window (noise-equivalent bandwidth)', () => {
    const s = new ArmStep(cfg);
    const n = 4, fc = cfg.wrench_filter.cutoff_hz, fs = cfg.wrench_filter.sample_rate_hz;
    const bn = (fc * (Math.PI / (2 * n))) / Math.sin(Math.PI / (2 * n));
    const perWindow = fs / cfg.belief.update_rate_hz;
    expect(s.likelihoodScale).toBeCloseTo((perWindow * 2 * bn) / fs, 3);
    expect(s.likelihoodScale).toBeGreaterThan(0.09);
    expect(s.likelihoodScale).toBeLessThan(0.11);
    expect(noiseCorrelationSamples(s.filter.sos)).toBeCloseTo(fs / (2 * bn), 0);
  });

  it('on white noise the scaled log-likelihood ratio has variance twice its mean; unscaled it is about 9x over', () => {
    const filter = new WrenchFilter({ ...(cfg.wrench_filter as unknown as WrenchFilterConfig), tare: { ...cfg.wrench_filter.tare, on_start: false } });
    const scale = new ArmStep(cfg).likelihoodScale;
    const rng = new Rng(11);
    const win = 10, windows = 50; // 0.5 s of 100 Hz windows
    const sigmaW = 1;
    const sigmaBand = sigmaW / Math.sqrt(noiseCorrelationSamples(filter.sos)); // band std for unit-gain DC
    const d = 0.5 * sigmaBand; // separation of the two hypotheses' predicted means
    const sums: number[] = [];
    const w = new Float64Array(6);
    for (let run = 0; run < 400; run++) {
      let llr = 0;
      // Warm-up so the band is stationary, then windows of the band's mean.
      for (let k = 0; k < 2000; k++) { w[0] = sigmaW * rng.normal(); filter.step(w); }
      for (let m = 0; m < windows; m++) {
        let acc = 0;
        for (let k = 0; k < win; k++) { w[0] = sigmaW * rng.normal(); filter.step(w); acc += filter.correction[0]!; }
        const f = acc / win; // truth: mean 0; other hypothesis: mean d
        llr += ((f - d) ** 2 - f ** 2) / (2 * sigmaBand ** 2);
      }
      sums.push(llr);
    }
    const mean = sums.reduce((a, b) => a + b, 0) / sums.length;
    const v = sums.reduce((a, b) => a + (b - mean) ** 2, 0) / (sums.length - 1);
    const overcount = v / (2 * mean);
    expect(overcount).toBeGreaterThan(7);
    expect(overcount).toBeLessThan(12);
    // Scaled as the arm step scales it: variance / (2 mean) = overcount * scale, close to 1.
    const calibrated = (v * scale * scale) / (2 * mean * scale);
    expect(calibrated).toBeGreaterThan(0.75);
    expect(calibrated).toBeLessThan(1.3);
  });
});
