/**
 * The task geometry's functions called directly (src/params/task-geometry.ts): each path
 * problem with its exact wording, place and hint; zones as solids and as intervals in the
 * path's moving frame; check-config's clearance and detour figures. Layouts are our own invented
 * scenario (the 1.2 m beam, keep-out zones). Reference facts, textbook: a box's half extent along
 * a unit direction u is sum_i h_i |u . e_i| (its support function), a cylinder's r |u_xy| +
 * h_z |u_z|, a sphere's r; a corner rounded by a circle tangent to both legs at distance b from
 * the corner has radius b / tan(turn / 2); quaternion rotation via rotateByQuat (geometry/path.ts).
 */
import { describe, expect, it } from 'vitest';
import { rotateByQuat } from '../../src/geometry/path.js';
import { loadCell, type TaskParams, type ZoneConfig } from '../../src/params/config.js';
import { MIN_WAYPOINT_SPACING_M, pathProblems, taskFigures, taskPath, zoneDetours, zoneInterval, zoneSolid } from '../../src/params/task-geometry.js';

const demo = loadCell('config/demo_cell.yaml').left.config.task;
const where = (key: string) => ({ key });
const none = new Set<string>();

const zone = (name: string, shape: ZoneConfig['shape'], x: number, y: number, extra: Partial<ZoneConfig> = {}): ZoneConfig => ({ name, shape, center_m: [x, y], size_m: [0.2, 0.2], radius_m: 0.1, observed_by: 'left', kind: 'clamp_post', ...extra });
const task3d = (waypoints: number[], zones: ZoneConfig[] = [], orientations: number[] = []): TaskParams => ({
  ...demo,
  object: { ...demo.object, radius_m: 0.02 },
  path: { waypoints_m: waypoints, orientations_xyzw: orientations },
  zones,
});
const LEVEL = [0, 0, 1, 2, 0, 1];
const codes = (t: TaskParams, explicit = none) => pathProblems(t, where, explicit).map((p) => p.code);

describe('pathProblems', () => {
  it('an empty height range on a box, circle or cylinder, never on a sphere or without heights', () => {
    for (const shape of ['box', 'circle', 'cylinder'] as const) {
      const p = pathProblems(task3d(LEVEL, [zone('post', shape, 1, 3, { height_m: [1.2, 1.2] })]), where, none);
      expect(p, shape).toEqual([{ code: 'param.zone_height_empty', message: "zone 'post': height_m = [1.2, 1.2] has its top not above its bottom", where: { key: 'task.zones.post.height_m' }, hint: 'bottom, top with top > bottom (m, cell frame)' }]);
    }
    expect(codes(task3d(LEVEL, [zone('ball', 'sphere', 1, 3, { height_m: [1.2, 1.2] })]))).toEqual([]);
    expect(codes(task3d(LEVEL, [zone('post', 'box', 1, 3, { height_m: [1.2, 1.3] })]))).toEqual([]);
    expect(codes(task3d(LEVEL, [zone('post', 'box', 1, 3)]))).toEqual([]);
  });

  it('an over or both detour on a planar task', () => {
    for (const d of ['over', 'both'] as const) {
      expect(pathProblems({ ...demo, zones: [zone('post', 'circle', 0.8, 0.9, { detours: d })] }, where, none)).toEqual([
        { code: 'param.over_needs_heights', message: `zone 'post' allows detours '${d}', but the task is planar (no task.path.waypoints_m), so the object cannot be lifted`, where: { key: 'task.zones.post.detours' }, hint: 'sideways, or give the path with heights in task.path.waypoints_m' },
      ]);
    }
    expect(codes({ ...demo, zones: [zone('post', 'circle', 0.8, 0.9, { detours: 'sideways' })] })).toEqual([]);
    expect(codes(task3d(LEVEL, [zone('post', 'circle', 1, 3, { detours: 'over' })]))).toEqual([]);
  });

  it('orientations without waypoints', () => {
    expect(pathProblems({ ...demo, path: { waypoints_m: [], orientations_xyzw: [0, 0, 0, 1] } }, where, none)).toEqual([
      { code: 'param.path_orientations_without_waypoints', message: 'task.path.orientations_xyzw is set without task.path.waypoints_m', where: { key: 'task.path.orientations_xyzw' }, hint: 'give the waypoints too, or leave the orientations empty' },
    ]);
    expect(codes({ ...demo, path: { waypoints_m: [], orientations_xyzw: [] } })).toEqual([]);
  });

  it('start_m or goal_m given beside the waypoints, each at its key', () => {
    const p = pathProblems(task3d(LEVEL), where, new Set(['task.start_m', 'task.goal_m']));
    const hint = 'give the path as waypoints only: its first and last waypoints are the start and the goal';
    expect(p).toEqual([
      { code: 'param.path_and_goal', message: 'task.start_m is set together with task.path.waypoints_m', where: { key: 'task.start_m' }, hint },
      { code: 'param.path_and_goal', message: 'task.goal_m is set together with task.path.waypoints_m', where: { key: 'task.goal_m' }, hint },
    ]);
  });

  it('lengths: not triples, one waypoint (each reported alone)', () => {
    expect(pathProblems(task3d([0, 0, 1, 2]), where, none)).toEqual([
      { code: 'param.path_not_triples', message: 'task.path.waypoints_m has 4 numbers, not a multiple of three', where: { key: 'task.path.waypoints_m' }, hint: 'x, y, z per waypoint (m, cell frame): 3 numbers each' },
    ]);
    expect(pathProblems(task3d([0, 0, 1]), where, none)).toEqual([
      { code: 'param.path_too_short', message: 'task.path.waypoints_m has 1 waypoint', where: { key: 'task.path.waypoints_m' }, hint: 'at least two waypoints (a start and a goal), or leave it empty for the straight line start_m -> goal_m' },
    ]);
  });

  it('a repeated point: which waypoints, how far apart, the spacing allowed; the path is not checked further', () => {
    // Only y differs, by 0.4 mm; waypoint 3 also repeats.
    const p = pathProblems(task3d([0, 0.3, 0.9, 0.6, 0.3, 0.9, 0.6, 0.3004, 0.9, 0.6, 0.3004, 0.9, 1.6, 0.3, 0.9], [zone('on_start', 'circle', 0, 0.3)]), where, none);
    const hint = `consecutive waypoints at least ${MIN_WAYPOINT_SPACING_M * 1000} mm apart; drop the repeated one`;
    expect(hint).toBe('consecutive waypoints at least 1 mm apart; drop the repeated one');
    expect(p).toEqual([
      { code: 'param.path_repeated_point', message: 'task.path.waypoints_m: waypoint 2 (0.6, 0.3004, 0.9) repeats waypoint 1 (0.400 mm apart)', where: { key: 'task.path.waypoints_m' }, hint },
      { code: 'param.path_repeated_point', message: 'task.path.waypoints_m: waypoint 3 (0.6, 0.3004, 0.9) repeats waypoint 2 (0.00 mm apart)', where: { key: 'task.path.waypoints_m' }, hint },
    ]);
  });

  it('orientations: the wrong count, or a quaternion off unit (any waypoint, the last too); then no further checks', () => {
    const W = [0, 0, 1, 1, 0, 1, 2, 0, 1];
    const overlap = [zone('on_start', 'circle', 0, 0)];
    expect(pathProblems(task3d(W, overlap, [0, 0, 0, 1]), where, none)).toEqual([
      { code: 'param.path_orientations_length', message: 'task.path.orientations_xyzw has 4 numbers for 3 waypoints', where: { key: 'task.path.orientations_xyzw' }, hint: '12 numbers (x, y, z, w per waypoint), or none (the object along the cell y axis)' },
    ]);
    const hint = 'unit quaternions (norm 1 within 0.01), x, y, z, w';
    expect(pathProblems(task3d(W, overlap, [0, 0, 0, 1, 0, 0, 0, 1, 0.1, 0.2, 0.3, 1]), where, none)).toEqual([
      { code: 'param.path_orientation_not_unit', message: `task.path.orientations_xyzw: the quaternion of waypoint 2 has norm ${Math.hypot(0.1, 0.2, 0.3, 1).toPrecision(4)}`, where: { key: 'task.path.orientations_xyzw' }, hint },
    ]);
    expect(codes(task3d(W, [], [0, 0, 0, 1, 0.2, 0, 0, 1, 0, 0, 0, 1]))).toEqual(['param.path_orientation_not_unit']);
    expect(codes(task3d(W, [], [0, 0, 0, 1, 0, 0.01, 0, 1, 0, 0, 0, 1]))).toEqual([]); // norm 1.00005
    // Unit quaternions: the checks go on (the zone at the start).
    expect(codes(task3d(W, overlap, [0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1]))).toEqual(['param.zone_overlaps_start']);
  });

  it('a 45 degree turn at waypoint 2 on 0.4 m legs is tighter than the beam across the path needs', () => {
    // Rounded within half the shorter leg: b = 0.2 m, R = 0.2 / tan(22.5 deg) = 0.483 m; the beam
    // (axis y) reaches 0.6 m toward the turn's centre (+y), plus its 0.02 m radius.
    const c = 0.4 * Math.SQRT1_2;
    const W = [0, 0, 0.9, 0.4, 0, 0.9, 0.8, 0, 0.9, 0.8 + c, c, 0.9];
    const R = 0.2 / Math.tan(Math.PI / 8);
    expect(taskPath(task3d(W)).turnRadius[2]).toBeCloseTo(R, 12);
    const p = pathProblems(task3d(W), where, none);
    expect(p.map((x) => x.code)).toEqual(['param.path_turn_too_tight']);
    expect(p[0]!.message).toBe(`task.path.waypoints_m: the turn at waypoint 2 (0.8, 0, 0.9) has radius ${R.toPrecision(3)} m, tighter than the 0.620 m the object needs (its extent toward the turn's centre)`);
    expect(R.toPrecision(3)).toBe('0.483');
    expect(p[0]!.hint).toMatch(/^a turn radius of at least 0\.620 m: move the neighbouring waypoints further away/);
    // The beam turned along the path (90 degrees about z: axis -x) reaches 0 m toward the turn's
    // centre (+y) plus its 0.02 m radius: no problem.
    const r = Math.SQRT1_2;
    const along = [0, 0, r, r];
    expect(codes(task3d(W, [], [...along, ...along, ...along, ...along]))).toEqual([]);
  });

  it('a zone at the start or the goal, reported at the zone with the place; above or beside the beam it is none', () => {
    const p = pathProblems(task3d(LEVEL, [zone('stand', 'circle', 0, 0.65)]), where, none);
    expect(p).toEqual([
      { code: 'param.zone_overlaps_start', message: "zone 'stand' overlaps the object at the start of the path (0.000, 0.000, 1.000)", where: { key: 'task.zones.stand.center_m' }, hint: "move the zone or the path's start so the 1.2 m object clears it" },
    ]);
    expect(codes(task3d(LEVEL, [zone('fix', 'circle', 2, -0.71)]))).toEqual(['param.zone_overlaps_goal']); // edge 0.61 from the axis: inside the beam's end (0.6) plus its 0.02 m capsule
    expect(codes(task3d(LEVEL, [zone('fix', 'circle', 2, -0.73)]))).toEqual([]); // edge 0.63 from the axis
    expect(codes(task3d(LEVEL, [zone('hood', 'box', 0, 0, { height_m: [1.5, 2] })]))).toEqual([]); // above the beam
  });
});

describe('zones as solids and as intervals in the moving frame', () => {
  it('zoneSolid: heights (default floor to 10 m), sphere centre height, planar heights unbounded', () => {
    const b = zoneSolid(zone('b', 'box', 1, 2, { height_m: [0.4, 1.0] }));
    expect([b.cz, b.hz]).toEqual([0.7, 0.3].map((x) => expect.closeTo(x, 12)));
    const d = zoneSolid(zone('d', 'cylinder', 1, 2));
    expect([d.cz, d.hz]).toEqual([5, 5]);
    expect(zoneSolid(zone('s', 'sphere', 1, 2, { center_z_m: 1.2 })).cz).toBe(1.2);
    expect(zoneSolid(zone('s', 'sphere', 1, 2)).cz).toBe(0);
    expect(zoneSolid(zone('s', 'sphere', 1, 2, { center_z_m: 1.2 }), true).cz).toBe(0);
    expect(zoneSolid(zone('b', 'box', 1, 2, { height_m: [0.4, 1.0] }), true).hz).toBe(1000);
    expect(zoneDetours(zone('b', 'box', 1, 2))).toBe('sideways');
  });

  it('a turned box on a diagonal path: its support function along the frame axes', () => {
    // Path along (1, 1, 0)/sqrt 2 at 1 m; box 0.4 x 0.2, turned 30 degrees, 0.5..1.5 m high, at (0.5, 0.5).
    const yaw = Math.PI / 6;
    const t = task3d([0, 0, 1, 1, 1, 1], [zone('b', 'box', 0.5, 0.5, { size_m: [0.4, 0.2], yaw_rad: yaw, height_m: [0.5, 1.5] })]);
    const iv = zoneInterval(taskPath(t), t.zones[0]!, false);
    const ex = [Math.cos(yaw), Math.sin(yaw)], ey = [-Math.sin(yaw), Math.cos(yaw)];
    const along = (u: number[]) => 0.2 * Math.abs(u[0]! * ex[0]! + u[1]! * ex[1]!) + 0.1 * Math.abs(u[0]! * ey[0]! + u[1]! * ey[1]!);
    const r = Math.SQRT1_2;
    const et = along([r, r]), ed = along([-r, r]);
    const s = Math.SQRT2 / 2;
    for (const [got, want] of [[iv.s0, s - et], [iv.s1, s + et], [iv.d0, -ed], [iv.d1, ed], [iv.e0, -0.5], [iv.e1, 0.5]] as const) expect(got).toBeCloseTo(want, 12);
  });

  it('a cylinder and a sphere off a climbing path', () => {
    // Path along (1, 0, 1)/sqrt 2 from the origin; lateral (0, 1, 0), vertical (-1, 0, 1)/sqrt 2.
    const r = Math.SQRT1_2;
    const t = task3d([0, 0, 0, 1, 0, 1], [zone('c', 'cylinder', 0.5, 0.3, { radius_m: 0.1, height_m: [0.4, 0.8] }), zone('s', 'sphere', 0.4, -0.2, { radius_m: 0.1, center_z_m: 0.6 })]);
    const path = taskPath(t);
    const c = zoneInterval(path, t.zones[0]!, false);
    // Centre (0.5, 0.3, 0.6): along 1.1 r, lateral 0.3, vertical 0.1 r; extents r (0.1 + 0.2) along
    // the tangent and the vertical, 0.1 across.
    const ec = 0.3 * r;
    for (const [got, want] of [[c.s0, 1.1 * r - ec], [c.s1, 1.1 * r + ec], [c.d0, 0.2], [c.d1, 0.4], [c.e0, 0.1 * r - ec], [c.e1, 0.1 * r + ec]] as const) expect(got).toBeCloseTo(want, 12);
    const s = zoneInterval(path, t.zones[1]!, false);
    for (const [got, want] of [[s.s0, r - 0.1], [s.s1, r + 0.1], [s.d0, -0.3], [s.d1, -0.1], [s.e0, 0.2 * r - 0.1], [s.e1, 0.2 * r + 0.1]] as const) expect(got).toBeCloseTo(want, 12);
  });
});

describe('taskFigures', () => {
  it('clearance with the capsule radius, where it is smallest, and no detour for a zone cleared by the margin', () => {
    const f = taskFigures(task3d(LEVEL, [zone('far', 'circle', 1.2, 1.0)]));
    const z = f.zones[0]!;
    expect(z.clearance_m).toBeCloseTo(1.0 - 0.1 - 0.6 - 0.02, 9);
    expect(z.at_s_m).toBeCloseTo(1.2, 6);
    expect(z.clear_by_margin).toBe(true);
    expect(z.cheapest).toBe('none');
    expect(f.min_turn_radius_m).toBe(Infinity);
  });

  it('the shift of each detour, which are allowed, and the cheapest (a tie goes to the left)', () => {
    // A box 0.2 x 0.2 up to 1.1 m across the path at x = 1, 0.05 m left: left 0.15 + 0.05 + 0.62,
    // right 0.05 + 0.05 + 0.62, over 0.1 + 0.05 + 0.02.
    const box = (detours: ZoneConfig['detours'], y = 0.05) => taskFigures(task3d(LEVEL, [zone('b', 'box', 1, y, { height_m: [0, 1.1], detours })])).zones[0]!;
    const shifts = (z: ReturnType<typeof box>) => z.detours.map((d) => [d.detour, Number(d.shift_m.toFixed(9)), d.allowed]);
    expect(shifts(box('sideways'))).toEqual([['left', 0.82, true], ['right', 0.72, true], ['over', 0.17, false]]);
    expect(box('sideways').cheapest).toBe('right');
    expect(box(undefined).cheapest).toBe('right');
    expect(shifts(box('over'))).toEqual([['left', 0.82, false], ['right', 0.72, false], ['over', 0.17, true]]);
    expect(box('over').cheapest).toBe('over');
    expect(shifts(box('both')).map((d) => d[2])).toEqual([true, true, true]);
    expect(box('both').cheapest).toBe('over');
    expect(box('sideways', 0).cheapest).toBe('left');
    expect(box('sideways').clear_by_margin).toBe(false);
    // Planar: over is never possible.
    const planar = taskFigures({ ...demo, zones: [zone('b', 'box', 1, 0.05)] }).zones[0]!;
    expect(planar.detours[2]).toEqual({ detour: 'over', shift_m: Infinity, allowed: false });
  });

  it('a turned beam: the shifts use its extent across the path and upward (the axis rotated by the orientation)', () => {
    const q = [0.1, 0.2, 0.3, 0.9];
    const n = Math.hypot(...q);
    const u = q.map((x) => x / n);
    const a = new Float64Array(3);
    rotateByQuat(u, 0, 1, 0, a);
    const z = taskFigures(task3d(LEVEL, [zone('b', 'box', 1, 0.05, { height_m: [0, 1.1], detours: 'both' })], [...u, ...u])).zones[0]!;
    const hl = 0.6 * Math.abs(a[1]!) + 0.02, hv = 0.6 * Math.abs(a[2]!) + 0.02;
    expect(z.detours[0]!.shift_m).toBeCloseTo(0.15 + 0.05 + hl, 9);
    expect(z.detours[1]!.shift_m).toBeCloseTo(0.05 + 0.05 + hl, 9);
    expect(z.detours[2]!.shift_m).toBeCloseTo(0.1 + 0.05 + hv, 9);
  });
});
