/**
 * The velocity field on a 3-D path (examples/path_cell.yaml, our own invented layout): followed
 * with full knowledge it reaches the goal without touching an occupied zone, passing the clamp
 * over (lifted) and the tray drop sideways, as each zone allows; the angular rate follows the
 * path's orientation.
 */
import { describe, expect, it } from 'vitest';
import { SubsetTable, TaskModel } from '../../src/core/task-model.js';
import { loadCell } from '../../src/params/config.js';

const cfg = loadCell('examples/path_cell.yaml').left.config;

function follow(mask: number) {
  const task = new TaskModel(cfg.task, cfg.policy, 'left');
  const all = Int32Array.from({ length: task.n }, (_, k) => k);
  const table = new SubsetTable(task.n);
  const v = new Float64Array(3);
  const c = new Float64Array(3);
  task.path.locate(0);
  let [x, y, z] = [task.path.pos[0]!, task.path.pos[1]!, task.path.pos[2]!];
  task.path.locate(task.path.length);
  const goal = [task.path.pos[0]!, task.path.pos[1]!, task.path.pos[2]!];
  let touched = false, maxLift = 0, maxLeft = 0, maxRight = 0;
  for (let k = 0; k < 8000; k++) {
    task.prepare(x, y, z);
    maxLift = Math.max(maxLift, task.e);
    maxLeft = Math.max(maxLeft, task.d);
    maxRight = Math.max(maxRight, -task.d);
    task.tabulate(all, 0, table);
    task.velocityOf(table, mask, v);
    task.toCell(v[0]!, v[1]!, v[2]!, c);
    x += 0.01 * c[0]!;
    y += 0.01 * c[1]!;
    z += 0.01 * c[2]!;
    for (let q = 0; q < task.n; q++) if ((mask >>> q) & 1 && task.objectTouches(q, x, y, z)) touched = true;
    if (Math.hypot(x - goal[0]!, y - goal[1]!, z - goal[2]!) < cfg.task.goal_tolerance_m) return { reached: true, touched, maxLift, maxLeft, maxRight };
  }
  return { reached: false, touched, maxLift, maxLeft, maxRight };
}

describe('TaskModel on a 3-D path', () => {
  // Zones in name order: column (bit 0), low_clamp (bit 1), tray_drop (bit 2).
  it('with every occupancy it reaches the goal without touching an occupied zone', () => {
    for (let mask = 0; mask < 8; mask++) {
      const r = follow(mask);
      expect(r.reached, `mask ${mask}`).toBe(true);
      expect(r.touched, `mask ${mask}`).toBe(false);
    }
  });
  it('passes the clamp over (the only detour it allows) and the tray drop to the left (the cheaper side)', () => {
    const free = follow(0);
    expect(free.maxLift).toBeLessThan(0.01);
    const clamp = follow(2);
    // check-config's figure: a lift of 0.12 m clears it by the margin.
    expect(clamp.maxLift).toBeGreaterThan(0.12 - 0.03);
    expect(clamp.maxLeft).toBeLessThan(0.01);
    const tray = follow(4);
    expect(tray.maxLeft).toBeGreaterThan(0.43 - 0.03);
    expect(tray.maxLift).toBeLessThan(0.01);
  });
  it('the angular rate is the orientation change over the arc length between waypoints (15 degrees about z)', () => {
    const task = new TaskModel(cfg.task, cfg.policy, 'left');
    const p = task.path;
    const mid = (p.waypointS[2]! + p.waypointS[3]!) / 2;
    p.locate(mid);
    task.prepare(p.pos[0]!, p.pos[1]!, p.pos[2]!);
    expect(task.angularRate[2]).toBeCloseTo((15 * Math.PI) / 180 / (p.waypointS[3]! - p.waypointS[2]!), 5);
    p.locate(0.2);
    task.prepare(p.pos[0]!, p.pos[1]!, p.pos[2]!);
    expect(task.angularRate[2]).toBe(0);
  });
  it('on the planar demo path the moving frame is the cell frame (tangent x, lateral y)', () => {
    const demo = loadCell('config/demo_cell.yaml').left.config;
    const task = new TaskModel(demo.task, demo.policy, 'left');
    task.prepare(0.4, 0.1);
    expect([...task.T]).toEqual([1, 0, 0]);
    expect([...task.L]).toEqual([0, 1, 0]);
    expect([task.s, task.d, task.e]).toEqual([0.4, 0.1, 0]);
  });
});
