/**
 * The fault campaign: every kind runs, the invariants hold on the real arm step, the JSON has the
 * issue's shape, the CLI (worker threads) gives the same figures as the main thread, and the
 * MuJoCo episode takes the same injector through its `feed` hook. Our own behaviour on invented
 * episodes of the demo scenario; no timing asserted.
 */
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { runCampaign } from '../../src/faults/campaign.js';
import { FaultedArm } from '../../src/faults/inject.js';
import { InvariantMonitor } from '../../src/faults/invariants.js';
import { FAULT_KINDS } from '../../src/faults/kinds.js';
import { faultsJson } from '../../src/cli/faults.js';
import { runEpisode } from '../../src/sim/episode.js';
import { ROOT } from '../support/files.js';
import { cell, fault } from './drive.js';

const CLI = join(ROOT, 'dist/src/cli/main.js');

describe('fault campaign', () => {
  it('runs every kind with no invariant violated, and reports the issue JSON shape', async () => {
    const r = await runCampaign({ left: cell.left.config, right: cell.right.config, duration_s: 40, episodes: FAULT_KINDS.length, seed: 3, jobs: 1, skew_episodes: 1 });
    const j = faultsJson(r) as { kinds: Record<string, Record<string, unknown>>; violations: number; skew_curve: { skew_s: number; same_role_fraction: number }[] };
    expect(Object.keys(j.kinds)).toEqual([...FAULT_KINDS]);
    for (const k of FAULT_KINDS) {
      expect(Object.keys(j.kinds[k]!)).toEqual(expect.arrayContaining(['episodes', 'holds', 'reaction_s', 'violations', 'task_success']));
      expect(j.kinds[k]!['episodes']).toBe(1);
    }
    expect(j.violations).toBe(0);
    // A spike and a NaN burst hold within the sample they arrive on (sample timestamps).
    expect(r.kinds['spike']!.reaction_s.max).toBeLessThanOrEqual(0.001 + 1e-9);
    expect(r.kinds['nan_burst']!.reaction_s.max).toBeLessThanOrEqual(0.001 + 1e-9);
    expect(r.kinds['partner_death']!.holds).toBe(1);
    // The skew curve: same-role time grows with the skew (a slot of roles.period_s = 0.5 s shifted by the skew).
    expect(j.skew_curve.map((p) => p.skew_s)[0]).toBe(0);
    expect(j.skew_curve[0]!.same_role_fraction).toBe(0);
    expect(j.skew_curve.at(-1)!.same_role_fraction).toBeGreaterThan(j.skew_curve[1]!.same_role_fraction);
  });

  it.skipIf(!existsSync(CLI))('the CLI on two worker threads gives the figures of one thread; bad --kinds exits 2', () => {
    const args = [CLI, 'faults', '--episodes', '3', '--kinds', 'spike,dropout,time_jump_forward', '--skew-episodes', '0', '--seed', '5', '--json'];
    const one = spawnSync(process.execPath, args, { encoding: 'utf8' });
    const two = spawnSync(process.execPath, [...args, '--jobs', '2'], { encoding: 'utf8' });
    expect(one.status, one.stderr).toBe(0);
    expect(two.status, two.stderr).toBe(0);
    expect(JSON.parse(two.stdout)).toEqual(JSON.parse(one.stdout));
    expect(Object.keys(JSON.parse(one.stdout).kinds)).toEqual(['spike', 'dropout', 'time_jump_forward']);
    const bad = spawnSync(process.execPath, [CLI, 'faults', '--kinds', 'gremlins'], { encoding: 'utf8' });
    expect(bad.status).toBe(2);
    expect(bad.stderr).toMatch(/--kinds: unknown fault kind 'gremlins'/);
  });

  it('wraps the MuJoCo episode through its feed hook', async () => {
    const monitors: InvariantMonitor[] = [];
    const faults = [fault('spike', 3, 0.002, 400), fault('dropout', 5, 0.1, 0, 'joint_states')];
    const r = await runEpisode({
      left: cell.left.config,
      right: cell.right.config,
      strategy: { name: 'alternating', k: 500 },
      seed: 7,
      duration_s: 8,
      options: { record: false, auto_reset: true },
      feed: (side, arm) => {
        const m = new InvariantMonitor(side, arm.config, 3);
        m.armReaction(3);
        monitors.push(m);
        return new FaultedArm(arm, side, faults, m);
      },
    });
    expect(monitors.map((m) => m.total)).toEqual([0, 0]);
    expect(monitors[0]!.firstHeldAt).toBeCloseTo(3, 2);
    expect(r.summary.holds.count).toBeGreaterThan(0);
  });
});
