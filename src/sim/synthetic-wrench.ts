/**
 * Synthetic wrist wrench signals of the demo scenario (invented data, for the demo and for
 * tests of our own): one arm holds its end of the 1.2 m, 2.4 kg beam; after a still second
 * the partner makes slow corrections (pushes and pulls through the beam), a single-sample
 * electrical spike appears, and the beam tip knocks a raised clamp post.
 *
 * Run as a script to write the demo CSV:  node dist/src/sim/synthetic-wrench.js > examples/beam-carry-wrench.csv
 */
import { Rng } from '../util/rng.js';

export const STANDARD_GRAVITY = 9.80665;

export interface SyntheticEvent {
  readonly kind: 'push' | 'spike' | 'knock';
  readonly start_s: number;
  readonly end_s: number;
}

export interface SyntheticWrench {
  readonly rate_hz: number;
  readonly t: Float64Array;
  readonly wrench: Float64Array;
  readonly events: readonly SyntheticEvent[];
}

/** Raised-cosine bump from a to b (0 outside, 1 at the middle). */
function bump(t: number, a: number, b: number): number {
  if (t <= a || t >= b) return 0;
  const x = (t - a) / (b - a);
  return 0.5 - 0.5 * Math.cos(2 * Math.PI * x);
}

export function beamCarryWrench(opts: { rate_hz?: number; duration_s?: number; seed?: number; noise_n?: number } = {}): SyntheticWrench {
  const fs = opts.rate_hz ?? 1000;
  const dur = opts.duration_s ?? 8;
  const rng = new Rng(opts.seed ?? 7);
  const noiseF = opts.noise_n ?? 0.25;
  const noiseT = noiseF / 12;
  const n = Math.round(dur * fs);
  const t = new Float64Array(n);
  const w = new Float64Array(6 * n);
  const bias = [1.8, -0.9, 3.2, 0.05, -0.03, 0.02];
  const halfWeight = (-2.4 * STANDARD_GRAVITY) / 2;
  const spikeK = Math.round(3.0 * fs);
  const knock = { start: 5.8, len: 0.008, peak: 70 };
  for (let k = 0; k < n; k++) {
    const tk = k / fs;
    t[k] = tk;
    const push = 8 * bump(tk, 2.0, 3.5);
    const pull = -6 * bump(tk, 4.0, 5.0);
    const knockF = tk >= knock.start && tk < knock.start + knock.len ? knock.peak * Math.sin((Math.PI * (tk - knock.start)) / knock.len) : 0;
    const f = [pull + knockF, push, halfWeight, 0.3 * push, 0, 0.04 * knockF];
    for (let a = 0; a < 6; a++) w[6 * k + a] = bias[a]! + f[a]! + (a < 3 ? noiseF : noiseT) * rng.normal();
    if (k === spikeK) w[6 * k] = w[6 * k]! + 25;
  }
  return {
    rate_hz: fs,
    t,
    wrench: w,
    events: [
      { kind: 'push', start_s: 2.0, end_s: 3.5 },
      { kind: 'spike', start_s: spikeK / fs, end_s: spikeK / fs },
      { kind: 'push', start_s: 4.0, end_s: 5.0 },
      { kind: 'knock', start_s: knock.start, end_s: knock.start + knock.len },
    ],
  };
}

export function toCsv(s: SyntheticWrench): string {
  const lines = ['# antiphon demo: one arm\'s wrist wrench while carrying the 1.2 m beam (synthetic, seed 7)', 't,fx,fy,fz,tx,ty,tz'];
  for (let k = 0; k < s.t.length; k++) {
    const row = [s.t[k]!.toFixed(3)];
    for (let a = 0; a < 6; a++) row.push(s.wrench[6 * k + a]!.toFixed(a < 3 ? 3 : 4));
    lines.push(row.join(','));
  }
  return lines.join('\n') + '\n';
}

if (import.meta.url === `file://${process.argv[1]}`) {
  process.stdout.write(toCsv(beamCarryWrench()));
}
