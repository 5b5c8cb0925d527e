/**
 * Invented report data for the report's own tests (not a physical model): a beam carry with
 * a wrench that sways, one impact, one watchdog hold opened by a trip, role switches every
 * 0.5 s, and the belief on one hidden zone rising while the other stays low.
 */
import type { ReportArm, ReportEvent, ReportInput } from '../../src/report/types.js';
import { Rng } from '../../src/util/rng.js';

export interface ArmPlan {
  readonly name: string;
  readonly duration_s: number;
  readonly rate_hz: number;
  readonly seed: number;
  readonly impact_s: number;
  /** Watchdog hold [from, to), s; a trip event opens it. */
  readonly hold: readonly [number, number];
  /** A second hold lasting exactly one sample, at this time. */
  readonly blip_s?: number;
  readonly roleSwitch_s: number;
  readonly beliefRate_hz: number;
  /** Emit one `role` event per switch (an hour of them is 7200 events). */
  readonly roleEvents: boolean;
  readonly extraEvents?: readonly ReportEvent[];
}

export const ZONES = ['clamp post', 'cable-tray drop'] as const;

export function syntheticArm(p: ArmPlan): ReportArm {
  const rng = new Rng(p.seed);
  const n = Math.round(p.duration_s * p.rate_hz) + 1;
  const t = new Float64Array(n);
  const raw = new Float64Array(n);
  const corr = new Float64Array(n);
  const imp = new Float64Array(n);
  const role = new Float64Array(n);
  const held = new Float64Array(n);
  const rec = new Float64Array(n);
  const meas = new Float64Array(n);
  const impactIndex = Math.round(p.impact_s * p.rate_hz);
  const blipIndex = p.blip_s === undefined ? -1 : Math.round(p.blip_s * p.rate_hz);
  const phase = p.seed % 7;
  let m = 0;
  for (let i = 0; i < n; i++) {
    const ti = i / p.rate_hz;
    t[i] = ti;
    // Cheap noise: the sum of two uniforms, centred.
    const noise = rng.uniform() + rng.uniform() - 1;
    const sway = Math.sin(2 * Math.PI * 0.23 * ti + phase);
    const c = 3.5 * Math.abs(sway) + 0.4 * noise;
    const k = i - impactIndex;
    const impulse = k >= 0 && k < 40 ? 150 * Math.exp(-k / 6) : 0;
    const hi = impulse + 0.35 * noise;
    corr[i] = Math.abs(c);
    imp[i] = Math.abs(hi);
    raw[i] = 17 + 2.5 * sway + corr[i]! * 0.4 + impulse + 0.6 * noise;
    role[i] = Math.floor(ti / p.roleSwitch_s) % 2;
    const h = (ti >= p.hold[0] && ti < p.hold[1]) || i === blipIndex ? 1 : 0;
    held[i] = h;
    const cruise = 0.22 * Math.min(1, ti / 4) * (0.8 + 0.2 * Math.cos(2 * Math.PI * 0.05 * ti));
    rec[i] = h ? 0 : cruise;
    m += (rec[i]! - m) * 0.01;
    meas[i] = Math.max(0, m + 0.004 * noise);
  }
  const nb = Math.round(p.duration_s * p.beliefRate_hz) + 1;
  const beliefT = new Float64Array(nb);
  const marg = new Float64Array(nb * ZONES.length);
  for (let j = 0; j < nb; j++) {
    const tj = j / p.beliefRate_hz;
    beliefT[j] = tj;
    const rise = 1 / (1 + Math.exp(-(tj - p.duration_s * 0.35) / (p.duration_s * 0.05)));
    marg[j * 2] = 0.1 + 0.85 * rise;
    marg[j * 2 + 1] = 0.2 + 0.03 * Math.sin(tj * 0.7);
  }
  const events: ReportEvent[] = [{ t_s: 0, kind: 'tare', text: 'tare at rest: 12 samples' }];
  if (p.roleEvents) {
    for (let s = p.roleSwitch_s; s < p.duration_s; s += p.roleSwitch_s) {
      const k = Math.round(s / p.roleSwitch_s);
      events.push({ t_s: s, kind: 'role', text: k % 2 ? 'speaker → listener' : 'listener → speaker' });
    }
  }
  events.push({ t_s: impactIndex / p.rate_hz, kind: 'impact', text: 'impact band 150 N above its limit' });
  events.push({ t_s: p.hold[0], kind: 'trip', text: 'force limit: 62.0 N > 60.0 N' });
  events.push({ t_s: p.hold[0], kind: 'hold', text: 'safe hold, zero twist' });
  events.push({ t_s: p.hold[1], kind: 'release', text: 'released after clear period' });
  if (blipIndex >= 0) {
    events.push({ t_s: blipIndex / p.rate_hz, kind: 'trip', text: 'stale wrench (one sample)' });
  }
  events.push(...(p.extraEvents ?? []));
  events.sort((a, b) => a.t_s - b.t_s);
  return {
    name: p.name,
    rawForce: { t, y: raw },
    correctionForce: { t, y: corr },
    impactForce: { t, y: imp },
    role: { t, y: role },
    held: { t, y: held },
    recommendedSpeed: { t, y: rec },
    measuredSpeed: { t, y: meas },
    hiddenZones: [...ZONES],
    beliefT,
    beliefMarginals: marg,
    events,
  };
}

/** An invented reliability diagram: over-confident at both ends, bin 5 empty. */
export const SYNTHETIC_CALIBRATION: NonNullable<ReportInput['calibration']> = {
  what: 'listener updates of both arms <b>x</b>',
  updates: 1000,
  ece: 0.123,
  p_truth_below_0_05_rate: 0.0125,
  bins: [
    { lo: 0, hi: 0.1, count: 400, mean_predicted: 0.02, observed_frequency: 0.2 },
    { lo: 0.1, hi: 0.2, count: 50, mean_predicted: 0.15, observed_frequency: 0.3 },
    { lo: 0.2, hi: 0.3, count: 30, mean_predicted: 0.25, observed_frequency: 0.3 },
    { lo: 0.3, hi: 0.4, count: 20, mean_predicted: 0.35, observed_frequency: 0.4 },
    { lo: 0.4, hi: 0.5, count: 10, mean_predicted: 0.45, observed_frequency: 0.5 },
    { lo: 0.5, hi: 0.6, count: 0, mean_predicted: null, observed_frequency: null },
    { lo: 0.6, hi: 0.7, count: 20, mean_predicted: 0.65, observed_frequency: 0.6 },
    { lo: 0.7, hi: 0.8, count: 30, mean_predicted: 0.75, observed_frequency: 0.7 },
    { lo: 0.8, hi: 0.9, count: 40, mean_predicted: 0.85, observed_frequency: 0.7 },
    { lo: 0.9, hi: 1, count: 400, mean_predicted: 0.98, observed_frequency: 0.8 },
  ],
};

export function syntheticInput(duration_s: number, opts: { roleEvents?: boolean; extraEvents?: readonly ReportEvent[]; name?: string } = {}): ReportInput {
  const d = duration_s;
  const left = syntheticArm({
    name: opts.name ?? 'left',
    duration_s: d,
    rate_hz: 1000,
    seed: 11,
    impact_s: d * 0.42,
    hold: [d * 0.6, d * 0.6 + Math.min(8, d * 0.04)],
    blip_s: d * 0.8,
    roleSwitch_s: 0.5,
    beliefRate_hz: 50,
    roleEvents: opts.roleEvents ?? true,
    extraEvents: opts.extraEvents,
  });
  const right = syntheticArm({
    name: 'right',
    duration_s: d,
    rate_hz: 1000,
    seed: 23,
    impact_s: d * 0.42 + 0.003,
    hold: [d * 0.6 + 0.05, d * 0.6 + 0.05 + Math.min(8, d * 0.04)],
    roleSwitch_s: 0.5,
    beliefRate_hz: 50,
    roleEvents: opts.roleEvents ?? true,
  });
  const n = left.rawForce.t.length;
  const internal = new Float64Array(n);
  for (let i = 0; i < n; i++) internal[i] = left.rawForce.y[i]! - right.rawForce.y[i]! + 2 * Math.sin(i / 3000);
  return {
    title: 'Beam carry, pick stand to fixture',
    subtitle: `synthetic test data, ${d} s at 1 kHz per arm`,
    summary: [
      ['duration', `${d.toFixed(1)} s`],
      ['arms', 'left, right'],
      ['watchdog holds', 'left 2, right 1'],
      ['peak impact band', '150 N'],
    ],
    arms: [left, right],
    internalForce: { t: left.rawForce.t, y: internal },
    calibration: SYNTHETIC_CALIBRATION,
    checks: [
      { name: 'no collision with the clamp post', measured: 'min clearance 41 mm', verdict: 'pass' },
      { name: 'hold within 20 ms of the trip', measured: '1 ms', verdict: 'pass' },
      { name: 'peak internal force below 40 N', measured: '152 N', verdict: 'fail' },
    ],
  };
}
