/**
 * Replay: recorded inputs through the same arm step, on bag time. Bags here are demo bags of
 * our scenario written by the kinematic cell (invented data); the real ROS 2 recordings in
 * ../shared/fixtures/rosbag2 are used where a real on-disk layout matters.
 */
import { spawnSync } from 'node:child_process';
import { copyFileSync, mkdtempSync, readFileSync, rmSync, statSync, truncateSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { McapIndexedReader } from '@mcap/core';
import { loadDecompressHandlers } from '@mcap/support';
import { openBag } from '../../src/bag/index.js';
import { bagDecoders } from '../../src/bag/decode.js';
import { loadCell } from '../../src/params/config.js';
import { parseExpectations, evaluate } from '../../src/replay/expect.js';
import { replayPath } from '../../src/replay/replay.js';
import { writeDemoBag } from '../../src/sim/demo-bag.js';
import type { CellRun } from '../../src/sim/kinematic-cell.js';
import { fixture, SKIP_FIXTURES } from '../support/fixtures.js';

const root = resolve(__dirname, '../..');
const cli = join(root, 'dist/src/cli/main.js');
const cell = loadCell(join(root, 'config/demo_cell.yaml'));
const configs = { left: cell.left.config, right: cell.right.config };
let dir: string;
let bagDir: string;
let run: CellRun;

const run_ = (args: string[]) => spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8', cwd: root, env: { ...process.env, CI: '1' } });

beforeAll(async () => {
  spawnSync('npx', ['tsc', '-p', 'tsconfig.build.json'], { cwd: root, stdio: 'ignore' });
  dir = mkdtempSync(join(tmpdir(), 'antiphon-replay-'));
  bagDir = join(dir, 'demo');
  // 18 s: the transfer (about 14 s), then a 60 N knock on the left wrist at 16 s.
  ({ run } = await writeDemoBag(bagDir, { ...configs, occupied: [true, false], seed: 3, duration_s: 18, keepSpeeds: true, knock: { arm: 'left', t_s: 16, force_n: 60, duration_s: 0.01 } }));
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('replay reproduces the live pipeline', () => {
  it('gives bit for bit the recommended speeds the arms computed in closed loop', async () => {
    // Our own cross-check: the bag holds exactly what each arm's step was fed, on the same clock.
    const rec = await replayPath(bagDir, { arms: ['left', 'right'], configs });
    for (const arm of [0, 1] as const) {
      const mine = rec.arms[arm]!.recommendedSpeed;
      const live = arm === 0 ? run.speeds!.left : run.speeds!.right;
      expect(mine.length).toBe(live.length);
      let same = 0;
      for (let k = 0; k < live.length; k++) if (Object.is(mine[k], live[k])) same++;
      expect(same).toBe(live.length);
    }
  });

  it('replays one arm alone with the same result as with both', async () => {
    const both = await replayPath(bagDir, { arms: ['left', 'right'], configs });
    const right = await replayPath(bagDir, { arms: ['right'], configs });
    expect(Array.from(right.arms[0]!.recommendedSpeed)).toEqual(Array.from(both.arms[1]!.recommendedSpeed));
    expect(right.internalForce).toBeUndefined();
  });

  it('honours the time window', async () => {
    const rec = await replayPath(bagDir, { arms: ['left'], configs, startS: 2, endS: 4 });
    const a = rec.arms[0]!;
    expect(a.t[0]).toBeGreaterThanOrEqual(2);
    expect(a.t[a.samples - 1]).toBeLessThanOrEqual(4);
    expect(a.samples).toBe(2001); // inclusive bounds at 1 kHz
  });
});

describe('expectations', () => {
  const file = (body: string) => parseExpectations(`version: 1\nexpect:\n${body}`, 'e.yaml');

  it('pass and fail as they should on a known run', async () => {
    const rec = await replayPath(bagDir, { arms: ['left', 'right'], configs });
    const verdicts = evaluate(rec, file(`
  - name: knock
    hold: { arm: left, reason: impact, between_s: [15.9, 16.2] }
  - name: wrong window
    hold: { arm: left, reason: impact, between_s: [2.0, 3.0] }
  - name: right quiet
    no_hold: { arm: right }
  - name: left quiet
    no_hold: { arm: left }
  - name: learns
    belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 6.0 }
  - name: learns too early
    belief_above: { arm: right, zone: clamp_post, value: 0.9, by_s: 1.0 }
  - name: tray is free
    belief_above: { arm: left, zone: tray_drop, occupied: false, value: 0.6, by_s: 12.0 }
  - name: clock
    role_switches: { arm: both, period_s: 0.5, tolerance_s: 0.002 }
  - name: wrong clock
    role_switches: { arm: right, period_s: 0.3, tolerance_s: 0.002 }
  - name: squeeze
    peak_internal_force_below_n: { value: 20.0 }
  - name: squeeze too strict
    peak_internal_force_below_n: { value: 0.5 }
  - name: correction
    peak_correction_force_below_n: { arm: both, value: 40.0 }
`));
    const byName = Object.fromEntries(verdicts.map((v) => [v.name, v.pass]));
    expect(byName).toEqual({
      knock: true, 'wrong window': false, 'right quiet': true, 'left quiet': false, learns: true, 'learns too early': false,
      'tray is free': true, clock: true, 'wrong clock': false, squeeze: true, 'squeeze too strict': false, correction: true,
    });
  });

  it('refuses bad files with line and column, and suggests the kind meant', () => {
    const bad = (body: string) => {
      try {
        file(body);
      } catch (err) {
        return (err as { problems: { code: string; message: string; where?: { line?: number; column?: number }; hint?: string }[] }).problems;
      }
      throw new Error('accepted');
    };
    const p1 = bad(`  - no_hld: { arm: left }\n`);
    expect(p1[0]!.code).toBe('expect.unknown_kind');
    expect(p1[0]!.hint).toContain('no_hold');
    expect(p1[0]!.where).toMatchObject({ line: 3, column: 5 });
    const p2 = bad(`  - hold: { arm: middle, between_s: [1.0] }\n`);
    expect(p2.map((p) => p.message).join('\n')).toMatch(/arm.*left, right, both/);
    expect(p2.map((p) => p.message).join('\n')).toMatch(/between_s/);
    expect(p2[0]!.where?.line).toBe(3);
    const p3 = bad(`  - peak_internal_force_below_n: { value: 3.0, unit: kN }\n`);
    expect(p3[0]!.message).toContain("unknown key 'unit'");
    expect(() => parseExpectations('version: 2\nexpect: []\n', 'e.yaml')).toThrow(/version/);
  });
});

describe('replay command', () => {
  it('writes a deterministic output bag, summary and report; exit 1 when an expectation fails', () => {
    const exp = join(dir, 'exp.yaml');
    writeFileSync(exp, 'version: 1\nexpect:\n  - hold: { arm: left, reason: impact, between_s: [15.9, 16.2] }\n  - no_hold: { arm: right }\n');
    const a = run_(['replay', bagDir, '--params', 'config/demo_cell.yaml', '--out', join(dir, 'a'), '--expect', exp]);
    expect(a.status, a.stderr).toBe(0);
    const b = run_(['replay', bagDir, '--params', 'config/demo_cell.yaml', '--out', join(dir, 'b'), '--expect', exp, '--json']);
    expect(b.status, b.stderr).toBe(0);
    expect(JSON.parse(b.stdout).ok).toBe(true);
    for (const f of ['bag/bag_0.mcap', 'bag/metadata.yaml', 'summary.json', 'report.html']) {
      expect(readFileSync(join(dir, 'a', f)).equals(readFileSync(join(dir, 'b', f))), f).toBe(true);
    }
    writeFileSync(exp, 'version: 1\nexpect:\n  - no_hold: { arm: left }\n');
    const c = run_(['replay', bagDir, '--expect', exp]);
    expect(c.status).toBe(1);
    expect(c.stdout).toMatch(/FAIL/);
  });

  it('writes every output under the live topic names, readable by the standard MCAP reader', async () => {
    const out = join(dir, 'a', 'bag');
    const bag = await openBag(out);
    const topics = new Map(bag.topics().map((t) => [t.name, t]));
    for (const arm of ['left', 'right']) {
      expect(topics.get(`/${arm}/antiphon/recommended_twist`)?.type).toBe('geometry_msgs/msg/TwistStamped');
      expect(topics.get(`/${arm}/antiphon/recommended_twist`)?.count).toBe(18000);
      expect(topics.get(`/${arm}/antiphon/correction_wrench`)?.count).toBe(18000);
      expect(topics.get(`/${arm}/antiphon/role`)?.type).toBe('antiphon/msg/RoleState');
      expect(topics.get(`/${arm}/antiphon/watchdog`)?.type).toBe('antiphon/msg/WatchdogStatus');
      expect(topics.get(`/${arm}/antiphon/belief`)?.type).toBe('antiphon/msg/Belief');
      expect(topics.get(`/${arm}/wrench`)?.count).toBe(18000); // inputs passed through
    }
    // Our own messages decode from the definitions written into the bag.
    const dec = bagDecoders(bag, { builtin: false });
    let holdSeen = false;
    for (const m of bag.messages({ topics: ['/left/antiphon/watchdog'] })) {
      const w = dec.decode(m.type, m.data, { topic: m.topic }) as { held: boolean; trips: { check: string }[] };
      if (w.held) {
        holdSeen = true;
        expect(w.trips[0]!.check).toBe('impact');
      }
    }
    expect(holdSeen).toBe(true);
    bag.close();
    // The standard reader (MCAP TypeScript library): ros2 profile, ros2msg schemas, cdr messages.
    const bytes = readFileSync(join(out, 'bag_0.mcap'));
    const reader = await McapIndexedReader.Initialize({
      readable: { size: async () => BigInt(bytes.length), read: async (o: bigint, n: bigint) => bytes.subarray(Number(o), Number(o + n)) },
      decompressHandlers: await loadDecompressHandlers(),
    });
    expect(reader.header.profile).toBe('ros2');
    for (const s of reader.schemasById.values()) expect(s.encoding).toBe('ros2msg');
    for (const c of reader.channelsById.values()) expect(c.messageEncoding).toBe('cdr');
  });

  it('refuses bad input with exit 2, naming what and where', () => {
    const missing = run_(['replay', bagDir, '--remap', '/left/wrench:=/left/nothing']);
    expect(missing.status).toBe(2);
    expect(missing.stderr).toMatch(/\/left\/nothing/);
    const wrongType = run_(['replay', bagDir, '--arm', 'left', '--remap', '/left/wrench:=/left/tool_pose']);
    expect(wrongType.status).toBe(2);
    expect(wrongType.stderr).toMatch(/PoseStamped.*WrenchStamped|WrenchStamped.*PoseStamped/);
    expect(run_(['replay', bagDir, '--remap', 'nonsense']).status).toBe(2);
    expect(run_(['replay', bagDir, '--arm', 'middle']).status).toBe(2);
    expect(run_(['replay', bagDir, '--start', '5', '--end', '2']).status).toBe(2);
    expect(run_(['replay', join(dir, 'no-such-bag')]).status).toBe(2);
    const exists = run_(['replay', bagDir, '--out', join(dir, 'a')]);
    expect(exists.status).toBe(2);
    expect(exists.stderr).toMatch(/--overwrite/);
  });

  it.skipIf(SKIP_FIXTURES)('on a real ROS 2 recording without arm topics: a clear error naming the missing topic', () => {
    // Source: rosbag2 test resources recorded by ROS 2 (talker), in ../shared/fixtures/rosbag2.
    // Missing fixtures: skipped locally with a message, a failure under CI (test/support/fixtures.ts).
    const r = run_(['replay', fixture('mcap-talker')]);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/\/left\/wrench/);
    expect(r.stderr).toMatch(/\/topic/); // lists what the bag has
  });

  it('a truncated bag replays its intact chunks with a warning, and no half-written output', () => {
    const cut = join(dir, 'cut');
    spawnSync('mkdir', ['-p', cut]);
    copyFileSync(join(bagDir, 'demo_0.mcap'), join(cut, 'demo_0.mcap'));
    truncateSync(join(cut, 'demo_0.mcap'), Math.floor(statSync(join(cut, 'demo_0.mcap')).size / 2));
    const r = run_(['replay', join(cut, 'demo_0.mcap'), '--arm', 'left', '--json']);
    expect(r.status, r.stderr).toBe(0);
    const s = JSON.parse(r.stdout);
    expect(s.arms[0].samples).toBeGreaterThan(1000);
    expect(s.arms[0].samples).toBeLessThan(18000);
    expect(s.warnings.length).toBeGreaterThan(0);
  });
});
