/**
 * `antiphon sweep` over bags of our own synthetic kinematic cell (invented data: the demo
 * bags of src/sim/demo-bag.ts), each with a knock at a known time: the chosen impact
 * threshold misses no knock and has the fewest false holds on its grid; the ROC area equals a
 * direct computation from the per-candidate counts; jobs 1 and 2 give the same sweep.json;
 * tuned.yaml loads with check-config; SIGINT-style stops keep finished candidates and resume
 * gives the whole run; the sweep's arm steps see what replay sees.
 */
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { register as checkConfig } from '../../src/cli/check-config.js';
import { register } from '../../src/cli/sweep.js';
import { loadCell } from '../../src/params/config.js';
import { loadParamsFile } from '../../src/params/load.js';
import { replayPath } from '../../src/replay/replay.js';
import { decodeBag, inspectBags } from '../../src/sweep/decoded.js';
import { evaluateBag } from '../../src/sweep/evaluate.js';
import { labelsPerBag, loadLabels } from '../../src/sweep/labels.js';
import { objectiveByName } from '../../src/sweep/objective.js';
import { journalPath, runSweep } from '../../src/sweep/run.js';
import { loadSpace } from '../../src/sweep/space.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered } from '../support/run-command.js';
import { KNOCKS, makeKnockBags } from './helpers.js';

let dir: string;
let bags: string[];
let labels: string;
const GRID = [0.3, 2.0, 15.0, 30.0, 200.0];
const PERIODS = [0.25, 0.5];

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-sweep-'));
  ({ bags, labels } = await makeKnockBags(join(dir, 'bags'), 10));
  writeFileSync(join(dir, 'space.yaml'), `version: 1\nparameters:\n  wrench_filter.impact.force_n:\n    grid: [${GRID.map((g) => g.toFixed(1)).join(', ')}]\n  roles.period_s:\n    grid: [${PERIODS.join(', ')}]\n`);
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function sweep(...args: string[]) {
  resetLogging();
  return runRegistered(register, 'sweep', ['--params', 'config/demo_cell.yaml', '--space', join(dir, 'space.yaml'), '--bags', ...bags, '--labels', labels, ...args]);
}

describe('sweep over bags with knocks at known times', () => {
  let doc: any;
  let text1: string;
  beforeAll(async () => {
    const r = await sweep('--out', join(dir, 'out1'), '--json');
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    text1 = readFileSync(join(dir, 'out1', 'sweep.json'), 'utf8');
    doc = JSON.parse(text1);
  }, 300_000);

  it('has every candidate with its values and metrics, a chosen one and a Pareto front', () => {
    expect(doc.candidates).toHaveLength(GRID.length * PERIODS.length);
    expect(doc.candidates.map((c: any) => c.index)).toEqual([...Array(GRID.length * PERIODS.length).keys()]);
    // The product, last key fastest.
    expect(doc.candidates[1].values).toEqual({ 'wrench_filter.impact.force_n': 0.3, 'roles.period_s': 0.5 });
    expect(doc.chosen).not.toBeNull();
    expect(doc.pareto.length).toBeGreaterThan(0);
    expect(doc.pareto).toContain(doc.chosen);
    for (const c of doc.candidates) expect(c.metrics.labelled_impacts).toBe(KNOCKS.length);
  });

  it('the chosen threshold misses no knock and has the fewest false holds on its grid', () => {
    const chosen = doc.candidates.find((c: any) => c.index === doc.chosen);
    expect(chosen.metrics.missed_impacts).toBe(0);
    const period = chosen.values['roles.period_s'];
    const grid = doc.candidates.filter((c: any) => c.values['roles.period_s'] === period);
    expect(grid).toHaveLength(GRID.length);
    const best = Math.min(...grid.filter((c: any) => c.metrics.missed_impacts === 0).map((c: any) => c.metrics.false_holds_per_hour));
    expect(chosen.metrics.false_holds_per_hour).toBe(best);
    // The grid brackets the answer: the lowest threshold holds on noise, the highest misses the knocks.
    expect(grid.find((c: any) => c.values['wrench_filter.impact.force_n'] === 0.3).metrics.false_holds).toBeGreaterThan(0);
    expect(grid.find((c: any) => c.values['wrench_filter.impact.force_n'] === 200).metrics.missed_impacts).toBe(KNOCKS.length);
    // Ties go to the base file's own value (15 N in config/demo_cell.yaml).
    expect(chosen.values['wrench_filter.impact.force_n']).toBe(15);
  });

  it('the ROC area equals a direct computation from the per-candidate counts', () => {
    const chosen = doc.candidates.find((c: any) => c.index === doc.chosen);
    const slice = doc.candidates.filter((c: any) => c.values['roles.period_s'] === chosen.values['roles.period_s']);
    // Direct: rectangles-plus-triangles between successive points sorted by false-positive rate,
    // from (0,0) to (1,1) (the trapezoid rule, written out here independently).
    const pts = slice.map((c: any) => [c.metrics.false_hold_bins / c.metrics.negative_bins, c.metrics.detected_impacts / c.metrics.labelled_impacts]);
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
    const r = await sweep('--out', join(dir, 'out2'), '--jobs', '2');
    expect(r.code).toBe(0);
    // It says how the candidates ran (threads or this thread, and why).
    expect(r.stdout).toMatch(/--jobs 2: (2 threads \(1 worker\)|in this thread): at least \d+ full runs? over each bag \(\d+ messages in all\)/);
    expect(readFileSync(join(dir, 'out2', 'sweep.json'), 'utf8')).toBe(text1);
    expect(readFileSync(join(dir, 'out2', 'tuned.yaml'), 'utf8')).toBe(readFileSync(join(dir, 'out1', 'tuned.yaml'), 'utf8'));
  }, 300_000);

  it('tuned.yaml loads with check-config and differs from the base only on changed lines, each with its evidence', async () => {
    const tuned = readFileSync(join(dir, 'out1', 'tuned.yaml'), 'utf8');
    const base = readFileSync('config/demo_cell.yaml', 'utf8');
    resetLogging();
    const r = await runRegistered(checkConfig, 'check-config', [join(dir, 'out1', 'tuned.yaml')]);
    expect(r.code).toBe(0);
    const a = base.split('\n');
    const b = tuned.split('\n');
    const changed = b.filter((line, k) => line !== a[k]);
    for (const line of changed) expect(line).toMatch(/# tuned: sweep [0-9a-f]{8} \(safe\) was .*false holds\/h.*on 2 bag\(s\)/);
    expect(a.length).toBe(b.length);
  });

  it('report.html is written, self-contained', () => {
    const html = readFileSync(join(dir, 'out1', 'report.html'), 'utf8');
    expect(html).toContain('<svg id="roc"');
    expect(html).toContain('<svg id="pareto"');
    expect(html).toContain('<svg id="period-force"');
    expect(html).not.toMatch(/<script|src="http|href="http/);
  });

  it('a stopped run keeps its finished candidates and --resume completes it to the same result', async () => {
    const base = loadParamsFile('config/demo_cell.yaml');
    const space = loadSpace(join(dir, 'space.yaml'));
    const bagInfo = await inspectBags(bags);
    const lab = loadLabels(labels);
    const out = join(dir, 'resumed');
    const journal = journalPath(out);
    const common = { base, baseText: readFileSync('config/demo_cell.yaml', 'utf8'), space, data: { kind: 'bags' as const, bags: bagInfo, labels: lab, perBag: labelsPerBag(lab, bagInfo) }, objective: objectiveByName('safe'), jobs: 1, shard: null, journal };
    let n = 0;
    const first = await runSweep({ ...common, onProgress: () => n++, stopRequested: () => n >= 3 });
    expect(first.interrupted).toBe(true);
    expect(first.done).toBe(3);
    expect(readFileSync(journal, 'utf8').trim().split('\n')).toHaveLength(4);
    const second = await runSweep({ ...common, resume: true });
    expect(second.interrupted).toBe(false);
    expect(second.resumed).toBe(3);
    expect(JSON.stringify(second.document, null, 2) + '\n').toBe(text1);
    rmSync(journal, { force: true });
  }, 300_000);

  it('the sweep steps the arms as replay does: the same first impact and hold per arm', async () => {
    const cell = loadCell('config/demo_cell.yaml');
    for (const path of bags) {
      const rec = await replayPath(path, { arms: ['left', 'right'], configs: { left: cell.left.config, right: cell.right.config } });
      const d = await decodeBag(path, cell.left.config.task.zones.map((z) => z.name));
      const c = evaluateBag(d, cell.left.config, cell.right.config, [], 0.3);
      // Replay never resets a hold, so its first hold and first impact per arm are the ones to compare.
      for (const a of rec.arms) {
        const mine = c.events!.find((e) => e.arm === a.arm)!;
        const hold = a.events.find((e) => e.kind === 'hold')?.t_s;
        const impact = a.events.find((e) => e.kind === 'impact_start')?.t_s;
        expect(mine.holds[0]).toBe(hold);
        expect(mine.impacts[0]).toBe(impact);
      }
      expect(c.events!.some((e) => e.impacts.length > 0)).toBe(true);
    }
    expect(existsSync(bags[0]!)).toBe(true);
  }, 120_000);
});
