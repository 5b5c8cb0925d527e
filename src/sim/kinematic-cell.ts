/**
 * A light two-arm cell without physics, for tests of the arm step (invented data).
 *
 * Each arm's motion stack is an admittance: tool velocity = command + f / D. The beam is
 * rigid and massless here, so both tools move with it and the forces are internal:
 * f_left = -f_right = D (v_right - v_left) / 2, i.e. the coupling the step assumes with
 * c = D / 2. Gravity on the beam adds a constant -m g / 2 on each wrist z (tared away).
 */
import { ArmStep, ZONE_FREE, ZONE_OCCUPIED, ZONE_UNKNOWN } from '../../src/core/arm-step.js';
import { CHECKS } from '../../src/core/watchdog.js';
import type { ArmConfig } from '../../src/params/config.js';
import { Rng } from '../../src/util/rng.js';

export interface CellRun {
  success: boolean;
  collided: boolean;
  time_s: number;
  peakInternalN: number;
  /** Watchdog trips of each arm at the end of the run: `check@input`. */
  trips: { left: string[]; right: string[] };
  /** Per update (every 10 ms): time, left belief on the true hypothesis, right belief on the true hypothesis. */
  trace: { t: number; leftTrue: number; rightTrue: number; x: number; y: number }[];
}

export function runKinematicCell(
  left: ArmConfig,
  right: ArmConfig,
  occupied: readonly boolean[],
  opts: {
    seed: number;
    duration_s: number;
    /** White sensor noise per sample and axis (N). */
    noise_n?: number;
    /** Low-frequency force disturbance in the correction band (N, stationary std; time constant 0.2 s). */
    disturbance_n?: number;
    admittance_n_s_m?: number;
    shareViews?: boolean;
  },
): CellRun {
  const rng = new Rng(opts.seed);
  const fs = left.wrench_filter.sample_rate_hz;
  const dt = 1 / fs;
  const D = opts.admittance_n_s_m ?? 2 * left.coupling.damping_n_s_m;
  const noise = opts.noise_n ?? 0.2;
  // Ornstein-Uhlenbeck disturbance: d' = -d / tau + w, stationary std = disturbance_n.
  const tau = 0.2;
  const dist = opts.disturbance_n ?? 0;
  const ouA = Math.exp(-dt / tau);
  const ouB = dist * Math.sqrt(1 - ouA * ouA);
  const ou = [0, 0, 0, 0];
  const L = new ArmStep(left);
  const R = new ArmStep(right);
  const zones = left.task.zones;
  const viewOf = (arm: 'left' | 'right') =>
    zones.map((z) => (opts.shareViews || z.observed_by === arm || z.observed_by === 'both' ? (occupied[zones.indexOf(z)] ? ZONE_OCCUPIED : ZONE_FREE) : ZONE_UNKNOWN));
  const viewL = viewOf('left');
  const viewR = viewOf('right');
  let px = left.task.start_m[0];
  let py = left.task.start_m[1];
  const off = left.task.object.grasp_offset_m;
  const halfWeight = (-left.task.object.mass_kg * 9.80665) / 2;
  const wl = new Float64Array(6);
  const wr = new Float64Array(6);
  let fL = 0, fLy = 0;
  const trueHypL = hypIndex(L, occupied);
  const trueHypR = hypIndex(R, occupied);
  const run: CellRun = { success: false, collided: false, time_s: opts.duration_s, peakInternalN: 0, trips: { left: [], right: [] }, trace: [] };
  const n = Math.round(opts.duration_s * fs);
  for (let k = 0; k < n; k++) {
    const t = k * dt;
    if (k % Math.round(fs / 10) === 0) {
      L.setZoneView(t, viewL);
      R.setZoneView(t, viewR);
    }
    L.setToolPose(t, px, py + off, 0.9, 0, 0, 0, 1);
    R.setToolPose(t, px, py - off, 0.9, 0, 0, 0, 1);
    // The disturbance starts after the start-up tare (a still beam at the pick stand).
    for (let j = 0; j < 4; j++) ou[j] = t < 1 ? 0 : ouA * ou[j]! + ouB * rng.normal();
    wl[0] = fL + ou[0]! + noise * rng.normal(); wl[1] = fLy + ou[1]! + noise * rng.normal(); wl[2] = halfWeight + noise * rng.normal();
    wr[0] = -fL + ou[2]! + noise * rng.normal(); wr[1] = -fLy + ou[3]! + noise * rng.normal(); wr[2] = halfWeight + noise * rng.normal();
    for (let a = 3; a < 6; a++) { wl[a] = 0.02 * rng.normal(); wr[a] = 0.02 * rng.normal(); }
    const oL = L.step(t, wl);
    const oR = R.step(t, wr);
    // Rigid beam between two admittances.
    fL = (D * (oR.twist[0]! - oL.twist[0]!)) / 2;
    fLy = (D * (oR.twist[1]! - oL.twist[1]!)) / 2;
    run.peakInternalN = Math.max(run.peakInternalN, Math.hypot(fL, fLy));
    px += dt * (oL.twist[0]! + oR.twist[0]!) / 2;
    py += dt * (oL.twist[1]! + oR.twist[1]!) / 2;
    for (let z = 0; z < zones.length; z++) if (occupied[z] && L.task.objectTouches(z, px, py)) run.collided = true;
    if (k % 10 === 0) run.trace.push({ t, leftTrue: oL.belief[trueHypL]!, rightTrue: oR.belief[trueHypR]!, x: px, y: py });
    if (Math.hypot(px - left.task.goal_m[0], py - left.task.goal_m[1]) < left.task.goal_tolerance_m) {
      run.success = !run.collided;
      run.time_s = t;
      break;
    }
  }
  const names = (a: ArmStep) => a.watchdog.trips.map((r) => `${CHECKS[r.check]}@${r.input}:${r.value.toFixed(2)}>${r.limit}`);
  run.trips = { left: names(L), right: names(R) };
  return run;
}

/** Index of the true hypothesis in an arm's belief (bit j: hidden zone j occupied). */
export function hypIndex(step: ArmStep, occupied: readonly boolean[]): number {
  let h = 0;
  step.task.hidden.forEach((z, b) => {
    if (occupied[z]) h |= 1 << b;
  });
  return h;
}
