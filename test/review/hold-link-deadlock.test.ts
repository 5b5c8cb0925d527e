/**
 * Review finding: with watchdog.hold_link.enabled, each arm's hold signal is the other's partner_hold
 * condition, and partner_hold is re-asserted on every sample while the partner is held. Once
 * both are held (A for its own fault, B because A is held, then A because B is held) neither
 * condition ever clears: no reset can release either arm, however long every real fault has
 * been gone. Invented data; demo cell limits.
 */
import { expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const linked = (c: ArmConfig): ArmConfig => ({ ...c, task: { ...c.task, zones: [] }, watchdog: { ...c.watchdog, hold_link: { enabled: true } } });

it('after a one-arm fault has cleared, the arms can be reset (no mutual latch through the hold link)', () => {
  const A = new ArmStep(linked(cell.left.config), { required: { tool_pose: false, zone_view: false } });
  const B = new ArmStep(linked(cell.right.config), { required: { tool_pose: false, zone_view: false } });
  const w = new Float64Array(6);
  const nan = Float64Array.of(Number.NaN, 0, 0, 0, 0, 0);
  for (let k = 0; k < 8000; k++) {
    const t = k / 1000;
    // Each arm's one-bit hold signal, as the other arm's node would publish it.
    A.setPartnerHold(t, B.out.heldOwn);
    B.setPartnerHold(t, A.out.heldOwn);
    A.step(t, k === 2000 ? nan : w); // one bad sample on A at 2 s, then clean for 6 s
    B.step(t, w);
  }
  expect(A.out.held).toBe(true);
  const ra = A.requestReset();
  const rb = B.requestReset();
  expect(ra.released || rb.released, `A: ${ra.reason}; B: ${rb.reason}`).toBe(true);
});
