/**
 * More of the Butterworth module through its public interface: the correlation length of
 * filtered white noise against closed forms, the phase at the cutoff, the argument checks'
 * codes and hints, and the cascade's channel bounds, state copies and clearing.
 * Sources: for a first-order section b0(1 + z⁻¹)/(1 + a1 z⁻¹) with unit DC gain the impulse
 * response gives Σh = 1 and Σh² = 2·b0²/(1 + a1) (geometric series, from memory); the
 * noise-equivalent bandwidth of an n-th order Butterworth low-pass is
 * B_N = fc·(π/2n)/sin(π/2n) (handbook value, from memory); the phase of an n-th order
 * Butterworth at its cutoff is −n·45° (handbook value; the bilinear transform with a pre-warped
 * cutoff keeps the analog response at fc exactly).
 */
import { describe, expect, it } from 'vitest';
import { SosCascade, butterworthSos, checkButterworthArgs, noiseCorrelationSamples, sosResponse, sosToTf } from '../../../src/core/filter/butterworth.js';
import { InputError } from '../../../src/util/errors.js';

describe('noiseCorrelationSamples', () => {
  it('matches the closed form 2/(1 + a1) of a first-order section', () => {
    // To 1e-7: the sum stops once 2000 samples in a row add under 1e-18 of the energy each.
    for (const [fc, fs] of [[5, 1000], [50, 1000], [200, 1000], [1, 8000]] as const) {
      const sos = butterworthSos(1, fc, fs);
      const want = 2 / (1 + sos[4]!);
      expect(Math.abs(noiseCorrelationSamples(sos) / want - 1), `${fc} Hz @ ${fs} Hz`).toBeLessThan(1e-7);
    }
  });

  it('is fs / (2 B_N) for a narrow band, B_N the noise-equivalent bandwidth', () => {
    // Orders 2..8 at fc/fs = 0.005, to 0.1 % (the analog figure; order 1 rolls off too slowly
    // for it to hold after the bilinear transform: 1.6 % off, so it has its closed form above).
    for (let n = 2; n <= 8; n++) {
      const fc = 5;
      const fs = 1000;
      const bn = (fc * (Math.PI / (2 * n))) / Math.sin(Math.PI / (2 * n));
      const got = noiseCorrelationSamples(butterworthSos(n, fc, fs));
      expect(Math.abs(got / (fs / (2 * bn)) - 1), `order ${n}`).toBeLessThan(1e-3);
    }
  });
});

describe('sosResponse', () => {
  it('gives −n·45° at the cutoff (the sections\' phases summed, not wrapped)', () => {
    for (let n = 1; n <= 8; n++) {
      for (const [fc, fs] of [[5, 1000], [300, 1000], [1000, 8000]] as const) {
        const { phaseRad } = sosResponse(butterworthSos(n, fc, fs), fc, fs);
        expect(Math.abs(phaseRad + (n * Math.PI) / 4), `order ${n} ${fc} Hz @ ${fs} Hz`).toBeLessThan(1e-9);
      }
    }
  });

  it('gives the magnitude of a hand-made section: (1 + z⁻¹)/2 is cos(w/2) with phase −w/2', () => {
    const sos = Float64Array.of(0.5, 0.5, 0, 1, 0, 0);
    for (const f of [0, 100, 250, 400]) {
      const w = (2 * Math.PI * f) / 1000;
      const r = sosResponse(sos, f, 1000);
      expect(Math.abs(r.magnitude - Math.cos(w / 2))).toBeLessThan(1e-15);
      expect(Math.abs(r.phaseRad + w / 2)).toBeLessThan(1e-15);
    }
    // A second-order numerator and a denominator: 1/(1 − 0.5 z⁻²) at w = π/2 is 1/1.5.
    const r2 = sosResponse(Float64Array.of(1, 0, 0, 1, 0, -0.5), 250, 1000);
    expect(Math.abs(r2.magnitude - 1 / 1.5)).toBeLessThan(1e-15);
    expect(Math.abs(r2.phaseRad)).toBeLessThan(1e-15);
    const r3 = sosResponse(Float64Array.of(0, 0, 1, 1, 0, 0), 125, 1000); // z⁻²: unit magnitude, phase −2w
    expect(Math.abs(r3.magnitude - 1)).toBeLessThan(1e-15);
    expect(Math.abs(r3.phaseRad + Math.PI / 2)).toBeLessThan(1e-15);
  });
});

describe('checkButterworthArgs', () => {
  it('is empty for allowed arguments, including the range edges', () => {
    expect(checkButterworthArgs(1, 0.001, 50)).toEqual([]);
    expect(checkButterworthArgs(8, 3999.999, 8000)).toEqual([]);
  });

  it('codes and hints for each argument', () => {
    const [o] = checkButterworthArgs('4' as unknown as number, 5, 1000);
    expect(o).toMatchObject({ code: 'param.not_integer', where: { key: 'order' }, hint: 'an integer from 1 to 8', message: 'filter order 4 is not allowed' });
    const [r] = checkButterworthArgs(4, 5, 8000.5);
    expect(r).toMatchObject({ code: 'param.out_of_range', where: { key: 'sample_rate_hz' }, hint: 'a number of hertz from 50 to 8000', message: 'sample rate 8000.5 Hz is not allowed' });
    expect(checkButterworthArgs(4, 5, '1000' as unknown as number)[0]!.where.key).toBe('sample_rate_hz');
    expect(checkButterworthArgs(4, 5, Number.POSITIVE_INFINITY)[0]!.where.key).toBe('sample_rate_hz');
    const [c] = checkButterworthArgs(4, 500, 1000);
    expect(c).toMatchObject({ code: 'param.out_of_range', where: { key: 'cutoff_hz' }, hint: 'a number of hertz with 0 < cutoff < half the sample rate (500 Hz at 1000 Hz)', message: 'cutoff 500 Hz is not allowed' });
    expect(checkButterworthArgs(4, '5' as unknown as number, 1000)[0]!.where.key).toBe('cutoff_hz');
    // With a bad rate the cutoff is checked on its own, and its hint names no rate.
    const both = checkButterworthArgs(4, 600, 10);
    expect(both.map((p) => p.where.key)).toEqual(['sample_rate_hz']);
    const bad = checkButterworthArgs(4, -1, 10);
    expect(bad.map((p) => p.where.key)).toEqual(['sample_rate_hz', 'cutoff_hz']);
    expect(bad[1]!.hint).toBe('a number of hertz with 0 < cutoff < half the sample rate');
    // Every problem at once.
    expect(checkButterworthArgs(0, 0, 0).map((p) => p.where.key)).toEqual(['order', 'sample_rate_hz', 'cutoff_hz']);
  });

  it('butterworthSos throws all of them in one InputError', () => {
    try {
      butterworthSos(0, 0, 0);
      throw new Error('no error');
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).problems.length).toBe(3);
    }
  });
});

describe('sosToTf', () => {
  it('drops only trailing zeros common to b and a', () => {
    const { b, a } = sosToTf(Float64Array.of(1, 2, 0, 1, 0.5, 0));
    expect([...b]).toEqual([1, 2]);
    expect([...a]).toEqual([1, 0.5]);
    const kept = sosToTf(Float64Array.of(1, 2, 0, 1, 0.5, 0.25));
    expect([...kept.b]).toEqual([1, 2, 0]);
    expect([...kept.a]).toEqual([1, 0.5, 0.25]);
    const one = sosToTf(Float64Array.of(2, 0, 0, 2, 0, 0));
    expect([...one.b]).toEqual([1]);
    expect([...one.a]).toEqual([1]);
  });

  it('normalises each section by its a0 and multiplies the sections', () => {
    const { b, a } = sosToTf(Float64Array.of(2, 2, 0, 2, 1, 0, 1, -1, 0, 1, 0, 0));
    expect([...b]).toEqual([1, 0, -1]);
    expect([...a]).toEqual([1, 0.5, 0]);
  });

  it('refuses malformed sections with what is wrong', () => {
    expect(() => sosToTf(new Float64Array(0))).toThrow(/got length 0/);
    expect(() => sosToTf([1, 0, 0, 1, 0, 0] as unknown as Float64Array)).toThrow(InputError);
    expect(() => sosToTf(Float64Array.of(1, 0, 0, 1, 0, 0, 1, 0, Number.NaN, 1, 0, 0))).toThrow(/index 8 is not finite/);
    expect(() => sosToTf(Float64Array.of(1, 0, 0, 1, 0, 0, 1, 0, 0, 0, 0, 0))).toThrow(/section 1 has a0 = 0/);
  });
});

describe('SosCascade bounds and state', () => {
  const sos = butterworthSos(3, 20, 1000);
  it('takes 1 to 4096 channels', () => {
    expect(new SosCascade(sos, 1).channels).toBe(1);
    expect(new SosCascade(sos, 4096).channels).toBe(4096);
    expect(new SosCascade(sos, 4096).stateLength).toBe(2 * 2 * 4096);
    expect(() => new SosCascade(sos, 4097)).toThrow(/channel count 4097/);
    expect(() => new SosCascade(sos, 1.5)).toThrow(InputError);
    expect(new SosCascade(sos, 2).sections).toBe(2);
  });

  it('snapshotInto/restore with an offset continue bit-identically; bad snapshots are refused', () => {
    const c = new SosCascade(sos, 2);
    const x = Float64Array.of(1, -2);
    const y = new Float64Array(2);
    for (let i = 0; i < 20; i++) c.process(x, y);
    const buf = new Float64Array(3 + c.stateLength);
    c.snapshotInto(buf, 3);
    const next: number[] = [];
    for (let i = 0; i < 5; i++) {
      c.process(x, y);
      next.push(y[0]!, y[1]!);
    }
    const d = new SosCascade(sos, 2);
    d.restore(buf, 3);
    for (let i = 0; i < 5; i++) {
      d.process(x, y);
      expect([y[0], y[1]]).toEqual([next[2 * i], next[2 * i + 1]]);
    }
    expect(() => d.restore(buf, 4)).toThrow(/need 8/);
    expect(() => d.restore(buf, -1)).toThrow(InputError);
    expect(() => d.restore([0, 0, 0, 0, 0, 0, 0, 0] as unknown as Float64Array)).toThrow(InputError);
    expect(() => d.restore(new Float64Array(c.stateLength))).not.toThrow();
  });

  it('clear() returns to the zero state; resetTo on a zero input equals it', () => {
    const a = new SosCascade(sos, 1);
    const b = new SosCascade(sos, 1);
    const x = Float64Array.of(3);
    const y = new Float64Array(1);
    for (let i = 0; i < 10; i++) a.process(x, y);
    a.clear();
    expect([...a.snapshot()]).toEqual([...b.snapshot()]);
    a.process(x, y);
    const ya = y[0];
    b.process(x, y);
    expect(ya).toBe(y[0]);
    b.resetTo(Float64Array.of(0));
    expect([...b.snapshot()].every((v) => v === 0)).toBe(true);
  });

  it('resetTo gives the steady state of each section: a cascade of sections with their own DC gains', () => {
    // Two first-order sections with DC gains 2 and 0.5: the output at once equals dc·1.
    const c = new SosCascade(Float64Array.of(1, 1, 0, 1, 0, 0, 0.25, 0, 0, 1, -0.5, 0), 1);
    const dc = Float64Array.of(4);
    c.resetTo(dc);
    const y = new Float64Array(1);
    for (let i = 0; i < 5; i++) {
      c.process(dc, y);
      expect(Math.abs(y[0]! - 4)).toBeLessThan(1e-15);
    }
  });
});
