/**
 * `simulate --out`: the bag of an episode holds both arms' inputs and outputs under the live
 * topic names; replaying it reproduces the closed loop bit for bit; the same seed gives a
 * byte-identical bag, summary and report.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openBag } from '../../src/bag/index.js';

const root = resolve(__dirname, '../..');
const cli = join(root, 'dist/src/cli/main.js');
const dir = mkdtempSync(join(tmpdir(), 'antiphon-sim-out-'));
const sim = (out: string, extra: string[] = []) =>
  spawnSync(process.execPath, [cli, 'simulate', '--params', 'config/demo_cell.yaml', '--seed', '7', '--duration', '6', '--out', out, '--json', ...extra], { cwd: root, encoding: 'utf8', env: { ...process.env, CI: '1' } });

beforeAll(() => {
  spawnSync('npx', ['tsc', '-p', 'tsconfig.build.json'], { cwd: root, stdio: 'ignore' });
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('simulate --out', () => {
  it('writes bag, summary and report; the bag replays to the closed-loop outputs exactly', async () => {
    const r = sim(join(dir, 'a'));
    expect(r.status, r.stderr).toBe(0);
    const s = JSON.parse(r.stdout);
    expect(s.bag_replay_matches_closed_loop).toBe(true);
    for (const f of ['bag/metadata.yaml', 'summary.json', 'report.html']) expect(existsSync(join(dir, 'a', f)), f).toBe(true);
    const bag = await openBag(join(dir, 'a', 'bag'));
    const topics = new Map(bag.topics().map((t) => [t.name, t]));
    for (const arm of ['left', 'right']) {
      for (const t of ['wrench', 'joint_states', 'tool_pose', 'zone_view', 'antiphon/recommended_twist', 'antiphon/role', 'antiphon/belief', 'antiphon/watchdog', 'antiphon/correction_wrench', 'antiphon/impact_wrench']) {
        expect(topics.has(`/${arm}/${t}`), `/${arm}/${t}`).toBe(true);
      }
      expect(topics.get(`/${arm}/wrench`)!.count).toBe(topics.get(`/${arm}/antiphon/recommended_twist`)!.count);
      expect(topics.get(`/${arm}/zone_view`)!.count).toBeGreaterThan(10); // 10 Hz area sensor
    }
    expect(bag.startNs).toBe(0n); // sim time, as a recording with use_sim_time would have
    bag.close();
  });

  it('is deterministic: the same seed gives byte-identical files', () => {
    // Common practice: reproducible simulation results name their seed and repeat exactly.
    expect(sim(join(dir, 'b')).status).toBe(0);
    for (const f of ['bag/bag_0.mcap', 'bag/metadata.yaml', 'summary.json', 'report.html']) {
      expect(readFileSync(join(dir, 'a', f)).equals(readFileSync(join(dir, 'b', f))), f).toBe(true);
    }
  });

  it('refuses to write over an existing folder unless told to', () => {
    const again = sim(join(dir, 'a'));
    expect(again.status).toBe(2);
    expect(again.stderr).toMatch(/--overwrite/);
    expect(sim(join(dir, 'a'), ['--overwrite']).status).toBe(0);
  });
});
