import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { SubsetTable, TaskModel } from '../../src/core/task-model.js';
import { loadCell, type ArmConfig, type ZoneConfig } from '../../src/params/config.js';

const base = loadCell('config/demo_cell.yaml').left.config;
const withZones = (zones: ZoneConfig[]): ArmConfig => ({ ...base, task: { ...base.task, zones } });
const circle = (name: string, x: number, y: number, r: number, by: ZoneConfig['observed_by'] = 'left'): ZoneConfig => ({ name, shape: 'circle', center_m: [x, y], size_m: [0.2, 0.2], radius_m: r, observed_by: by, kind: 'clamp_post' });
const box = (name: string, x: number, y: number, w: number, h: number, by: ZoneConfig['observed_by'] = 'right'): ZoneConfig => ({ name, shape: 'box', center_m: [x, y], size_m: [w, h], radius_m: 0.1, observed_by: by, kind: 'cable_tray' });

/** Follow the field of the zones set in `mask` (Euler, 10 ms); report the outcome. */
function follow(task: TaskModel, mask: number) {
  const all = Int32Array.from({ length: task.n }, (_, k) => k);
  const table = new SubsetTable(task.n);
  const v = new Float64Array(2);
  let [x, y] = task.task.start_m;
  let touched = false;
  for (let k = 0; k < 6000; k++) {
    task.prepare(x, y);
    task.tabulate(all, 0, table);
    task.velocityOf(table, mask, v);
    x += 0.01 * v[0]!;
    y += 0.01 * v[1]!;
    for (let z = 0; z < task.n; z++) if ((mask >>> z) & 1 && task.objectTouches(z, x, y)) touched = true;
    if (Math.hypot(x - task.goal[0], y - task.goal[1]) < task.task.goal_tolerance_m) return { reached: true, touched, t: k * 0.01 };
  }
  return { reached: false, touched, t: 60 };
}

describe('TaskModel (the shared velocity field)', () => {
  it('with nothing occupied it heads for the goal, never faster than the policy speed', () => {
    // Our design; the speed bound follows from the saturation.
    const task = new TaskModel(base.task, base.policy, 'left');
    const t = new SubsetTable(task.n);
    const v = new Float64Array(2);
    task.prepare(0.2, 0.05);
    task.tabulate(Int32Array.of(0, 1), 0, t);
    task.velocityOf(t, 0, v);
    expect(v[0]).toBeGreaterThan(0);
    expect(Math.hypot(v[0]!, v[1]!)).toBeLessThanOrEqual(base.policy.speed_m_s + 1e-15);
    const r = follow(task, 0);
    expect(r.reached).toBe(true);
  });

  it('a table does not depend on the order of its zones (subset h extends smaller subsets)', () => {
    fc.assert(
      fc.property(fc.double({ min: -0.2, max: 1.8, noNaN: true }), fc.double({ min: -0.4, max: 0.4, noNaN: true }), fc.integer({ min: 0, max: 7 }), (px, py, h) => {
        const task = new TaskModel(withZones([circle('a', 0.6, 0.5, 0.08), box('b', 1.1, -0.5, 0.24, 0.16), circle('c', 0.9, 0.55, 0.05, 'both')]).task, base.policy, 'left');
        task.prepare(px, py);
        const fwd = new SubsetTable(3);
        const rev = new SubsetTable(3);
        task.tabulate(Int32Array.of(0, 1, 2), 0, fwd);
        task.tabulate(Int32Array.of(2, 1, 0), 0, rev);
        const hr = ((h & 1) << 2) | (h & 2) | ((h >> 2) & 1);
        const a = new Float64Array(2);
        const b = new Float64Array(2);
        task.velocityOf(fwd, h, a);
        task.velocityOf(rev, hr, b);
        expect(Array.from(a)).toEqual(Array.from(b));
        // A base mask acts like the same zones set in the subset.
        const withBase = new SubsetTable(1);
        task.tabulate(Int32Array.of(2), (h & 3) << 0, withBase);
        task.velocityOf(withBase, (h >> 2) & 1, b);
        expect(Array.from(b)).toEqual(Array.from(a));
      }),
    );
  });

  it('followed with full knowledge, it passes occupied zones on either side without touching them', () => {
    // Property over layouts of our scenario: one zone per side at distinct stations along the path.
    fc.assert(
      fc.property(
        fc.double({ min: 0.4, max: 0.8, noNaN: true }),
        fc.double({ min: 0.35, max: 0.55, noNaN: true }),
        fc.double({ min: 0.04, max: 0.1, noNaN: true }),
        fc.double({ min: 0.45, max: 0.7, noNaN: true }),
        fc.integer({ min: 0, max: 3 }),
        (x1, y1, r1, gap, mask) => {
          const zones = [circle('post', x1, y1, r1), box('tray', Math.min(x1 + gap, 1.3), -y1, 0.2, 0.14)];
          const task = new TaskModel(withZones(zones).task, base.policy, 'left');
          const r = follow(task, mask);
          expect(r.touched).toBe(false);
          expect(r.reached).toBe(true);
        },
      ),
      { numRuns: 60 },
    );
  });
});
