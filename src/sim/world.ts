/**
 * One randomized world of the simulated cell, drawn from a seed: which keep-out zones hold
 * an obstacle, where exactly the pick stand and the fixture put the beam, and the wrist
 * sensors' bias, drift and noise stream. Also the checks of a task against the cell that
 * must pass before any simulation starts.
 */
import type { TaskParams, ZoneConfig } from '../params/config.js';
import { segmentHitsZone } from '../params/config.js';
import { InputError, type Problem } from '../util/errors.js';
import { Rng } from '../util/rng.js';
import type { SimOptions } from './options.js';
import { isPlanar, taskPath, zoneSolid } from '../params/task-geometry.js';
import { capsuleClearance } from '../geometry/solids.js';
import { rotateByQuat } from '../geometry/path.js';

export type ArmSide = 'left' | 'right';

export interface SensorDraw {
  /** Constant bias per axis (fx fy fz tx ty tz), sensor frame. */
  readonly bias: readonly number[];
  /** Linear drift rate per axis, per second. */
  readonly drift: readonly number[];
  /** Seed of this sensor's white-noise stream. */
  readonly noiseSeed: number;
}

/** A zone that changes state during the transfer (a part set down on a tray, a post removed). */
export interface ZoneChange {
  /** Zone index (task order). */
  readonly zone: number;
  readonly t_s: number;
  /** The state from then on. */
  readonly occupied: boolean;
}

/** A knock on the object: a force at its centre for `duration_s` from `t_s` (ground truth for the impact detector). */
export interface Knock {
  readonly t_s: number;
  readonly duration_s: number;
  readonly force_n: number;
  /** Unit vector, cell frame. */
  readonly direction: readonly [number, number, number];
}

/** Each arm's area sensor in this world: per reading, a miss (occupied read free) or a false alarm, and a latency. */
export interface AreaSensorDraw {
  readonly miss_rate: number;
  readonly false_alarm_rate: number;
  readonly latency_s: number;
  /** Seed of the readings' error stream. */
  readonly seed: number;
}

export interface World {
  readonly seed: number;
  /** Per zone, in task order (sorted by name): an obstacle stands there. */
  readonly occupied: readonly boolean[];
  /** Beam centre at the start and at the goal (x, y), after jitter. */
  readonly start_m: readonly [number, number];
  readonly goal_m: readonly [number, number];
  readonly sensors: { readonly left: SensorDraw; readonly right: SensorDraw };
  /** Scenario families: occupancy changes during the transfer, sorted by time (absent: none). */
  readonly changes?: readonly ZoneChange[];
  /** Scenario families: knocks on the object, sorted by time (absent: none). */
  readonly knocks?: readonly Knock[];
  /** Scenario families: an imperfect area sensor (absent: every reading true, no latency). */
  readonly area_sensor?: AreaSensorDraw;
}

/** Whether a world has anything that changes during the episode (families only). */
export function isDynamicWorld(w: World): boolean {
  return (w.changes?.length ?? 0) > 0 || (w.knocks?.length ?? 0) > 0 || w.area_sensor !== undefined;
}

/** The zone's true state at time t (s): its initial state, then its changes up to t. */
export function occupiedAt(w: World, zone: number, t: number): boolean {
  let occ = w.occupied[zone]!;
  for (const c of w.changes ?? []) if (c.zone === zone && c.t_s <= t) occ = c.occupied;
  return occ;
}

/** Draw a world. The draw order is fixed, so a seed names a world on every machine. */
export function sampleWorld(task: TaskParams, options: SimOptions, seed: number): World {
  const rng = new Rng(seed);
  const occupied = task.zones.map(() => rng.uniform() < options.occupancy_probability);
  const jitter = (p: readonly [number, number], a: number): [number, number] => [p[0] + rng.range(-a, a), p[1] + rng.range(-a, a)];
  let start = jitter(task.start_m, options.start_jitter_m);
  let goal = jitter(task.goal_m, options.goal_jitter_m);
  // A jittered end pose must still clear every zone (the nominal one does, by the config checks).
  const half = task.object.length_m / 2;
  if (isPlanar(task)) {
    const clear = (p: readonly [number, number]) => task.zones.every((z) => !segmentHitsZone(p[0], p[1] - half, p[1] + half, z));
    if (!clear(start)) start = [task.start_m[0], task.start_m[1]];
    if (!clear(goal)) goal = [task.goal_m[0], task.goal_m[1]];
  } else {
    // A path: the beam starts jittered beside the path's start (at its height and orientation,
    // clear of every zone, else on it); the goal is the path's end, which the arms steer to
    // (the goal jitter is drawn, so the streams stay those of a planar world, and not used).
    goal = [task.goal_m[0], task.goal_m[1]];
    const path = taskPath(task);
    path.locate(0);
    path.orientationAt(0);
    const a = new Float64Array(3);
    rotateByQuat(path.q, 0, half, 0, a);
    const z0 = path.pos[2]!;
    const r = task.object.radius_m ?? 0;
    const clear = task.zones.every((z) => capsuleClearance(start[0] - a[0]!, start[1] - a[1]!, z0 - a[2]!, start[0] + a[0]!, start[1] + a[1]!, z0 + a[2]!, r, zoneSolid(z, false)) > 0);
    if (!clear) start = [task.start_m[0], task.start_m[1]];
  }
  const sensor = (): SensorDraw => {
    const s = options.sensor;
    const bias = [0, 1, 2, 3, 4, 5].map((a) => rng.range(-1, 1) * (a < 3 ? s.bias_force_n : s.bias_torque_nm));
    const drift = [0, 1, 2, 3, 4, 5].map((a) => rng.range(-1, 1) * (a < 3 ? s.drift_force_n_s : s.drift_torque_nm_s));
    return { bias, drift, noiseSeed: rng.nextU32() };
  };
  const left = sensor();
  const right = sensor();
  return { seed, occupied, start_m: start, goal_m: goal, sensors: { left, right } };
}

/** The seed of world `index` of a batch started from `seed` (independent of how the batch is split). */
export function worldSeed(seed: number, index: number): number {
  const r = new Rng((seed >>> 0) ^ Math.imul(index + 1, 0x9e3779b1));
  r.nextU32();
  return r.nextU32();
}

function zoneExtent(z: ZoneConfig): { x0: number; x1: number; y0: number; y1: number } {
  const hx = z.shape === 'box' ? z.size_m[0] / 2 : z.radius_m;
  const hy = z.shape === 'box' ? z.size_m[1] / 2 : z.radius_m;
  return { x0: z.center_m[0] - hx, x1: z.center_m[0] + hx, y0: z.center_m[1] - hy, y1: z.center_m[1] + hy };
}

/**
 * Everything about a task that would make the simulated cell meaningless, as problems with
 * the key and the allowed range. Run before any simulation starts.
 */
export function checkTaskForCell(task: TaskParams, options: SimOptions): Problem[] {
  const out: Problem[] = [];
  const [cx0, cx1] = options.cell_x_m;
  const [cy0, cy1] = options.cell_y_m;
  const L = task.object.length_m;
  if (!(task.object.mass_kg > 0)) {
    out.push({ code: 'sim.no_mass', message: `task.object.mass_kg = ${task.object.mass_kg}: the beam needs a mass`, where: { key: 'task.object.mass_kg' }, hint: 'greater than 0 kg' });
  }
  if (!(L < cy1 - cy0)) {
    out.push({ code: 'sim.object_longer_than_cell', message: `task.object.length_m = ${L} m does not fit across the cell (${cy1 - cy0} m wide in y)`, where: { key: 'task.object.length_m' }, hint: `less than ${cy1 - cy0} m` });
  }
  for (const [label, p, jitter] of [['start_m', task.start_m, options.start_jitter_m], ['goal_m', task.goal_m, options.goal_jitter_m]] as const) {
    const key = `task.${label}`;
    if (p[0] - jitter < cx0 || p[0] + jitter > cx1) {
      out.push({ code: 'sim.outside_cell', message: `${key} x = ${p[0]} m lies outside the reachable cell`, where: { key }, hint: `x from ${cx0 + jitter} to ${cx1 - jitter} m` });
    }
    if (p[1] - L / 2 - jitter < cy0 || p[1] + L / 2 + jitter > cy1) {
      out.push({ code: 'sim.outside_cell', message: `${key}: the ${L} m object centred at y = ${p[1]} m reaches outside the cell`, where: { key }, hint: `y from ${cy0 + L / 2 + jitter} to ${cy1 - L / 2 - jitter} m` });
    }
    const half = L / 2;
    // A path's start and goal are checked in 3-D at load (param.zone_overlaps_start / _goal).
    for (const z of isPlanar(task) ? task.zones : []) {
      if (segmentHitsZone(p[0], p[1] - half, p[1] + half, z)) {
        out.push({ code: `sim.zone_overlaps_${label === 'goal_m' ? 'goal' : 'start'}`, message: `zone '${z.name}' overlaps the object at ${key} (${p[0]}, ${p[1]})`, where: { key: `task.zones.${z.name}.center_m` }, hint: 'move the zone or the goal so the object clears it' });
      }
    }
  }
  if (!isPlanar(task)) out.push(...checkPathForCell(task, options));
  for (const z of task.zones) {
    const e = zoneExtent(z);
    if (e.x0 < cx0 || e.x1 > cx1 || e.y0 < cy0 || e.y1 > cy1) {
      out.push({ code: 'sim.zone_outside_cell', message: `zone '${z.name}' lies partly outside the cell`, where: { key: `task.zones.${z.name}.center_m` }, hint: `inside x ${cx0}..${cx1} m, y ${cy0}..${cy1} m` });
    }
  }
  return out;
}

/** Heights the simulated tool point reaches (the beam centre's), m. */
export const CELL_Z_M: readonly [number, number] = [0.2, 2.0];

/** A path must keep the whole object inside the cell's reach (sampled every 1 cm, the object's ends included). */
function checkPathForCell(task: TaskParams, options: SimOptions): Problem[] {
  const [cx0, cx1] = options.cell_x_m;
  const [cy0, cy1] = options.cell_y_m;
  const path = taskPath(task);
  const a = new Float64Array(3);
  const half = task.object.length_m / 2;
  const n = Math.max(1, Math.ceil(path.length / 0.01));
  for (let k = 0; k <= n; k++) {
    const s = (k / n) * path.length;
    path.locate(s);
    path.orientationAt(s);
    rotateByQuat(path.q, 0, half, 0, a);
    const p = path.pos;
    const xs = [p[0]! - a[0]!, p[0]! + a[0]!], ys = [p[1]! - a[1]!, p[1]! + a[1]!];
    const where = `(${[...p].map((v) => v.toFixed(3)).join(', ')}) at s = ${s.toFixed(3)} m`;
    if (Math.min(...xs) < cx0 || Math.max(...xs) > cx1 || Math.min(...ys) < cy0 || Math.max(...ys) > cy1) {
      return [{ code: 'sim.path_outside_cell', message: `task.path.waypoints_m: the object reaches outside the simulated cell at ${where}`, where: { key: 'task.path.waypoints_m' }, hint: `the whole object inside x ${cx0}..${cx1} m, y ${cy0}..${cy1} m` }];
    }
    if (p[2]! < CELL_Z_M[0] || p[2]! > CELL_Z_M[1]) {
      return [{ code: 'sim.path_outside_cell', message: `task.path.waypoints_m: the path's height ${p[2]!.toFixed(3)} m at ${where} is out of the simulated arms' reach`, where: { key: 'task.path.waypoints_m' }, hint: `heights from ${CELL_Z_M[0]} to ${CELL_Z_M[1]} m` }];
    }
  }
  return [];
}

export function assertTaskForCell(task: TaskParams, options: SimOptions): void {
  const p = checkTaskForCell(task, options);
  if (p.length) throw new InputError(p);
}
