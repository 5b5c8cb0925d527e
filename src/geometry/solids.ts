/**
 * Distances between the carried object's axis (a segment) and the keep-out solids of a task:
 * an oriented box (turned about the vertical), a vertical cylinder, a sphere.
 *
 * Contract: pure functions of numbers and of `Solid` records built once (`boxSolid`,
 * `cylinderSolid`, `sphereSolid`); nothing allocates per call, nothing throws. Distances are
 * Euclidean, 0 when the segment touches or enters the solid (never negative); the object is a
 * capsule of radius r around the segment, so its clearance from a solid is `distance - r`.
 *
 * - point-segment: closed form (projection clamped to the segment; a textbook fact).
 * - point-solid: closed form per shape (clamp into the box frame; radial and vertical excess
 *   for the cylinder; centre distance minus radius for the sphere).
 * - segment-sphere: the point-segment distance to the centre minus the radius.
 * - segment-box, segment-cylinder: the distance from a point to a convex solid is a convex
 *   function of the point, and so of the parameter along the segment; a golden-section search
 *   over [0, 1] finds its minimum (64 steps: the bracket shrinks to 4e-14 of the segment).
 * - `segmentTouches`: an exact intersection test (slab clipping), cheaper than a distance.
 */

export const SOLID_BOX = 0;
export const SOLID_CYLINDER = 1;
export const SOLID_SPHERE = 2;

/** A keep-out solid in the cell frame. Fields not used by a shape are 0. */
export interface Solid {
  readonly kind: typeof SOLID_BOX | typeof SOLID_CYLINDER | typeof SOLID_SPHERE;
  /** Centre (box, sphere) or axis foot at mid-height (cylinder), cell frame. */
  readonly cx: number;
  readonly cy: number;
  readonly cz: number;
  /** Half extents in the box's own frame; for the cylinder hz is the half height. */
  readonly hx: number;
  readonly hy: number;
  readonly hz: number;
  /** cos and sin of the box's yaw (its x axis in the cell frame is (c, s, 0)). */
  readonly c: number;
  readonly s: number;
  /** Radius of the cylinder or the sphere. */
  readonly r: number;
}

/** A box of full size (sx, sy) over heights [z0, z1], turned by `yaw` (rad) about the vertical. */
export function boxSolid(cx: number, cy: number, sx: number, sy: number, z0: number, z1: number, yaw = 0): Solid {
  return { kind: SOLID_BOX, cx, cy, cz: (z0 + z1) / 2, hx: sx / 2, hy: sy / 2, hz: (z1 - z0) / 2, c: Math.cos(yaw), s: Math.sin(yaw), r: 0 };
}

/** A vertical cylinder of radius r over heights [z0, z1]. */
export function cylinderSolid(cx: number, cy: number, r: number, z0: number, z1: number): Solid {
  return { kind: SOLID_CYLINDER, cx, cy, cz: (z0 + z1) / 2, hx: 0, hy: 0, hz: (z1 - z0) / 2, c: 1, s: 0, r };
}

export function sphereSolid(cx: number, cy: number, cz: number, r: number): Solid {
  return { kind: SOLID_SPHERE, cx, cy, cz, hx: 0, hy: 0, hz: r, c: 1, s: 0, r };
}

/** Distance from point p to the segment a-b (a textbook closed form; a = b is a point). */
export function pointSegmentDistance(px: number, py: number, pz: number, ax: number, ay: number, az: number, bx: number, by: number, bz: number): number {
  const ux = bx - ax, uy = by - ay, uz = bz - az;
  const wx = px - ax, wy = py - ay, wz = pz - az;
  const uu = ux * ux + uy * uy + uz * uz;
  let t = uu > 0 ? (wx * ux + wy * uy + wz * uz) / uu : 0;
  if (t < 0) t = 0;
  else if (t > 1) t = 1;
  const dx = wx - t * ux, dy = wy - t * uy, dz = wz - t * uz;
  return Math.sqrt(dx * dx + dy * dy + dz * dz);
}

/** Distance from a point to a solid (0 inside). */
export function pointSolidDistance(px: number, py: number, pz: number, q: Solid): number {
  const dx = px - q.cx, dy = py - q.cy, dz = pz - q.cz;
  if (q.kind === SOLID_SPHERE) return Math.max(0, Math.sqrt(dx * dx + dy * dy + dz * dz) - q.r);
  const ez = Math.max(0, Math.abs(dz) - q.hz);
  if (q.kind === SOLID_CYLINDER) {
    const er = Math.max(0, Math.sqrt(dx * dx + dy * dy) - q.r);
    return Math.sqrt(er * er + ez * ez);
  }
  // Into the box frame (rotate by -yaw).
  const lx = q.c * dx + q.s * dy;
  const ly = -q.s * dx + q.c * dy;
  const ex = Math.max(0, Math.abs(lx) - q.hx);
  const ey = Math.max(0, Math.abs(ly) - q.hy);
  return Math.sqrt(ex * ex + ey * ey + ez * ez);
}

const GOLDEN = (Math.sqrt(5) - 1) / 2;

/** Distance from the segment a-b to a solid (0 when they touch). */
export function segmentSolidDistance(ax: number, ay: number, az: number, bx: number, by: number, bz: number, q: Solid): number {
  if (q.kind === SOLID_SPHERE) return Math.max(0, pointSegmentDistance(q.cx, q.cy, q.cz, ax, ay, az, bx, by, bz) - q.r);
  if (segmentTouches(ax, ay, az, bx, by, bz, q)) return 0;
  const ux = bx - ax, uy = by - ay, uz = bz - az;
  // Golden-section search of a convex function of t on [0, 1].
  let lo = 0, hi = 1;
  let t1 = hi - GOLDEN * (hi - lo);
  let t2 = lo + GOLDEN * (hi - lo);
  let f1 = pointSolidDistance(ax + t1 * ux, ay + t1 * uy, az + t1 * uz, q);
  let f2 = pointSolidDistance(ax + t2 * ux, ay + t2 * uy, az + t2 * uz, q);
  for (let k = 0; k < 64; k++) {
    if (f1 <= f2) {
      hi = t2;
      t2 = t1;
      f2 = f1;
      t1 = hi - GOLDEN * (hi - lo);
      f1 = pointSolidDistance(ax + t1 * ux, ay + t1 * uy, az + t1 * uz, q);
    } else {
      lo = t1;
      t1 = t2;
      f1 = f2;
      t2 = lo + GOLDEN * (hi - lo);
      f2 = pointSolidDistance(ax + t2 * ux, ay + t2 * uy, az + t2 * uz, q);
    }
  }
  // The ends too: a minimum at an end of the segment is found exactly.
  return Math.min(f1, f2, pointSolidDistance(ax, ay, az, q), pointSolidDistance(bx, by, bz, q));
}

/** Does the segment a-b touch the solid? Exact (slab clipping), no distance computed. */
export function segmentTouches(ax: number, ay: number, az: number, bx: number, by: number, bz: number, q: Solid): boolean {
  if (q.kind === SOLID_SPHERE) return pointSegmentDistance(q.cx, q.cy, q.cz, ax, ay, az, bx, by, bz) <= q.r;
  // Clip the parameter range to the vertical slab [cz - hz, cz + hz].
  let t0 = 0, t1 = 1;
  const z0 = az - q.cz, dz = bz - az;
  if (dz === 0) {
    if (Math.abs(z0) > q.hz) return false;
  } else {
    let ta = (-q.hz - z0) / dz, tb = (q.hz - z0) / dz;
    if (ta > tb) { const w = ta; ta = tb; tb = w; }
    if (ta > t0) t0 = ta;
    if (tb < t1) t1 = tb;
    if (t0 > t1) return false;
  }
  const ox = ax - q.cx, oy = ay - q.cy;
  const ux = bx - ax, uy = by - ay;
  if (q.kind === SOLID_CYLINDER) {
    // The clipped piece, seen from above, comes within r of the axis.
    const px = ox + t0 * ux, py = oy + t0 * uy;
    const qx = ox + t1 * ux, qy = oy + t1 * uy;
    return pointSegmentDistance(0, 0, 0, px, py, 0, qx, qy, 0) <= q.r;
  }
  // Box: clip against the two horizontal slabs of its own frame.
  const lx = q.c * ox + q.s * oy, ly = -q.s * ox + q.c * oy;
  const vx = q.c * ux + q.s * uy, vy = -q.s * ux + q.c * uy;
  for (let axis = 0; axis < 2; axis++) {
    const o = axis === 0 ? lx : ly;
    const d = axis === 0 ? vx : vy;
    const h = axis === 0 ? q.hx : q.hy;
    if (d === 0) {
      if (Math.abs(o) > h) return false;
      continue;
    }
    let ta = (-h - o) / d, tb = (h - o) / d;
    if (ta > tb) { const w = ta; ta = tb; tb = w; }
    if (ta > t0) t0 = ta;
    if (tb < t1) t1 = tb;
    if (t0 > t1) return false;
  }
  return true;
}

/**
 * Clearance of a capsule (axis a-b, radius r) from a solid: the distance minus r; negative
 * when the capsule enters the solid (down to -r: a penetrating axis counts as -r).
 */
export function capsuleClearance(ax: number, ay: number, az: number, bx: number, by: number, bz: number, r: number, q: Solid): number {
  return segmentSolidDistance(ax, ay, az, bx, by, bz, q) - r;
}
