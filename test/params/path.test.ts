/**
 * The task's path and 3-D zones at load (src/params/task-geometry.ts): what is refused, with
 * file:line:col and what is allowed, and what check-config reports. Layouts are our own demo
 * scenario (invented); geometric reference values are textbook facts named beside them.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { taskFigures, taskPath } from '../../src/params/task-geometry.js';
import { lineCol, problemsOf, tempFiles } from '../support/files.js';

const { write } = tempFiles('path');
const EXAMPLE = readFileSync('examples/path_cell.yaml', 'utf8');

/** The example with its waypoints (and orientations) replaced. */
function withPath(waypoints: string, orientations = '[]', text = EXAMPLE): string {
  const a = text.indexOf('        waypoints_m:');
  const b = text.indexOf('      goal_tolerance_m:');
  return text.slice(0, a) + `        waypoints_m: ${waypoints}\n        orientations_xyzw: ${orientations}\n` + text.slice(b);
}
const cell = (text: string) => {
  const file = write(text);
  return { file, problems: problemsOf(() => loadCell(file)) };
};

describe('task.path at load', () => {
  it('the worked example loads; its ends are the start and the goal', () => {
    const c = loadCell('examples/path_cell.yaml');
    expect(c.left.config.task.start_m).toEqual([0, 0]);
    expect(c.left.config.task.goal_m).toEqual([2.6, 0.6]);
    expect(c.left.config.task.path!.waypoints_m).toHaveLength(15);
  });

  it('a goal_m file is the planar two-point path from start_m to goal_m', () => {
    const c = loadCell('config/demo_cell.yaml');
    const p = taskPath(c.left.config.task);
    expect(p.n).toBe(2);
    expect(p.length).toBe(1.6);
    expect(taskFigures(c.left.config.task).planar).toBe(true);
  });

  it('refuses a length that is not a multiple of three, at the key, with what is allowed', () => {
    const text = withPath('[0.0, 0.0, 0.9, 1.0, 0.0]');
    const { file, problems } = cell(text);
    expect(problems).toHaveLength(1);
    expect(problems[0]).toMatchObject({ code: 'param.path_not_triples', where: { file, key: 'task.path.waypoints_m', ...lineCol(text, '[0.0, 0.0, 0.9, 1.0, 0.0]') } });
    expect(problems[0]!.hint).toMatch(/3 numbers each/);
  });

  it('refuses fewer than two waypoints', () => {
    const { problems } = cell(withPath('[0.0, 0.0, 0.9]'));
    expect(problems.map((p) => p.code)).toEqual(['param.path_too_short']);
    expect(problems[0]!.hint).toMatch(/at least two waypoints/);
  });

  it('refuses a repeated point, naming both waypoints', () => {
    const { problems } = cell(withPath('[0.0, 0.0, 0.9, 0.6, 0.0, 0.9, 0.6, 0.0, 0.9, 1.6, 0.0, 0.9]'));
    expect(problems.map((p) => p.code)).toEqual(['param.path_repeated_point']);
    expect(problems[0]!.message).toMatch(/waypoint 2 .* repeats waypoint 1/);
  });

  it('refuses a turn tighter than the object allows, with the radius it needs', () => {
    // A 90 degree turn after 0.6 m legs: the largest arc in half a leg has radius 0.3 m
    // (tangent circle: b = R tan(45 deg), a textbook fact); the 1.2 m beam lying across the path
    // needs 0.6 m plus its 0.02 m radius.
    const { problems } = cell(withPath('[0.0, 0.0, 0.9, 0.6, 0.0, 0.9, 0.6, 0.6, 0.9]'));
    expect(problems.map((p) => p.code)).toContain('param.path_turn_too_tight');
    const p = problems.find((x) => x.code === 'param.path_turn_too_tight')!;
    expect(p.message).toMatch(/radius 0\.300 m, tighter than the 0\.620 m/);
    expect(p.hint).toMatch(/at least 0\.620 m/);
  });

  it('a lift (a turn in the vertical plane, about the beam\'s own axis) is no tight turn', () => {
    // Up 0.2 m, then along x: the corner's radius is 0.1 m, and the beam lies along the turn's axis.
    const c = loadCell(write(withPath('[0.0, 0.0, 0.9, 0.0, 0.0, 1.1, 1.6, 0.0, 1.1]')));
    expect(taskPath(c.left.config.task).minTurnRadius).toBeCloseTo(0.1, 12);
  });

  it('refuses a path that starts or ends inside a zone', () => {
    // The clamp box (x 1.79..1.91, y 0.2..0.4, up to 1.05 m) at the goal: the beam there spans y 0..1.2.
    const { problems } = cell(withPath('[0.0, 0.0, 0.9, 0.6, 0.0, 0.9, 1.4, 0.6, 1.0, 1.85, 0.3, 1.0]'));
    expect(problems.map((p) => p.code)).toContain('param.zone_overlaps_goal');
    expect(problems.find((p) => p.code === 'param.zone_overlaps_goal')!.where).toMatchObject({ key: 'task.zones.low_clamp.center_m' });
  });

  it('refuses goal_m beside waypoints, orientations of the wrong length, and an over-detour on a planar task', () => {
    const both = EXAMPLE.replace('      goal_tolerance_m:', '      goal_m: [2.6, 0.6]\n      goal_tolerance_m:');
    expect(cell(both).problems.map((p) => p.code)).toEqual(['param.path_and_goal']);
    expect(cell(withPath('[0.0, 0.0, 0.9, 1.6, 0.0, 0.9]', '[0.0, 0.0, 0.0, 1.0]')).problems.map((p) => p.code)).toEqual(['param.path_orientations_length']);
    const a = EXAMPLE.indexOf('      path:');
    const b = EXAMPLE.indexOf('      goal_tolerance_m:');
    const planar = EXAMPLE.slice(0, a) + '      goal_m: [2.6, 0.6]\n' + EXAMPLE.slice(b);
    const { problems } = cell(planar);
    expect(problems.map((p) => p.code)).toContain('param.over_needs_heights');
  });
});

describe('check-config figures of the task', () => {
  it('the example: length, tightest turn, each zone\'s clearance and its cheapest allowed detour', () => {
    const f = taskFigures(loadCell('examples/path_cell.yaml').left.config.task);
    expect(f.planar).toBe(false);
    expect(f.waypoints).toBe(5);
    expect(f.min_turn_radius_m).toBeGreaterThan(0.62);
    const byName = Object.fromEntries(f.zones.map((z) => [z.name, z]));
    expect(byName['column']!.clear_by_margin).toBe(true);
    expect(byName['low_clamp']!.cheapest).toBe('over');
    expect(byName['tray_drop']!.cheapest).toBe('left');
    // Over the clamp: its top 1.05 m plus the 0.05 m margin plus the beam's 0.02 m radius, from the path at 1.0 m.
    expect(byName['low_clamp']!.detours.find((d) => d.detour === 'over')!.shift_m).toBeCloseTo(0.12, 9);
  });
  it('the demo cell: the straight 1.6 m path, each zone passed on the far side by 0.23 m', () => {
    // 0.23 m: the zone's near edge to the path (0.42 m), less the half beam (0.6 m) and the 0.05 m margin.
    const f = taskFigures(loadCell('config/demo_cell.yaml').left.config.task);
    expect(f.length_m).toBe(1.6);
    expect(f.zones.map((z) => [z.name, z.cheapest])).toEqual([['clamp_post', 'right'], ['tray_drop', 'left']]);
    for (const z of f.zones) expect(Math.min(...z.detours.filter((d) => d.allowed).map((d) => d.shift_m))).toBeCloseTo(0.23, 12);
  });
});
