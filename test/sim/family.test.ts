/**
 * Scenario families (src/sim/family.ts): the shipped files load, draw deterministic worlds that
 * pass the task checks (redraws counted), the demo family reproduces a run without a family,
 * and bad files are refused with file:line:col and what is allowed. Our own behaviour; the
 * families are invented demo data (examples/families/).
 */
import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { centralizedPath, checkFamilyWorld, drawFamilyWorld, loadFamily, parseFamily } from '../../src/sim/family.js';
import { runEpisode } from '../../src/sim/episode.js';
import { simOptions } from '../../src/sim/options.js';
import { sampleWorld, worldSeed } from '../../src/sim/world.js';
import { DEMO, ROOT, lineCol, problemsOf } from '../support/files.js';

const cell = loadCell(DEMO);
const base = cell.left.config;
const FAMILIES = join(ROOT, 'examples/families');
const files = readdirSync(FAMILIES).filter((f) => f.endsWith('.yaml')).sort();

describe('shipped families', () => {
  it('four families ship: demo cell, cluttered, changing, poor sensors', () => {
    expect(files).toEqual(['changing.yaml', 'cluttered.yaml', 'demo_cell.yaml', 'poor_sensors.yaml']);
  });

  for (const f of files) {
    it(`${f}: 30 worlds pass the task checks, the same seed draws the same world`, () => {
      const fam = loadFamily(join(FAMILIES, f), base);
      for (let i = 0; i < 30; i++) {
        const seed = worldSeed(1, i);
        const a = drawFamilyWorld(fam, base, {}, seed);
        const b = drawFamilyWorld(fam, base, {}, seed);
        expect(JSON.stringify(a)).toBe(JSON.stringify(b));
        expect(a.world.seed).toBe(seed);
        expect(checkFamilyWorld(a.task, base, simOptions({ ...a.options, record: false }), a.world, fam.spec.zones?.min_gap_m ?? 0)).toEqual([]);
        expect(a.redraws).toBeGreaterThanOrEqual(0);
      }
    });
  }

  it('the demo family draws exactly the worlds of a run without a family', () => {
    const fam = loadFamily(join(FAMILIES, 'demo_cell.yaml'), base);
    for (let i = 0; i < 20; i++) {
      const seed = worldSeed(5, i);
      const fw = drawFamilyWorld(fam, base, {}, seed);
      expect(fw.redraws).toBe(0);
      expect(fw.world).toEqual(sampleWorld(base.task, simOptions(), seed));
      expect(fw.task).toEqual(base.task);
    }
  });

  it('cluttered draws 4 to 8 zones; changing draws changes; poor sensors draws knocks and area-sensor errors', () => {
    const draw = (f: string, n: number) => Array.from({ length: n }, (_, i) => drawFamilyWorld(loadFamily(join(FAMILIES, f), base), base, {}, worldSeed(2, i)));
    const cl = draw('cluttered.yaml', 20);
    for (const w of cl) expect(w.task.zones.length).toBeGreaterThanOrEqual(4);
    for (const w of cl) expect(w.task.zones.length).toBeLessThanOrEqual(8);
    expect(cl.some((w) => w.redraws > 0)).toBe(true);
    expect(draw('changing.yaml', 20).some((w) => (w.world.changes?.length ?? 0) > 0)).toBe(true);
    const ps = draw('poor_sensors.yaml', 20);
    expect(ps.some((w) => (w.world.knocks?.length ?? 0) > 0)).toBe(true);
    expect(ps.every((w) => w.world.area_sensor!.miss_rate === 0.1)).toBe(true);
  });
});

describe('bad family files', () => {
  const parse = (text: string) => problemsOf(() => parseFamily(text, 'fam.yaml', base));

  it('an unknown key: its line and column, and the allowed keys', () => {
    const text = 'version: 1\nfamily: x\noccupancy:\n  probabilty: 0.5\n';
    const [p] = parse(text);
    expect(p!.message).toContain("unknown key 'probabilty'");
    expect(p!.where).toMatchObject({ file: 'fam.yaml', ...lineCol(text, 'probabilty') });
    expect(p!.hint).toContain('probability');
  });

  it('a wrong version', () => {
    const [p] = parse('version: 2\nfamily: x\n');
    expect(p!.where).toMatchObject({ line: 1, column: 10 });
    expect(p!.hint).toBe('version 1');
  });

  it('a range that ends before it starts, and one outside what is allowed: both at once', () => {
    const text = 'version: 1\nfamily: x\noccupancy:\n  probability: [0.8, 0.2]\narea_sensor:\n  miss_rate: 1.5\n';
    const ps = parse(text);
    expect(ps.map((p) => p.code)).toEqual(['family.empty_range', 'family.out_of_range']);
    expect(ps[0]!.where).toMatchObject(lineCol(text, '[0.8'));
    expect(ps[1]!.where).toMatchObject(lineCol(text, '1.5'));
    expect(ps[1]!.hint).toBe('from 0 to 1');
  });

  it('a range that is not a number or a pair', () => {
    const text = 'version: 1\nfamily: x\nobject:\n  mass_kg: [1, 2, 3]\n';
    const [p] = parse(text);
    expect(p!.message).toBe('object.mass_kg must be a number or a range [lo, hi]');
    expect(p!.where).toMatchObject(lineCol(text, '[1, 2, 3]'));
  });

  it('a grasp beyond the shortest object', () => {
    const text = 'version: 1\nfamily: x\nobject:\n  length_m: [0.8, 1.2]\n  grasp_offset_m: 0.5\n';
    const [p] = parse(text);
    expect(p!.code).toBe('family.grasp_off_object');
    expect(p!.where).toMatchObject(lineCol(text, '0.5\n'));
    expect(p!.hint).toBe('at most 0.4 m');
  });

  it('an unreachable layout (every zone on the start) is refused at load', () => {
    const text = 'version: 1\nfamily: x\nredraws: 3\nzones:\n  count: 2\n  shapes: [circle]\n  circle_radius_m: 0.1\n  center_x_m: 0.0\n  center_y_m: [-0.3, 0.3]\n';
    const [p] = parse(text);
    expect(p!.code).toBe('family.unreachable');
    expect(p!.where).toMatchObject(lineCol(text, 'count'));
    expect(p!.message).toContain('overlaps the object');
  });

  it('more zones than the belief can enumerate', () => {
    const text = 'version: 1\nfamily: x\nzones:\n  count: [2, 9]\n  center_x_m: 1\n  center_y_m: 0\n  circle_radius_m: 0.1\n  box_size_m: 0.1\n';
    const [p] = parse(text);
    expect(p!.code).toBe('family.out_of_range');
    expect(p!.hint).toBe('whole numbers from 0 to 8');
  });
});

describe('the centralized path check', () => {
  it('the demo cell with both zones occupied is passable; a wall across the path is not', () => {
    const w = sampleWorld(base.task, simOptions(), 1);
    expect(centralizedPath(base.task, base, w, [true, true]).reached).toBe(true);
    const wall = { ...base.task, zones: [{ name: 'a', shape: 'box' as const, center_m: [0.8, 0] as [number, number], size_m: [0.2, 2.9] as [number, number], radius_m: 0, observed_by: 'both' as const, kind: 'clamp_post' }] };
    expect(centralizedPath(wall, base, w, [true]).reached).toBe(false);
  });
});

describe('family episodes', () => {
  it('a change and knocks appear in summary.world with their times', async () => {
    const fam = loadFamily(join(FAMILIES, 'changing.yaml'), base);
    let seed = 0;
    let fw = drawFamilyWorld(fam, base, {}, seed);
    while (!(fw.world.changes ?? []).some((c) => c.t_s < 4)) fw = drawFamilyWorld(fam, base, {}, ++seed);
    const knock = { t_s: 3, duration_s: 0.03, force_n: 12, direction: [1, 0, 0] as [number, number, number] };
    const r = await runEpisode({ left: { ...base, task: fw.task }, right: { ...cell.right.config, task: fw.task }, strategy: { name: 'alternating', k: 500 }, seed, options: { ...fw.options, record: false }, duration_s: 6, world: { ...fw.world, knocks: [knock] }, family: { name: 'changing', redraws: fw.redraws } });
    const s = r.summary;
    expect(s.family).toEqual({ name: 'changing', redraws: fw.redraws });
    expect(s.world.zones.map((z) => z.name)).toEqual(fw.task.zones.map((z) => z.name));
    const changed = s.world.zones.flatMap((z) => z.changes);
    expect(changed.length).toBeGreaterThan(0);
    const first = fw.world.changes!.find((c) => c.t_s < 4)!;
    const rec = s.world.zones[first.zone]!.changes[0]!;
    expect(rec.occupied).toBe(first.occupied);
    expect(rec.t_s).toBeGreaterThanOrEqual(first.t_s - 1e-9);
    expect(s.world.knocks).toEqual([knock]);
  }, 120_000);
});
