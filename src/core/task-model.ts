/**
 * The task model both arms share as common knowledge: the carried object, its nominal path and
 * the keep-out zones, and the deterministic velocity field that maps (object position, zones
 * known occupied) to an object velocity.
 *
 * Geometry: the object's centre follows a nominal path (src/geometry/path.ts; a planar task's
 * path is the straight line start_m -> goal_m) and the field is computed in the path's moving
 * frame at the object's nearest path point: tangent (progress), lateral (left of travel, in the
 * horizontal plane) and vertical. Each zone is an interval of arc length, lateral and vertical
 * offset there (params/task-geometry.ts). An occupied zone ahead is passed by the cheapest
 * detour it allows: sideways (either side) or over (lifted), far enough that the object (its
 * extent across the path from its orientation there, plus its capsule radius) clears it by the
 * margin; the object waits short of the zone until it has. On the demo cell (the object along
 * y, travel along x) this is exactly the field of the planar model: the frame is the cell's.
 *
 * Velocities out of `velocityOf` are in the moving frame (tangent, lateral, vertical) at the
 * prepared position; `toCell` turns one into the cell frame, `toFrame` the other way, and
 * `angularRate` gives the path's turn rate per metre of progress (the angular twist).
 *
 * The field is evaluated for many occupancy hypotheses per update, so `prepare()` computes
 * each zone's contribution once for the current position, `tabulate()` sums them for every
 * subset of a set of zones, and `velocityOf()` reads one subset in O(1). Nothing here
 * allocates after construction; path lookups are amortised O(1).
 */
import type { ArmName } from '../params/spec.js';
import type { PolicyParams, TaskParams, ZoneConfig } from '../params/config.js';
import { NominalPath } from '../geometry/path.js';
import { segmentSolidDistance, segmentTouches, type Solid } from '../geometry/solids.js';
import { CLEARANCE_M, isPlanar, taskPath, zoneDetours, zoneInterval, zoneSolid } from '../params/task-geometry.js';

/** Most zones in one task (bitmask arithmetic on 32-bit integers). */
export const MAX_ZONES = 24;
export { CLEARANCE_M };

/**
 * Per-subset contributions of a set of zones (see `TaskModel.tabulate`). Self-contained: it
 * keeps the goal pull (in the moving frame) of the position it was tabulated at, so it reads
 * the same after another `prepare()` (the arm step spreads its reads over several samples).
 * Its velocities are in that position's moving frame.
 */
export class SubsetTable {
  readonly ly: Float64Array;
  readonly cap: Float64Array;
  readonly lo: Float64Array;
  readonly hi: Float64Array;
  /** Vertical push (lift) and the floor on the vertical velocity while lifted. */
  readonly lz: Float64Array;
  readonly loz: Float64Array;
  /** The velocity of each subset (moving frame: tangent, lateral, vertical), what `velocityOf` reads. */
  readonly vt: Float64Array;
  readonly vl: Float64Array;
  readonly vv: Float64Array;
  /** Number of hypotheses: 2^(zones tabulated). */
  size = 0;
  /**
   * The bits (of the tabulated zone list) whose zones act at the position tabulated at. A zone
   * that does not act (passed, or beyond the repulsion range) changes no velocity, so subset h
   * reads the entry of h & active, and only the subsets of `active` are tabulated.
   */
  active = 0;
  /** Goal pull in the moving frame (tangent, lateral, vertical) of the position tabulated at. */
  gt = 0;
  gl = 0;
  gv = 0;
  constructor(bits: number) {
    const n = 1 << bits;
    this.ly = new Float64Array(n);
    this.cap = new Float64Array(n);
    this.lo = new Float64Array(n);
    this.hi = new Float64Array(n);
    this.lz = new Float64Array(n);
    this.loz = new Float64Array(n);
    this.vt = new Float64Array(n);
    this.vl = new Float64Array(n);
    this.vv = new Float64Array(n);
  }
}

export class TaskModel {
  readonly zones: readonly ZoneConfig[];
  readonly n: number;
  /** Zones only the partner observes (this arm's hidden state), in bit order of hypotheses. */
  readonly hidden: Int32Array;
  /** Zones only this arm observes (the partner's hidden state). */
  readonly own: Int32Array;
  /** Zones both observe. */
  readonly shared: Int32Array;
  /** The nominal path (arc length, moving frame, orientation). */
  readonly path: NominalPath;
  /** A planar task: no heights (the vertical is the cell's, never commanded). */
  readonly planar: boolean;
  /** The path carries orientations (else the object lies along the cell y axis everywhere). */
  readonly turns: boolean;
  // Per-zone intervals in path coordinates and allowed detours (bit 0 sideways, bit 1 over).
  private readonly s0: Float64Array;
  private readonly s1: Float64Array;
  private readonly d0: Float64Array;
  private readonly d1: Float64Array;
  private readonly e0: Float64Array;
  private readonly e1: Float64Array;
  private readonly allow: Uint8Array;
  private readonly solids: readonly Solid[];
  // Per-zone contributions at the prepared position.
  private readonly lat: Float64Array;
  private readonly cap: Float64Array;
  private readonly lo: Float64Array;
  private readonly hi: Float64Array;
  private readonly ver: Float64Array;
  private readonly loV: Float64Array;
  private gt = 0;
  private gl = 0;
  private gv = 0;
  /** Object position in path coordinates at the last `locate`/`prepare`: arc length, lateral, vertical offset. */
  s = 0;
  d = 0;
  e = 0;
  /** The moving frame at the last `locate` (cell frame): tangent, lateral, vertical. */
  readonly T = new Float64Array(3);
  readonly L = new Float64Array(3);
  readonly V = new Float64Array(3);
  /** The object's axis (unit, cell frame) at the last `locate` (the object frame's y axis). */
  readonly axis = Float64Array.of(0, 1, 0);
  /** The path's turn rate per metre of progress at the last `locate` (rad/m, cell frame). */
  readonly angularRate = new Float64Array(3);
  private hl = 0;
  private hv = 0;
  /** Height prepare() uses when given none (the arm step sets it every sample). */
  objectZ = 0;
  private ht = 0;
  readonly halfLength: number;
  readonly radius: number;
  readonly goal: readonly [number, number];

  constructor(
    readonly task: TaskParams,
    readonly policy: PolicyParams,
    readonly arm: ArmName,
  ) {
    this.zones = task.zones;
    this.n = task.zones.length;
    if (this.n > MAX_ZONES) throw new RangeError(`at most ${MAX_ZONES} zones`);
    const idx = (pred: (z: ZoneConfig) => boolean) => Int32Array.from(task.zones.flatMap((z, k) => (pred(z) ? [k] : [])));
    this.hidden = idx((z) => z.observed_by !== 'both' && z.observed_by !== arm);
    this.own = idx((z) => z.observed_by === arm);
    this.shared = idx((z) => z.observed_by === 'both');
    const n = this.n;
    this.planar = isPlanar(task);
    this.path = taskPath(task);
    this.turns = !this.planar && (task.path?.orientations_xyzw.length ?? 0) > 0;
    this.s0 = new Float64Array(n);
    this.s1 = new Float64Array(n);
    this.d0 = new Float64Array(n);
    this.d1 = new Float64Array(n);
    this.e0 = new Float64Array(n);
    this.e1 = new Float64Array(n);
    this.allow = new Uint8Array(n);
    task.zones.forEach((z, k) => {
      const iv = zoneInterval(this.path, z, this.planar);
      this.s0[k] = iv.s0;
      this.s1[k] = iv.s1;
      this.d0[k] = iv.d0;
      this.d1[k] = iv.d1;
      this.e0[k] = iv.e0;
      this.e1[k] = iv.e1;
      const dt = zoneDetours(z);
      this.allow[k] = (dt === 'over' ? 0 : 1) | (dt !== 'sideways' && !this.planar ? 2 : 0);
    });
    this.solids = task.zones.map((z) => zoneSolid(z, this.planar));
    this.lat = new Float64Array(n);
    this.cap = new Float64Array(n);
    this.lo = new Float64Array(n);
    this.hi = new Float64Array(n);
    this.ver = new Float64Array(n);
    this.loV = new Float64Array(n);
    this.halfLength = task.object.length_m / 2;
    this.radius = task.object.radius_m ?? 0;
    this.goal = task.goal_m;
    this.path.locate(0);
    this.locate(this.path.pos[0]!, this.path.pos[1]!, this.path.pos[2]!);
  }

  /**
   * Object centre from this arm's tool position (rigid grasp at +-grasp_offset along the
   * object's axis, the axis of the last `locate`). Writes out[0..2] (x, y, z; z is the tool's).
   */
  objectFromTool(arm: ArmName, toolX: number, toolY: number, out: Float64Array, toolZ = 0): void {
    const off = arm === 'left' ? this.task.object.grasp_offset_m : -this.task.object.grasp_offset_m;
    const a = this.axis;
    out[0] = toolX - off * a[0]!;
    out[1] = toolY - off * a[1]!;
    out[2] = toolZ - off * a[2]!;
  }

  /**
   * Locate the object (centre at px, py, pz; pz ignored on a planar task) on the path: its arc
   * length, offsets, the moving frame there, its axis and the path's turn rate.
   */
  locate(px: number, py: number, pz: number): void {
    const path = this.path;
    const z = this.planar ? 0 : pz;
    const s = path.project(px, py, z);
    path.locate(s);
    const T = this.T, L = this.L, V = this.V;
    for (let i = 0; i < 3; i++) {
      T[i] = path.t[i]!;
      L[i] = path.l[i]!;
      V[i] = path.v[i]!;
    }
    const ox = px - path.pos[0]!, oy = py - path.pos[1]!, oz = z - path.pos[2]!;
    // Beyond either end the tangent offset counts as arc length (0 elsewhere: the nearest point),
    // so an object that overshoots the goal is pulled back.
    this.s = s + (ox * T[0]! + oy * T[1]! + oz * T[2]!);
    this.objectZ = z;
    this.d = ox * L[0]! + oy * L[1]! + oz * L[2]!;
    this.e = this.planar ? 0 : ox * V[0]! + oy * V[1]! + oz * V[2]!;
    if (this.turns) {
      path.orientationAt(s);
      const q = path.q;
      this.axis[0] = 2 * (q[0]! * q[1]! - q[2]! * q[3]!);
      this.axis[1] = 1 - 2 * (q[0]! * q[0]! + q[2]! * q[2]!);
      this.axis[2] = 2 * (q[1]! * q[2]! + q[0]! * q[3]!);
      this.angularRate[0] = path.w[0]!;
      this.angularRate[1] = path.w[1]!;
      this.angularRate[2] = path.w[2]!;
    }
    // The object's half extents along the frame (its axis projected, plus the capsule radius).
    const a = this.axis, h = this.halfLength, r = this.radius;
    this.ht = h * Math.abs(a[0]! * T[0]! + a[1]! * T[1]! + a[2]! * T[2]!) + r;
    this.hl = h * Math.abs(a[0]! * L[0]! + a[1]! * L[1]! + a[2]! * L[2]!) + r;
    this.hv = h * Math.abs(a[0]! * V[0]! + a[1]! * V[1]! + a[2]! * V[2]!) + r;
  }

  /** Cell-frame vector into the moving frame of the last `locate` (tangent, lateral, vertical). */
  toFrame(x: number, y: number, z: number, out: Float64Array, offset = 0): void {
    const T = this.T, L = this.L, V = this.V;
    out[offset] = x * T[0]! + y * T[1]! + z * T[2]!;
    out[offset + 1] = x * L[0]! + y * L[1]! + z * L[2]!;
    out[offset + 2] = x * V[0]! + y * V[1]! + z * V[2]!;
  }

  /** Moving-frame vector (tangent, lateral, vertical) into the cell frame. */
  toCell(t: number, l: number, v: number, out: Float64Array, offset = 0): void {
    const T = this.T, L = this.L, V = this.V;
    out[offset] = t * T[0]! + l * L[0]! + v * V[0]!;
    out[offset + 1] = t * T[1]! + l * L[1]! + v * V[1]!;
    out[offset + 2] = t * T[2]! + l * L[2]! + v * V[2]!;
  }

  /** Compute every zone's contribution at object position (px, py, pz); pz defaults to the last located height. */
  prepare(px: number, py: number, pz = this.objectZ): void {
    const p = this.policy;
    const kg = p.goal_gain_1_s;
    this.locate(px, py, pz);
    const s = this.s, d = this.d, e = this.e;
    this.gt = kg * (this.path.length - s);
    this.gl = kg * (0 - d);
    this.gv = this.planar ? 0 : kg * (0 - e);
    const hl = this.hl, hv = this.hv, ht = this.ht;
    const m = CLEARANCE_M;
    for (let z = 0; z < this.n; z++) {
      this.lat[z] = 0;
      this.cap[z] = Infinity;
      this.lo[z] = -Infinity;
      this.hi[z] = Infinity;
      this.ver[z] = 0;
      this.loV[z] = -Infinity;
      // Distance ahead along the path; a zone already passed has no effect.
      if (s - ht > this.s1[z]! + m) continue;
      const gap = Math.max(0, this.s0[z]! - (s + ht));
      if (gap > p.repulsion_range_m) continue;
      const w = 1 - gap / p.repulsion_range_m;
      const allow = this.allow[z]!;
      const up = this.d1[z]! + m + hl - d; // shift needed to pass on the left (+lateral)
      const down = d - (this.d0[z]! - m - hl); // shift needed to pass on the right
      const over = this.e1[z]! + m + hv - e; // lift needed to pass over
      const under = e - (this.e0[z]! - m - hv); // > 0 unless the object is below the zone
      if (under <= 0) continue; // the zone is above the object's reach: not in the way
      if (up <= 0) {
        // Cleared on the left: do not drift back toward the zone faster than the clearance allows.
        this.lo[z] = kg * up;
        continue;
      }
      if (down <= 0) {
        this.hi[z] = -kg * down;
        continue;
      }
      if (over <= 0) {
        this.loV[z] = kg * over;
        continue;
      }
      // The cheapest allowed detour.
      let need = Infinity;
      let which = 0; // 1 left, -1 right, 2 over
      if (allow & 1) {
        if (up < down) { need = up; which = 1; }
        else { need = down; which = -1; }
      }
      if (allow & 2 && over < need) { need = over; which = 2; }
      const push = p.repulsion_gain_m_s * w * Math.min(1, need / m);
      if (which === 2) {
        this.ver[z] = push;
        // While lifting, the path may not pull the object back down.
        this.loV[z] = 0;
      } else {
        this.lat[z] = which * push;
        // While stepping aside, the path may not pull the object back toward the zone.
        if (which > 0) this.lo[z] = 0;
        else this.hi[z] = 0;
      }
      // Wait short of the zone only while the overlap is real (beyond half the clearance), so
      // that an object resting on the clearance boundary keeps moving.
      if (need > m / 2) this.cap[z] = kg * Math.max(0, gap - m);
    }
  }

  /**
   * Tabulate, for every subset h of `zones` (bit b of h: zones[b] occupied) together with
   * the zones of `baseMask`, the summed contributions and the velocity, so that
   * `velocityOf(table, h)` is O(1). Only the subsets of the zones that act at the prepared
   * position are computed (`SubsetTable.active`): a zone that does not act adds exactly nothing
   * (a zero push, no cap, no bound), so every other subset reads the same entry bit for bit.
   * Each subset extends a smaller one by a single zone. Call `prepare()` first.
   */
  tabulate(zones: Int32Array, baseMask: number, table: SubsetTable): void {
    let subsetMask = 0;
    let active = 0;
    for (let b = 0; b < zones.length; b++) {
      const z = zones[b]!;
      subsetMask |= 1 << z;
      if (this.lat[z] !== 0 || this.cap[z] !== Infinity || this.lo[z] !== -Infinity || this.hi[z] !== Infinity || this.ver[z] !== 0 || this.loV[z] !== -Infinity) active |= 1 << b;
    }
    const base = baseMask & ~subsetMask;
    let ly = 0, cap = Infinity, lo = -Infinity, hi = Infinity, lz = 0, loz = -Infinity;
    for (let z = 0; z < this.n; z++) {
      if (((base >>> z) & 1) === 0) continue;
      ly += this.lat[z]!;
      lz += this.ver[z]!;
      if (this.cap[z]! < cap) cap = this.cap[z]!;
      if (this.lo[z]! > lo) lo = this.lo[z]!;
      if (this.hi[z]! < hi) hi = this.hi[z]!;
      if (this.loV[z]! > loz) loz = this.loV[z]!;
    }
    table.ly[0] = ly;
    table.cap[0] = cap;
    table.lo[0] = lo;
    table.hi[0] = hi;
    table.lz[0] = lz;
    table.loz[0] = loz;
    table.gt = this.gt;
    table.gl = this.gl;
    table.gv = this.gv;
    this.subsetVelocity(table, 0);
    // The subsets of `active` in increasing order (h & (h - 1), one zone fewer, comes before h).
    for (let h = -active & active; h !== 0; h = (h - active) & active) {
      const prev = h & (h - 1);
      const z = zones[31 - Math.clz32(h & -h)]!;
      table.ly[h] = table.ly[prev]! + this.lat[z]!;
      table.cap[h] = Math.min(table.cap[prev]!, this.cap[z]!);
      table.lo[h] = Math.max(table.lo[prev]!, this.lo[z]!);
      table.hi[h] = Math.min(table.hi[prev]!, this.hi[z]!);
      table.lz[h] = table.lz[prev]! + this.ver[z]!;
      table.loz[h] = Math.max(table.loz[prev]!, this.loV[z]!);
      this.subsetVelocity(table, h);
    }
    table.size = 1 << zones.length;
    table.active = active;
  }

  /** The velocity of tabulated entry h, into the table's vt, vl, vv. */
  private subsetVelocity(table: SubsetTable, h: number): void {
    let vt = table.gt;
    const cap = table.cap[h]!;
    if (vt > cap) vt = cap;
    let gl = table.gl;
    const lo = table.lo[h]!, hi = table.hi[h]!;
    if (gl < lo) gl = lo;
    if (gl > hi) gl = hi;
    const vl = gl + table.ly[h]!;
    let gv = table.gv;
    const loz = table.loz[h]!;
    if (gv < loz) gv = loz;
    let vv = this.planar ? 0 : gv + table.lz[h]!;
    const speed = Math.sqrt(vt * vt + vl * vl + vv * vv);
    const vmax = this.policy.speed_m_s;
    let a = vt, b = vl;
    if (speed > vmax) {
      a *= vmax / speed;
      b *= vmax / speed;
      vv *= vmax / speed;
    }
    table.vt[h] = a;
    table.vl[h] = b;
    table.vv[h] = vv;
  }

  /** Velocity of subset h of a table made by `tabulate()`, in the moving frame (tangent, lateral, vertical). */
  velocityOf(table: SubsetTable, h: number, out: Float64Array, offset = 0): void {
    const c = h & table.active;
    out[offset] = table.vt[c]!;
    out[offset + 1] = table.vl[c]!;
    out[offset + 2] = table.vv[c]!;
  }

  /** Does the object (its axis segment at centre px, py, pz along the current axis) touch zone z? */
  objectTouches(z: number, px: number, py: number, pz = 0): boolean {
    const a = this.axis, h = this.halfLength;
    const zz = this.planar ? 0 : pz;
    const q = this.solids[z]!;
    const ax = px - h * a[0]!, ay = py - h * a[1]!, az = zz - h * a[2]!, bx = px + h * a[0]!, by = py + h * a[1]!, bz = zz + h * a[2]!;
    if (this.radius === 0) return segmentTouches(ax, ay, az, bx, by, bz, q);
    return segmentSolidDistance(ax, ay, az, bx, by, bz, q) <= this.radius;
  }

  /** Has the object passed zone z (by the clearance), at the last located arc length? */
  passed(z: number): boolean {
    return this.s - this.ht > this.s1[z]! + CLEARANCE_M;
  }

  /** Arc length from the object to zone z's near edge (0 inside or past), at the last located position. */
  gapAhead(z: number): number {
    return Math.max(0, this.s0[z]! - (this.s + this.ht));
  }

  /** Arc-length interval [s0, s1] of zone z along the path. */
  zoneSpan(z: number, out: Float64Array): void {
    out[0] = this.s0[z]!;
    out[1] = this.s1[z]!;
  }
}
