/**
 * Review finding: ArmStep.snapshot() leaves out the `out` object, but requestTare() gates on
 * out.inhibited and out.twist, and out.tareReason persists across samples. A fresh ArmStep
 * restored from a snapshot of a moving arm accepts a tare the original refuses, and reports
 * a different tare reason afterwards. Invented data; demo cell parameters.
 */
import { expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const noZones = (c: ArmConfig): ArmConfig => ({ ...c, task: { ...c.task, zones: [] } });
const make = () => new ArmStep(noZones(cell.left.config), { required: { tool_pose: false, zone_view: false } });

it('restore then requestTare answers as the uninterrupted arm does', () => {
  const a = make();
  const w = new Float64Array(6);
  let k = 0;
  for (; k < 2000; k++) a.step(k / 1000, w); // tared at 0.5 s, then moving toward the goal
  expect(Math.hypot(a.out.twist[0]!, a.out.twist[1]!)).toBeGreaterThan(0.05);
  const b = make();
  b.restore(a.snapshot());
  const ra = a.requestTare();
  const rb = b.requestTare();
  expect(ra.status).toBe('refused');
  expect(rb.status, `restored arm: ${rb.reason}`).toBe(ra.status);
});

it('restore then continue reports the same tare reason', () => {
  const a = make();
  const w = new Float64Array(6);
  w[1] = 45; // start-up: a still 45 N mean, refused by max_bias_n = 40 N (retried every window)
  let k = 0;
  for (; k < 700; k++) a.step(k / 1000, w);
  expect(a.out.tareReason).toMatch(/max_bias_n/);
  const b = make();
  b.restore(a.snapshot());
  const oa = a.step(k / 1000, w);
  const ob = b.step(k / 1000, w);
  expect(ob.tareReason).toBe(oa.tareReason);
});
