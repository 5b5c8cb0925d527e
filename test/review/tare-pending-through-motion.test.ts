/**
 * Review finding: requestTare() gates only the request. A tare accepted while held stays pending
 * after the reset, and is then taken on a still window while the arm cruises (the gate's
 * condition — held, inhibited, or twist and joint speeds near zero — no longer holds).
 * A steady 4.5 N pull that is the partner's message then becomes bias. Invented data; demo cell.
 */
import { expect, it } from 'vitest';
import { ArmStep, TARE_OUTCOME_TAKEN } from '../../src/core/arm-step.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';
import { Rng } from '../../src/util/rng.js';

const cell = loadCell('config/demo_cell.yaml');
const noZones = (c: ArmConfig): ArmConfig => ({ ...c, task: { ...c.task, zones: [] } });

it('a tare is never taken while the arm moves at cruise speed', () => {
  const s = new ArmStep(noZones(cell.left.config), { required: { tool_pose: false, zone_view: false } });
  const rng = new Rng(3);
  const w = new Float64Array(6);
  let k = 0;
  for (; k < 1500; k++) s.step(k / 1000, w); // start-up tare, then moving
  w[0] = Number.NaN; s.step(k / 1000, w); k++; w[0] = 0; // a bad sample latches a hold
  expect(s.out.held).toBe(true);
  expect(s.requestTare().status).toBe('pending'); // accepted: held
  // During the hold someone handles the beam: never still for a full window.
  for (; k < 3500; k++) { w[1] = 3 * rng.normal(); s.step(k / 1000, w); }
  expect(s.requestReset().released).toBe(true);
  // Moving again; the partner pulls steadily with 4.5 N (a message, below every limit).
  let takenAt = -1, speedAt = 0;
  for (; k < 8000; k++) {
    w[1] = Math.min(4.5, ((k - 3500) * 4.5) / 300);
    const o = s.step(k / 1000, w);
    if (o.tareOutcome === TARE_OUTCOME_TAKEN && takenAt < 0) { takenAt = k / 1000; speedAt = Math.hypot(o.twist[0]!, o.twist[1]!); }
  }
  expect(takenAt, `tare taken at ${takenAt} s while the recommended speed was ${speedAt.toFixed(3)} m/s; bias now ${s.filter.bias[1]!.toFixed(2)} N`).toBe(-1);
});
