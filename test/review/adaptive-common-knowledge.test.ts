/**
 * Review finding: the adaptive scheduler's input was not common knowledge. It used each arm's
 * own estimate of the object's position; a 2 mm difference between the estimates gave 22 ms
 * with both arms in the same role. Our own synthetic poses (invented data).
 */
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const adaptive = (c: ArmConfig): ArmConfig => ({ ...c, roles: { ...c.roles, scheduler: 'adaptive' } });

describe('review: adaptive roles on common knowledge only', () => {
  it('arms whose object estimates differ by 2 mm never hold the same role over a transfer', () => {
    const L = new ArmStep(adaptive(cell.left.config), { required: { zone_view: false } });
    const R = new ArmStep(adaptive(cell.right.config), { required: { zone_view: false } });
    const w = new Float64Array(6);
    let same = 0;
    for (let k = 0; k < 20000; k++) {
      const t = k / 1000;
      const x = Math.min(1.6, 0.1 * t); // the object passes both zones
      L.setToolPose(t, x, 0.55, 0.9, 0, 0, 0, 1);
      R.setToolPose(t, x + 0.002, -0.55, 0.9, 0, 0, 0, 1);
      if (L.step(t, w).role === R.step(t, w).role) same++;
    }
    expect(same).toBe(0);
  });
});
