/**
 * Hardening: the impact detector's configuration limits at their edges (the filter's own
 * validation, src/core/filter/wrench-filter.ts, checkWrenchFilterConfig): each bound accepted
 * at the bound and refused just past it, with the key, the code and what is allowed.
 */
import { describe, expect, it } from 'vitest';
import { checkWrenchFilterConfig, WrenchFilter, wrenchFilterConfig, type WrenchFilterConfig } from '../../src/core/filter/wrench-filter.js';

type Impact = WrenchFilterConfig['impact'];
const problems = (impact: Partial<Impact>) => checkWrenchFilterConfig(wrenchFilterConfig({ impact }));
const UP = 1 + 1e-12;

describe('impact configuration edges', () => {
  const cases: { key: keyof Impact; ok: number[]; bad: unknown[]; hint: string }[] = [
    { key: 'force_n', ok: [1e-9, 15, 1e6], bad: [0, -1, Number.NaN, Number.POSITIVE_INFINITY, '15'], hint: 'a force in newtons greater than 0' },
    { key: 'torque_nm', ok: [1e-9, 6], bad: [0, -0.5, Number.NaN, null], hint: 'a torque in newton-metres greater than 0' },
    { key: 'release_ratio', ok: [1e-9, 0.5, 1], bad: [0, -0.1, UP, 2, Number.NaN], hint: 'a ratio with 0 < release_ratio ≤ 1' },
    { key: 'min_duration_s', ok: [0, 0.003, 1], bad: [-1e-12, 1 * UP, Number.NaN], hint: 'seconds from 0 to 1 (rounded to samples, at least one)' },
    { key: 'hold_s', ok: [0, 0.05, 10], bad: [-1e-12, 10 * UP, Number.POSITIVE_INFINITY], hint: 'seconds from 0 to 10 (rounded to samples, at least one)' },
  ];
  it.each(cases)('impact.$key: accepted at its bounds, refused just past them', ({ key, ok, bad, hint }) => {
    for (const v of ok) {
      expect(problems({ [key]: v }), `${key} = ${v}`).toEqual([]);
      expect(() => new WrenchFilter(wrenchFilterConfig({ impact: { [key]: v } }))).not.toThrow();
    }
    for (const v of bad) {
      const p = problems({ [key]: v as number });
      expect(p, `${key} = ${String(v)}`).toEqual([{ code: 'param.out_of_range', message: `wrench_filter.impact.${key} = ${JSON.stringify(v) ?? String(v)} is not allowed`, where: { key: `wrench_filter.impact.${key}` }, hint }]);
      expect(() => new WrenchFilter(wrenchFilterConfig({ impact: { [key]: v as number } }))).toThrow(`wrench_filter.impact.${key}`);
    }
  });

  it.each([null, 5, 'impact'])('an impact section that is not an object (%s) is a wrong type, named as such', (v) => {
    const cfg = { ...wrenchFilterConfig(), impact: v } as unknown as WrenchFilterConfig;
    expect(checkWrenchFilterConfig(cfg)).toEqual([{ code: 'param.wrong_type', message: `wrench_filter.impact = ${JSON.stringify(v)} is not allowed`, where: { key: 'wrench_filter.impact' }, hint: 'an object with force_n, torque_nm, release_ratio, min_duration_s, hold_s' }]);
  });

  it('rise and hold counts round to samples with at least one (at 1 kHz and 8 kHz)', () => {
    const f = (impact: Partial<Impact>, rate = 1000) => new WrenchFilter(wrenchFilterConfig({ sample_rate_hz: rate, impact }));
    expect(f({ min_duration_s: 0.0034, hold_s: 0.0496 })).toMatchObject({ riseSamples: 3, holdSamples: 50 });
    expect(f({ min_duration_s: 0.0036, hold_s: 0.0504 })).toMatchObject({ riseSamples: 4, holdSamples: 50 });
    expect(f({ min_duration_s: 0, hold_s: 0 })).toMatchObject({ riseSamples: 1, holdSamples: 1 });
    expect(f({ min_duration_s: 0.003, hold_s: 0.05 }, 8000)).toMatchObject({ riseSamples: 24, holdSamples: 400 });
  });
});
