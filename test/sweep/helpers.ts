/**
 * Bags for the sweep tests: the kinematic two-arm cell of our demo scenario (invented data),
 * each bag with one knock at a known time on one arm (src/sim/demo-bag.ts), and the labels
 * file that names them.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { loadCell } from '../../src/params/config.js';
import { writeDemoBag } from '../../src/sim/demo-bag.js';

export interface KnockSpec {
  readonly name: string;
  readonly seed: number;
  readonly arm: 'left' | 'right';
  readonly t_s: number;
  readonly force_n: number;
}

export const KNOCKS: readonly KnockSpec[] = [
  { name: 'knock-a', seed: 3, arm: 'left', t_s: 4.0, force_n: 60 },
  { name: 'knock-b', seed: 4, arm: 'right', t_s: 6.5, force_n: 45 },
];

export async function makeKnockBags(dir: string, duration_s = 10, knocks: readonly KnockSpec[] = KNOCKS, disturbance_n = 0): Promise<{ bags: string[]; labels: string }> {
  const cell = loadCell('config/demo_cell.yaml');
  mkdirSync(dir, { recursive: true });
  const bags: string[] = [];
  const rows = ['bag,t_s,kind,arm'];
  for (const k of knocks) {
    const path = join(dir, k.name);
    await writeDemoBag(path, { left: cell.left.config, right: cell.right.config, occupied: [true, false], seed: k.seed, duration_s, poseEvery: 10, knock: { arm: k.arm, t_s: k.t_s, force_n: k.force_n, duration_s: 0.008 }, disturbance_n });
    bags.push(path);
    rows.push(`${k.name},${k.t_s},impact,${k.arm}`);
  }
  const labels = join(dir, 'labels.csv');
  writeFileSync(labels, rows.join('\n') + '\n');
  return { bags, labels };
}
