/**
 * The object's nominal path: waypoints in the cell frame joined by straight pieces, each inner
 * corner rounded by the largest circular arc that fits in half of the shorter neighbouring
 * piece (so the tangent, and the moving frame, are continuous and the turn radius at a corner
 * is a property of the waypoints), and the object's orientation per waypoint, interpolated
 * by slerp over arc length.
 *
 * Contract:
 * - Arc length `s` runs from 0 (first waypoint) to `length` (last). Waypoint k sits at `waypointS[k]`
 *   (an inner waypoint: the middle of its corner arc).
 * - The moving frame at s: tangent T (direction of travel), lateral L = unit(z x T) (horizontal,
 *   to the left of travel), vertical V = T x L. Where T is vertical (a lift), L is carried over
 *   from the nearest piece that is not.
 * - Lookups: `locate(s)` is O(1) when s moves little from the last call (a hint), else a
 *   binary search, O(log n); `project(p)` searches outward from the last piece it found
 *   (amortised O(1) for a point that moves along the path). Nothing allocates after
 *   construction; results go into the public scratch fields (`pos`, `t`, `l`, `v`, `q`).
 * Construction checks nothing: `pathProblems` (params) refuses what cannot be built.
 */

const LINE = 0;
const ARC = 1;

export interface PathInput {
  /** x, y, z per waypoint (m), cell frame. */
  readonly waypoints: ArrayLike<number>;
  /** Orientation of the object per waypoint: x, y, z, w unit quaternions (empty: identity everywhere). */
  readonly orientations?: ArrayLike<number>;
}

export class NominalPath {
  readonly n: number;
  readonly length: number;
  /** Arc length of each waypoint. */
  readonly waypointS: Float64Array;
  /** Turn radius at each waypoint (Infinity at the ends and where the path goes straight on). */
  readonly turnRadius: Float64Array;
  /** Smallest turn radius over the inner waypoints (Infinity for a straight path). */
  readonly minTurnRadius: number;
  // Pieces: kind, start arc length, length; line: start a, direction u; arc: centre c, radius,
  // e0 (centre to start), e1 (direction of travel at the start), angle.
  private readonly kind: Uint8Array;
  private readonly s0: Float64Array;
  private readonly len: Float64Array;
  private readonly a: Float64Array;
  private readonly u: Float64Array;
  private readonly e1: Float64Array;
  private readonly radius: Float64Array;
  private readonly lat: Float64Array;
  readonly pieces: number;
  // Orientation per waypoint (unit, consecutive ones in the same hemisphere) and the angular rate
  // per metre of each interval between waypoints (cell frame).
  private readonly quat: Float64Array;
  private readonly rate: Float64Array;
  private hint = 0;
  private qHint = 0;
  private projHint = 0;

  // Scratch results.
  readonly pos = new Float64Array(3);
  readonly t = new Float64Array(3);
  readonly l = new Float64Array(3);
  readonly v = new Float64Array(3);
  /** Orientation at the last `orientationAt` (x, y, z, w). */
  readonly q = new Float64Array(4);
  /** Angular rate per metre of arc length at the last `orientationAt` (rad/m, cell frame). */
  readonly w = new Float64Array(3);
  /** Result of `project`: arc length, distance. */
  projS = 0;
  projDist = 0;

  constructor(input: PathInput) {
    const W = input.waypoints;
    const n = Math.floor(W.length / 3);
    this.n = n;
    const np = Math.max(1, 2 * n - 3);
    this.kind = new Uint8Array(np);
    this.s0 = new Float64Array(np);
    this.len = new Float64Array(np);
    this.a = new Float64Array(3 * np);
    this.u = new Float64Array(3 * np);
    this.e1 = new Float64Array(3 * np);
    this.radius = new Float64Array(np);
    this.lat = new Float64Array(3 * np);
    this.waypointS = new Float64Array(n);
    this.turnRadius = new Float64Array(n).fill(Infinity);
    // Segment directions and lengths.
    const dir = new Float64Array(3 * Math.max(1, n - 1));
    const seg = new Float64Array(Math.max(1, n - 1));
    for (let k = 0; k + 1 < n; k++) {
      const dx = W[3 * k + 3]! - W[3 * k]!, dy = W[3 * k + 4]! - W[3 * k + 1]!, dz = W[3 * k + 5]! - W[3 * k + 2]!;
      const d = Math.sqrt(dx * dx + dy * dy + dz * dz);
      seg[k] = d;
      dir[3 * k] = dx / d; dir[3 * k + 1] = dy / d; dir[3 * k + 2] = dz / d;
    }
    // Corner cut-backs b_k and radii.
    const cut = new Float64Array(n);
    const theta = new Float64Array(n);
    for (let k = 1; k + 1 < n; k++) {
      const c = dir[3 * k - 3]! * dir[3 * k]! + dir[3 * k - 2]! * dir[3 * k + 1]! + dir[3 * k - 1]! * dir[3 * k + 2]!;
      const th = Math.acos(Math.min(1, Math.max(-1, c)));
      if (th < 1e-9) continue;
      theta[k] = th;
      cut[k] = Math.min(seg[k - 1]!, seg[k]!) / 2;
      this.turnRadius[k] = cut[k]! / Math.tan(th / 2);
    }
    let minR = Infinity;
    for (let k = 0; k < n; k++) if (this.turnRadius[k]! < minR) minR = this.turnRadius[k]!;
    this.minTurnRadius = minR;
    // Pieces: line k (from waypoint k + cut_k to waypoint k+1 - cut_{k+1}), then the arc of corner k+1.
    let p = 0;
    let s = 0;
    for (let k = 0; k + 1 < n; k++) {
      const ux = dir[3 * k]!, uy = dir[3 * k + 1]!, uz = dir[3 * k + 2]!;
      const b0 = cut[k]!, b1 = cut[k + 1]!;
      this.kind[p] = LINE;
      this.s0[p] = s;
      this.len[p] = Math.max(0, seg[k]! - b0 - b1);
      this.a[3 * p] = W[3 * k]! + b0 * ux; this.a[3 * p + 1] = W[3 * k + 1]! + b0 * uy; this.a[3 * p + 2] = W[3 * k + 2]! + b0 * uz;
      this.u[3 * p] = ux; this.u[3 * p + 1] = uy; this.u[3 * p + 2] = uz;
      if (k === 0) this.waypointS[0] = 0;
      s += this.len[p]!;
      p++;
      if (k + 2 < n) {
        const j = k + 1;
        const th = theta[j]!;
        if (th === 0) {
          this.waypointS[j] = s;
          continue;
        }
        const vx = dir[3 * j]!, vy = dir[3 * j + 1]!, vz = dir[3 * j + 2]!;
        // Inward normal: the part of the next direction across the current one.
        const cth = ux * vx + uy * vy + uz * vz;
        let nx = vx - cth * ux, ny = vy - cth * uy, nz = vz - cth * uz;
        const nn = Math.sqrt(nx * nx + ny * ny + nz * nz);
        nx /= nn; ny /= nn; nz /= nn;
        const R = this.turnRadius[j]!;
        const Ax = W[3 * j]! - b1 * ux, Ay = W[3 * j + 1]! - b1 * uy, Az = W[3 * j + 2]! - b1 * uz;
        this.kind[p] = ARC;
        this.s0[p] = s;
        this.len[p] = R * th;
        this.radius[p] = R;
        // a: centre; u: e0 = -n (centre to start); e1: direction of travel at the start.
        this.a[3 * p] = Ax + R * nx; this.a[3 * p + 1] = Ay + R * ny; this.a[3 * p + 2] = Az + R * nz;
        this.u[3 * p] = -nx; this.u[3 * p + 1] = -ny; this.u[3 * p + 2] = -nz;
        this.e1[3 * p] = ux; this.e1[3 * p + 1] = uy; this.e1[3 * p + 2] = uz;
        this.waypointS[j] = s + this.len[p]! / 2;
        s += this.len[p]!;
        p++;
      }
    }
    this.pieces = p;
    this.length = s;
    if (n > 0) this.waypointS[n - 1] = s;
    // Lateral direction per piece (for vertical pieces: from the nearest non-vertical one).
    const horiz = new Uint8Array(p);
    for (let k = 0; k < p; k++) {
      const tx = this.kind[k] === LINE ? this.u[3 * k]! : this.e1[3 * k]!;
      const ty = this.kind[k] === LINE ? this.u[3 * k + 1]! : this.e1[3 * k + 1]!;
      const h = Math.sqrt(tx * tx + ty * ty);
      if (h > 1e-6) {
        this.lat[3 * k] = -ty / h; this.lat[3 * k + 1] = tx / h;
        horiz[k] = 1;
      }
    }
    for (let k = 0; k < p; k++) {
      if (horiz[k]) continue;
      let best = -1;
      for (let d = 1; d < p && best < 0; d++) {
        if (k - d >= 0 && horiz[k - d]) best = k - d;
        else if (k + d < p && horiz[k + d]) best = k + d;
      }
      if (best >= 0) { this.lat[3 * k] = this.lat[3 * best]!; this.lat[3 * k + 1] = this.lat[3 * best + 1]!; }
      else this.lat[3 * k + 1] = 1; // an all-vertical path: the cell's y axis
    }
    // Orientations.
    this.quat = new Float64Array(4 * n);
    this.rate = new Float64Array(3 * Math.max(1, n - 1));
    const O = input.orientations;
    for (let k = 0; k < n; k++) {
      let x = 0, y = 0, z = 0, w = 1;
      if (O && O.length >= 4 * n) {
        x = O[4 * k]!; y = O[4 * k + 1]!; z = O[4 * k + 2]!; w = O[4 * k + 3]!;
        const m = Math.sqrt(x * x + y * y + z * z + w * w);
        x /= m; y /= m; z /= m; w /= m;
      }
      if (k > 0) {
        const d = x * this.quat[4 * k - 4]! + y * this.quat[4 * k - 3]! + z * this.quat[4 * k - 2]! + w * this.quat[4 * k - 1]!;
        if (d < 0) { x = -x; y = -y; z = -z; w = -w; }
      }
      this.quat[4 * k] = x; this.quat[4 * k + 1] = y; this.quat[4 * k + 2] = z; this.quat[4 * k + 3] = w;
    }
    for (let k = 0; k + 1 < n; k++) {
      // q_rel = q_{k+1} * conj(q_k): its rotation vector over the interval's arc length.
      const ax = this.quat[4 * k]!, ay = this.quat[4 * k + 1]!, az = this.quat[4 * k + 2]!, aw = this.quat[4 * k + 3]!;
      const bx = this.quat[4 * k + 4]!, by = this.quat[4 * k + 5]!, bz = this.quat[4 * k + 6]!, bw = this.quat[4 * k + 7]!;
      const rw = bw * aw + bx * ax + by * ay + bz * az;
      const rx = -bw * ax + bx * aw - by * az + bz * ay;
      const ry = -bw * ay + by * aw - bz * ax + bx * az;
      const rz = -bw * az + bz * aw - bx * ay + by * ax;
      const sn = Math.sqrt(rx * rx + ry * ry + rz * rz);
      const ang = 2 * Math.atan2(sn, rw);
      const ds = this.waypointS[k + 1]! - this.waypointS[k]!;
      const f = sn > 1e-15 && ds > 0 ? ang / sn / ds : 0;
      this.rate[3 * k] = rx * f; this.rate[3 * k + 1] = ry * f; this.rate[3 * k + 2] = rz * f;
    }
  }

  /** Index of the piece holding arc length s (clamped), from the hint or by binary search. */
  private pieceAt(s: number): number {
    let k = this.hint;
    const last = this.pieces - 1;
    if (s >= this.s0[k]! && (k === last || s < this.s0[k + 1]!)) return k;
    if (k < last && s >= this.s0[k + 1]! && (k + 1 === last || s < this.s0[k + 2]!)) return (this.hint = k + 1);
    let lo = 0, hi = last;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (this.s0[mid]! <= s) lo = mid;
      else hi = mid - 1;
    }
    this.hint = lo;
    k = lo;
    return k;
  }

  /** Position and moving frame at arc length s (clamped to [0, length]): pos, t, l, v. */
  locate(s: number): void {
    const ss = s < 0 ? 0 : s > this.length ? this.length : s;
    const k = this.pieceAt(ss);
    const r = ss - this.s0[k]!;
    const a = this.a, u = this.u;
    if (this.kind[k] === LINE) {
      this.pos[0] = a[3 * k]! + r * u[3 * k]!;
      this.pos[1] = a[3 * k + 1]! + r * u[3 * k + 1]!;
      this.pos[2] = a[3 * k + 2]! + r * u[3 * k + 2]!;
      this.t[0] = u[3 * k]!; this.t[1] = u[3 * k + 1]!; this.t[2] = u[3 * k + 2]!;
    } else {
      const R = this.radius[k]!;
      const ang = r / R;
      const c = Math.cos(ang), sn = Math.sin(ang);
      const e1 = this.e1;
      for (let i = 0; i < 3; i++) {
        this.pos[i] = a[3 * k + i]! + R * (c * u[3 * k + i]! + sn * e1[3 * k + i]!);
        this.t[i] = -sn * u[3 * k + i]! + c * e1[3 * k + i]!;
      }
    }
    this.frameFrom(k);
  }

  private frameFrom(k: number): void {
    const t = this.t, l = this.l, v = this.v;
    const h = Math.sqrt(t[0]! * t[0]! + t[1]! * t[1]!);
    if (h > 1e-6) {
      l[0] = 0 - t[1]! / h; l[1] = t[0]! / h; l[2] = 0;
    } else {
      // Vertical tangent: the lateral of the piece, made normal to t.
      const lx = this.lat[3 * k]!, ly = this.lat[3 * k + 1]!;
      const d = lx * t[0]! + ly * t[1]!;
      let mx = lx - d * t[0]!, my = ly - d * t[1]!, mz = -d * t[2]!;
      const m = Math.sqrt(mx * mx + my * my + mz * mz);
      mx /= m; my /= m; mz /= m;
      l[0] = mx; l[1] = my; l[2] = mz;
    }
    v[0] = t[1]! * l[2]! - t[2]! * l[1]!;
    v[1] = t[2]! * l[0]! - t[0]! * l[2]!;
    v[2] = t[0]! * l[1]! - t[1]! * l[0]!;
  }

  /** Closest point on piece k to p: arc length into projS (absolute) and distance into projDist. */
  private projectPiece(k: number, px: number, py: number, pz: number): void {
    const a = this.a, u = this.u;
    const dx = px - a[3 * k]!, dy = py - a[3 * k + 1]!, dz = pz - a[3 * k + 2]!;
    const L = this.len[k]!;
    let r: number;
    let qx: number, qy: number, qz: number;
    if (this.kind[k] === LINE) {
      r = dx * u[3 * k]! + dy * u[3 * k + 1]! + dz * u[3 * k + 2]!;
      if (r < 0) r = 0;
      else if (r > L) r = L;
      qx = a[3 * k]! + r * u[3 * k]!; qy = a[3 * k + 1]! + r * u[3 * k + 1]!; qz = a[3 * k + 2]! + r * u[3 * k + 2]!;
    } else {
      const R = this.radius[k]!;
      const e1 = this.e1;
      const x = dx * u[3 * k]! + dy * u[3 * k + 1]! + dz * u[3 * k + 2]!;
      const y = dx * e1[3 * k]! + dy * e1[3 * k + 1]! + dz * e1[3 * k + 2]!;
      const phi = L / R;
      let ang = Math.atan2(y, x);
      if (ang < 0 || ang > phi) {
        // Outside the arc's sector: the nearer end (by angle around the circle).
        const to0 = Math.abs(Math.atan2(Math.sin(ang), Math.cos(ang)));
        const to1 = Math.abs(Math.atan2(Math.sin(ang - phi), Math.cos(ang - phi)));
        ang = to0 <= to1 ? 0 : phi;
      }
      r = ang * R;
      const c = Math.cos(ang), sn = Math.sin(ang);
      qx = a[3 * k]! + R * (c * u[3 * k]! + sn * e1[3 * k]!);
      qy = a[3 * k + 1]! + R * (c * u[3 * k + 1]! + sn * e1[3 * k + 1]!);
      qz = a[3 * k + 2]! + R * (c * u[3 * k + 2]! + sn * e1[3 * k + 2]!);
    }
    const ex = px - qx, ey = py - qy, ez = pz - qz;
    this.projS = this.s0[k]! + r;
    this.projDist = Math.sqrt(ex * ex + ey * ey + ez * ez);
  }

  /**
   * Arc length of the point of the path nearest to p, searching outward from the piece found
   * last while the distance falls (a local nearest point: a point that moves along the path
   * keeps to its stretch where the path passes near itself). Writes projS, projDist.
   */
  project(px: number, py: number, pz: number): number {
    let best = this.projHint;
    this.projectPiece(best, px, py, pz);
    let bestS = this.projS, bestD = this.projDist;
    for (let dirn = -1; dirn <= 1; dirn += 2) {
      let k = best + dirn;
      let miss = 0;
      // Look two pieces past the last improvement (a line and an arc of one corner).
      while (k >= 0 && k < this.pieces && miss < 2) {
        this.projectPiece(k, px, py, pz);
        if (this.projDist < bestD - 1e-12) {
          bestD = this.projDist;
          bestS = this.projS;
          best = k;
          miss = 0;
        } else miss++;
        k += dirn;
      }
    }
    this.projHint = best;
    this.projS = bestS;
    this.projDist = bestD;
    return bestS;
  }

  /** The global nearest point (O(n); set-up and checks only). Writes projS, projDist. */
  projectGlobal(px: number, py: number, pz: number): number {
    let bestS = 0, bestD = Infinity, best = 0;
    for (let k = 0; k < this.pieces; k++) {
      this.projectPiece(k, px, py, pz);
      if (this.projDist < bestD) {
        bestD = this.projDist;
        bestS = this.projS;
        best = k;
      }
    }
    this.projHint = best;
    this.projS = bestS;
    this.projDist = bestD;
    return bestS;
  }

  /** Orientation (q) and angular rate per metre (w) at arc length s. */
  orientationAt(s: number): void {
    const n = this.n;
    const ws = this.waypointS;
    const ss = s < 0 ? 0 : s > this.length ? this.length : s;
    let k = this.qHint;
    if (!(ss >= ws[k]! && ss <= ws[k + 1]!)) {
      let lo = 0, hi = n - 2;
      while (lo < hi) {
        const mid = (lo + hi + 1) >> 1;
        if (ws[mid]! <= ss) lo = mid;
        else hi = mid - 1;
      }
      k = lo;
      this.qHint = k;
    }
    const ds = ws[k + 1]! - ws[k]!;
    const f = ds > 0 ? (ss - ws[k]!) / ds : 0;
    const Q = this.quat;
    // Slerp as exp(f * log(q_rel)) * q_k, using the interval's rotation vector.
    const wx = this.rate[3 * k]!, wy = this.rate[3 * k + 1]!, wz = this.rate[3 * k + 2]!;
    const phi = Math.sqrt(wx * wx + wy * wy + wz * wz) * ds * f;
    const ax = Q[4 * k]!, ay = Q[4 * k + 1]!, az = Q[4 * k + 2]!, aw = Q[4 * k + 3]!;
    if (phi < 1e-15) {
      this.q[0] = ax; this.q[1] = ay; this.q[2] = az; this.q[3] = aw;
    } else {
      const m = Math.sqrt(wx * wx + wy * wy + wz * wz);
      const sh = Math.sin(phi / 2) / m;
      const rx = wx * sh, ry = wy * sh, rz = wz * sh, rw = Math.cos(phi / 2);
      this.q[0] = rw * ax + rx * aw + ry * az - rz * ay;
      this.q[1] = rw * ay - rx * az + ry * aw + rz * ax;
      this.q[2] = rw * az + rx * ay - ry * ax + rz * aw;
      this.q[3] = rw * aw - rx * ax - ry * ay - rz * az;
    }
    this.w[0] = wx; this.w[1] = wy; this.w[2] = wz;
  }
}

/** Rotate vector (x, y, z) by unit quaternion q (x, y, z, w); writes out[0..2]. */
export function rotateByQuat(q: ArrayLike<number>, x: number, y: number, z: number, out: Float64Array): void {
  const qx = q[0]!, qy = q[1]!, qz = q[2]!, qw = q[3]!;
  out[0] = (1 - 2 * (qy * qy + qz * qz)) * x + 2 * (qx * qy - qz * qw) * y + 2 * (qx * qz + qy * qw) * z;
  out[1] = 2 * (qx * qy + qz * qw) * x + (1 - 2 * (qx * qx + qz * qz)) * y + 2 * (qy * qz - qx * qw) * z;
  out[2] = 2 * (qx * qz - qy * qw) * x + 2 * (qy * qz + qx * qw) * y + (1 - 2 * (qx * qx + qy * qy)) * z;
}
