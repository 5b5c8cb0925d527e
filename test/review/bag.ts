/** A small demo bag of our own scenario (kinematic cell, synthetic), for the review tests that need one. */
import { loadCell } from '../../src/params/config.js';
import { writeDemoBag } from '../../src/sim/demo-bag.js';
import { DEMO_PARAMS } from './child.js';

export async function smallDemoBag(dir: string, duration_s = 2): Promise<string> {
  const cell = loadCell(DEMO_PARAMS);
  await writeDemoBag(dir, { left: cell.left.config, right: cell.right.config, occupied: [true, false], seed: 3, duration_s });
  return dir;
}
