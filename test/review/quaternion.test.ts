/**
 * Review finding: the tool-pose quaternion was not normalised for inference. The filter
 * normalised it, but the belief's rotation into the cell frame used the raw quaternion:
 * (0, 0, 1, 1) gave a wrong cell-frame force, and (0, 0, 0, 0) gave a wrong force and no trip.
 *
 * Reference (handbook fact): the unit quaternion (0, 0, sin 45°, cos 45°) rotates by 90° about
 * z, taking the x axis to y; q and any positive multiple of q describe the same rotation.
 */
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { CHECK } from '../../src/core/watchdog.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const base = loadCell('config/demo_cell.yaml').left.config;
const cfg: ArmConfig = { ...base, task: { ...base.task, zones: [] } };

function settle(q: [number, number, number, number]): ArmStep {
  const s = new ArmStep(cfg, { required: { zone_view: false } });
  const w = new Float64Array(6);
  for (let k = 0; k < 3000; k++) {
    const t = k / 1000;
    s.setToolPose(t, 0, 0.55, 0.9, ...q);
    w[0] = k < 600 ? 0 : 3; // 3 N along the sensor x axis after the tare
    s.step(t, w);
  }
  return s;
}

describe('review: the tool quaternion', () => {
  it('(0, 0, 1, 1) is normalised once: the correction force comes out along the cell y axis, and it is a norm fault', () => {
    const s = settle([0, 0, 1, 1]);
    const f = new Float64Array(3);
    s.cellCorrection(f);
    expect(f[0]).toBeCloseTo(0, 6);
    expect(f[1]).toBeCloseTo(3, 2);
    // A norm of 1.414 is far from a unit quaternion: an input fault.
    expect(s.watchdog.trips.some((r) => r.check === CHECK.quaternion_norm)).toBe(true);
  });

  it('the same rotation from a unit quaternion runs without a fault', () => {
    const h = Math.SQRT1_2;
    const s = settle([0, 0, h, h]);
    const f = new Float64Array(3);
    s.cellCorrection(f);
    expect(f[1]).toBeCloseTo(3, 2);
    expect(s.watchdog.trips).toEqual([]);
  });

  it('(0, 0, 0, 0) trips quaternion_norm and keeps the previous orientation', () => {
    const s = new ArmStep(cfg, { required: { zone_view: false } });
    s.setToolPose(0, 0, 0.55, 0.9, 0, 0, 0, 0);
    s.step(0, new Float64Array(6));
    expect(s.out.held).toBe(true);
    expect(s.watchdog.trips[0]!.check).toBe(CHECK.quaternion_norm);
  });
});
