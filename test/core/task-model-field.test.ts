/**
 * The shared velocity field (src/core/task-model.ts) zone by zone, against values worked by hand
 * from its documented definition (the module header, README "task"): goal pull kg * (remaining
 * arc length, -lateral, -vertical); a zone ahead within repulsion_range_m pushes with weight
 * 1 - gap / range along the cheapest allowed detour, caps the progress short of it while the
 * overlap is real, and bounds the pull back toward it once it is cleared; the speed is capped at
 * policy.speed_m_s. Frame facts are textbook vector algebra (a unit tangent, the horizontal
 * left normal and their cross product). Layouts are our own invented scenario: the 1.2 m beam on
 * a straight path, keep-out zones built in code. Demo policy: kg 1 /s, repulsion gain 0.25 m/s,
 * range 0.25 m, speed 0.15 m/s; clearance margin 0.05 m.
 */
import { describe, expect, it } from 'vitest';
import { MAX_ZONES, SubsetTable, TaskModel } from '../../src/core/task-model.js';
import { loadCell, type TaskParams, type ZoneConfig } from '../../src/params/config.js';

const demo = loadCell('config/demo_cell.yaml').left.config;
const P = demo.policy;
const M = 0.05;

const circle = (name: string, x: number, y: number, r: number, by: ZoneConfig['observed_by'] = 'left'): ZoneConfig => ({ name, shape: 'circle', center_m: [x, y], size_m: [0.2, 0.2], radius_m: r, observed_by: by, kind: 'clamp_post' });
const block = (name: string, x: number, y: number, height: [number, number], detours: ZoneConfig['detours']): ZoneConfig => ({ name, shape: 'box', center_m: [x, y], size_m: [0.2, 0.2], radius_m: 0.1, height_m: height, detours, observed_by: 'left', kind: 'clamp_post' });

const planar = (zones: ZoneConfig[]): TaskParams => ({ ...demo.task, zones });
/** A straight 2 m path at 1 m height along x (3-D), the beam a 0.02 m capsule. */
const level = (zones: ZoneConfig[], orientations: number[] = []): TaskParams => ({
  ...demo.task,
  object: { ...demo.task.object, radius_m: 0.02 },
  start_m: [0, 0],
  goal_m: [2, 0],
  path: { waypoints_m: [0, 0, 1, 2, 0, 1], orientations_xyzw: orientations },
  zones,
});

/** The velocity (moving frame) of subset h of every zone at (px, py, pz). */
function field(task: TaskParams, h: number, px: number, py: number, pz?: number): number[] {
  const m = new TaskModel(task, P, 'left');
  const t = new SubsetTable(m.n);
  m.prepare(px, py, pz);
  m.tabulate(Int32Array.from({ length: m.n }, (_, k) => k), 0, t);
  const v = new Float64Array(3);
  m.velocityOf(t, h, v);
  return [...v];
}
/** (a, b, c) scaled to the speed cap when faster. */
function capped(a: number, b: number, c = 0): number[] {
  const s = Math.hypot(a, b, c);
  const k = s > P.speed_m_s ? P.speed_m_s / s : 1;
  return [a * k, b * k, c * k];
}
function close(got: number[], want: number[], digits = 12): void {
  expect(got.length).toBe(want.length);
  for (let i = 0; i < want.length; i++) expect(got[i], `component ${i}: ${got} vs ${want}`).toBeCloseTo(want[i]!, digits);
}

describe('TaskModel construction', () => {
  it('sorts the zones into this arm\'s hidden, own and shared sets by who observes them', () => {
    const zones = [circle('a', 0.6, 0.5, 0.1, 'left'), circle('b', 0.9, -0.5, 0.1, 'right'), circle('c', 1.2, 0.5, 0.1, 'both')];
    const left = new TaskModel(planar(zones), P, 'left');
    expect([[...left.hidden], [...left.own], [...left.shared]]).toEqual([[1], [0], [2]]);
    const right = new TaskModel(planar(zones), P, 'right');
    expect([[...right.hidden], [...right.own], [...right.shared]]).toEqual([[0], [1], [2]]);
  });

  it(`refuses more than ${MAX_ZONES} zones (32-bit hypothesis masks), accepts ${MAX_ZONES}`, () => {
    const many = (n: number) => Array.from({ length: n }, (_, k) => circle(`z${k}`, 0.1 * k, 3, 0.01));
    expect(() => new TaskModel(planar(many(MAX_ZONES + 1)), P, 'left')).toThrow(new RangeError(`at most ${MAX_ZONES} zones`));
    expect(new TaskModel(planar(many(MAX_ZONES)), P, 'left').n).toBe(MAX_ZONES);
  });

  it('turns only on a 3-D path that carries orientations', () => {
    expect(new TaskModel(planar([]), P, 'left').turns).toBe(false);
    expect(new TaskModel(level([]), P, 'left').turns).toBe(false);
    expect(new TaskModel(level([], [0, 0, 0, 1, 0, 0, 0, 1]), P, 'left').turns).toBe(true);
  });
});

describe('TaskModel frames', () => {
  // A 45 degree climb: tangent (1, 0, 1)/sqrt 2, lateral (0, 1, 0), vertical T x L = (-1, 0, 1)/sqrt 2.
  const climb: TaskParams = { ...level([]), goal_m: [1, 0], path: { waypoints_m: [0, 0, 0, 1, 0, 1], orientations_xyzw: [] } };
  const r = Math.SQRT1_2;

  it('locates a point beside the path: arc length of the nearest point, lateral and vertical offsets', () => {
    const m = new TaskModel(climb, P, 'left');
    m.locate(0.5, -0.1, 0.6);
    close([...m.T], [r, 0, r]);
    close([...m.L], [0, 1, 0]);
    close([...m.V], [-r, 0, r]);
    close([m.s, m.d, m.e], [1.1 * r, -0.1, 0.1 * r]);
  });

  it('beyond the goal the tangent offset counts as arc length (an overshoot is pulled back)', () => {
    const m = new TaskModel(climb, P, 'left');
    m.locate(1.5, 0.2, 1.5);
    close([m.s, m.d, m.e], [Math.SQRT2 + 0.5 * Math.SQRT2, 0.2, 0]);
  });

  it('toFrame and toCell are the frame\'s projection and its inverse, at an offset', () => {
    const m = new TaskModel(climb, P, 'left');
    m.locate(0.3, 0, 0.3);
    const f = new Float64Array(5);
    m.toFrame(0.2, 0.3, 0.4, f, 1);
    close([...f], [0, 0.6 * r, 0.3, 0.2 * r, 0]);
    const c = new Float64Array(4);
    m.toCell(f[1]!, f[2]!, f[3]!, c, 1);
    close([...c], [0, 0.2, 0.3, 0.4]);
    m.toCell(1, 2, 3, c);
    close([...c], [r - 3 * r, 2, r + 3 * r, 0.4]);
  });

  it('the grasp: the object centre is the tool less (left) or plus (right) the grasp offset along the object axis', () => {
    // Turned 90 degrees about z, the beam's axis (its own y) points along -x (rotation of a vector, textbook).
    const q = [0, 0, r, r];
    const m = new TaskModel(level([], [...q, ...q]), P, 'left');
    m.locate(1, 0, 1);
    close([...m.axis], [-1, 0, 0]);
    const o = new Float64Array(3);
    const g = demo.task.object.grasp_offset_m;
    m.objectFromTool('left', 0.5, 0.2, o, 1.1);
    close([...o], [0.5 + g, 0.2, 1.1]);
    m.objectFromTool('right', 0.5, 0.2, o);
    close([...o], [0.5 - g, 0.2, 0]);
    // Tilted 30 degrees about x: the axis (0, cos 30, sin 30).
    const h = Math.PI / 12;
    const t = [Math.sin(h), 0, 0, Math.cos(h)];
    const k = new TaskModel(level([], [...t, ...t]), P, 'left');
    k.locate(1, 0, 1);
    close([...k.axis], [0, Math.cos(Math.PI / 6), 0.5]);
    k.objectFromTool('left', 0.5, 0.2, o, 1.1);
    close([...o], [0.5, 0.2 - g * Math.cos(Math.PI / 6), 1.1 - g * 0.5]);
  });
});

describe('TaskModel field, planar (the demo line along x; the beam across it: half extents 0 along, 0.6 m across)', () => {
  // Zone: a 0.1 m circle at (0.8, y): arc length 0.7..0.9, lateral y - 0.1 .. y + 0.1.
  it('nothing occupied: the goal pull, capped at the speed; under the cap near the goal, not scaled up', () => {
    close(field(planar([circle('p', 0.8, 0.5, 0.1)]), 0, 0.55, 0.05), capped(1.6 - 0.55, -0.05));
    close(field(planar([]), 0, 1.55, 0.02), [0.05, -0.02, 0]);
  });

  it('an occupied zone ahead on the left: pushed right, progress capped short of it, no pull back toward it', () => {
    // gap 0.7 - 0.55 = 0.15, weight 0.4; to the right it needs 0.05 - (0.4 - 0.05 - 0.6) = 0.3 m
    // (to the left 1.2 m): push 0.25 * 0.4 = 0.1 m/s to the right; cap 0.15 - 0.05 = 0.1 m/s.
    close(field(planar([circle('p', 0.8, 0.5, 0.1)]), 1, 0.55, 0.05), capped(0.1, -0.05 - 0.1));
    // Mirrored (a zone on the right, the object 0.05 m left of the path): pushed left, and the
    // pull back right toward the zone (-0.05 m/s) is bounded at 0.
    close(field(planar([circle('p', 0.8, -0.5, 0.1)]), 1, 0.55, 0.05), capped(0.1, 0 + 0.1));
  });

  it('the push shrinks with the overlap still needed (need / margin below 1) and the wait ends within half the margin', () => {
    // Object at y = -0.23: to the right it needs -0.23 + 0.25 = 0.02 m (< 0.05): push 0.25 * 0.4 * 0.4
    // = 0.04 m/s; 0.02 < 0.025: no wait. The pull back left (0.23 m/s) is bounded at 0.
    close(field(planar([circle('p', 0.8, 0.5, 0.1)]), 1, 0.55, -0.23), capped(1.05, -0.04), 10);
    // y = -0.22: 0.03 m still needed (> 0.025): push 0.06 m/s, and the progress waits (cap 0.1).
    close(field(planar([circle('p', 0.8, 0.5, 0.1)]), 1, 0.55, -0.22), capped(0.1, -0.06), 10);
  });

  it('beyond the repulsion range and once passed by the margin, a zone changes nothing', () => {
    const z = planar([circle('p', 0.8, 0.5, 0.1)]);
    close(field(z, 1, 0.44, 0.05), field(z, 0, 0.44, 0.05)); // gap 0.26 > 0.25
    expect(field(z, 1, 0.46, 0.05)).not.toEqual(field(z, 0, 0.46, 0.05)); // gap 0.24
    close(field(z, 1, 0.96, 0.05), field(z, 0, 0.96, 0.05)); // 0.96 > 0.9 + 0.05
    expect(field(z, 1, 0.94, 0.05)).not.toEqual(field(z, 0, 0.94, 0.05));
  });

  it('a zone cleared on either side bounds the pull back toward it by the clearance left', () => {
    // Left of it at y = 1.3: 1.3 - (0.6 + 0.05 + 0.6) = 0.05 m to spare: the pull is at most 0.05 m/s.
    close(field(planar([circle('p', 0.8, 0.5, 0.1)]), 1, 0.55, 1.3), capped(1.05, -0.05));
    // Right of it at y = -0.9: -0.9 - (0.4 - 0.65) = -0.65: the pull left is at most 0.65 m/s.
    close(field(planar([circle('p', 0.8, 0.5, 0.1)]), 1, 0.55, -0.9), capped(1.05, 0.65));
  });

  it('the subset table: active bits name the zones that act; a base mask acts like the same zones set', () => {
    const zones = [circle('near', 0.8, 0.5, 0.1), circle('far', 1.5, -0.5, 0.1), circle('clear', 0.8, -2, 0.1)];
    const m = new TaskModel(planar(zones), P, 'left');
    m.prepare(0.55, 0.05);
    const all = new SubsetTable(3);
    m.tabulate(Int32Array.of(0, 1, 2), 0, all);
    // near acts (push, cap, bound); far is beyond the range; clear is cleared on the left... of
    // nothing: lateral -2 - 0.1 is 1.3 m right of the object, so only a bound on the pull (hi).
    expect(all.active).toBe(0b101);
    expect(all.size).toBe(8);
    const v = new Float64Array(3);
    const w = new Float64Array(3);
    for (let h = 0; h < 8; h++) {
      const part = new SubsetTable(1);
      m.tabulate(Int32Array.of(1), h & 0b101, part);
      m.velocityOf(all, h, v);
      m.velocityOf(part, (h >> 1) & 1, w);
      expect([...w], `h ${h}`).toEqual([...v]);
    }
    // With near and clear both in the base, clear's bound holds with near's: the smaller hi wins.
    const base = new SubsetTable(0);
    m.tabulate(Int32Array.of(), 0b101, base);
    m.velocityOf(base, 0, w);
    m.velocityOf(all, 0b101, v);
    expect([...w]).toEqual([...v]);
  });
});

describe('TaskModel field on a 3-D path (level at 1 m; the beam a 0.02 m capsule across it)', () => {
  // A 0.2 m box at x = 1 on the path: arc length 0.9..1.1, lateral -0.1..0.1, from the floor to
  // 1.1 m. Object at s = 0.7: gap 0.9 - 0.72 = 0.18, weight 0.28; cap 0.13 m/s.
  it('over: lifted by the push, nothing sideways', () => {
    // Lift needed 0.1 + 0.05 + 0.02 = 0.17 m: push 0.25 * 0.28 = 0.07 m/s up.
    close(field(level([block('b', 1, 0, [0, 1.1], 'over')]), 1, 0.7, 0.01, 1), [0.13, -0.01, 0.07]);
  });

  it('sideways: to the nearer side (left at y = 0.01: 0.76 m against 0.78 m), never up', () => {
    close(field(level([block('b', 1, 0, [0, 1.1], 'sideways')]), 1, 0.7, 0.01, 1), [0.13, 0.07, 0]);
    close(field(level([block('b', 1, 0, [0, 1.1], 'sideways')]), 1, 0.7, -0.01, 1), [0.13, -0.07, 0]);
  });

  it('both: the cheaper of over and sideways', () => {
    close(field(level([block('b', 1, 0, [0, 1.1], 'both')]), 1, 0.7, 0.01, 1), [0.13, -0.01, 0.07]);
    // A zone up to 2 m: over needs 1.07 m, the left 0.76 m.
    close(field(level([block('b', 1, 0, [0, 2], 'both')]), 1, 0.7, 0.01, 1), [0.13, 0.07, 0]);
  });

  it('while lifting the path may not pull the object down; once above the zone by the margin, the pull down is bounded', () => {
    // 0.05 m up: still 0.12 m to lift; the pull down (-0.05) is bounded at 0.
    close(field(level([block('b', 1, 0, [0, 1.1], 'over')]), 1, 0.7, 0, 1.05), [0.13, 0, 0.07]);
    // 1.2 m: 0.03 m above 1.1 + 0.05 + 0.02: the pull down is at most 0.03 m/s, progress free.
    close(field(level([block('b', 1, 0, [0, 1.1], 'over')]), 1, 0.7, 0, 1.2), capped(1.3, 0, -0.03));
  });

  it('a zone above the object\'s reach is not in the way', () => {
    const z = level([block('b', 1, 0, [1.3, 2], 'sideways')]);
    close(field(z, 1, 0.7, 0, 1), field(z, 0, 0.7, 0, 1));
    close(field(z, 0, 0.7, 0, 1), capped(1.3, 0, 0));
  });

  it('the speed cap counts the vertical part', () => {
    // 0.2 m below the path: pull (1.3, 0, 0.2), capped to 0.15 m/s as a whole.
    close(field(level([]), 0, 0.7, 0, 0.8), capped(1.3, 0, 0.2));
  });
});

describe('TaskModel zone queries', () => {
  // The beam along the path (turned 90 degrees about z): half extent 0.6 + 0.02 m along it.
  const r = Math.SQRT1_2;
  const along = level([circle('ahead', 1.5, 0, 0.1, 'both'), circle('beside', 1, 0.15, 0.1, 'both')], [0, 0, r, r, 0, 0, r, r]);

  it('gapAhead, passed and zoneSpan use the object\'s extent along the path', () => {
    const m = new TaskModel(along, P, 'left');
    const span = new Float64Array(2);
    m.zoneSpan(0, span);
    close([...span], [1.4, 1.6]);
    m.locate(0.5, 0, 1);
    expect(m.gapAhead(0)).toBeCloseTo(1.4 - (0.5 + 0.62), 12);
    expect(m.passed(0)).toBe(false);
    m.locate(1.0, 0, 1);
    expect(m.gapAhead(0)).toBe(0);
    m.locate(2.3, 0, 1); // 2.3 - 0.62 = 1.68 > 1.6 + 0.05
    expect(m.passed(0)).toBe(true);
    m.locate(2.25, 0, 1); // 1.63 < 1.65
    expect(m.passed(0)).toBe(false);
  });

  it('objectTouches: the beam\'s axis segment, with its capsule radius', () => {
    const m = new TaskModel(along, P, 'left');
    m.locate(1, 0, 1);
    // Ends at x 0.4 and 1.6: the zone ahead (1.4..1.6) is touched; so is one at the other end.
    expect(m.objectTouches(0, 1, 0, 1)).toBe(true);
    expect(m.objectTouches(0, 0.75, 0, 1)).toBe(false); // ends at 1.35
    expect(m.objectTouches(0, 2.05, 0, 1)).toBe(true); // ends at 1.45 and 2.65
    // Beside: the circle's edge 0.05 m from the axis: outside the 0.02 m capsule; at 0.015 m inside it.
    expect(m.objectTouches(1, 1, 0, 1)).toBe(false);
    expect(m.objectTouches(1, 1, 0.035, 1)).toBe(true);
    const thin = new TaskModel({ ...along, object: { ...along.object, radius_m: 0 } }, P, 'left');
    thin.locate(1, 0, 1);
    expect(thin.objectTouches(1, 1, 0.035, 1)).toBe(false);
    expect(thin.objectTouches(1, 1, 0.06, 1)).toBe(true);
  });
});
