/**
 * Digital low-pass Butterworth design as cascaded second-order sections (SOS), and a
 * multi-channel SOS cascade for the per-sample hot path.
 *
 * Design path (done once, allocation is fine here):
 *   analog prototype poles (unit circle, left half plane)
 *   -> scale to the pre-warped cutoff  wa = 2·fs'·tan(π·Wn/fs'), with Wn = 2·fc/fs, fs' = 2
 *   -> bilinear transform  z = (2fs' + s) / (2fs' − s); the n zeros at infinity go to z = −1
 *   -> pair poles and zeros into sections.
 *
 * The section layout and pairing are the same as `scipy.signal.butter(n, fc, fs=fs,
 * output='sos')` (its default `zpk2sos(..., pairing='nearest')`): poles closest to the unit
 * circle go into the last section; odd orders get one extra pole and zero at the origin so
 * that every section is second order; the whole gain sits in the first section's numerator.
 * Row layout: [b0, b1, b2, a0 = 1, a1, a2].
 *
 * `SosCascade` filters C channels at once in transposed direct form II with all state in one
 * preallocated Float64Array: no allocation, closures or exceptions per sample.
 */
import { InputError } from '../../util/errors.js';

/** Orders accepted by `butterworthSos`. */
export const BUTTERWORTH_MIN_ORDER = 1;
export const BUTTERWORTH_MAX_ORDER = 8;
/** Sample rates accepted by `butterworthSos`, in Hz. */
export const BUTTERWORTH_MIN_RATE_HZ = 50;
export const BUTTERWORTH_MAX_RATE_HZ = 8000;

/** Key names used in errors; callers with a parameter namespace pass their own. */
export interface ButterworthKeys {
  readonly order: string;
  readonly cutoffHz: string;
  readonly sampleRateHz: string;
}

const DEFAULT_KEYS: ButterworthKeys = { order: 'order', cutoffHz: 'cutoff_hz', sampleRateHz: 'sample_rate_hz' };

/** Complex number used only at design time. */
interface Cx {
  re: number;
  im: number;
}

/**
 * Poles of the n-th order analog Butterworth prototype (cutoff 1 rad/s), in the order
 * k = 0..n−1 with angle π/2 + (2k+1)π/(2n): all on the unit circle in the left half plane.
 * For odd n the middle pole is exactly −1.
 */
export function analogPrototypePoles(order: number): { re: Float64Array; im: Float64Array } {
  checkOrder(order, DEFAULT_KEYS.order);
  const re = new Float64Array(order);
  const im = new Float64Array(order);
  for (let k = 0; k < order; k++) {
    // m runs −n+1, −n+3, ..., n−1; p = −exp(iπm/(2n)) = exp(i(π/2 + (2k+1)π/(2n))).
    const m = -order + 1 + 2 * k;
    if (m === 0) {
      re[k] = -1;
      im[k] = 0;
    } else {
      const theta = (Math.PI * m) / (2 * order);
      re[k] = -Math.cos(theta);
      im[k] = -Math.sin(theta);
    }
  }
  return { re, im };
}

/**
 * Digital low-pass Butterworth filter as second-order sections, one row of 6 per section:
 * [b0, b1, b2, 1, a1, a2]. `order` is an integer 1..8, `cutoffHz` is the −3 dB frequency with
 * 0 < cutoffHz < sampleRateHz/2, `sampleRateHz` is 50..8000.
 * Throws `InputError` naming the offending key (`keys` lets a caller use dotted parameter keys).
 */
export function butterworthSos(
  order: number,
  cutoffHz: number,
  sampleRateHz: number,
  keys: ButterworthKeys = DEFAULT_KEYS,
): Float64Array {
  const problems = checkButterworthArgs(order, cutoffHz, sampleRateHz, keys);
  if (problems.length > 0) throw new InputError(problems);

  // Normalised cutoff (1 = Nyquist), then pre-warp with the design sample rate fs' = 2.
  const wn = (2 * cutoffHz) / sampleRateHz;
  const fsd = 2.0;
  const warped = 2 * fsd * Math.tan((Math.PI * wn) / fsd);
  const fs2 = 2 * fsd;

  const proto = analogPrototypePoles(order);
  // Analog poles scaled to the warped cutoff, then the bilinear transform.
  const poles: Cx[] = [];
  let kRe = 1; // product of (fs2 − p) over all analog poles (complex)
  let kIm = 0;
  for (let i = 0; i < order; i++) {
    const pr = warped * proto.re[i]!;
    const pi = warped * proto.im[i]!;
    // z = (fs2 + p) / (fs2 − p)
    const nr = fs2 + pr;
    const ni = pi;
    const dr = fs2 - pr;
    const di = -pi;
    const q = cdiv(nr, ni, dr, di);
    poles.push(q);
    const mr = kRe * dr - kIm * di;
    const mi = kRe * di + kIm * dr;
    kRe = mr;
    kIm = mi;
  }
  // Gain: wa^n (low-pass scaling of the prototype gain 1) divided by prod(fs2 − p).
  const gain = cdiv(Math.pow(warped, order), 0, kRe, kIm).re;
  const zeros: Cx[] = [];
  for (let i = 0; i < order; i++) zeros.push({ re: -1, im: 0 });

  return zpkToSosNearest(zeros, poles, gain);
}

/** Problems with Butterworth arguments (empty when all are allowed). */
export function checkButterworthArgs(
  order: number,
  cutoffHz: number,
  sampleRateHz: number,
  keys: ButterworthKeys = DEFAULT_KEYS,
): { code: string; message: string; where: { key: string }; hint: string }[] {
  const out: { code: string; message: string; where: { key: string }; hint: string }[] = [];
  if (typeof order !== 'number' || !Number.isInteger(order) || order < BUTTERWORTH_MIN_ORDER || order > BUTTERWORTH_MAX_ORDER) {
    out.push({
      code: Number.isInteger(order) ? 'param.out_of_range' : 'param.not_integer',
      message: `filter order ${String(order)} is not allowed`,
      where: { key: keys.order },
      hint: `an integer from ${BUTTERWORTH_MIN_ORDER} to ${BUTTERWORTH_MAX_ORDER}`,
    });
  }
  const rateOk =
    typeof sampleRateHz === 'number' &&
    Number.isFinite(sampleRateHz) &&
    sampleRateHz >= BUTTERWORTH_MIN_RATE_HZ &&
    sampleRateHz <= BUTTERWORTH_MAX_RATE_HZ;
  if (!rateOk) {
    out.push({
      code: 'param.out_of_range',
      message: `sample rate ${String(sampleRateHz)} Hz is not allowed`,
      where: { key: keys.sampleRateHz },
      hint: `a number of hertz from ${BUTTERWORTH_MIN_RATE_HZ} to ${BUTTERWORTH_MAX_RATE_HZ}`,
    });
  }
  const nyq = rateOk ? 0.5 * sampleRateHz : Number.NaN;
  if (typeof cutoffHz !== 'number' || !Number.isFinite(cutoffHz) || cutoffHz <= 0 || (rateOk && cutoffHz >= nyq)) {
    out.push({
      code: 'param.out_of_range',
      message: `cutoff ${String(cutoffHz)} Hz is not allowed`,
      where: { key: keys.cutoffHz },
      hint: rateOk
        ? `a number of hertz with 0 < cutoff < half the sample rate (${nyq} Hz at ${sampleRateHz} Hz)`
        : 'a number of hertz with 0 < cutoff < half the sample rate',
    });
  }
  return out;
}

function cdiv(ar: number, ai: number, br: number, bi: number): Cx {
  // Smith's algorithm: avoids overflow and keeps the rounding small.
  if (Math.abs(br) >= Math.abs(bi)) {
    if (bi === 0) return { re: ar / br, im: ai / br };
    const r = bi / br;
    const d = br + bi * r;
    return { re: (ar + ai * r) / d, im: (ai - ar * r) / d };
  }
  const r = br / bi;
  const d = br * r + bi;
  return { re: (ar * r + ai) / d, im: (ai * r - ar) / d };
}

/**
 * Split a list of roots (with conjugates present) into one representative per complex pair
 * (positive imaginary part) and the real roots, both sorted by real part.
 */
function splitConjugates(roots: readonly Cx[]): { complex: Cx[]; real: number[] } {
  const tol = 100 * Number.EPSILON;
  const real: number[] = [];
  const pos: Cx[] = [];
  const neg: Cx[] = [];
  for (const r of roots) {
    const mag = Math.hypot(r.re, r.im);
    if (Math.abs(r.im) <= tol * mag) real.push(r.re);
    else if (r.im > 0) pos.push(r);
    else neg.push(r);
  }
  const byRealThenImag = (a: Cx, b: Cx): number => a.re - b.re || Math.abs(a.im) - Math.abs(b.im);
  pos.sort(byRealThenImag);
  neg.sort(byRealThenImag);
  real.sort((a, b) => a - b);
  const complex: Cx[] = [];
  for (let i = 0; i < pos.length; i++) {
    const p = pos[i]!;
    const n = neg[i] ?? { re: p.re, im: -p.im };
    // Average out rounding between the two halves of the pair.
    complex.push({ re: (p.re + n.re) / 2, im: (p.im - n.im) / 2 });
  }
  return { complex, real };
}

interface Root {
  re: number;
  im: number; // >= 0; im > 0 stands for the pair re ± i·im
  isReal: boolean;
}

/**
 * Pair zeros and poles into second-order sections, nearest-zero pairing: start from the pole
 * closest to the unit circle, put it in the last free section, pair it with its nearest zero.
 */
function zpkToSosNearest(zerosIn: readonly Cx[], polesIn: readonly Cx[], gain: number): Float64Array {
  const zl: Cx[] = zerosIn.slice();
  const pl: Cx[] = polesIn.slice();
  while (pl.length < zl.length) pl.push({ re: 0, im: 0 });
  while (zl.length < pl.length) zl.push({ re: 0, im: 0 });
  const nSections = (pl.length + 1) >> 1;
  if (pl.length % 2 === 1) {
    pl.push({ re: 0, im: 0 });
    zl.push({ re: 0, im: 0 });
  }
  const toRoots = (list: Cx[]): Root[] => {
    const s = splitConjugates(list);
    const out: Root[] = [];
    for (const c of s.complex) out.push({ re: c.re, im: c.im, isReal: false });
    for (const r of s.real) out.push({ re: r, im: 0, isReal: true });
    return out;
  };
  const p = toRoots(pl);
  const z = toRoots(zl);

  const idxWorst = (list: Root[]): number => {
    let best = 0;
    let bestD = Number.POSITIVE_INFINITY;
    for (let i = 0; i < list.length; i++) {
      const r = list[i]!;
      const d = Math.abs(1 - Math.hypot(r.re, r.im));
      if (d < bestD) {
        bestD = d;
        best = i;
      }
    }
    return best;
  };
  const nearest = (list: Root[], to: Root, which: 'real' | 'complex' | 'any'): number => {
    let best = -1;
    let bestD = Number.POSITIVE_INFINITY;
    for (let i = 0; i < list.length; i++) {
      const r = list[i]!;
      if (which === 'real' && !r.isReal) continue;
      if (which === 'complex' && r.isReal) continue;
      const d = Math.hypot(r.re - to.re, r.im - to.im);
      if (d < bestD) {
        bestD = d;
        best = i;
      }
    }
    if (best < 0) throw new Error(`internal: no ${which} zero left to pair`);
    return best;
  };
  const take = (list: Root[], i: number): Root => list.splice(i, 1)[0]!;
  const countReal = (list: Root[]): number => list.reduce((n, r) => n + (r.isReal ? 1 : 0), 0);

  const sos = new Float64Array(nSections * 6);
  const put = (si: number, b: [number, number, number], a: [number, number, number]): void => {
    sos.set(b, si * 6);
    sos.set(a, si * 6 + 3);
  };
  // Quadratic (or linear, left-aligned in x^-k form) from up to two roots.
  const quad = (r1: Root | null, r2: Root | null): [number, number, number] => {
    if (r1 && !r1.isReal) return [1, -(r1.re + r1.re), r1.re * r1.re + r1.im * r1.im];
    if (r1 && r2) return [1, -(r1.re + r2.re), r1.re * r2.re];
    if (r1) return [1, -r1.re, 0];
    return [1, 0, 0];
  };

  for (let si = nSections - 1; si >= 0; si--) {
    const p1 = take(p, idxWorst(p));
    if (p1.isReal && countReal(p) === 0) {
      // Last remaining real pole: first-order section padded with a pole and zero at 0.
      const z1 = take(z, nearest(z, p1, 'real'));
      put(si, quad(z1, { re: 0, im: 0, isReal: true }), quad(p1, { re: 0, im: 0, isReal: true }));
    } else if (p.length + 1 === z.length && !p1.isReal && countReal(p) === 1 && countReal(z) === 1) {
      // One real pole and one real zero left: this complex pole must take a complex zero.
      const z1 = take(z, nearest(z, p1, 'complex'));
      put(si, quad(z1, null), quad(p1, null));
    } else {
      let p2: Root | null = null;
      if (p1.isReal) {
        // Next real pole closest to the unit circle.
        let best = -1;
        let bestD = Number.POSITIVE_INFINITY;
        for (let i = 0; i < p.length; i++) {
          const r = p[i]!;
          if (!r.isReal) continue;
          const d = Math.abs(1 - Math.abs(r.re));
          if (d < bestD) {
            bestD = d;
            best = i;
          }
        }
        p2 = take(p, best);
      }
      const a = quad(p1, p2);
      if (z.length > 0) {
        const z1 = take(z, nearest(z, p1, 'any'));
        if (!z1.isReal) {
          put(si, quad(z1, null), a);
        } else if (z.length > 0) {
          const z2 = take(z, nearest(z, p1, 'real'));
          put(si, quad(z1, z2), a);
        } else {
          // One zero for two poles: numerator right-aligned as [0, 1, −z1].
          put(si, [0, 1, -z1.re], a);
        }
      } else {
        // No zeros left: numerator right-aligned as [0, 0, 1].
        put(si, [0, 0, 1], a);
      }
    }
  }
  sos[0]! *= gain;
  sos[1]! *= gain;
  sos[2]! *= gain;
  // Products with a root at the origin can give −0; store +0.
  for (let i = 0; i < sos.length; i++) if (sos[i] === 0) sos[i] = 0;
  return sos;
}

function checkOrder(order: number, key: string): void {
  if (!Number.isInteger(order) || order < BUTTERWORTH_MIN_ORDER || order > BUTTERWORTH_MAX_ORDER) {
    throw new InputError({
      code: Number.isInteger(order) ? 'param.out_of_range' : 'param.not_integer',
      message: `filter order ${String(order)} is not allowed`,
      where: { key },
      hint: `an integer from ${BUTTERWORTH_MIN_ORDER} to ${BUTTERWORTH_MAX_ORDER}`,
    });
  }
}

function checkSos(sos: Float64Array): number {
  if (!(sos instanceof Float64Array) || sos.length === 0 || sos.length % 6 !== 0) {
    throw new InputError({
      code: 'filter.bad_sos',
      message: `second-order sections must be a Float64Array of 6 values per section, got length ${String(sos?.length)}`,
      where: { key: 'sos' },
      hint: 'rows of [b0, b1, b2, a0, a1, a2], at least one row',
    });
  }
  for (let i = 0; i < sos.length; i++) {
    if (!Number.isFinite(sos[i]!)) {
      throw new InputError({
        code: 'filter.bad_sos',
        message: `second-order section value at index ${i} is not finite`,
        where: { key: 'sos' },
        hint: 'finite coefficients only',
      });
    }
  }
  for (let s = 0; s < sos.length / 6; s++) {
    if (sos[s * 6 + 3] === 0) {
      throw new InputError({
        code: 'filter.bad_sos',
        message: `section ${s} has a0 = 0`,
        where: { key: 'sos' },
        hint: 'a0 must be non-zero (normally 1)',
      });
    }
  }
  return sos.length / 6;
}

/**
 * Polynomial transfer function b(z^-1)/a(z^-1) of a cascade. Trailing coefficients that are
 * zero in both b and a (a common factor z^-1, from the padding of odd orders) are dropped,
 * so an order-n Butterworth gives n+1 coefficients each, like SciPy's `output='ba'`.
 */
export function sosToTf(sos: Float64Array): { b: Float64Array; a: Float64Array } {
  const n = checkSos(sos);
  let b = [1];
  let a = [1];
  for (let s = 0; s < n; s++) {
    const o = s * 6;
    const a0 = sos[o + 3]!;
    b = polyMul(b, [sos[o]! / a0, sos[o + 1]! / a0, sos[o + 2]! / a0]);
    a = polyMul(a, [1, sos[o + 4]! / a0, sos[o + 5]! / a0]);
  }
  let len = b.length;
  while (len > 1 && b[len - 1] === 0 && a[len - 1] === 0) len--;
  return { b: Float64Array.from(b.slice(0, len)), a: Float64Array.from(a.slice(0, len)) };
}

function polyMul(x: readonly number[], y: readonly number[]): number[] {
  const out = new Array<number>(x.length + y.length - 1).fill(0);
  for (let i = 0; i < x.length; i++) for (let j = 0; j < y.length; j++) out[i + j]! += x[i]! * y[j]!;
  return out;
}

/**
 * Frequency response of a cascade at `fHz` for sample rate `fsHz`: linear magnitude |H| and
 * phase in radians, the sum of the sections' phases (each in (−π, π]; the sum is not wrapped).
 */
export function sosResponse(sos: Float64Array, fHz: number, fsHz: number): { magnitude: number; phaseRad: number } {
  const n = checkSos(sos);
  const w = (2 * Math.PI * fHz) / fsHz;
  const c1 = Math.cos(w);
  const s1 = -Math.sin(w); // z^-1 = e^{-jw}
  const c2 = Math.cos(2 * w);
  const s2 = -Math.sin(2 * w);
  let mag = 1;
  let phase = 0;
  for (let s = 0; s < n; s++) {
    const o = s * 6;
    const nr = sos[o]! + sos[o + 1]! * c1 + sos[o + 2]! * c2;
    const ni = sos[o + 1]! * s1 + sos[o + 2]! * s2;
    const dr = sos[o + 3]! + sos[o + 4]! * c1 + sos[o + 5]! * c2;
    const di = sos[o + 4]! * s1 + sos[o + 5]! * s2;
    mag *= Math.hypot(nr, ni) / Math.hypot(dr, di);
    phase += Math.atan2(ni, nr) - Math.atan2(di, dr);
  }
  return { magnitude: mag, phaseRad: phase };
}

/**
 * Second-order-section cascade over `channels` channels at once, transposed direct form II.
 * State layout: for channel c and section s, z1 at 2·(c·nSections + s), z2 right after it.
 */
export class SosCascade {
  readonly channels: number;
  readonly sections: number;
  private readonly coef: Float64Array;
  private readonly state: Float64Array;

  constructor(sos: Float64Array, channels: number) {
    const n = checkSos(sos);
    if (!Number.isInteger(channels) || channels < 1 || channels > 4096) {
      throw new InputError({
        code: 'param.out_of_range',
        message: `channel count ${String(channels)} is not allowed`,
        where: { key: 'channels' },
        hint: 'an integer from 1 to 4096',
      });
    }
    this.sections = n;
    this.channels = channels;
    this.coef = new Float64Array(n * 6);
    for (let s = 0; s < n; s++) {
      const o = s * 6;
      const a0 = sos[o + 3]!;
      this.coef[o] = sos[o]! / a0;
      this.coef[o + 1] = sos[o + 1]! / a0;
      this.coef[o + 2] = sos[o + 2]! / a0;
      this.coef[o + 3] = 1;
      this.coef[o + 4] = sos[o + 4]! / a0;
      this.coef[o + 5] = sos[o + 5]! / a0;
    }
    this.state = new Float64Array(2 * n * channels);
  }

  /** Filter one sample per channel. `input` and `output` may be the same array. */
  process(input: Float64Array, output: Float64Array): void {
    const coef = this.coef;
    const st = this.state;
    const ns = this.sections;
    const nc = this.channels;
    for (let c = 0; c < nc; c++) {
      let x = input[c]!;
      let k = 2 * c * ns;
      for (let s = 0; s < ns; s++) {
        const o = s * 6;
        const y = coef[o]! * x + st[k]!;
        st[k] = coef[o + 1]! * x - coef[o + 4]! * y + st[k + 1]!;
        st[k + 1] = coef[o + 2]! * x - coef[o + 5]! * y;
        x = y;
        k += 2;
      }
      output[c] = x;
    }
  }

  /**
   * Set the state to the steady state for a constant input `dc[c]` on each channel, so that
   * the output starts at dc·H(1) without a transient. Does not allocate.
   */
  resetTo(dc: Float64Array): void {
    const coef = this.coef;
    const st = this.state;
    const ns = this.sections;
    for (let c = 0; c < this.channels; c++) {
      let u = dc[c]!;
      let k = 2 * c * ns;
      for (let s = 0; s < ns; s++) {
        const o = s * 6;
        const b0 = coef[o]!;
        const b1 = coef[o + 1]!;
        const b2 = coef[o + 2]!;
        const a1 = coef[o + 4]!;
        const a2 = coef[o + 5]!;
        const y = ((b0 + b1 + b2) / (1 + a1 + a2)) * u;
        const z2 = b2 * u - a2 * y;
        st[k] = b1 * u - a1 * y + z2;
        st[k + 1] = z2;
        u = y;
        k += 2;
      }
    }
  }

  /** Zero all state. */
  clear(): void {
    this.state.fill(0);
  }

  /** Length of a snapshot. */
  get stateLength(): number {
    return this.state.length;
  }

  /** Copy of the state (allocates). */
  snapshot(): Float64Array {
    return this.state.slice();
  }

  /** Copy the state into `out` at `offset` (no allocation). */
  snapshotInto(out: Float64Array, offset = 0): void {
    out.set(this.state, offset);
  }

  /** Restore state from a snapshot (or from `s` at `offset`). */
  restore(s: Float64Array, offset = 0): void {
    if (!(s instanceof Float64Array) || s.length - offset < this.state.length || offset < 0) {
      throw new InputError({
        code: 'filter.bad_snapshot',
        message: `snapshot has ${String(s?.length)} values from offset ${offset}, need ${this.state.length}`,
        where: { key: 'snapshot' },
        hint: 'a snapshot taken from a cascade with the same sections and channels',
      });
    }
    this.state.set(s.subarray(offset, offset + this.state.length));
  }
}

/**
 * Correlation length of white noise after the low-pass, in samples: (Σ h)² / Σ h², with h the
 * impulse response (set-up time; the response is run until its energy has converged). For a
 * narrow band this is 1 / (2 B_N / fs), B_N the noise-equivalent bandwidth.
 */
export function noiseCorrelationSamples(sos: Float64Array): number {
  const c = new SosCascade(sos, 1);
  const x = new Float64Array(1);
  const y = new Float64Array(1);
  let sum = 0;
  let energy = 0;
  let quiet = 0;
  x[0] = 1;
  for (let k = 0; k < 10_000_000; k++) {
    c.process(x, y);
    x[0] = 0;
    const h = y[0]!;
    sum += h;
    energy += h * h;
    // Stop once 2000 samples in a row add nothing measurable to the energy.
    quiet = h * h <= energy * 1e-18 ? quiet + 1 : 0;
    if (quiet >= 2000) break;
  }
  return (sum * sum) / energy;
}
