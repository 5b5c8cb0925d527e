/**
 * Review finding: the start-up tare is taken with no gating and accepts any still-window mean up to
 * max_bias_n = 40 N (a magnitude that includes the beam's weight share, ~11.8 N on z). A
 * steady lateral squeeze of 37 N present at start-up becomes the bias; every tared and
 * start-up-referenced limit then moves by 37 N. A later 95 N squeeze (correction limit 60 N)
 * runs with a non-zero twist. Invented data of our own scenario; limits from config/demo_cell.yaml.
 */
import { expect, it } from 'vitest';
import { ArmStep, TARE_OUTCOME_REFUSED } from '../../src/core/arm-step.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const noZones = (c: ArmConfig): ArmConfig => ({ ...c, task: { ...c.task, zones: [] } });

it('a 95 N squeeze (limit 60 N) never runs with a non-zero twist, whatever was present at start-up', () => {
  const s = new ArmStep(noZones(cell.left.config), { required: { tool_pose: false, zone_view: false } });
  const w = new Float64Array(6);
  const halfWeight = (-2.4 * 9.80665) / 2;
  w[2] = halfWeight;
  let k = 0;
  // Start-up: the arms grasp the beam with a 37 N squeeze already in it (|(0,37,-11.8)| = 38.8 N < 40 N).
  let refused = '';
  for (; k < 1500; k++) {
    w[1] = Math.min(37, (k * 37) / 300);
    s.step(k / 1000, w);
    if (s.out.tareOutcome === TARE_OUTCOME_REFUSED) refused = s.out.tareReason;
  }
  // The squeeze is horizontal (weight is vertical): the start-up tare is refused with the reason,
  // and the arm stays inhibited (twist zero) instead of running on a hidden load.
  expect(s.out.tared).toBe(false);
  expect(refused).toMatch(/max_horizontal_bias_n/);
  // The squeeze grows to 95 N (ramped: a step would read as an impact).
  let worst = 0;
  for (; k < 4000; k++) {
    w[1] = Math.min(95, 37 + ((k - 1500) * 58) / 1000);
    const o = s.step(k / 1000, w);
    const v = Math.hypot(o.twist[0]!, o.twist[1]!);
    if (w[1] > 60 && v > 0) worst = Math.max(worst, w[1]);
  }
  expect(worst, `a ${worst.toFixed(1)} N squeeze ran with a non-zero twist; held=${s.out.held}`).toBe(0);
});

it('the beam\'s weight alone (vertical) is taken as the start-up bias', () => {
  const s = new ArmStep(noZones(cell.left.config), { required: { tool_pose: false, zone_view: false } });
  const w = Float64Array.of(1.5, -1.0, (-2.4 * 9.80665) / 2, 0, 0, 0); // a 1.8 N sensor offset plus the weight share
  for (let k = 0; k < 1500; k++) s.step(k / 1000, w);
  expect(s.out.tared).toBe(true);
});
