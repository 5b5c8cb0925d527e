/**
 * A path topic that carries one arm's planned tool path (`--path-of left-tool | right-tool`):
 * the object path comes from it through the grasp offset, centre = p - s * offset * R(q) y.
 *
 * - The rotation against mathjs's `rotationMatrix` (a general-purpose reference library from
 *   the registry), over random axes and angles (fast-check), and a worked case by hand (a turn
 *   of 90 degrees about the vertical takes the object's y axis to the cell's -x: common
 *   practice, the right-hand rule).
 * - The tool paths of both arms of examples/path_cell.yaml (our own invented layout) give back
 *   its object path, through a bag and replay's `pathFromBag`, as the object path itself does.
 * - Bad values are refused with the option and what is allowed, before any work.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { matrix, multiply, rotationMatrix } from 'mathjs';
import { afterAll, describe, expect, it } from 'vitest';
import { openBag } from '../../src/bag/index.js';
import { loadCell } from '../../src/params/config.js';
import { pathFromBag } from '../../src/replay/path-topic.js';
import { objectPathFromTool, parsePathOf, type TopicPath } from '../../src/ros/path-msg.js';
import { InputBagWriter } from '../../src/sim/input-bag.js';
import { InputError } from '../../src/util/errors.js';
import { ROOT } from '../support/files.js';

const one = (p: readonly number[], q: readonly number[]): TopicPath => ({ frame_id: 'cell', stamp_s: 0, waypoints_m: [...p], orientations_xyzw: [...q], pose_frames: [''] });

/** The tool path of one arm from an object path: p + s * offset * R(q) y (the inverse, by mathjs). */
function toolPathByMathjs(W: readonly number[], O: readonly number[], s: number): number[] {
  const out: number[] = [];
  for (let k = 0; 3 * k < W.length; k++) {
    const m = Math.hypot(O[4 * k]!, O[4 * k + 1]!, O[4 * k + 2]!, O[4 * k + 3]!);
    const [x, y, z, w] = [O[4 * k]! / m, O[4 * k + 1]! / m, O[4 * k + 2]! / m, O[4 * k + 3]! / m];
    const half = Math.acos(Math.max(-1, Math.min(1, w)));
    const sn = Math.sin(half);
    const axis = sn > 1e-12 ? [x / sn, y / sn, z / sn] : [0, 0, 1];
    const r = multiply(rotationMatrix(2 * half, matrix(axis)), matrix([0, s, 0])).toArray() as number[];
    for (let a = 0; a < 3; a++) out.push(W[3 * k + a]! + r[a]!);
  }
  return out;
}

const dirs: string[] = [];
afterAll(() => dirs.forEach((d) => rmSync(d, { recursive: true, force: true })));

describe('path topic of a tool: the object path through the grasp offset', () => {
  it('matches mathjs rotationMatrix for random orientations (left and right)', () => {
    fc.assert(
      fc.property(
        fc.tuple(fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true })).filter(([a, b, c]) => Math.hypot(a, b, c) > 1e-3),
        fc.double({ min: -Math.PI, max: Math.PI, noNaN: true }),
        fc.double({ min: 0, max: 2, noNaN: true }),
        fc.boolean(),
        ([a, b, c], theta, off, left) => {
          const n = Math.hypot(a, b, c);
          const axis = [a / n, b / n, c / n];
          const q = [...axis.map((v) => v * Math.sin(theta / 2)), Math.cos(theta / 2)];
          const centre = [0.3, -0.2, 0.9];
          const s = left ? off : -off;
          const r = multiply(rotationMatrix(theta, matrix(axis)), matrix([0, s, 0])).toArray() as number[];
          const tool = centre.map((v, i) => v + r[i]!);
          const got = objectPathFromTool(one(tool, q), left ? 'left-tool' : 'right-tool', off).waypoints_m;
          for (let i = 0; i < 3; i++) expect(got[i]!).toBeCloseTo(centre[i]!, 12);
        },
      ),
      { numRuns: 300, seed: 41 },
    );
  });

  it('a worked case: a quarter turn about the vertical puts the left grasp at -x of the centre', () => {
    const h = Math.SQRT1_2;
    // Object turned +90 degrees about z: its y axis points along cell -x; the left grasp is at centre + 0.55 (-1, 0, 0).
    const got = objectPathFromTool(one([1 - 0.55, 2, 0.8], [0, 0, h, h]), 'left-tool', 0.55).waypoints_m;
    expect(got[0]).toBeCloseTo(1, 12);
    expect(got[1]).toBeCloseTo(2, 12);
    expect(got[2]).toBeCloseTo(0.8, 12);
    // A quaternion not of unit norm is normalised; the object pose is unchanged by the conversion.
    const scaled = objectPathFromTool(one([1 - 0.55, 2, 0.8], [0, 0, 2 * h, 2 * h]), 'left-tool', 0.55);
    expect(scaled.waypoints_m[0]).toBeCloseTo(1, 12);
    expect(scaled.orientations_xyzw).toEqual([0, 0, 2 * h, 2 * h]);
    expect(objectPathFromTool(one([1, 2, 3], [0, 0, 0, 1]), 'object', 0.55).waypoints_m).toEqual([1, 2, 3]);
  });

  it('either arm\'s tool path in a bag gives replay the object path of the parameters', async () => {
    const cell = loadCell('examples/path_cell.yaml');
    const W = cell.left.config.task.path!.waypoints_m;
    const O = cell.left.config.task.path!.orientations_xyzw;
    const off = cell.left.config.task.object.grasp_offset_m;
    const configs = { left: cell.left.config, right: cell.right.config };
    for (const [of, s] of [['left-tool', off], ['right-tool', -off]] as const) {
      const dir = mkdtempSync(join(tmpdir(), 'antiphon-path-of-'));
      dirs.push(dir);
      const w = await InputBagWriter.create(join(dir, 'bag'), [], { pathTopic: '/left/planned_tool_path' });
      w.path(1_000_000_000n, toolPathByMathjs(W, O, s), O);
      await w.close();
      const bag = await openBag(join(dir, 'bag'));
      try {
        const bp = pathFromBag(bag, '/left/planned_tool_path', configs, 'cell', of);
        const got = bp.configs.left!.task.path!.waypoints_m;
        expect(got.length).toBe(W.length);
        got.forEach((v, i) => expect(v).toBeCloseTo(W[i]!, 9));
        expect(bp.configs.right!.task.path!.waypoints_m).toEqual(got);
        // Read as an object path, the tool path is another task (the grasp offset matters).
        const asObject = pathFromBag(bag, '/left/planned_tool_path', configs, 'cell', 'object');
        expect(Math.abs(asObject.configs.left!.task.path!.waypoints_m[1]! - W[1]!)).toBeGreaterThan(0.1);
      } finally {
        bag.close();
      }
    }
  });

  it('refuses a value that is not allowed, and --path-of without --path-topic, with the option', () => {
    expect(parsePathOf(undefined)).toBe('object');
    expect(parsePathOf('right-tool')).toBe('right-tool');
    let err: unknown;
    try {
      parsePathOf('tool');
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).problems[0]).toMatchObject({ code: 'cli.bad_path_of', where: { option: '--path-of' } });
    expect((err as InputError).problems[0]!.message).toMatch(/object, left-tool, right-tool; got 'tool'/);
    const cli = join(ROOT, 'dist/src/cli/main.js');
    const r = spawnSync(process.execPath, [cli, 'replay', 'no-such-bag', '--params', 'config/demo_cell.yaml', '--path-of', 'left-tool'], { cwd: ROOT, encoding: 'utf8' });
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--path-of left-tool needs --path-topic/);
    const n = spawnSync(process.execPath, [cli, 'node', '--arm', 'left', '--params', 'config/demo_cell.yaml', '--dry-run', '--path-of', 'sideways'], { cwd: ROOT, encoding: 'utf8' });
    expect(n.status).toBe(2);
    expect(n.stderr).toMatch(/--path-of must be object, left-tool, right-tool; got 'sideways'/);
  });
});
