/**
 * Shards plus merge equal the unsharded run, for a sweep (sweep.json, tuned.yaml, report.html
 * byte for byte) and for a compare (compare.json equal to `compare --json`); merge refuses
 * shards of different runs, a missing or doubled shard. Our own synthetic data (kinematic-cell
 * demo bags with knocks; simulated worlds).
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { register as compare } from '../../src/cli/compare.js';
import { register as merge } from '../../src/cli/merge.js';
import { register as sweep } from '../../src/cli/sweep.js';
import { parseShard } from '../../src/sweep/shard.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered, type Register } from '../support/run-command.js';
import { makeKnockBags } from './helpers.js';

let dir: string;
let bags: string[];
let labels: string;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'antiphon-merge-'));
  ({ bags, labels } = await makeKnockBags(join(dir, 'bags'), 8));
  writeFileSync(join(dir, 'space.yaml'), 'version: 1\nparameters:\n  wrench_filter.impact.force_n:\n    grid: [2.0, 15.0, 200.0]\n  roles.period_s:\n    range: { from: 0.25, to: 0.75, step: 0.25 }\n');
  writeFileSync(join(dir, 'space2.yaml'), 'version: 1\nparameters:\n  wrench_filter.impact.force_n:\n    grid: [2.0, 15.0, 201.0]\n  roles.period_s:\n    range: { from: 0.25, to: 0.75, step: 0.25 }\n');
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const run = (r: Register, name: string, ...args: string[]) => {
  resetLogging();
  return runRegistered(r, name, args);
};
const sweepArgs = (space = 'space.yaml') => ['--params', 'config/demo_cell.yaml', '--space', join(dir, space), '--bags', ...bags, '--labels', labels];
const read = (d: string, f: string) => readFileSync(join(dir, d, f), 'utf8');

describe('sweep shards and merge', () => {
  it('three shards merged equal the unsharded sweep, byte for byte', async () => {
    expect((await run(sweep, 'sweep', ...sweepArgs(), '--out', join(dir, 'whole'))).code).toBe(0);
    for (let i = 0; i < 3; i++) {
      const r = await run(sweep, 'sweep', ...sweepArgs(), '--shard', `${i}/3`, '--out', join(dir, `s${i}`));
      expect(r.code).toBe(0);
      expect(JSON.parse(read(`s${i}`, 'sweep.json')).candidates).toHaveLength(3);
    }
    // Shards in any order.
    const r = await run(merge, 'merge', join(dir, 's2'), join(dir, 's0'), join(dir, 's1'), '--out', join(dir, 'merged'));
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    for (const f of ['sweep.json', 'tuned.yaml', 'report.html']) expect(read('merged', f)).toBe(read('whole', f));
  }, 300_000);

  it('--shard auto/n takes the index from JOB_COMPLETION_INDEX or SLURM_ARRAY_TASK_ID', () => {
    expect(parseShard('auto/4', { JOB_COMPLETION_INDEX: '2' })).toEqual({ index: 2, count: 4 });
    expect(parseShard('auto/4', { SLURM_ARRAY_TASK_ID: '3' })).toEqual({ index: 3, count: 4 });
    expect(() => parseShard('auto/4', {})).toThrow(/neither JOB_COMPLETION_INDEX nor SLURM_ARRAY_TASK_ID/);
    expect(() => parseShard('auto/4', { SLURM_ARRAY_TASK_ID: '4' })).toThrow(/not below n = 4/);
    expect(() => parseShard('4/4')).toThrow(/i must be below n/);
    expect(() => parseShard('1-4')).toThrow(/i\/n or auto\/n/);
  });

  it('refuses shards of different sweeps, a doubled shard and a missing one, before writing anything', async () => {
    expect((await run(sweep, 'sweep', ...sweepArgs('space2.yaml'), '--shard', '1/3', '--out', join(dir, 'other1'))).code).toBe(0);
    let r = await run(merge, 'merge', join(dir, 's0'), join(dir, 'other1'), join(dir, 's2'), '--out', join(dir, 'm2'));
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/other1.*is a shard of another sweep/);
    r = await run(merge, 'merge', join(dir, 's0'), join(dir, 's0'), join(dir, 's2'), '--out', join(dir, 'm2'));
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/both shard 0\/3/);
    r = await run(merge, 'merge', join(dir, 's0'), join(dir, 's2'), '--out', join(dir, 'm2'));
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/shard 1 of 3 missing/);
    r = await run(merge, 'merge', join(dir, 'whole'), '--out', join(dir, 'm2'));
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/holds a whole sweep, not a shard/);
  }, 300_000);
});

describe('compare shards and merge', () => {
  it('two shards merged give exactly compare --json of the unsharded run', async () => {
    const args = ['--params', 'config/demo_cell.yaml', '--worlds', '3', '--seed', '5', '--duration', '1.5', '--strategies', 'alternating:500,fixed'];
    const whole = await run(compare, 'compare', ...args, '--json');
    expect(whole.code).toBe(0);
    for (let i = 0; i < 2; i++) expect((await run(compare, 'compare', ...args, '--shard', `${i}/2`, '--out', join(dir, `c${i}`))).code).toBe(0);
    const r = await run(merge, 'merge', join(dir, 'c1'), join(dir, 'c0'), '--out', join(dir, 'cm'));
    expect(r.code).toBe(0);
    expect(read('cm', 'compare.json')).toBe(whole.stdout);
    // Another comparison's shard is refused.
    expect((await run(compare, 'compare', ...args.map((a) => (a === '5' ? '6' : a)), '--shard', '1/2', '--out', join(dir, 'c1x'))).code).toBe(0);
    const bad = await run(merge, 'merge', join(dir, 'c0'), join(dir, 'c1x'), '--out', join(dir, 'cm2'));
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/shard of another compare/);
  }, 600_000);

  it('with two --family files: two shards merged give exactly compare --json of the unsharded run', async () => {
    // Our own scenario families (examples/families/): the demo cell's zones, and zones that change during the transfer.
    const args = ['--params', 'config/demo_cell.yaml', '--worlds', '3', '--seed', '5', '--duration', '1.5', '--strategies', 'alternating:500,fixed', '--family', 'examples/families/demo_cell.yaml', '--family', 'examples/families/changing.yaml'];
    const whole = await run(compare, 'compare', ...args, '--json');
    expect(whole.code).toBe(0);
    expect(JSON.parse(whole.stdout).families.map((f: any) => f.family.name)).toEqual(['demo_cell', 'changing']);
    for (let i = 0; i < 2; i++) expect((await run(compare, 'compare', ...args, '--shard', `${i}/2`, '--out', join(dir, `f${i}`))).code).toBe(0);
    const r = await run(merge, 'merge', join(dir, 'f1'), join(dir, 'f0'), '--out', join(dir, 'fm'));
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(read('fm', 'compare.json')).toBe(whole.stdout);
    // A shard of the same comparison without one of the families is another comparison's.
    expect((await run(compare, 'compare', ...args.slice(0, -2), '--shard', '1/2', '--out', join(dir, 'f1x'))).code).toBe(0);
    const bad = await run(merge, 'merge', join(dir, 'f0'), join(dir, 'f1x'), '--out', join(dir, 'fm2'));
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/shard of another compare/);
  }, 600_000);
});
