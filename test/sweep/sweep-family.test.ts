/**
 * `antiphon sweep --worlds N --family <file>` over the simulated cell: the family puts one
 * knock on the beam at a known time in every world, and the simulator's ground truth is the
 * label (knocks to detect, contacts, true occupancy). Our own synthetic worlds of the demo
 * scenario (two arms carrying the 1.2 m beam); the thresholds and the knock are invented for
 * this test of our own behaviour. Checks: the chosen impact threshold misses no knock and has
 * the fewest false holds on its grid; the ROC area equals a direct computation; --jobs 1 and
 * --jobs 2 give the same sweep.json; shards plus merge equal the unsharded run; tuned.yaml
 * loads with check-config; bad family input is refused before any work.
 */
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { register as checkConfig } from '../../src/cli/check-config.js';
import { register as merge } from '../../src/cli/merge.js';
import { register as sweep } from '../../src/cli/sweep.js';
import { worldTruth } from '../../src/sweep/world-truth.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered, type Register } from '../support/run-command.js';

const KNOCK_T = 1.2;
const GRID = [0.5, 5.0, 60.0];
let dir: string;
let doc: any;
let text1: string;

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-sweep-family-'));
  writeFileSync(join(dir, 'knocks.yaml'), `version: 1\nfamily: knocks\ndescription: the demo cell, one knock on the beam at a known time\nknocks: { count: 1, time_s: ${KNOCK_T}, force_n: 60, duration_s: 0.03 }\n`);
  writeFileSync(join(dir, 'space.yaml'), `version: 1\nparameters:\n  wrench_filter.impact.force_n:\n    grid: [${GRID.join(', ')}]\n`);
  writeFileSync(join(dir, 'bad-family.yaml'), 'version: 1\nfamily: bad\nknocks: { count: 1, time_s: 1.0, force_n: -5 }\n');
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const run = (r: Register, name: string, args: string[]) => {
  resetLogging();
  return runRegistered(r, name, args);
};
const base = (family = 'knocks.yaml') => ['--params', 'config/demo_cell.yaml', '--space', join(dir, 'space.yaml'), '--worlds', '2', '--seed', '3', '--duration', '2.5', '--family', join(dir, family)];
const read = (d: string, f: string) => readFileSync(join(dir, d, f), 'utf8');

describe('sweep over worlds drawn from a family with knocks', () => {
  it('runs (jobs 1) and labels every candidate with the family\'s knocks', async () => {
    const r = await run(sweep, 'sweep', [...base(), '--out', join(dir, 'out1')]);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    text1 = read('out1', 'sweep.json');
    doc = JSON.parse(text1);
    expect(doc.data.kind).toBe('worlds');
    expect(doc.data.family.name).toBe('knocks');
    expect(doc.data.family.file).toBe('knocks.yaml');
    // One knock per world: two labelled impacts per candidate.
    for (const c of doc.candidates) expect(c.metrics.labelled_impacts).toBe(2);
  }, 600_000);

  it('the chosen impact threshold misses no knock and has the fewest false holds on its grid', () => {
    const chosen = doc.candidates.find((c: any) => c.index === doc.chosen);
    expect(chosen.metrics.missed_impacts).toBe(0);
    const best = Math.min(...doc.candidates.filter((c: any) => c.metrics.missed_impacts === 0).map((c: any) => c.metrics.false_holds_per_hour));
    expect(chosen.metrics.false_holds_per_hour).toBe(best);
    const at = (v: number) => doc.candidates.find((c: any) => c.values['wrench_filter.impact.force_n'] === v).metrics;
    // The grid brackets the answer: 0.5 N holds on the start-up transients, 60 N misses the knocks.
    expect(at(0.5).false_holds).toBeGreaterThan(0);
    expect(at(60).missed_impacts).toBe(2);
    expect(chosen.values['wrench_filter.impact.force_n']).toBe(5);
    // The impact flag rises once the score has stayed >= 1 for wrench_filter.impact.min_duration_s
    // (3 ms in config/demo_cell.yaml): no detection can come sooner after the knock starts.
    expect(chosen.metrics.detection_delay_s.median).toBeGreaterThanOrEqual(0.003 - 1e-9);
    expect(chosen.metrics.detection_delay_s.p95).toBeLessThan(0.5);
  });

  it('the ROC area equals a direct computation from the per-candidate counts', () => {
    const pts = doc.candidates.map((c: any) => [c.metrics.false_hold_bins / c.metrics.negative_bins, c.metrics.detected_impacts / c.metrics.labelled_impacts]);
    pts.push([0, 0], [1, 1]);
    pts.sort((a: number[], b: number[]) => a[0]! - b[0]! || a[1]! - b[1]!);
    let area = 0;
    for (let k = 1; k < pts.length; k++) {
      const w = pts[k][0] - pts[k - 1][0];
      area += w * Math.min(pts[k][1], pts[k - 1][1]) + (w * Math.abs(pts[k][1] - pts[k - 1][1])) / 2;
    }
    expect(doc.roc.points).toHaveLength(GRID.length);
    expect(doc.roc.auc).toBeCloseTo(area, 12);
  });

  it('sweep.json is the same with --jobs 2', async () => {
    const r = await run(sweep, 'sweep', [...base(), '--jobs', '2', '--out', join(dir, 'out2')]);
    expect(r.code).toBe(0);
    expect(read('out2', 'sweep.json')).toBe(text1);
  }, 600_000);

  it('two shards merged equal the unsharded run, byte for byte', async () => {
    for (let i = 0; i < 2; i++) expect((await run(sweep, 'sweep', [...base(), '--shard', `${i}/2`, '--out', join(dir, `s${i}`)])).code).toBe(0);
    const r = await run(merge, 'merge', [join(dir, 's1'), join(dir, 's0'), '--out', join(dir, 'merged')]);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    for (const f of ['sweep.json', 'tuned.yaml', 'report.html']) expect(read('merged', f)).toBe(read('out1', f));
  }, 600_000);

  it('tuned.yaml loads with check-config; its changed line names the family', async () => {
    const r = await run(checkConfig, 'check-config', [join(dir, 'out1', 'tuned.yaml')]);
    expect(r.code).toBe(0);
    const a = readFileSync('config/demo_cell.yaml', 'utf8').split('\n');
    const b = read('out1', 'tuned.yaml').split('\n');
    const changed = b.filter((line, k) => line !== a[k]);
    expect(changed.length).toBeGreaterThan(0);
    for (const line of changed) expect(line).toMatch(/# tuned: sweep [0-9a-f]{8} \(safe\) was .*on 2 simulated worlds \(seed 3, family knocks from knocks\.yaml/);
  });

  it('refuses a bad family file (file:line:col), --family without --worlds and --labels with worlds, before any work', async () => {
    let r = await run(sweep, 'sweep', [...base('bad-family.yaml'), '--out', join(dir, 'bad1')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/bad-family\.yaml:3:\d+.*knocks\.force_n/);
    expect(existsSync(join(dir, 'bad1'))).toBe(false);
    r = await run(sweep, 'sweep', ['--params', 'config/demo_cell.yaml', '--space', join(dir, 'space.yaml'), '--bags', dir, '--family', join(dir, 'knocks.yaml')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/--family.*goes with --worlds/);
    r = await run(sweep, 'sweep', [...base(), '--labels', join(dir, 'space.yaml')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/--labels labels bags/);
  }, 120_000);
});

describe('worldTruth: holds and impact trips against the knocks', () => {
  const hold = (arm: 'left' | 'right', start_s: number, checks: [string, number][]) => ({ arm, start_s, end_s: null, reasons: checks.map(([check, t_s]) => ({ check, input: '', value: 0, limit: 0, t_s, first: 0 })) });
  const summary = (events: any[], first_s: number | null = null) => ({ duration_s: 10, world: { knocks: [{ t_s: 4, force_n: 30, duration_s: 0.03, direction: [1, 0, 0] }] }, holds: { events }, collisions: { first_s } }) as any;

  it('a knock detected by an impact trip in its window; a partner-only hold after it is its consequence; others are false', () => {
    const t = worldTruth(summary([hold('left', 4.004, [['impact', 4.004]]), hold('right', 5.5, [['partner_stop', 5.5]]), hold('left', 8.2, [['force_correction', 8.2]])]), 4);
    expect(t).toMatchObject({ knocks: 1, detected: 1, holds: 3, false_holds: 1, negative_bins: 9, false_bins: 1 });
    expect(t.delays_s[0]).toBeCloseTo(0.004, 12);
  });

  it('an impact trip outside the window misses the knock and is a false hold; holds from the first contact on are the contact\'s', () => {
    expect(worldTruth(summary([{ ...hold('left', 2.0, [['impact', 2.0]]), end_s: 2.5 }]), 4)).toMatchObject({ detected: 0, false_holds: 1 });
    expect(worldTruth(summary([hold('left', 7.0, [['impact', 7.0]])], 6.99), 4)).toMatchObject({ detected: 0, false_holds: 0 });
  });

  it('a knock that comes while an impact hold is in force is detected (no trip of its own, no delay)', () => {
    // The hold itself began before the knock with nothing to explain it: a false hold.
    const t = worldTruth(summary([{ ...hold('right', 3.8, [['impact', 3.8]]), end_s: 4.5 }]), 4);
    expect(t).toMatchObject({ detected: 1, delays_s: [], false_holds: 1 });
    // Released before the knock: missed.
    expect(worldTruth(summary([{ ...hold('right', 3.0, [['impact', 3.0]]), end_s: 3.5 }]), 4)).toMatchObject({ detected: 0, false_holds: 1 });
  });
});
