/**
 * The task's geometry from its parameters: the nominal path, each zone as a solid, each zone's
 * extent in the path's moving frame (what the velocity field works with), the checks of a path
 * at load (with file:line:col through the caller's `where`), and the figures `check-config`
 * reports. Set-up time only.
 */
import { NominalPath } from '../geometry/path.js';
import { boxSolid, cylinderSolid, sphereSolid, SOLID_BOX, SOLID_CYLINDER, type Solid } from '../geometry/solids.js';
import { clearanceAt, sweptClearance } from '../geometry/sweep.js';
import type { Problem, Place } from '../util/errors.js';
import type { Detours, TaskParams, ZoneConfig } from './config.js';

/** Clearance kept between the object and an occupied zone (the policy's margin). */
export const CLEARANCE_M = 0.05;
/** Consecutive waypoints closer than this count as repeated. */
export const MIN_WAYPOINT_SPACING_M = 0.001;
/** Far below and above any cell: the vertical extent of zones on a planar (2-D) task. */
const FAR_M = 1e3;

/** Is the task planar (no waypoints: the straight line start_m -> goal_m, heights left to the cell)? */
export function isPlanar(task: TaskParams): boolean {
  return !task.path || task.path.waypoints_m.length === 0;
}

export function zoneDetours(z: ZoneConfig): Detours {
  return z.detours ?? 'sideways';
}

/** The zone as a solid in the cell frame (on a planar task, boxes and cylinders are unbounded in height). */
export function zoneSolid(z: ZoneConfig, planar = false): Solid {
  const [cx, cy] = z.center_m;
  const [z0, z1] = planar ? [-FAR_M, FAR_M] : (z.height_m ?? [0, 10]);
  switch (z.shape) {
    case 'box': return boxSolid(cx, cy, z.size_m[0], z.size_m[1], z0, z1, z.yaw_rad ?? 0);
    case 'sphere': return sphereSolid(cx, cy, planar ? 0 : (z.center_z_m ?? 0), z.radius_m);
    default: return cylinderSolid(cx, cy, z.radius_m, z0, z1);
  }
}

/** The nominal path of a task (a planar task: the two-point line at height 0). */
export function taskPath(task: TaskParams): NominalPath {
  if (isPlanar(task)) return new NominalPath({ waypoints: [task.start_m[0], task.start_m[1], 0, task.goal_m[0], task.goal_m[1], 0] });
  return new NominalPath({ waypoints: task.path!.waypoints_m, orientations: task.path!.orientations_xyzw });
}

/** A zone's extent in the moving frame at the path point nearest its centre. */
export interface ZoneInterval {
  /** Arc length at which the zone starts and ends along the path. */
  readonly s0: number;
  readonly s1: number;
  /** Lateral (left of travel) and vertical offsets from the path. */
  readonly d0: number;
  readonly d1: number;
  readonly e0: number;
  readonly e1: number;
}

/** Half extent of a solid along unit direction (ux, uy, uz). */
function extentAlong(q: Solid, ux: number, uy: number, uz: number, planar: boolean): number {
  const hz = planar ? 0 : q.hz;
  if (q.kind === SOLID_BOX) return q.hx * Math.abs(ux * q.c + uy * q.s) + q.hy * Math.abs(-ux * q.s + uy * q.c) + hz * Math.abs(uz);
  if (q.kind === SOLID_CYLINDER) return q.r * Math.sqrt(ux * ux + uy * uy) + hz * Math.abs(uz);
  return q.r;
}

/**
 * Where a zone lies in path coordinates: the frame at the path point nearest its centre, and
 * the solid's extent along that frame's axes (exact for a straight path; a box about the
 * solid in the local frame near a corner).
 */
export function zoneInterval(path: NominalPath, z: ZoneConfig, planar: boolean): ZoneInterval {
  const q = zoneSolid(z, planar);
  const cz = planar ? 0 : q.cz;
  const sc = path.projectGlobal(q.cx, q.cy, cz);
  path.locate(sc);
  const ox = q.cx - path.pos[0]!, oy = q.cy - path.pos[1]!, oz = cz - path.pos[2]!;
  const t = path.t, l = path.l, v = path.v;
  const ot = ox * t[0]! + oy * t[1]! + oz * t[2]!;
  const od = ox * l[0]! + oy * l[1]! + oz * l[2]!;
  const oe = ox * v[0]! + oy * v[1]! + oz * v[2]!;
  const et = extentAlong(q, t[0]!, t[1]!, t[2]!, planar);
  const ed = extentAlong(q, l[0]!, l[1]!, l[2]!, planar);
  const ee = extentAlong(q, v[0]!, v[1]!, v[2]!, planar);
  const s = sc + ot;
  return {
    s0: s - et, s1: s + et,
    d0: od - ed, d1: od + ed,
    e0: planar ? -Infinity : oe - ee, e1: planar ? Infinity : oe + ee,
  };
}

export interface DetourFigure {
  readonly detour: 'left' | 'right' | 'over';
  /** How far the object must move off the nominal path to clear the zone by the margin (m). */
  readonly shift_m: number;
  readonly allowed: boolean;
}

export interface ZoneFigure {
  readonly name: string;
  /** Smallest clearance of the object (capsule) from the zone along the nominal path (m; negative: the nominal path enters it). */
  readonly clearance_m: number;
  /** Arc length where it is smallest. */
  readonly at_s_m: number;
  /** Whether the nominal path clears it by the margin (no detour needed when occupied). */
  readonly clear_by_margin: boolean;
  readonly detours: readonly DetourFigure[];
  /** The cheapest allowed detour ('none' when the path clears it anyway). */
  readonly cheapest: 'left' | 'right' | 'over' | 'none';
}

export interface TaskFigures {
  readonly planar: boolean;
  readonly waypoints: number;
  readonly length_m: number;
  /** Infinity (JSON: null) for a straight path. */
  readonly min_turn_radius_m: number;
  readonly zones: readonly ZoneFigure[];
}

/** The object's half extents across the path at arc length s (lateral and vertical), capsule radius included. */
function objectHalfExtents(path: NominalPath, task: TaskParams, s: number): { hl: number; hv: number } {
  const h = task.object.length_m / 2;
  const r = task.object.radius_m ?? 0;
  path.locate(s);
  path.orientationAt(s);
  const q = path.q;
  // The object's axis: its own y axis rotated by q.
  const ax = 2 * (q[0]! * q[1]! - q[2]! * q[3]!), ay = 1 - 2 * (q[0]! * q[0]! + q[2]! * q[2]!), az = 2 * (q[1]! * q[2]! + q[0]! * q[3]!);
  const l = path.l, v = path.v;
  return { hl: h * Math.abs(ax * l[0]! + ay * l[1]! + az * l[2]!) + r, hv: h * Math.abs(ax * v[0]! + ay * v[1]! + az * v[2]!) + r };
}

/** What `check-config` reports of the task's geometry. */
export function taskFigures(task: TaskParams): TaskFigures {
  const planar = isPlanar(task);
  const path = taskPath(task);
  const zones = task.zones.map((z): ZoneFigure => {
    const q = zoneSolid(z, planar);
    const sw = sweptClearance(path, task.object.length_m / 2, task.object.radius_m ?? 0, q);
    const iv = zoneInterval(path, z, planar);
    const { hl, hv } = objectHalfExtents(path, task, Math.min(Math.max((iv.s0 + iv.s1) / 2, 0), path.length));
    const m = CLEARANCE_M;
    const allowed = zoneDetours(z);
    const side = allowed === 'sideways' || allowed === 'both';
    const over = (allowed === 'over' || allowed === 'both') && !planar;
    const detours: DetourFigure[] = [
      { detour: 'left', shift_m: Math.max(0, iv.d1 + m + hl), allowed: side },
      { detour: 'right', shift_m: Math.max(0, -(iv.d0 - m - hl)), allowed: side },
      { detour: 'over', shift_m: planar ? Infinity : Math.max(0, iv.e1 + m + hv), allowed: over },
    ];
    const clear = sw.clearance_m >= m;
    let cheapest: ZoneFigure['cheapest'] = 'none';
    if (!clear) {
      let best = Infinity;
      for (const d of detours) if (d.allowed && d.shift_m < best) { best = d.shift_m; cheapest = d.detour; }
    }
    return { name: z.name, clearance_m: sw.clearance_m, at_s_m: sw.s_m, clear_by_margin: clear, detours, cheapest };
  });
  return { planar, waypoints: path.n, length_m: path.length, min_turn_radius_m: path.minTurnRadius, zones };
}

/**
 * Problems of the task's path and 3-D zones, each with its place (`where(key)`) and what is
 * allowed: fewer than two waypoints, a length that is not a multiple of three, repeated points,
 * orientations of the wrong length or not unit, a turn tighter than the object allows, a start
 * or end inside a zone, an over-detour on a planar task, an empty height range.
 */
export function pathProblems(task: TaskParams, where: (key: string) => Place, explicitKeys: ReadonlySet<string>): Problem[] {
  const problems: Problem[] = [];
  const W = task.path?.waypoints_m ?? [];
  const O = task.path?.orientations_xyzw ?? [];
  const planar = W.length === 0;
  for (const z of task.zones) {
    const hm = z.height_m;
    if (hm && (z.shape === 'box' || z.shape === 'circle' || z.shape === 'cylinder') && !(hm[1] > hm[0])) {
      problems.push({ code: 'param.zone_height_empty', message: `zone '${z.name}': height_m = [${hm.join(', ')}] has its top not above its bottom`, where: where(`task.zones.${z.name}.height_m`), hint: 'bottom, top with top > bottom (m, cell frame)' });
    }
    if (planar && zoneDetours(z) !== 'sideways') {
      problems.push({ code: 'param.over_needs_heights', message: `zone '${z.name}' allows detours '${zoneDetours(z)}', but the task is planar (no task.path.waypoints_m), so the object cannot be lifted`, where: where(`task.zones.${z.name}.detours`), hint: 'sideways, or give the path with heights in task.path.waypoints_m' });
    }
  }
  if (planar) {
    if (O.length > 0) problems.push({ code: 'param.path_orientations_without_waypoints', message: 'task.path.orientations_xyzw is set without task.path.waypoints_m', where: where('task.path.orientations_xyzw'), hint: 'give the waypoints too, or leave the orientations empty' });
    return problems;
  }
  for (const k of ['task.start_m', 'task.goal_m']) {
    if (explicitKeys.has(k)) problems.push({ code: 'param.path_and_goal', message: `${k} is set together with task.path.waypoints_m`, where: where(k), hint: 'give the path as waypoints only: its first and last waypoints are the start and the goal' });
  }
  if (W.length % 3 !== 0) {
    problems.push({ code: 'param.path_not_triples', message: `task.path.waypoints_m has ${W.length} numbers, not a multiple of three`, where: where('task.path.waypoints_m'), hint: 'x, y, z per waypoint (m, cell frame): 3 numbers each' });
    return problems;
  }
  const n = W.length / 3;
  if (n < 2) {
    problems.push({ code: 'param.path_too_short', message: `task.path.waypoints_m has ${n} waypoint`, where: where('task.path.waypoints_m'), hint: 'at least two waypoints (a start and a goal), or leave it empty for the straight line start_m -> goal_m' });
    return problems;
  }
  let repeated = false;
  for (let k = 1; k < n; k++) {
    const d = Math.hypot(W[3 * k]! - W[3 * k - 3]!, W[3 * k + 1]! - W[3 * k - 2]!, W[3 * k + 2]! - W[3 * k - 1]!);
    if (d < MIN_WAYPOINT_SPACING_M) {
      repeated = true;
      problems.push({ code: 'param.path_repeated_point', message: `task.path.waypoints_m: waypoint ${k} (${W.slice(3 * k, 3 * k + 3).join(', ')}) repeats waypoint ${k - 1} (${(d * 1000).toPrecision(3)} mm apart)`, where: where('task.path.waypoints_m'), hint: `consecutive waypoints at least ${MIN_WAYPOINT_SPACING_M * 1000} mm apart; drop the repeated one` });
    }
  }
  if (O.length !== 0 && O.length !== 4 * n) {
    problems.push({ code: 'param.path_orientations_length', message: `task.path.orientations_xyzw has ${O.length} numbers for ${n} waypoints`, where: where('task.path.orientations_xyzw'), hint: `${4 * n} numbers (x, y, z, w per waypoint), or none (the object along the cell y axis)` });
  } else {
    for (let k = 0; 4 * k < O.length; k++) {
      const m = Math.hypot(O[4 * k]!, O[4 * k + 1]!, O[4 * k + 2]!, O[4 * k + 3]!);
      if (Math.abs(m - 1) > 0.01) problems.push({ code: 'param.path_orientation_not_unit', message: `task.path.orientations_xyzw: the quaternion of waypoint ${k} has norm ${m.toPrecision(4)}`, where: where('task.path.orientations_xyzw'), hint: 'unit quaternions (norm 1 within 0.01), x, y, z, w' });
    }
  }
  if (repeated || problems.some((p) => p.code.startsWith('param.path_orientation'))) return problems;
  const path = taskPath(task);
  // A turn tighter than the object allows: the object's extent toward the turn's centre must
  // stay inside the turn radius, or its inner end would sweep backwards.
  const h = task.object.length_m / 2;
  for (let k = 1; k + 1 < n; k++) {
    const R = path.turnRadius[k]!;
    if (!Number.isFinite(R)) continue;
    const u = [0, 1, 2].map((i) => W[3 * k + i]! - W[3 * k - 3 + i]!);
    const w = [0, 1, 2].map((i) => W[3 * k + 3 + i]! - W[3 * k + i]!);
    const nu = Math.hypot(u[0]!, u[1]!, u[2]!), nw = Math.hypot(w[0]!, w[1]!, w[2]!);
    const uu = u.map((x) => x / nu), ww = w.map((x) => x / nw);
    const c = uu[0]! * ww[0]! + uu[1]! * ww[1]! + uu[2]! * ww[2]!;
    const nrm = ww.map((x, i) => x - c * uu[i]!);
    const nn = Math.hypot(nrm[0]!, nrm[1]!, nrm[2]!);
    path.orientationAt(path.waypointS[k]!);
    const q = path.q;
    const ax = 2 * (q[0]! * q[1]! - q[2]! * q[3]!), ay = 1 - 2 * (q[0]! * q[0]! + q[2]! * q[2]!), az = 2 * (q[1]! * q[2]! + q[0]! * q[3]!);
    const need = (nn > 0 ? h * Math.abs((ax * nrm[0]! + ay * nrm[1]! + az * nrm[2]!) / nn) : 0) + (task.object.radius_m ?? 0);
    if (R < need) {
      problems.push({
        code: 'param.path_turn_too_tight',
        message: `task.path.waypoints_m: the turn at waypoint ${k} (${W.slice(3 * k, 3 * k + 3).join(', ')}) has radius ${R.toPrecision(3)} m, tighter than the ${need.toPrecision(3)} m the object needs (its extent toward the turn's centre)`,
        where: where('task.path.waypoints_m'),
        hint: `a turn radius of at least ${need.toPrecision(3)} m: move the neighbouring waypoints further away (the corner is rounded within half the shorter leg), add waypoints along a gentler curve, or turn the object (task.path.orientations_xyzw) so it points along the turn`,
      });
    }
  }
  // The object at the start and at the goal must be outside every zone.
  const half = task.object.length_m / 2;
  const rad = task.object.radius_m ?? 0;
  for (const z of task.zones) {
    const q = zoneSolid(z, false);
    for (const [label, s] of [['start', 0], ['goal', path.length]] as const) {
      const c = clearanceAt(path, s, half, rad, q);
      if (c <= 0) {
        path.locate(s);
        problems.push({ code: `param.zone_overlaps_${label}`, message: `zone '${z.name}' overlaps the object at the ${label} of the path (${[...path.pos].map((x) => x.toPrecision(4)).join(', ')})`, where: where(`task.zones.${z.name}.center_m`), hint: `move the zone or the path's ${label} so the ${task.object.length_m} m object clears it` });
      }
    }
  }
  return problems;
}

