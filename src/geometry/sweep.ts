/**
 * Clearance of the carried object swept along its nominal path: the object is a capsule (its
 * axis is the object frame's y axis, `halfLength` either side of the centre, radius `radius`)
 * whose centre follows the path and whose orientation follows the path's orientation.
 * Set-up and check time only (allocates nothing, but samples the whole path).
 */
import { NominalPath, rotateByQuat } from './path.js';
import { capsuleClearance, type Solid } from './solids.js';

const axis = new Float64Array(3);

/** The object's capsule axis at arc length s: end points into out[0..5]. */
export function capsuleAt(path: NominalPath, s: number, halfLength: number, out: Float64Array): void {
  path.locate(s);
  path.orientationAt(s);
  rotateByQuat(path.q, 0, halfLength, 0, axis);
  const p = path.pos;
  out[0] = p[0]! - axis[0]!; out[1] = p[1]! - axis[1]!; out[2] = p[2]! - axis[2]!;
  out[3] = p[0]! + axis[0]!; out[4] = p[1]! + axis[1]!; out[5] = p[2]! + axis[2]!;
}

const seg = new Float64Array(6);

/** Clearance of the object at arc length s from a solid (negative: inside by that much, at most the radius). */
export function clearanceAt(path: NominalPath, s: number, halfLength: number, radius: number, q: Solid): number {
  capsuleAt(path, s, halfLength, seg);
  return capsuleClearance(seg[0]!, seg[1]!, seg[2]!, seg[3]!, seg[4]!, seg[5]!, radius, q);
}

/**
 * The smallest clearance of the swept object from a solid, and where (arc length): sampled
 * every `step_m`, then refined by golden section between the neighbours of the best sample.
 */
export function sweptClearance(path: NominalPath, halfLength: number, radius: number, q: Solid, step_m = 0.005): { clearance_m: number; s_m: number } {
  const L = path.length;
  const n = Math.max(1, Math.ceil(L / step_m));
  let best = Infinity, bestK = 0;
  for (let k = 0; k <= n; k++) {
    const c = clearanceAt(path, (k / n) * L, halfLength, radius, q);
    if (c < best) { best = c; bestK = k; }
  }
  let lo = (Math.max(0, bestK - 1) / n) * L, hi = (Math.min(n, bestK + 1) / n) * L;
  let bestS = (bestK / n) * L;
  const g = (Math.sqrt(5) - 1) / 2;
  for (let it = 0; it < 40; it++) {
    const a = hi - g * (hi - lo), b = lo + g * (hi - lo);
    const fa = clearanceAt(path, a, halfLength, radius, q), fb = clearanceAt(path, b, halfLength, radius, q);
    if (fa < best) { best = fa; bestS = a; }
    if (fb < best) { best = fb; bestS = b; }
    if (fa <= fb) hi = b;
    else lo = a;
  }
  return { clearance_m: best, s_m: bestS };
}
