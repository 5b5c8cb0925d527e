/**
 * The fuzzer as part of the test suite: every input that once failed (test/fuzz/corpus, rebuilt
 * from its seed and a patch: fixture bytes are never stored here) runs without a crash; a short
 * seeded run finds no crash or hang; and a build with one bounds check switched off
 * (ANTIPHON_FUZZ_PLANT, a test-only seam) makes the fuzzer report a crash.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCase } from '../../src/fuzz/case.js';
import { rebuild, type FuzzReport, type SavedCase } from '../../src/fuzz/engine.js';
import { buildSeeds, demoBag, fixturesDir, ROOT, type Seed } from '../../src/fuzz/seeds.js';

const root = resolve(__dirname, '../..');
const main = join(root, 'dist/src/fuzz/main.js');
const corpus = join(__dirname, 'corpus');
if (!fixturesDir() && process.env['CI']) throw new Error('CI: the rosbag2 fixtures are missing (../shared/fixtures/rosbag2 or $ANTIPHON_FIXTURES)');

let work: string;
let seeds: Seed[];
beforeAll(async () => {
  // `npm test` builds first; a bare `vitest run` builds here (the fuzzer's worker runs dist/).
  if (!existsSync(main)) spawnSync('npx', ['tsc', '-p', 'tsconfig.build.json'], { cwd: root, stdio: 'ignore' });
  work = mkdtempSync(join(tmpdir(), 'antiphon-fuzz-test-'));
  seeds = await buildSeeds(join(work, 'seeds'));
  process.env['ANTIPHON_LOG_LEVEL'] = 'silent';
}, 120_000);
afterAll(() => rmSync(work, { recursive: true, force: true }));

function fuzz(args: string[], env: Record<string, string> = {}): FuzzReport {
  const r = spawnSync(process.execPath, [main, '--json', ...args], { cwd: root, encoding: 'utf8', env: { ...process.env, ...env }, timeout: 600_000 });
  expect(r.stdout, r.stderr).not.toBe('');
  return JSON.parse(r.stdout) as FuzzReport;
}

describe('the fuzz corpus: every input that once failed', () => {
  const entries = readdirSync(corpus).sort();
  it('holds the saved failures', () => {
    expect(entries.length).toBeGreaterThanOrEqual(9);
  });
  for (const name of entries) {
    it(`${name} runs without a crash`, async () => {
      const saved = JSON.parse(readFileSync(join(corpus, name, 'case.json'), 'utf8')) as SavedCase;
      const seed = seeds.find((s) => s.id === saved.seed);
      if (!seed) {
        // Only fixture seeds can be missing (generated and hostile seeds are always built).
        expect(saved.seed.startsWith('fixture:')).toBe(true);
        console.warn(`skipped ${name}: no rosbag2 fixtures for seed ${saved.seed}`);
        return;
      }
      const c = rebuild(seed, saved, 1);
      const vars = { root: ROOT, demo: saved.args.includes('{demo}') ? await demoBag(join(work, 'demo')) : '' };
      const r = await runCase(c, join(work, 'cases'), vars);
      expect(r.outcome, r.detail).not.toBe('crash');
      expect(r.outcome).not.toBe('skipped');
      // Bad input is a clear error (2) or lost data is reported (1): never a silent 0 here.
      expect([1, 2]).toContain(r.code);
    });
  }
});

describe('npm run fuzz', () => {
  it('a short seeded run over every bag, CSV and parameters input finds no crash and no hang', () => {
    const rep = fuzz(['--cases', '250', '--seed', '20261201', '--targets', 'mcap,mcap-zstd,sqlite,metadata,csv,params']);
    expect(rep.cases).toBe(250);
    expect(Object.keys(rep.by_target).sort()).toEqual(['csv', 'mcap', 'mcap-zstd', 'metadata', 'params', 'sqlite']);
    expect(rep.failures).toEqual([]);
    expect(rep.crashes).toBe(0);
    expect(rep.hangs).toBe(0);
  }, 600_000);

  it('finds a planted defect: with the sqlite data-type check switched off it reports a crash (and none without)', () => {
    const args = ['--cases', '60', '--seed', '1', '--targets', 'sqlite'];
    const planted = fuzz(args, { ANTIPHON_FUZZ_PLANT: 'sqlite-data-type' });
    expect(planted.crashes).toBeGreaterThan(0);
    expect(planted.failures[0]!.detail).toMatch(/internal error/);
    const clean = fuzz(args);
    expect(clean.crashes).toBe(0);
  }, 600_000);
});
