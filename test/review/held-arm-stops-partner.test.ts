/**
 * Review finding: one arm's hold did not stop the carry. A hold zeroed only that arm's twist;
 * the partner carried on and dragged the held arm through its compliance (about c v = 6 N,
 * far under the 60 N correction limit), so the partner never tripped. In the reproduction a
 * 40 N knock latched a hold on the left arm at 3 s and the right arm then moved the object
 * from 0.35 m to 1.34 m over 17 s.
 *
 * Our own seeded scenario in the kinematic two-arm cell (invented demo data). Expected bound:
 * the partner-stop window (watchdog.partner_stop.window_s, 1 s) plus the correction band's lag
 * and the twist's deceleration, at most 0.075 m/s of object speed (half the cruise speed, one
 * arm pushing): well under 0.2 m of further travel.
 */
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { runKinematicCell } from '../../src/sim/kinematic-cell.js';

const cell = loadCell('config/demo_cell.yaml');

describe('review: a held arm stops its partner', () => {
  for (const arm of ['left', 'right'] as const) {
    it(`a knock that holds the ${arm} arm at 3 s holds the partner too, and the object stops`, () => {
      const r = runKinematicCell(cell.left.config, cell.right.config, [true, true], {
        seed: 1, duration_s: 20, knock: { arm, t_s: 3, force_n: 40, duration_s: 0.01 }, stopAtGoal: false,
      });
      const partner = arm === 'left' ? r.trips.right : r.trips.left;
      const own = arm === 'left' ? r.trips.left : r.trips.right;
      expect(own.some((s) => s.startsWith('impact'))).toBe(true);
      expect(partner.some((s) => s.startsWith('partner_stop'))).toBe(true);
      const at = (t: number) => r.trace.find((s) => s.t >= t)!;
      const travelled = Math.hypot(r.trace.at(-1)!.x - at(3).x, r.trace.at(-1)!.y - at(3).y);
      expect(travelled).toBeLessThan(0.2);
      expect(r.success).toBe(false);
    });
  }

  it('cooperating partners never trip partner_stop (seeded worlds, 1.5 N correction-band disturbance)', () => {
    for (const seed of [1, 2, 3]) {
      for (const occ of [[false, false], [true, false], [false, true], [true, true]]) {
        const r = runKinematicCell(cell.left.config, cell.right.config, occ, { seed, duration_s: 30, disturbance_n: 1.5 });
        expect([...r.trips.left, ...r.trips.right], `seed ${seed} ${occ}`).toEqual([]);
        expect(r.success).toBe(true);
      }
    }
  });
});
