/**
 * Review finding: one NaN-stamped wrench sample while the command is still ramping (e > 0): dt is
 * NaN (Math.max/min pass NaN through), the command becomes NaN, checkOutput sees a NaN twist
 * and records a second reason, `twist_linear`, with value NaN at time NaN, though the
 * recommended twist never exceeded its limit. The hold's reasons then name a fault that did
 * not happen. Invented data; demo cell.
 */
import { expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { CHECKS } from '../../src/core/watchdog.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const noZones = (c: ArmConfig): ArmConfig => ({ ...c, task: { ...c.task, zones: [] } });

it('a NaN sample time is the only reason recorded', () => {
  const s = new ArmStep(noZones(cell.left.config), { required: { tool_pose: false, zone_view: false } });
  const w = new Float64Array(6);
  let k = 0;
  for (; k < 600; k++) s.step(k / 1000, w); // tared at 0.5 s; the command is ramping up
  s.step(Number.NaN, w);
  const reasons = s.watchdog.trips.map((r) => `${CHECKS[r.check]}@${r.input}:${r.value} t=${r.t_s}`);
  expect(s.out.held).toBe(true);
  expect(reasons).toEqual([expect.stringMatching(/^non_finite@time/)]);
});
