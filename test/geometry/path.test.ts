import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { NominalPath, rotateByQuat } from '../../src/geometry/path.js';
import { cylinderSolid, sphereSolid, boxSolid } from '../../src/geometry/solids.js';
import { clearanceAt, sweptClearance } from '../../src/geometry/sweep.js';

const straight = new NominalPath({ waypoints: [0, 0, 0.9, 1.6, 0, 0.9] });
// An L: 1 m along x, then 1 m along y (a left turn of 90 degrees), at 0.9 m.
const ell = new NominalPath({ waypoints: [0, 0, 0.9, 1, 0, 0.9, 1, 1, 0.9] });

describe('NominalPath', () => {
  it('a two-point path is the straight line: length, positions, frame (tangent x, lateral y, vertical z)', () => {
    expect(straight.length).toBe(1.6);
    expect(straight.minTurnRadius).toBe(Infinity);
    straight.locate(0.7);
    expect([...straight.pos]).toEqual([0.7, 0, 0.9]);
    expect([...straight.t]).toEqual([1, 0, 0]);
    expect([...straight.l]).toEqual([0, 1, 0]);
    expect([...straight.v]).toEqual([0, 0, 1]);
  });
  it('a corner is rounded by the largest arc in half of the shorter leg (radius b / tan(theta / 2))', () => {
    // Geometry of a circle tangent to both legs (textbook): cut-back b = R tan(theta/2); b = 0.5 m, theta = 90 deg: R = 0.5 m.
    expect(ell.turnRadius[1]).toBeCloseTo(0.5, 12);
    expect(ell.minTurnRadius).toBeCloseTo(0.5, 12);
    // Length: two straight halves of 0.5 m and a quarter circle of radius 0.5 m.
    expect(ell.length).toBeCloseTo(1 + (Math.PI / 2) * 0.5, 12);
    // Mid-arc: the arc's centre is (0.5, 0.5); the point at 45 degrees.
    ell.locate(ell.waypointS[1]!);
    expect(ell.pos[0]).toBeCloseTo(0.5 + 0.5 * Math.SQRT1_2, 12);
    expect(ell.pos[1]).toBeCloseTo(0.5 - 0.5 * Math.SQRT1_2, 12);
    expect(ell.t[0]).toBeCloseTo(Math.SQRT1_2, 12);
    expect(ell.t[1]).toBeCloseTo(Math.SQRT1_2, 12);
    ell.locate(ell.length);
    expect(ell.pos[0]).toBeCloseTo(1, 12);
    expect(ell.pos[1]).toBeCloseTo(1, 12);
    expect([ell.t[0], ell.t[1]].map((x) => Math.round(x! * 1e12) / 1e12)).toEqual([0, 1]);
  });
  it('the moving frame is orthonormal and right-handed, positions are continuous, and a lift keeps a lateral', () => {
    const lift = new NominalPath({ waypoints: [0, 0, 0.8, 0, 0, 1.2, 0.8, 0, 1.2, 0.8, 0.9, 1.0] });
    for (const p of [ell, lift]) {
      let prev: number[] | undefined;
      for (let k = 0; k <= 400; k++) {
        const s = (k / 400) * p.length;
        p.locate(s);
        const t = [...p.t], l = [...p.l], v = [...p.v];
        const dot = (a: number[], b: number[]) => a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!;
        expect(dot(t, t)).toBeCloseTo(1, 12);
        expect(dot(l, l)).toBeCloseTo(1, 12);
        expect(dot(t, l)).toBeCloseTo(0, 12);
        expect(dot(v, v)).toBeCloseTo(1, 12);
        // Right-handed: v = t x l.
        expect(v[0]).toBeCloseTo(t[1]! * l[2]! - t[2]! * l[1]!, 12);
        if (prev) expect(Math.hypot(p.pos[0]! - prev[0]!, p.pos[1]! - prev[1]!, p.pos[2]! - prev[2]!)).toBeLessThanOrEqual(p.length / 400 + 1e-12);
        prev = [...p.pos];
      }
    }
    lift.locate(0.1); // the vertical first leg: lateral is the next leg's (+y for travel along +x)
    expect(lift.l[1]).toBeCloseTo(1, 12);
  });
  it('project inverts locate along the path, with local lookups from a moving hint (property)', () => {
    const wave = new NominalPath({ waypoints: Array.from({ length: 50 }, (_, k) => [0.1 * k, 0.3 * Math.sin(0.4 * k), 0.9 + 0.05 * Math.cos(0.3 * k)]).flat() });
    // Walk along the path as an object would.
    for (let k = 0; k <= 2000; k++) {
      const s = (k / 2000) * wave.length;
      wave.locate(s);
      expect(wave.project(wave.pos[0]!, wave.pos[1]!, wave.pos[2]!)).toBeCloseTo(s, 9);
      expect(wave.projDist).toBeLessThan(1e-9);
    }
    fc.assert(fc.property(fc.double({ min: 0, max: 1, noNaN: true }), (f) => {
      const s = f * wave.length;
      wave.locate(s);
      expect(wave.projectGlobal(wave.pos[0]!, wave.pos[1]!, wave.pos[2]!)).toBeCloseTo(s, 9);
    }));
  });
  it('orientation: slerp between waypoints, constant angular rate per metre, ends exact', () => {
    // The object turns 90 degrees about z over the straight 1.6 m path.
    const c = Math.SQRT1_2;
    const p = new NominalPath({ waypoints: [0, 0, 0.9, 1.6, 0, 0.9], orientations: [0, 0, 0, 1, 0, 0, c, c] });
    p.orientationAt(0.8);
    // Half way: 45 degrees about z, q = (0, 0, sin(pi/8), cos(pi/8)) (rotation quaternions, textbook).
    expect(p.q[2]).toBeCloseTo(Math.sin(Math.PI / 8), 12);
    expect(p.q[3]).toBeCloseTo(Math.cos(Math.PI / 8), 12);
    expect(p.w[2]).toBeCloseTo(Math.PI / 2 / 1.6, 12);
    p.orientationAt(1.6);
    expect(p.q[2]).toBeCloseTo(c, 12);
    const out = new Float64Array(3);
    rotateByQuat(p.q, 0, 1, 0, out); // the object's axis (its y) now along -x
    expect(out[0]).toBeCloseTo(-1, 12);
  });
});

describe('swept clearance', () => {
  it('closed form: a beam along y carried along x past a post and under a sphere', () => {
    // Beam half length 0.6 m, radius 0.02 m; post (vertical cylinder) at y = 1.0, radius 0.08: 1.0 - 0.6 - 0.08 - 0.02.
    const r = sweptClearance(straight, 0.6, 0.02, cylinderSolid(0.6, 1.0, 0.08, 0, 2));
    expect(r.clearance_m).toBeCloseTo(0.3, 9);
    // A sphere of radius 0.1 centred 0.5 m above the path's middle: 0.5 - 0.1 - 0.02.
    const s = sweptClearance(straight, 0.6, 0.02, sphereSolid(0.8, 0.3, 1.4, 0.1));
    expect(s.clearance_m).toBeCloseTo(0.38, 9);
    expect(s.s_m).toBeCloseTo(0.8, 6);
  });
  it('matches a dense sampling of the path (10x denser than its own)', () => {
    const zones = [boxSolid(1.3, 0.4, 0.2, 0.3, 0, 1, 0.4), cylinderSolid(0.7, -0.9, 0.1, 0, 2), sphereSolid(1.2, 1.1, 1.0, 0.15)];
    for (const q of zones) {
      const r = sweptClearance(ell, 0.6, 0.02, q);
      let best = Infinity;
      for (let k = 0; k <= 20000; k++) best = Math.min(best, clearanceAt(ell, (k / 20000) * ell.length, 0.6, 0.02, q));
      expect(r.clearance_m).toBeLessThanOrEqual(best + 1e-9);
      expect(best - r.clearance_m).toBeLessThan(1e-4);
    }
  });
});
