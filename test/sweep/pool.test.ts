/**
 * The worker pool of a sweep over bags (src/sweep/pool.ts): a worker handed the decoded bags
 * by the main thread (columns in SharedArrayBuffers) gives exactly the metrics of a worker that
 * decodes the bags itself, and both those of the evaluator run in this thread (the reference:
 * every candidate in full), also after warming up on the made-up bag; a decoding failure fails the pool with the same error; the chunks
 * keep share groups together and the claims keep a group on one thread; the plan runs
 * small work in this thread. Needs the built workers (`npm run build`). Our own synthetic data:
 * demo bags of the kinematic cell with one knock each (test/sweep/helpers.ts).
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { loadParamsFile } from '../../src/params/load.js';
import { sharedBag } from '../../src/sweep/columns.js';
import { decodeBag, inspectBags, type BagInfo, type DecodedBag } from '../../src/sweep/decoded.js';
import type { CandidateMetrics } from '../../src/sweep/evaluate.js';
import { labelsPerBag, loadLabels, type Label } from '../../src/sweep/labels.js';
import { bagChunks, claimChunk, startPool, type BagJob } from '../../src/sweep/pool.js';
import { bagPlan } from '../../src/sweep/run.js';
import { restKey, SharedEvaluator } from '../../src/sweep/share.js';
import { candidateConfigs, loadSpace } from '../../src/sweep/space.js';
import { warmupBag } from '../../src/sweep/warmup.js';
import { InputError } from '../../src/util/errors.js';
import { makeKnockBags } from './helpers.js';

let dir: string;
let bags: string[];
let info: BagInfo[];
let perBag: Label[][];
let tolerance: number;
let decoded: DecodedBag[];
let jobs: BagJob[];
const cell = loadCell('config/demo_cell.yaml');
const zoneNames = cell.left.config.task.zones.map((z) => z.name);

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-pool-'));
  let labels: string;
  ({ bags, labels } = await makeKnockBags(join(dir, 'bags'), 8));
  info = await inspectBags(bags);
  const lab = loadLabels(labels);
  perBag = labelsPerBag(lab, info);
  tolerance = lab.tolerance_s;
  decoded = [];
  for (const b of bags) decoded.push(await decodeBag(b, zoneNames));
  writeFileSync(join(dir, 'space.yaml'), 'version: 1\nparameters:\n  roles.period_s:\n    grid: [0.25, 0.5]\n  wrench_filter.impact.force_n:\n    grid: [0.3, 2.0, 15.0, 25.0, 200.0, 400.0]\n');
  const space = loadSpace(join(dir, 'space.yaml'));
  jobs = candidateConfigs(loadParamsFile('config/demo_cell.yaml'), space, Array.from({ length: space.count }, (_, i) => i)).map((c) => ({ id: c.index, left: c.left, right: c.right }));
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Every candidate's metrics from a pool of two threads, as text by index: two workers that decode, two handed the bags, or this thread and one worker handed them. */
async function poolRun(share: boolean, mode: 'decode' | 'sent' | 'inline' | 'late'): Promise<string[]> {
  const out: string[] = [];
  const chunks = bagChunks(jobs, 2, (j) => restKey(j.left, j.right), share);
  // 'late': the bags arrive after 400 ms, so the workers warm up (warmup.ts) on the made-up bag first.
  const decode = async () => {
    if (mode === 'late') await new Promise((r) => setTimeout(r, 400));
    return decoded.map(sharedBag);
  };
  const options = mode === 'decode' ? {} : { decode, inline: mode === 'inline' };
  const pool = startPool(2, { bags, zoneNames, labels: perBag, tolerance_s: tolerance, share }, chunks, (i, m: CandidateMetrics) => (out[i] = JSON.stringify(m)), options);
  await pool.done;
  return out;
}

describe('sweep worker pool', () => {
  it('a worker given the decoded bags gives the metrics of one that decodes them, and of this thread', async () => {
    // Reference: this thread, every candidate in full.
    const ev = new SharedEvaluator(decoded, perBag, tolerance, false);
    const ref = jobs.map((j) => JSON.stringify(ev.metrics(j.left, j.right)));
    expect(new Set(ref).size).toBeGreaterThan(1);
    for (const share of [true, false]) {
      expect(await poolRun(share, 'sent')).toEqual(ref);
      expect(await poolRun(share, 'decode')).toEqual(ref);
      expect(await poolRun(share, 'inline')).toEqual(ref);
      expect(await poolRun(share, 'late')).toEqual(ref);
    }
  }, 300_000);

  it('the warm-up bag is well formed: every row in order and in range, at the demo rates', () => {
    const b = warmupBag(cell.left.config, 0.5);
    const lens = (a: DecodedBag['arms']['left']) => [a.wrenchRel.length, a.jointRel.length, a.poseRel.length, a.zoneRel.length];
    expect(lens(b.arms.left)).toEqual([500, 250, 50, 5]);
    expect(lens(b.arms.right)).toEqual([500, 250, 50, 5]);
    expect(b.count).toBe(2 * (500 + 250 + 50 + 5));
    let last = -1;
    for (let e = 0; e < b.count; e++) {
      const a = b.order[e]! < 4 ? b.arms.left : b.arms.right;
      const rel = [a.wrenchRel, a.jointRel, a.poseRel, a.zoneRel][b.order[e]! & 3]!;
      expect(b.index[e]!).toBeLessThan(rel.length);
      const t = rel[b.index[e]!]!;
      expect(t).toBeGreaterThanOrEqual(last);
      last = t;
    }
    expect(b.arms.left.zones.length).toBe(5 * b.zoneCount);
    expect(b.arms.left.jointOffset[249]! + b.arms.left.jointCount[249]!).toBe(b.arms.left.jointVel.length);
  });

  it('shared columns hold the same values in one SharedArrayBuffer', () => {
    const b = decoded[0]!;
    const s = sharedBag(b);
    expect(s.order.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(s.arms.right.zones.buffer).toBe(s.order.buffer);
    expect(Array.from(s.order)).toEqual(Array.from(b.order));
    expect(Array.from(s.index)).toEqual(Array.from(b.index));
    for (const arm of ['left', 'right'] as const) {
      for (const k of ['wrenchRel', 'wrench', 'poseRel', 'pose', 'jointRel', 'jointCount', 'jointOffset', 'jointVel', 'zoneRel', 'zones'] as const) {
        expect(s.arms[arm][k].constructor).toBe(b.arms[arm][k].constructor);
        expect(Array.from(s.arms[arm][k])).toEqual(Array.from(b.arms[arm][k]));
      }
      expect(s.arms[arm].present).toEqual(b.arms[arm].present);
    }
    expect({ ...s, arms: null, order: null, index: null }).toEqual({ ...b, arms: null, order: null, index: null });
  });

  it('stop ends the pool: done resolves and no result comes after it', async () => {
    const chunks = bagChunks(jobs, 2, (j) => restKey(j.left, j.right), false);
    let n = 0;
    let after = 0;
    let stopped = false;
    const pool = startPool(2, { bags, zoneNames, labels: perBag, tolerance_s: tolerance, share: false }, chunks, () => {
      if (stopped) after++;
      if (++n === 1) {
        stopped = true;
        pool.stop();
      }
    }, { decode: async () => decoded.map(sharedBag), inline: true });
    await pool.done;
    await new Promise((r) => setTimeout(r, 300));
    expect(n).toBeLessThan(jobs.length);
    expect(after).toBe(0);
  }, 60_000);

  it('a failed decode fails the pool with its own error', async () => {
    const err = new InputError({ code: 'test.decode', message: 'a bad message', where: { file: 'x' } });
    const chunks = bagChunks(jobs, 2, (j) => restKey(j.left, j.right));
    for (const inline of [false, true]) {
      const pool = startPool(2, { bags, zoneNames, labels: perBag, tolerance_s: tolerance }, chunks, () => {}, {
        decode: async () => {
          throw err;
        },
        inline,
      });
      await expect(pool.done).rejects.toBe(err);
    }
  }, 60_000);

  it('chunks keep share groups together, largest first; unshared, one candidate a chunk', () => {
    const key = (j: BagJob) => restKey(j.left, j.right);
    const shared = bagChunks(jobs, 2, key);
    // 12 candidates in 2 groups of 6 (the role period); pieces of at most ceil(12 / 4) = 3.
    expect(shared.map((c) => c.jobs.length)).toEqual([3, 3, 3, 3]);
    expect(shared.map((c) => c.group)).toEqual([0, 0, 1, 1]);
    for (const c of shared) expect(new Set(c.jobs.map(key)).size).toBe(1);
    // Largest group first, ties in order of appearance.
    const uneven = bagChunks([...jobs.slice(0, 2), ...jobs.slice(6)], 1, key);
    expect(uneven.map((c) => c.jobs.map((j) => j.id))).toEqual([[6, 7, 8, 9], [10, 11], [0, 1]]);
    const unshared = bagChunks(jobs, 2, key, false);
    expect(unshared.map((c) => c.jobs.map((j) => j.id))).toEqual(jobs.map((j) => [j.id]));
  });

  it('claims keep a thread on the group it has run, and each chunk goes to one thread', () => {
    const chunks = [0, 1, 0, 1, 2].map((group, id) => ({ id, group, jobs: [jobs[id]!] }));
    const claims = new Int32Array(new SharedArrayBuffer(4 * chunks.length));
    const seen = [new Set<number>(), new Set<number>()];
    const take = (w: number) => claimChunk(claims, chunks, seen[w]!);
    expect(take(0)).toBe(0);
    expect(take(1)).toBe(1);
    // Thread 1 has run group 1: it gets group 1's other piece, not the first one left.
    expect(take(1)).toBe(3);
    expect(take(0)).toBe(2);
    // Nothing of its groups left: the first piece left; then none.
    expect(take(0)).toBe(4);
    expect(take(1)).toBe(-1);
    expect(Array.from(claims)).toEqual([1, 1, 1, 1, 1]);
  });

  it('plans small work in this thread and enough work on the workers', () => {
    const chunks = bagChunks(jobs, 2, (j) => restKey(j.left, j.right));
    const alone = { threads: 1, workers: 0 };
    expect(bagPlan(1, chunks, info, true)).toMatchObject(alone);
    // Two 8 s bags: two full runs over each save less than a worker's start-up.
    const small = bagPlan(2, chunks, info, true);
    expect(small).toMatchObject(alone);
    expect(small.reason).toMatch(/at least 2 full runs over each bag \(\d+ messages in all\)/);
    expect(bagPlan(2, chunks, info, true, true)).toMatchObject({ threads: 2, workers: 1 });
    const long = info.map((b) => ({ ...b, messages: 100 * b.messages }));
    expect(bagPlan(2, chunks, long, true)).toMatchObject({ threads: 2, workers: 1 });
    // No more threads than chunks.
    expect(bagPlan(8, chunks, long, true)).toMatchObject({ threads: 4, workers: 3 });
    expect(bagPlan(2, [], info, true)).toEqual({ threads: 1, workers: 0, reason: 'nothing to run' });
  });
});
