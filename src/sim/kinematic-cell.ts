/**
 * A light two-arm cell without physics (invented data of our demo scenario): for tests of the
 * arm step, for demo bags and for benchmarks. The physics twin is the MuJoCo cell.
 *
 * Each arm's motion stack is an admittance: tool velocity = command + f / D. The beam is
 * rigid and massless here, so both tools move with it and the forces are internal:
 * f_left = -f_right = D (v_right - v_left) / 2, i.e. the coupling the step assumes with
 * c = D / 2. Gravity on the beam adds a constant -m g / 2 on each wrist z (tared away).
 *
 * On a task with a 3-D path (task.path.waypoints_m) the beam also moves vertically and turns
 * with the arms' angular twist (their mean); each tool's frame is the beam's, so the wrenches
 * are given in that frame, and a collision is the beam's capsule touching an occupied zone.
 * On a planar task the beam stays at 0.9 m, unturned, as before.
 */
import { ArmStep, ZONE_FREE, ZONE_OCCUPIED, ZONE_UNKNOWN } from '../core/arm-step.js';
import { CHECKS } from '../core/watchdog.js';
import type { ArmConfig } from '../params/config.js';
import { rotateByQuat } from '../geometry/path.js';
import { segmentSolidDistance } from '../geometry/solids.js';
import { isPlanar, taskPath, zoneSolid } from '../params/task-geometry.js';
import { Rng } from '../util/rng.js';
import { EpisodeMeasures, type EpisodeMeasureSummary, type InjectHold } from './measures.js';

/** Input messages of both arms, in time order. */
export interface InputRecorder {
  wrench(arm: 'left' | 'right', t: number, w: Float64Array): void;
  toolPose(arm: 'left' | 'right', t: number, x: number, y: number, z: number): void;
  jointState(arm: 'left' | 'right', t: number, position: Float64Array, velocity: Float64Array): void;
  zoneView(arm: 'left' | 'right', t: number, states: readonly number[]): void;
}

export interface CellRun {
  success: boolean;
  collided: boolean;
  time_s: number;
  peakInternalN: number;
  /** When the peak occurred (s from the start). */
  peakInternalT?: number;
  /** Watchdog trips of each arm at the end of the run: `check@input`. */
  trips: { left: string[]; right: string[] };
  /** Recommended linear speed per sample, when asked for (keepSpeeds). */
  speeds?: { left: number[]; right: number[] };
  /** Per update (every 10 ms): time, left belief on the true hypothesis, right belief on the true hypothesis. */
  trace: { t: number; leftTrue: number; rightTrue: number; x: number; y: number }[];
  /** Calibration, commitment agreement, same-role time and the partner-hold measurement (see measures.ts). */
  measures?: EpisodeMeasureSummary;
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
    /** Receives every input message as the arms' drivers would publish it. */
    recorder?: InputRecorder;
    /** Joint states every this many wrench samples (default 2: 500 Hz at 1 kHz). */
    jointEvery?: number;
    /** Tool poses every this many wrench samples (default 1: at the wrench rate). */
    poseEvery?: number;
    /** Clock of sample 0 (s); sample k is at t0_s + k / rate, as replay computes bag time. */
    t0_s?: number;
    /** Keep the recommended speed of every sample in the run (for comparisons with replay). */
    keepSpeeds?: boolean;
    /** End the run when the object reaches the goal (default true); else run the full duration. */
    stopAtGoal?: boolean;
    /** A half-sine force along the sensor x axis on one arm: the beam tip knocking something. */
    knock?: { arm: 'left' | 'right'; t_s: number; force_n: number; duration_s: number };
    /** One NaN wrench sample on one arm at the first sample at or after t_s (s from the start of the run). */
    inject_hold?: InjectHold;
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
  const L = new ArmStep(left, { jointCount: 3 });
  const R = new ArmStep(right, { jointCount: 3 });
  const zones = left.task.zones;
  const viewOf = (arm: 'left' | 'right') =>
    zones.map((z) => (opts.shareViews || z.observed_by === arm || z.observed_by === 'both' ? (occupied[zones.indexOf(z)] ? ZONE_OCCUPIED : ZONE_FREE) : ZONE_UNKNOWN));
  const viewL = viewOf('left');
  const viewR = viewOf('right');
  let px = left.task.start_m[0];
  let py = left.task.start_m[1];
  const planar = isPlanar(left.task);
  const path = taskPath(left.task);
  path.locate(0);
  path.orientationAt(0);
  let pz = planar ? 0.9 : path.pos[2]!;
  if (!planar) {
    px = path.pos[0]!;
    py = path.pos[1]!;
  }
  // Beam orientation (x, y, z, w) and its axis (the beam's y) in the cell frame.
  const q = Float64Array.from(planar ? [0, 0, 0, 1] : path.q);
  const ax = Float64Array.of(0, 1, 0);
  const fc = new Float64Array(3);
  const fs3 = new Float64Array(3);
  const qi = new Float64Array(4);
  path.locate(path.length);
  const goal3 = [path.pos[0]!, path.pos[1]!, path.pos[2]!];
  const solids = left.task.zones.map((z) => zoneSolid(z, false));
  const half = left.task.object.length_m / 2;
  const radius = left.task.object.radius_m ?? 0;
  const off = left.task.object.grasp_offset_m;
  const halfWeight = (-left.task.object.mass_kg * 9.80665) / 2;
  const jointEvery = opts.jointEvery ?? 2;
  const poseEvery = opts.poseEvery ?? 1;
  const jl = new Float64Array(3), jr = new Float64Array(3), vl = new Float64Array(3);
  let vx = 0, vy = 0, vz = 0;
  let reached = false;
  const t0 = opts.t0_s ?? 0;
  const wl = new Float64Array(6);
  const wr = new Float64Array(6);
  let fL = 0, fLy = 0, fLz = 0;
  const trueHypL = hypIndex(L, occupied);
  const trueHypR = hypIndex(R, occupied);
  const run: CellRun = { success: false, collided: false, time_s: opts.duration_s, peakInternalN: 0, trips: { left: [], right: [] }, trace: [] };
  if (opts.keepSpeeds) run.speeds = { left: [], right: [] };
  const n = Math.round(opts.duration_s * fs);
  // Measures on the run's own clock (s from its start).
  const measures = new EpisodeMeasures(L, R, occupied, dt, opts.inject_hold);
  for (let k = 0; k < n; k++) {
    const tr = k / fs; // time since the start of the run
    const t = t0 + tr;
    const rec = opts.recorder;
    if (k % Math.round(fs / 10) === 0) {
      L.setZoneView(t, viewL);
      R.setZoneView(t, viewR);
      rec?.zoneView('left', t, viewL);
      rec?.zoneView('right', t, viewR);
    }
    // The arms see exactly what their drivers publish (so a recorded bag replays the same).
    if (k % poseEvery === 0) {
      if (planar) {
        L.setToolPose(t, px, py + off, 0.9, 0, 0, 0, 1);
        R.setToolPose(t, px, py - off, 0.9, 0, 0, 0, 1);
        rec?.toolPose('left', t, px, py + off, 0.9);
        rec?.toolPose('right', t, px, py - off, 0.9);
      } else {
        L.setToolPose(t, px + off * ax[0]!, py + off * ax[1]!, pz + off * ax[2]!, q[0]!, q[1]!, q[2]!, q[3]!);
        R.setToolPose(t, px - off * ax[0]!, py - off * ax[1]!, pz - off * ax[2]!, q[0]!, q[1]!, q[2]!, q[3]!);
        rec?.toolPose('left', t, px + off * ax[0]!, py + off * ax[1]!, pz + off * ax[2]!);
        rec?.toolPose('right', t, px - off * ax[0]!, py - off * ax[1]!, pz - off * ax[2]!);
      }
    }
    if (k % jointEvery === 0) {
      // Tool-point arms: three slide joints x, y, z at the tool velocity.
      jl[0] = px + off * ax[0]!; jl[1] = py + off * ax[1]!; jl[2] = planar ? 0.9 : pz + off * ax[2]!; vl[0] = vx; vl[1] = vy; vl[2] = vz;
      jr[0] = px - off * ax[0]!; jr[1] = py - off * ax[1]!; jr[2] = planar ? 0.9 : pz - off * ax[2]!;
      L.setJointState(t, vl, 3);
      R.setJointState(t, vl, 3);
      rec?.jointState('left', t, jl, vl);
      rec?.jointState('right', t, jr, vl);
    }
    // The disturbance starts after the start-up tare (a still beam at the pick stand).
    for (let j = 0; j < 4; j++) ou[j] = tr < 1 ? 0 : ouA * ou[j]! + ouB * rng.normal();
    if (planar) {
      wl[0] = fL + ou[0]! + noise * rng.normal(); wl[1] = fLy + ou[1]! + noise * rng.normal(); wl[2] = halfWeight + noise * rng.normal();
      wr[0] = -fL + ou[2]! + noise * rng.normal(); wr[1] = -fLy + ou[3]! + noise * rng.normal(); wr[2] = halfWeight + noise * rng.normal();
    } else {
      // Cell-frame forces into the tool (beam) frame: R(q)^T f.
      qi[0] = -q[0]!; qi[1] = -q[1]!; qi[2] = -q[2]!; qi[3] = q[3]!;
      rotateByQuat(qi, fL + ou[0]!, fLy + ou[1]!, fLz + halfWeight, fs3);
      wl[0] = fs3[0]! + noise * rng.normal(); wl[1] = fs3[1]! + noise * rng.normal(); wl[2] = fs3[2]! + noise * rng.normal();
      rotateByQuat(qi, -fL + ou[2]!, -fLy + ou[3]!, -fLz + halfWeight, fs3);
      wr[0] = fs3[0]! + noise * rng.normal(); wr[1] = fs3[1]! + noise * rng.normal(); wr[2] = fs3[2]! + noise * rng.normal();
    }
    for (let a = 3; a < 6; a++) { wl[a] = 0.02 * rng.normal(); wr[a] = 0.02 * rng.normal(); }
    const kn = opts.knock;
    if (kn && tr >= kn.t_s && tr < kn.t_s + kn.duration_s) {
      const f = kn.force_n * Math.sin((Math.PI * (tr - kn.t_s)) / kn.duration_s);
      if (kn.arm === 'left') wl[0] = wl[0]! + f;
      else wr[0] = wr[0]! + f;
    }
    measures.wrench('left', tr, wl);
    measures.wrench('right', tr, wr);
    rec?.wrench('left', t, wl);
    rec?.wrench('right', t, wr);
    const oL = L.step(t, wl);
    const oR = R.step(t, wr);
    if (run.speeds) {
      run.speeds.left.push(Math.sqrt(oL.twist[0]! ** 2 + oL.twist[1]! ** 2 + oL.twist[2]! ** 2));
      run.speeds.right.push(Math.sqrt(oR.twist[0]! ** 2 + oR.twist[1]! ** 2 + oR.twist[2]! ** 2));
    }
    // Rigid beam between two admittances.
    fL = (D * (oR.twist[0]! - oL.twist[0]!)) / 2;
    fLy = (D * (oR.twist[1]! - oL.twist[1]!)) / 2;
    fLz = planar ? 0 : (D * (oR.twist[2]! - oL.twist[2]!)) / 2;
    const fi = Math.sqrt(fL * fL + fLy * fLy + fLz * fLz);
    if (fi > run.peakInternalN) {
      run.peakInternalN = fi;
      run.peakInternalT = tr;
    }
    vx = (oL.twist[0]! + oR.twist[0]!) / 2;
    vy = (oL.twist[1]! + oR.twist[1]!) / 2;
    px += dt * vx;
    py += dt * vy;
    if (!planar) {
      vz = (oL.twist[2]! + oR.twist[2]!) / 2;
      pz += dt * vz;
      // Turn the beam by the mean angular twist: q <- exp(w dt / 2) q.
      const wx = (oL.twist[3]! + oR.twist[3]!) / 2, wy = (oL.twist[4]! + oR.twist[4]!) / 2, wz = (oL.twist[5]! + oR.twist[5]!) / 2;
      const wn = Math.sqrt(wx * wx + wy * wy + wz * wz);
      if (wn > 0) {
        const h = (wn * dt) / 2, sh = Math.sin(h) / wn, ch = Math.cos(h);
        const rx = wx * sh, ry = wy * sh, rz = wz * sh;
        const x = q[0]!, y = q[1]!, zq = q[2]!, w = q[3]!;
        q[0] = ch * x + rx * w + ry * zq - rz * y;
        q[1] = ch * y - rx * zq + ry * w + rz * x;
        q[2] = ch * zq + rx * y - ry * x + rz * w;
        q[3] = ch * w - rx * x - ry * y - rz * zq;
      }
      rotateByQuat(q, 0, 1, 0, fc);
      ax.set(fc);
    }
    measures.sample(tr, oL, oR, px, py);
    if (planar) {
      for (let z = 0; z < zones.length; z++) if (occupied[z] && L.task.objectTouches(z, px, py)) run.collided = true;
    } else {
      for (let z = 0; z < zones.length; z++) {
        if (occupied[z] && segmentSolidDistance(px - half * ax[0]!, py - half * ax[1]!, pz - half * ax[2]!, px + half * ax[0]!, py + half * ax[1]!, pz + half * ax[2]!, solids[z]!) <= radius) run.collided = true;
      }
    }
    if (k % 10 === 0) run.trace.push({ t: t - t0, leftTrue: oL.belief[trueHypL]!, rightTrue: oR.belief[trueHypR]!, x: px, y: py });
    const toGoal = planar ? Math.hypot(px - left.task.goal_m[0], py - left.task.goal_m[1]) : Math.hypot(px - goal3[0]!, py - goal3[1]!, pz - goal3[2]!);
    if (!reached && toGoal < left.task.goal_tolerance_m) {
      reached = true;
      run.success = !run.collided;
      run.time_s = t - t0;
      if (opts.stopAtGoal !== false) break;
    }
  }
  const names = (a: ArmStep) => a.watchdog.trips.map((r) => `${CHECKS[r.check]}@${r.input}:${r.value.toFixed(2)}>${r.limit}`);
  run.trips = { left: names(L), right: names(R) };
  run.measures = measures.finish();
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
