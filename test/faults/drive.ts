/** A still two-input arm driven sample by sample through a FaultedArm (tests of the invariants). */
import { ArmStep, ZONE_FREE, ZONE_OCCUPIED } from '../../src/core/arm-step.js';
import { FaultedArm } from '../../src/faults/inject.js';
import { InvariantMonitor } from '../../src/faults/invariants.js';
import type { Fault } from '../../src/faults/kinds.js';
import { loadCell } from '../../src/params/config.js';
import { DEMO } from '../support/files.js';

export const cell = loadCell(DEMO);
export const cfg = cell.left.config;
export const RATE = cfg.wrench_filter.sample_rate_hz;

export interface Drive {
  arm: ArmStep;
  monitor: InvariantMonitor;
  fa: FaultedArm;
  /** Run samples k0..k1-1 (true time k / rate); `wrench(k, w)` may change the wrench; reset every `resetEvery` samples while held. */
  run(k0: number, k1: number, opts?: { wrench?: (k: number, w: Float64Array) => void; resetEvery?: number; skipWrench?: (k: number) => boolean }): void;
}

export function drive(faults: Fault[] = [], tamper?: (arm: ArmStep) => void): Drive {
  const arm = new ArmStep(cfg, { jointCount: 3 });
  tamper?.(arm);
  const monitor = new InvariantMonitor('left', cfg, 3);
  const fa = new FaultedArm(arm, 'left', faults, monitor);
  const w = new Float64Array(6);
  const v = new Float64Array(3);
  const zones = cfg.task.zones.map((z) => (z.observed_by === 'left' ? ZONE_OCCUPIED : ZONE_FREE));
  const [x, y] = cfg.task.start_m;
  const off = cfg.task.object.grasp_offset_m;
  return {
    arm,
    monitor,
    fa,
    run(k0, k1, opts = {}) {
      for (let k = k0; k < k1; k++) {
        const now = k / RATE;
        if (k % 100 === 0) fa.setZoneView(now, zones);
        fa.setToolPose(now, x, y + off, 0.9, 0, 0, 0, 1);
        if (k % 2 === 0) fa.setJointState(now, v, 3);
        w.fill(0);
        w[2] = -11.77;
        opts.wrench?.(k, w);
        if (opts.skipWrench?.(k)) {
          monitor.afterTick(now, now, arm.tick(now));
        } else fa.step(now, w);
        if (opts.resetEvery && arm.watchdog.held && k % opts.resetEvery === 0) fa.reset(now);
      }
    },
  };
}

export function fault(kind: Fault['kind'], start_s: number, duration_s: number, magnitude = 0, stream: Fault['stream'] = 'wrench', axis = 0): Fault {
  return { kind, arm: 'left', start_s, duration_s, magnitude, stream, axis };
}
