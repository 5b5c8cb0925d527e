/**
 * One faulted episode on the kinematic two-arm cell (the model of src/sim/kinematic-cell.ts:
 * each motion stack an admittance, a rigid massless beam, so f_left = -f_right =
 * D (v_right - v_left) / 2), with every input of each arm passed through a FaultedArm and
 * the invariants checked on every sample. Invented data of our demo scenario.
 *
 * The operator: while an arm is held, reset is pressed every `reset_every_s` (an impatient
 * operator is the hardest case for the release rule). A dead pipeline's arm is stopped by its
 * driver (its command is zero from then on). Deterministic for a seed.
 */
import { ArmStep, ZONE_FREE, ZONE_OCCUPIED, ZONE_UNKNOWN, type ArmOutputs } from '../core/arm-step.js';
import { CHECKS } from '../core/watchdog.js';
import type { ArmConfig } from '../params/config.js';
import { Rng } from '../util/rng.js';
import { FaultedArm } from './inject.js';
import { InvariantMonitor } from './invariants.js';
import type { Fault } from './kinds.js';

export interface FaultEpisodeOptions {
  readonly seed: number;
  readonly duration_s: number;
  readonly noise_n?: number;
  readonly reset_every_s?: number;
  /** End (failure) when an arm has been held this long without release, s. */
  readonly hold_timeout_s?: number;
  /** Check the invariants (default true). */
  readonly monitor?: boolean;
}

export interface ArmReport {
  /** Hold onsets. */
  readonly holds: number;
  /** Checks that tripped (by name, counted per hold onset). */
  readonly checks: Record<string, number>;
  readonly first_held_after_fault_s: number | null;
  readonly violations: number;
  readonly violation_counts: readonly number[];
  readonly examples: readonly string[];
}

export interface FaultEpisodeResult {
  readonly success: boolean;
  readonly collided: boolean;
  readonly end: 'success' | 'time_limit' | 'hold';
  readonly time_s: number;
  readonly peak_internal_n: number;
  /** Fraction of samples (after the first tare of both) with both arms in the same role. */
  readonly same_role_fraction: number;
  readonly left: ArmReport;
  readonly right: ArmReport;
  readonly samples: number;
}

export function runFaultEpisode(left: ArmConfig, right: ArmConfig, occupied: readonly boolean[], faults: readonly Fault[], opts: FaultEpisodeOptions): FaultEpisodeResult {
  const rng = new Rng(opts.seed);
  const fs = left.wrench_filter.sample_rate_hz;
  const dt = 1 / fs;
  const D = 2 * left.coupling.damping_n_s_m;
  const noise = opts.noise_n ?? 0.2;
  const resetEvery = Math.max(1, Math.round((opts.reset_every_s ?? 0.25) * fs));
  const holdTimeout = opts.hold_timeout_s ?? 4;
  const L = new ArmStep(left, { jointCount: 3 });
  const R = new ArmStep(right, { jointCount: 3 });
  const watch = opts.monitor !== false;
  const mL = watch ? new InvariantMonitor('left', left, 3) : null;
  const mR = watch ? new InvariantMonitor('right', right, 3) : null;
  const fL = new FaultedArm(L, 'left', faults, mL);
  const fR = new FaultedArm(R, 'right', faults, mR);
  // Reaction: the faulted arm, or for a dead pipeline the survivor, from the onset.
  for (const f of faults) {
    const m = f.kind === 'partner_death' ? (f.arm === 'left' ? mR : mL) : f.arm === 'left' ? mL : mR;
    m?.armReaction(f.start_s);
  }
  const zones = left.task.zones;
  const viewOf = (arm: 'left' | 'right') => zones.map((z, k) => (z.observed_by === arm || z.observed_by === 'both' ? (occupied[k] ? ZONE_OCCUPIED : ZONE_FREE) : ZONE_UNKNOWN));
  const viewL = viewOf('left');
  const viewR = viewOf('right');
  let px = left.task.start_m[0];
  let py = left.task.start_m[1];
  const off = left.task.object.grasp_offset_m;
  const halfWeight = (-left.task.object.mass_kg * 9.80665) / 2;
  const vl = new Float64Array(3);
  let vx = 0, vy = 0;
  const wl = new Float64Array(6);
  const wr = new Float64Array(6);
  let f0 = 0, f1 = 0;
  let peak = 0;
  let collided = false;
  let end: FaultEpisodeResult['end'] = 'time_limit';
  let time = opts.duration_s;
  const holds = { left: 0, right: 0 };
  const checks = { left: {} as Record<string, number>, right: {} as Record<string, number> };
  const wasHeld = { left: false, right: false };
  const heldSince = { left: -1, right: -1 };
  let same = 0, both = 0;
  const n = Math.round(opts.duration_s * fs);
  let k = 0;
  for (; k < n; k++) {
    const now = k / fs;
    if (k % Math.round(fs / 10) === 0) {
      fL.setZoneView(now, viewL);
      fR.setZoneView(now, viewR);
    }
    fL.setToolPose(now, px, py + off, 0.9, 0, 0, 0, 1);
    fR.setToolPose(now, px, py - off, 0.9, 0, 0, 0, 1);
    if (k % 2 === 0) {
      vl[0] = vx; vl[1] = vy; vl[2] = 0;
      fL.setJointState(now, vl, 3);
      fR.setJointState(now, vl, 3);
    }
    wl[0] = f0 + noise * rng.normal(); wl[1] = f1 + noise * rng.normal(); wl[2] = halfWeight + noise * rng.normal();
    wr[0] = -f0 + noise * rng.normal(); wr[1] = -f1 + noise * rng.normal(); wr[2] = halfWeight + noise * rng.normal();
    for (let a = 3; a < 6; a++) { wl[a] = 0.02 * rng.normal(); wr[a] = 0.02 * rng.normal(); }
    const oL = fL.step(now, wl);
    const oR = fR.step(now, wr);
    const uLx = fL.dead ? 0 : oL.twist[0]!, uLy = fL.dead ? 0 : oL.twist[1]!;
    const uRx = fR.dead ? 0 : oR.twist[0]!, uRy = fR.dead ? 0 : oR.twist[1]!;
    f0 = (D * (uRx - uLx)) / 2;
    f1 = (D * (uRy - uLy)) / 2;
    const fi = Math.hypot(f0, f1);
    if (fi > peak) peak = fi;
    vx = (uLx + uRx) / 2;
    vy = (uLy + uRy) / 2;
    px += dt * vx;
    py += dt * vy;
    if (oL.tared && oR.tared && !fL.dead && !fR.dead) {
      both++;
      if (oL.role === oR.role) same++;
    }
    for (let z = 0; z < zones.length; z++) if (occupied[z] && L.task.objectTouches(z, px, py)) collided = true;
    let timedOut = false;
    for (const [s, fa, o] of [['left', fL, oL], ['right', fR, oR]] as [('left' | 'right'), FaultedArm, ArmOutputs][]) {
      if (fa.dead) continue;
      if (o.held && !wasHeld[s]) {
        holds[s]++;
        heldSince[s] = now;
        for (const r of fa.arm.watchdog.trips) {
          const c = CHECKS[r.check] ?? String(r.check);
          checks[s][c] = (checks[s][c] ?? 0) + 1;
        }
      }
      wasHeld[s] = o.held;
      if (o.held) {
        if (now - heldSince[s] > holdTimeout) timedOut = true;
        if ((k + (s === 'left' ? 0 : resetEvery >> 1)) % resetEvery === 0 && fa.reset(now)) wasHeld[s] = false;
      }
    }
    if (Math.hypot(px - left.task.goal_m[0], py - left.task.goal_m[1]) < left.task.goal_tolerance_m) {
      end = 'success';
      time = now;
      break;
    }
    // A dead pipeline: once the survivor has held (and been reset once), nothing more to learn.
    if ((fL.dead || fR.dead) && (fL.dead ? holds.right : holds.left) > 0 && now - (fL.dead ? heldSince.right : heldSince.left) > 0.5) timedOut = true;
    if (timedOut) {
      end = 'hold';
      time = now;
      break;
    }
  }
  const report = (m: InvariantMonitor | null, s: 'left' | 'right'): ArmReport => ({
    holds: holds[s],
    checks: checks[s],
    first_held_after_fault_s: m && !Number.isNaN(m.firstHeldAt) ? m.firstHeldAt : null,
    violations: m ? m.total : 0,
    violation_counts: m ? Array.from(m.counts) : [],
    examples: m ? m.violations.map((v) => `${v.invariant} at ${v.now_s.toFixed(4)} s: ${v.detail}`) : [],
  });
  return {
    success: end === 'success' && !collided,
    collided,
    end,
    time_s: time,
    peak_internal_n: peak,
    same_role_fraction: both > 0 ? same / both : 0,
    left: report(mL, 'left'),
    right: report(mR, 'right'),
    samples: k,
  };
}
