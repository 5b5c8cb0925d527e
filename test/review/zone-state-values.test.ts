/**
 * Review: zone states outside FREE / OCCUPIED / UNKNOWN given to the arm step. The shells map
 * anything above 2 to UNKNOWN; the core must read any value that is not exactly FREE
 * cautiously (as UNKNOWN), never as FREE. Invented data of our own scenario.
 */
import { describe, expect, it } from 'vitest';
import { ArmStep, ZONE_FREE, ZONE_UNKNOWN } from '../../src/core/arm-step.js';
import { loadCell } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const L = cell.left.config;
const W = Float64Array.of(0.1, -0.2, -11.8, 0, 0, 0);

function twists(view: readonly number[]): number[] {
  const s = new ArmStep(L);
  const rec: number[] = [];
  for (let k = 0; k < 4000; k++) {
    const t = k / 1000;
    s.setToolPose(t, 0.25 + 0.1 * t, 0.55, 0.9, 0, 0, 0, 1);
    if (k % 100 === 0) s.setZoneView(t, view);
    const o = s.step(t, W);
    rec.push(o.twist[0]!, o.twist[1]!);
  }
  return rec;
}

describe('review: zone state values', () => {
  it('NaN or 256 as a zone state reads as UNKNOWN, not FREE', () => {
    const unknown = twists([ZONE_UNKNOWN, ZONE_UNKNOWN]);
    const free = twists([ZONE_FREE, ZONE_FREE]);
    expect(free).not.toEqual(unknown); // the zones matter in this run
    expect(twists([Number.NaN, Number.NaN])).toEqual(unknown);
    expect(twists([256, 256])).toEqual(unknown);
  });
});
