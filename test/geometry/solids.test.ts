import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  boxSolid, capsuleClearance, cylinderSolid, pointSegmentDistance, pointSolidDistance, segmentSolidDistance, segmentTouches, sphereSolid, type Solid,
} from '../../src/geometry/solids.js';

/** Brute force: the minimum point-solid distance over a dense sampling of the segment. */
function sampled(a: number[], b: number[], q: Solid, n = 20000): number {
  let best = Infinity;
  for (let k = 0; k <= n; k++) {
    const t = k / n;
    best = Math.min(best, pointSolidDistance(a[0]! + t * (b[0]! - a[0]!), a[1]! + t * (b[1]! - a[1]!), a[2]! + t * (b[2]! - a[2]!), q));
  }
  return best;
}

/** Brute force for a point: the distance to the nearest of a dense grid of points filling the solid. */
function gridDistance(p: number[], q: Solid, m = 24): number {
  let best = Infinity;
  for (let i = 0; i <= m; i++) for (let j = 0; j <= m; j++) for (let k = 0; k <= m; k++) {
    const u = (2 * i) / m - 1, v = (2 * j) / m - 1, w = (2 * k) / m - 1;
    let x: number, y: number, z: number;
    if (q.kind === 0) {
      const lx = u * q.hx, ly = v * q.hy;
      x = q.cx + q.c * lx - q.s * ly; y = q.cy + q.s * lx + q.c * ly; z = q.cz + w * q.hz;
    } else if (q.kind === 1) {
      if (u * u + v * v > 1) continue;
      x = q.cx + u * q.r; y = q.cy + v * q.r; z = q.cz + w * q.hz;
    } else {
      if (u * u + v * v + w * w > 1) continue;
      x = q.cx + u * q.r; y = q.cy + v * q.r; z = q.cz + w * q.r;
    }
    best = Math.min(best, Math.hypot(p[0]! - x, p[1]! - y, p[2]! - z));
  }
  return best;
}

const coord = fc.double({ min: -2, max: 2, noNaN: true });
const pt = fc.tuple(coord, coord, coord).map((t) => [...t]);
const solid = fc.oneof(
  fc.record({ cx: coord, cy: coord, sx: fc.double({ min: 0.05, max: 1, noNaN: true }), sy: fc.double({ min: 0.05, max: 1, noNaN: true }), z0: fc.double({ min: -1, max: 0.5, noNaN: true }), h: fc.double({ min: 0.05, max: 1.5, noNaN: true }), yaw: fc.double({ min: -3.2, max: 3.2, noNaN: true }) })
    .map((r) => boxSolid(r.cx, r.cy, r.sx, r.sy, r.z0, r.z0 + r.h, r.yaw)),
  fc.record({ cx: coord, cy: coord, r: fc.double({ min: 0.05, max: 1, noNaN: true }), z0: fc.double({ min: -1, max: 0.5, noNaN: true }), h: fc.double({ min: 0.05, max: 1.5, noNaN: true }) })
    .map((r) => cylinderSolid(r.cx, r.cy, r.r, r.z0, r.z0 + r.h)),
  fc.record({ cx: coord, cy: coord, cz: coord, r: fc.double({ min: 0.05, max: 1, noNaN: true }) }).map((r) => sphereSolid(r.cx, r.cy, r.cz, r.r)),
);

describe('point-segment distance (closed form)', () => {
  it('equals the textbook cases: perpendicular foot inside, beyond either end, a degenerate segment', () => {
    // Textbook fact: the distance from a point to a segment is the perpendicular distance when
    // the foot of the perpendicular falls inside the segment, else the distance to the nearer end.
    expect(pointSegmentDistance(1, 3, 4, 0, 0, 0, 2, 0, 0)).toBeCloseTo(5, 14); // a 3-4-5 triangle
    expect(pointSegmentDistance(-3, 4, 0, 0, 0, 0, 2, 0, 0)).toBeCloseTo(5, 14); // nearer end a
    expect(pointSegmentDistance(5, 0, 4, 0, 0, 0, 2, 0, 0)).toBeCloseTo(5, 14); // nearer end b
    expect(pointSegmentDistance(1, 1, 1, 0, 0, 0, 0, 0, 0)).toBeCloseTo(Math.sqrt(3), 14); // a = b
    // The distance from (1,1,1) to the line through the origin along (1,1,0)/sqrt2 is 1.
    expect(pointSegmentDistance(1, 1, 1, -5, -5, 0, 5, 5, 0)).toBeCloseTo(1, 14);
  });
  it('matches dense sampling of the segment (property)', () => {
    fc.assert(fc.property(pt, pt, pt, (p, a, b) => {
      let best = Infinity;
      for (let k = 0; k <= 4000; k++) {
        const t = k / 4000;
        best = Math.min(best, Math.hypot(p[0]! - a[0]! - t * (b[0]! - a[0]!), p[1]! - a[1]! - t * (b[1]! - a[1]!), p[2]! - a[2]! - t * (b[2]! - a[2]!)));
      }
      const d = pointSegmentDistance(p[0]!, p[1]!, p[2]!, a[0]!, a[1]!, a[2]!, b[0]!, b[1]!, b[2]!);
      expect(d).toBeLessThanOrEqual(best + 1e-12);
      expect(best - d).toBeLessThan(Math.hypot(b[0]! - a[0]!, b[1]! - a[1]!, b[2]! - a[2]!) / 4000 + 1e-12);
    }), { numRuns: 200 });
  });
});

describe('point-solid distance', () => {
  it('closed-form cases: box faces, edges and corners, cylinder side and rim, sphere', () => {
    const box = boxSolid(0, 0, 2, 2, 0, 2); // [-1,1] x [-1,1] x [0,2]
    expect(pointSolidDistance(3, 0, 1, box)).toBeCloseTo(2, 14);
    expect(pointSolidDistance(4, 5, 1, box)).toBeCloseTo(5, 14); // edge: 3-4-5
    expect(pointSolidDistance(2, 2, 3, box)).toBeCloseTo(Math.sqrt(3), 14); // corner
    expect(pointSolidDistance(0.5, 0.5, 1, box)).toBe(0);
    // Turned 45 degrees: the corner along x now reaches sqrt2.
    expect(pointSolidDistance(3, 0, 1, boxSolid(0, 0, 2, 2, 0, 2, Math.PI / 4))).toBeCloseTo(3 - Math.SQRT2, 12);
    const cyl = cylinderSolid(1, 1, 0.5, 0, 1);
    expect(pointSolidDistance(3, 1, 0.5, cyl)).toBeCloseTo(1.5, 14);
    expect(pointSolidDistance(1, 1, 3, cyl)).toBeCloseTo(2, 14);
    expect(pointSolidDistance(1 + 0.5 + 3, 1, 1 + 4, cyl)).toBeCloseTo(5, 14); // the rim
    expect(pointSolidDistance(0, 0, 0, sphereSolid(3, 4, 0, 2))).toBeCloseTo(3, 14);
  });
  it('matches the nearest of a dense grid filling the solid (property)', () => {
    fc.assert(fc.property(pt, solid, (p, q) => {
      const d = pointSolidDistance(p[0]!, p[1]!, p[2]!, q);
      const g = gridDistance(p, q);
      // The grid is inside the solid, so it is never nearer; its spacing bounds how much farther it is.
      const step = 2 * Math.max(q.hx, q.hy, q.hz, q.r) / 24;
      expect(d).toBeLessThanOrEqual(g + 1e-9);
      expect(g - d).toBeLessThanOrEqual(step * Math.sqrt(3) + 1e-9);
    }), { numRuns: 60 });
  });
});

describe('segment-solid distance', () => {
  it('closed-form cases', () => {
    // A segment parallel to a box face at distance 2.
    expect(segmentSolidDistance(-5, 3, 1, 5, 3, 1, boxSolid(0, 0, 2, 2, 0, 2))).toBeCloseTo(2, 12);
    // Passing over the box top at height 2.5: 0.5 above.
    expect(segmentSolidDistance(-5, 0, 2.5, 5, 0, 2.5, boxSolid(0, 0, 2, 2, 0, 2))).toBeCloseTo(0.5, 12);
    // A horizontal segment passing a vertical cylinder at 1 m from its axis (radius 0.25).
    expect(segmentSolidDistance(-5, 1, 0.5, 5, 1, 0.5, cylinderSolid(0, 0, 0.25, 0, 1))).toBeCloseTo(0.75, 12);
    // A sphere: point-segment distance to the centre minus the radius.
    expect(segmentSolidDistance(-1, 0, 3, 1, 0, 3, sphereSolid(0, 0, 0, 1))).toBeCloseTo(2, 14);
    // Crossing: zero.
    expect(segmentSolidDistance(-5, 0, 1, 5, 0, 1, boxSolid(0, 0, 2, 2, 0, 2))).toBe(0);
    expect(capsuleClearance(-5, 1, 0.5, 5, 1, 0.5, 0.1, cylinderSolid(0, 0, 0.25, 0, 1))).toBeCloseTo(0.65, 12);
  });
  it('matches dense sampling of the segment, and touching agrees with distance 0 (property)', () => {
    fc.assert(fc.property(pt, pt, solid, (a, b, q) => {
      const d = segmentSolidDistance(a[0]!, a[1]!, a[2]!, b[0]!, b[1]!, b[2]!, q);
      const s = sampled(a, b, q);
      const len = Math.hypot(b[0]! - a[0]!, b[1]! - a[1]!, b[2]! - a[2]!);
      expect(d).toBeGreaterThanOrEqual(0);
      expect(d).toBeLessThanOrEqual(s + 1e-9);
      expect(s - d).toBeLessThanOrEqual(len / 20000 + 1e-9);
      const touch = segmentTouches(a[0]!, a[1]!, a[2]!, b[0]!, b[1]!, b[2]!, q);
      if (touch) expect(d).toBe(0);
      if (s === 0) expect(d).toBeLessThan(1e-9); // rounding at a face may leave the exact test a hair outside
      if (d > 1e-9) expect(touch).toBe(false);
    }), { numRuns: 300 });
  });
});
