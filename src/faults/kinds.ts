/**
 * The fault kinds of the campaign and how one is drawn from a seed. A fault is data (kind,
 * arm, onset, duration, magnitude): the injector (inject.ts) applies it to the inputs an arm
 * is fed, the campaign (campaign.ts) draws and counts them.
 */
import type { Rng } from '../util/rng.js';

export const FAULT_KINDS = [
  'dropout',
  'nan_burst',
  'stuck_sensor',
  'bias_drift',
  'spike',
  'time_jump_back',
  'time_jump_forward',
  'partner_death',
  'delayed_burst',
  'payload_slip',
  'area_miss',
  'area_false_alarm',
  'clock_skew',
] as const;
export type FaultKind = (typeof FAULT_KINDS)[number];

/** The input streams a fault can hit (the watchdog's names). */
export const STREAMS = ['wrench', 'joint_states', 'tool_pose', 'zone_view'] as const;
export type Stream = (typeof STREAMS)[number];

export interface Fault {
  readonly kind: FaultKind;
  readonly arm: 'left' | 'right';
  /** Onset, s of true (simulation) time. */
  readonly start_s: number;
  /** How long it lasts, s (Infinity: to the end). */
  readonly duration_s: number;
  /**
   * Size, in the kind's unit: dropout/delayed_burst: unused (the duration is the gap);
   * spike: N; bias_drift: N/s; time jumps and clock skew: s; payload_slip: N; others unused.
   */
  readonly magnitude: number;
  /** The stream it hits (dropout, nan_burst, delayed_burst). */
  readonly stream: Stream;
  /** Force axis 0..2 (spike, bias_drift, stuck) or zone index (area faults). */
  readonly axis: number;
}

/** Whether the watchdog is expected to hold the faulted arm (or, for partner_death, the survivor). */
export function expectsHold(f: Fault, staleAfter: Readonly<Record<Stream, number>>): boolean {
  switch (f.kind) {
    case 'dropout':
    case 'delayed_burst':
      return f.duration_s > staleAfter[f.stream];
    case 'nan_burst':
    case 'spike':
    case 'time_jump_back':
    case 'partner_death':
      return true;
    case 'time_jump_forward':
      return f.magnitude > staleAfter.wrench;
    default:
      return false;
  }
}

/** The clock skews of the skew curve, s. */
export const SKEW_CURVE_S = [0, 0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2] as const;

/**
 * Draw one fault of `kind` (onset within [onsetMin, onsetMax] s). Stale-type gaps straddle the
 * timeouts so that both the held and the ridden-through cases occur.
 */
export function drawFault(kind: FaultKind, rng: Rng, onsetMin: number, onsetMax: number, staleAfter: Readonly<Record<Stream, number>>): Fault {
  const arm = rng.uniform() < 0.5 ? 'left' : 'right';
  const start = onsetMin + (onsetMax - onsetMin) * rng.uniform();
  const pick = <T>(xs: readonly T[]): T => xs[Math.min(xs.length - 1, Math.floor(rng.uniform() * xs.length))]!;
  const u = (a: number, b: number) => a + (b - a) * rng.uniform();
  const axis = Math.min(2, Math.floor(rng.uniform() * 3));
  const base = { kind, arm, start_s: start, axis, magnitude: 0, stream: 'wrench' as Stream } as const;
  switch (kind) {
    case 'dropout': {
      const stream = pick(STREAMS);
      return { ...base, stream, duration_s: staleAfter[stream] * u(0.3, 5) };
    }
    case 'nan_burst':
      return { ...base, stream: pick(['wrench', 'joint_states', 'tool_pose'] as const), duration_s: u(0.001, 0.05) };
    case 'stuck_sensor':
      return { ...base, duration_s: u(0.5, 5) };
    case 'bias_drift':
      return { ...base, duration_s: Number.POSITIVE_INFINITY, magnitude: u(1, 40) * (rng.uniform() < 0.5 ? -1 : 1) };
    case 'spike':
      return { ...base, duration_s: u(0.001, 0.003), magnitude: u(160, 1000) * (rng.uniform() < 0.5 ? -1 : 1) };
    case 'time_jump_back':
      return { ...base, duration_s: Number.POSITIVE_INFINITY, magnitude: -u(0.002, 1) };
    case 'time_jump_forward':
      return { ...base, duration_s: Number.POSITIVE_INFINITY, magnitude: u(0.005, 2) };
    case 'partner_death':
      return { ...base, duration_s: Number.POSITIVE_INFINITY };
    case 'delayed_burst': {
      const stream = pick(['wrench', 'joint_states', 'tool_pose'] as const);
      return { ...base, stream, duration_s: staleAfter[stream] * u(0.3, 4) };
    }
    case 'payload_slip':
      return { ...base, duration_s: u(0.2, 2), magnitude: u(2, 15) };
    case 'area_miss':
    case 'area_false_alarm':
      return { ...base, axis: Math.floor(rng.uniform() * 2), duration_s: u(0.5, 6) };
    case 'clock_skew':
      return { ...base, start_s: 0, duration_s: Number.POSITIVE_INFINITY, magnitude: pick(SKEW_CURVE_S.slice(1)) };
  }
}
