/**
 * The task model both arms share as common knowledge: the carried object, the goal and the
 * keep-out zones, and the deterministic velocity field that maps (object position, zones
 * known occupied) to an object velocity.
 *
 * Geometry (demo cell): the object lies along the cell y axis between the arms (left grasp
 * at +grasp_offset, right at -grasp_offset from its centre) and travels along x from the
 * pick stand to the fixture. A zone in its way is passed by shifting sideways (in y) far
 * enough that the object's end clears it; the object waits short of the zone until it has.
 *
 * The field is evaluated for many occupancy hypotheses per update, so `prepare()` computes
 * each zone's contribution once for the current position, `tabulate()` sums them for every
 * subset of a set of zones, and `velocityOf()` reads one subset in O(1). Nothing here
 * allocates after construction.
 */
import type { ArmName } from '../params/spec.js';
import type { PolicyParams, TaskParams, ZoneConfig } from '../params/config.js';

/** Most zones in one task (bitmask arithmetic on 32-bit integers). */
export const MAX_ZONES = 24;
/** Clearance kept between the object and an occupied zone. */
export const CLEARANCE_M = 0.05;

/**
 * Per-subset contributions of a set of zones (see `TaskModel.tabulate`). Self-contained: it
 * keeps the goal pull and travel direction of the position it was tabulated at, so it reads
 * the same after another `prepare()` (the arm step spreads its reads over several samples).
 */
export class SubsetTable {
  readonly ly: Float64Array;
  readonly cap: Float64Array;
  readonly lo: Float64Array;
  readonly hi: Float64Array;
  size = 0;
  gx = 0;
  gy = 0;
  dir = 1;
  constructor(bits: number) {
    const n = 1 << bits;
    this.ly = new Float64Array(n);
    this.cap = new Float64Array(n);
    this.lo = new Float64Array(n);
    this.hi = new Float64Array(n);
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
  private readonly x0: Float64Array;
  private readonly x1: Float64Array;
  private readonly y0: Float64Array;
  private readonly y1: Float64Array;
  // Per-zone contributions at the prepared position.
  private readonly lat: Float64Array;
  private readonly cap: Float64Array;
  private readonly lo: Float64Array;
  private readonly hi: Float64Array;
  private gx = 0;
  private gy = 0;
  private dir = 1;
  readonly halfLength: number;
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
    this.x0 = new Float64Array(n);
    this.x1 = new Float64Array(n);
    this.y0 = new Float64Array(n);
    this.y1 = new Float64Array(n);
    task.zones.forEach((z, k) => {
      const hx = z.shape === 'box' ? z.size_m[0] / 2 : z.radius_m;
      const hy = z.shape === 'box' ? z.size_m[1] / 2 : z.radius_m;
      this.x0[k] = z.center_m[0] - hx;
      this.x1[k] = z.center_m[0] + hx;
      this.y0[k] = z.center_m[1] - hy;
      this.y1[k] = z.center_m[1] + hy;
    });
    this.lat = new Float64Array(n);
    this.cap = new Float64Array(n);
    this.lo = new Float64Array(n);
    this.hi = new Float64Array(n);
    this.halfLength = task.object.length_m / 2;
    this.goal = task.goal_m;
  }

  /** Object centre from this arm's tool position (rigid grasp, object along y). */
  objectFromTool(arm: ArmName, toolX: number, toolY: number, out: Float64Array): void {
    const off = arm === 'left' ? this.task.object.grasp_offset_m : -this.task.object.grasp_offset_m;
    out[0] = toolX;
    out[1] = toolY - off;
  }

  /** Compute every zone's contribution at object position (px, py). */
  prepare(px: number, py: number): void {
    const p = this.policy;
    const kg = p.goal_gain_1_s;
    this.gx = kg * (this.goal[0] - px);
    this.gy = kg * (this.goal[1] - py);
    this.dir = this.goal[0] >= px ? 1 : -1;
    const h = this.halfLength;
    const m = CLEARANCE_M;
    for (let z = 0; z < this.n; z++) {
      this.lat[z] = 0;
      this.cap[z] = Infinity;
      this.lo[z] = -Infinity;
      this.hi[z] = Infinity;
      // Distance ahead along the direction of travel; a zone already passed has no effect.
      let gap: number;
      if (this.dir > 0) {
        if (px > this.x1[z]! + m) continue;
        gap = Math.max(0, this.x0[z]! - px);
      } else {
        if (px < this.x0[z]! - m) continue;
        gap = Math.max(0, px - this.x1[z]!);
      }
      if (gap > p.repulsion_range_m) continue;
      const w = 1 - gap / p.repulsion_range_m;
      const up = this.y1[z]! + m + h - py; // shift needed to pass on the +y side
      const down = py - (this.y0[z]! - m - h); // shift needed to pass on the -y side
      if (up <= 0) {
        // Cleared on the +y side: do not drift back toward the zone faster than the clearance allows.
        this.lo[z] = kg * up;
        continue;
      }
      if (down <= 0) {
        this.hi[z] = -kg * down;
        continue;
      }
      const s = up < down ? 1 : -1;
      const need = Math.min(up, down);
      this.lat[z] = s * p.repulsion_gain_m_s * w * Math.min(1, need / m);
      // Wait short of the zone only while the overlap is real (beyond half the clearance), so
      // that an object resting on the clearance boundary keeps moving.
      if (need > m / 2) this.cap[z] = kg * Math.max(0, gap - m);
      // While stepping aside, the goal may not pull the object back toward the zone.
      if (s > 0) this.lo[z] = 0;
      else this.hi[z] = 0;
    }
  }

  /**
   * Tabulate, for every subset h of `zones` (bit b of h: zones[b] occupied) together with
   * the zones of `baseMask`, the summed contributions, so that `velocityOf(table, h)` is
   * O(1). Each subset extends a smaller one by a single zone. Call `prepare()` first.
   */
  tabulate(zones: Int32Array, baseMask: number, table: SubsetTable): void {
    let subsetMask = 0;
    for (let b = 0; b < zones.length; b++) subsetMask |= 1 << zones[b]!;
    const base = baseMask & ~subsetMask;
    let ly = 0, cap = Infinity, lo = -Infinity, hi = Infinity;
    for (let z = 0; z < this.n; z++) {
      if (((base >>> z) & 1) === 0) continue;
      ly += this.lat[z]!;
      if (this.cap[z]! < cap) cap = this.cap[z]!;
      if (this.lo[z]! > lo) lo = this.lo[z]!;
      if (this.hi[z]! < hi) hi = this.hi[z]!;
    }
    table.ly[0] = ly;
    table.cap[0] = cap;
    table.lo[0] = lo;
    table.hi[0] = hi;
    const n = 1 << zones.length;
    for (let h = 1; h < n; h++) {
      const prev = h & (h - 1);
      const z = zones[31 - Math.clz32(h & -h)]!;
      table.ly[h] = table.ly[prev]! + this.lat[z]!;
      table.cap[h] = Math.min(table.cap[prev]!, this.cap[z]!);
      table.lo[h] = Math.max(table.lo[prev]!, this.lo[z]!);
      table.hi[h] = Math.min(table.hi[prev]!, this.hi[z]!);
    }
    table.size = n;
    table.gx = this.gx;
    table.gy = this.gy;
    table.dir = this.dir;
  }

  /** Velocity of subset h of a table made by `tabulate()`. */
  velocityOf(table: SubsetTable, h: number, out: Float64Array, offset = 0): void {
    this.finish(table.ly[h]!, table.cap[h]!, table.lo[h]!, table.hi[h]!, table.gx, table.gy, table.dir, out, offset);
  }

  private finish(ly: number, cap: number, lo: number, hi: number, gx: number, gy: number, dir: number, out: Float64Array, offset: number): void {
    let vx = gx;
    if (vx * dir > cap) vx = cap * dir;
    if (gy < lo) gy = lo;
    if (gy > hi) gy = hi;
    let vy = gy + ly;
    const speed = Math.sqrt(vx * vx + vy * vy);
    const vmax = this.policy.speed_m_s;
    if (speed > vmax) {
      vx *= vmax / speed;
      vy *= vmax / speed;
    }
    out[offset] = vx;
    out[offset + 1] = vy;
  }

  /** Does the object (a segment at x = px, y in [py - L/2, py + L/2]) touch zone z? */
  objectTouches(z: number, px: number, py: number): boolean {
    const zone = this.zones[z]!;
    const h = this.halfLength;
    if (zone.shape === 'box') {
      return px >= this.x0[z]! && px <= this.x1[z]! && py + h >= this.y0[z]! && py - h <= this.y1[z]!;
    }
    const [cx, cy] = zone.center_m;
    const yy = Math.min(Math.max(cy, py - h), py + h);
    return Math.hypot(px - cx, yy - cy) <= zone.radius_m;
  }

  /** Distance from the object to zone z's near edge along the travel direction (0 inside). */
  gapAhead(z: number, px: number): number {
    return Math.max(0, this.goal[0] >= px ? this.x0[z]! - px : px - this.x1[z]!);
  }

  /** Has the object passed zone z (by the clearance)? */
  passed(z: number, px: number): boolean {
    return this.goal[0] >= px ? px > this.x1[z]! + CLEARANCE_M : px < this.x0[z]! - CLEARANCE_M;
  }

  /** Zone seen by one arm only whose near edge is nearest ahead of the object; -1 when none. */
  nearestAheadPrivate(px: number): number {
    let best = -1;
    let bestGap = Infinity;
    for (let z = 0; z < this.n; z++) {
      if (this.zones[z]!.observed_by === 'both' || this.passed(z, px)) continue;
      const g = this.gapAhead(z, px);
      if (g < bestGap) {
        bestGap = g;
        best = z;
      }
    }
    return best;
  }
}
