/**
 * Work shared across candidates (src/sweep/share.ts) changes no result: sweep.json is the same,
 * bit for bit, with sharing and with every candidate run in full, on jobs 1 and 2; the
 * filter driven on its own gives exactly the impact onsets the arm steps flag; a trace known
 * to be all zeros from the impact band's maxima is all zeros. Our own synthetic data: demo
 * bags of the kinematic cell with one knock each at a known time (test/sweep/helpers.ts).
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { loadParamsFile } from '../../src/params/load.js';
import { decodeBag, inspectBags, type DecodedBag } from '../../src/sweep/decoded.js';
import { evaluateBag } from '../../src/sweep/evaluate.js';
import { labelsPerBag, loadLabels } from '../../src/sweep/labels.js';
import { objectiveByName } from '../../src/sweep/objective.js';
import { runSweep } from '../../src/sweep/run.js';
import { impactBandMaxima, impactFlagTrace, restKey, SharedEvaluator } from '../../src/sweep/share.js';
import { candidateConfigs, loadSpace } from '../../src/sweep/space.js';
import { makeKnockBags } from './helpers.js';

let dir: string;
let bags: string[];
let labels: string;
let decoded: DecodedBag[];
const cell = loadCell('config/demo_cell.yaml');
const zoneNames = cell.left.config.task.zones.map((z) => z.name);

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-share-'));
  ({ bags, labels } = await makeKnockBags(join(dir, 'bags'), 8));
  decoded = [];
  for (const b of bags) decoded.push(await decodeBag(b, zoneNames));
  // Thresholds from one that holds on every bump to ones that miss the knocks (60 N, 45 N), two role periods.
  writeFileSync(join(dir, 'space.yaml'), 'version: 1\nparameters:\n  roles.period_s:\n    grid: [0.25, 0.5]\n  wrench_filter.impact.force_n:\n    grid: [0.3, 2.0, 15.0, 25.0, 200.0, 400.0]\n');
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function sweepJson(jobs: number, share: boolean, forcePool = false): Promise<string> {
  const info = await inspectBags(bags);
  const lab = loadLabels(labels);
  const r = await runSweep({ base: loadParamsFile('config/demo_cell.yaml'), baseText: readFileSync('config/demo_cell.yaml', 'utf8'), space: loadSpace(join(dir, 'space.yaml')), data: { kind: 'bags', bags: info, labels: lab, perBag: labelsPerBag(lab, info) }, objective: objectiveByName('safe'), jobs, shard: null, share, forcePool });
  if (forcePool) expect(r.threads).toMatchObject({ threads: 2, workers: 1 });
  return JSON.stringify(r.document);
}

describe('work shared across candidates', () => {
  it('sweep.json is bit for bit the same as with every candidate in full, with --jobs 1 and 2', async () => {
    const full = await sweepJson(1, false);
    expect(await sweepJson(1, true)).toBe(full);
    expect(await sweepJson(2, true)).toBe(full);
    // The worker pool itself (these short bags alone would run in this thread: bagPlan), shared and in full.
    expect(await sweepJson(2, true, true)).toBe(full);
    expect(await sweepJson(2, false, true)).toBe(full);
    // The comparison means something: some thresholds detect the knocks, some do not.
    const doc = JSON.parse(full);
    const missed = new Set(doc.candidates.map((c: any) => c.metrics.missed_impacts));
    expect(missed.size).toBeGreaterThan(1);
  }, 600_000);

  it('shares: candidates whose flags never rise reuse one run; those that differ run in full', () => {
    const base = loadParamsFile('config/demo_cell.yaml');
    const space = loadSpace(join(dir, 'space.yaml'));
    const cands = candidateConfigs(base, space, Array.from({ length: space.count }, (_, i) => i));
    const ev = new SharedEvaluator(decoded, [[], []], 0.3);
    for (const c of cands) ev.metrics(c.left, c.right);
    // 12 candidates x 2 bags; 200 N and 400 N never flag (the knocks are 60 N and 45 N before the split into bands) ...
    expect(ev.stats.full + ev.stats.shared).toBe(24);
    expect(ev.stats.shared).toBeGreaterThan(0);
    // ... and each of the two periods is its own group.
    expect(new Set(cands.map((c) => restKey(c.left, c.right))).size).toBe(2);
    // One maxima pass per arm and bag (the filter but for impact.* is the same for every candidate).
    expect(ev.stats.maxima).toBe(4);
  });

  it('the filter driven on its own flags exactly the impact onsets of the arm steps', () => {
    const base = loadParamsFile('config/demo_cell.yaml');
    const space = loadSpace(join(dir, 'space.yaml'));
    const cands = candidateConfigs(base, space, Array.from({ length: 6 }, (_, i) => i));
    let compared = 0;
    for (const bag of decoded) {
      for (const c of cands) {
        const events = evaluateBag(bag, c.left, c.right, [], 0.3).events!;
        for (const arm of ['left', 'right'] as const) {
          const trace = impactFlagTrace(bag, arm, c[arm])!;
          const rel = bag.arms[arm].wrenchRel;
          const onsets: number[] = [];
          for (let i = 0; i < trace.length; i++) if (trace[i] === 1 && (i === 0 || trace[i - 1] === 0)) onsets.push(rel[i]!);
          expect(onsets).toEqual(events.find((e) => e.arm === arm)!.impacts);
          compared += onsets.length;
          // Known all zeros from the maxima: then the trace is all zeros.
          const m = impactBandMaxima(bag, arm, c[arm])!;
          const im = c[arm].wrench_filter.impact;
          if (m.force * (1 / im.force_n) < 1 && m.torque * (1 / im.torque_nm) < 1) expect(trace.every((x) => x === 0)).toBe(true);
        }
      }
    }
    expect(compared).toBeGreaterThan(0);
  }, 300_000);
});
