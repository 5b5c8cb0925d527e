/**
 * Each warning reaches the user once, in one format: pino JSON lines on stderr when it is not a
 * terminal or ANTIPHON_LOG_FORMAT=json, readable text on a terminal (or ANTIPHON_LOG_FORMAT=text);
 * never again from a later layer (replay, the command's own output). Also: replay reads only the
 * topics it needs, whatever the types of the others, and takes either type spelling. Bags are
 * demo bags of our own scenario (invented data), cut to damage them.
 */
import { spawnSync } from 'node:child_process';
import { copyFileSync, existsSync, readFileSync, statSync, truncateSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { createBagWriter, openBag } from '../../src/bag/index.js';
import { loadCell } from '../../src/params/config.js';
import { replayBag } from '../../src/replay/replay.js';
import { writeDemoBag } from '../../src/sim/demo-bag.js';
import { tempDir } from './helpers.js';

const root = resolve(__dirname, '../..');
const cli = join(root, 'dist/src/cli/main.js');
const cell = loadCell(join(root, 'config/demo_cell.yaml'));
const configs = { left: cell.left.config, right: cell.right.config };
let demo: string;
let cut: string;

const env = (extra: Record<string, string> = {}): NodeJS.ProcessEnv => {
  const e: NodeJS.ProcessEnv = { ...process.env, CI: '1', ...extra };
  if (!('ANTIPHON_LOG_FORMAT' in extra)) delete e['ANTIPHON_LOG_FORMAT'];
  return e;
};
const antiphon = (args: string[], extra: Record<string, string> = {}) => spawnSync(process.execPath, [cli, ...args], { cwd: root, encoding: 'utf8', env: env(extra) });
const count = (hay: string, needle: string): number => hay.split(needle).length - 1;

beforeAll(async () => {
  // `npm test` builds first; build here only when run alone on a fresh clone.
  if (!existsSync(cli)) spawnSync('npx', ['tsc', '-p', 'tsconfig.build.json'], { cwd: root, stdio: 'ignore' });
  demo = join(tempDir(), 'demo');
  await writeDemoBag(demo, { ...configs, occupied: [true, false], seed: 3, duration_s: 4 });
  cut = join(tempDir(), 'cut.mcap');
  copyFileSync(join(demo, 'demo_0.mcap'), cut);
  truncateSync(cut, Math.floor(statSync(cut).size / 2));
}, 120_000);

// Source: the damaged file itself (a cut MCAP has no footer: "no usable summary", then the cut).
const NO_SUMMARY = 'no usable summary';
const CUT = 'file is cut at byte';

describe('warnings once', () => {
  it('replay of a damaged MCAP: each warning once, as JSON lines on a non-terminal stderr, none on stdout', () => {
    const r = antiphon(['replay', cut, '--arm', 'left']);
    expect(r.status, r.stderr).toBe(0);
    expect(count(r.stderr, NO_SUMMARY)).toBe(1);
    expect(count(r.stderr, CUT)).toBe(1);
    expect(count(r.stdout, NO_SUMMARY) + count(r.stdout, CUT)).toBe(0);
    expect(r.stdout).toContain('2 warnings (on stderr');
    const lines = r.stderr.trim().split('\n');
    for (const l of lines) expect(() => JSON.parse(l), l).not.toThrow();
    // Besides the note that no --params was given (info, not a warning), each warning once.
    expect(lines.map((l) => JSON.parse(l)).filter((l) => l.code !== 'replay.default_params').map((l) => l.code)).toEqual(['bag.mcap_no_summary', 'bag.mcap_truncated']);
    // --json keeps them in the summary, still given once on stderr.
    const j = antiphon(['replay', cut, '--arm', 'left', '--json']);
    expect(JSON.parse(j.stdout).warnings.map((w: { code: string }) => w.code)).toEqual(['bag.mcap_no_summary', 'bag.mcap_truncated']);
    expect(count(j.stderr, CUT)).toBe(1);
  });

  it('bag info and bag dump: once each; ANTIPHON_LOG_FORMAT=text gives readable lines, json gives JSON', () => {
    const info = antiphon(['bag', 'info', cut]);
    expect(info.status).toBe(1); // some recorded messages cannot be read: exit 1 (issue 9)
    expect(count(info.stderr + info.stdout, CUT)).toBe(1);
    const dump = antiphon(['bag', 'dump', cut, '--limit', '1']);
    expect(count(dump.stderr + dump.stdout, CUT)).toBe(1);
    const text = antiphon(['bag', 'info', cut], { ANTIPHON_LOG_FORMAT: 'text' });
    expect(count(text.stderr, CUT)).toBe(1);
    expect(text.stderr).not.toContain('{"level"');
    expect(text.stderr).toMatch(/WARN.*bag: .*cut\.mcap, byte \d+: file is cut at byte/);
    const js = antiphon(['bag', 'info', cut], { ANTIPHON_LOG_FORMAT: 'json' });
    expect(js.stderr.trim().split('\n').map((l) => JSON.parse(l).code).filter((c) => c !== 'replay.default_params')).toEqual(['bag.mcap_no_summary', 'bag.mcap_truncated']);
  });

  it.skipIf(spawnSync('script', ['--version']).status !== 0)('on a terminal: readable text, once, not JSON (util-linux script as the terminal)', () => {
    const cmd = [process.execPath, cli, 'bag', 'info', cut].map((a) => `'${a}'`).join(' ');
    const r = spawnSync('script', ['-qec', cmd, '/dev/null'], { cwd: root, encoding: 'utf8', env: env() });
    expect(r.status).toBe(1); // a cut file: exit 1
    expect(count(r.stdout, CUT)).toBe(1);
    expect(r.stdout).not.toContain('{"level"');
  });
});

describe('replay reads only the topics it needs', () => {
  it('topics of unknown or broken types are ignored; inputs spelt pkg/Type and remapped work', async () => {
    const src = await openBag(demo);
    const dir = join(tempDir(), 'mixed');
    const w = await createBagWriter(dir, { allowMissingDefinitions: true });
    const ids = new Map<string, number>();
    for (const t of src.topics()) {
      // The left wrench under another name, with the old type spelling.
      const name = t.name === '/left/wrench' ? '/ft_left/wrench' : t.name;
      const type = t.name === '/left/wrench' ? 'geometry_msgs/WrenchStamped' : t.type;
      ids.set(t.name, await w.addTopic({ name, type, offeredQos: t.offeredQosText }));
    }
    const odd = await w.addTopic({ name: '/camera/odd', type: 'vendor_msgs/msg/Odd' });
    const broken = await w.addTopic({ name: '/broken', type: 'vendor_msgs/msg/Broken', definition: 'this does not parse' });
    for (const m of src.messages()) await w.write(ids.get(m.topic)!, m.logTimeNs, m.data);
    await w.write(odd, src.startNs, new Uint8Array([0, 1, 0, 0, 9]));
    await w.write(broken, src.startNs, new Uint8Array([0, 1, 0, 0, 9]));
    await w.close();
    const mixed = await openBag(dir);
    try {
      const ref = await replayBag(src, { arms: ['left', 'right'], configs });
      const got = await replayBag(mixed, { arms: ['left', 'right'], configs, remap: new Map([['/left/wrench', '/ft_left/wrench']]) });
      expect(got.warnings).toEqual([]);
      expect(got.arms[0]!.topics.wrench).toBe('/ft_left/wrench');
      expect(Array.from(got.arms[0]!.recommendedSpeed)).toEqual(Array.from(ref.arms[0]!.recommendedSpeed));
      expect(Array.from(got.arms[1]!.recommendedSpeed)).toEqual(Array.from(ref.arms[1]!.recommendedSpeed));
    } finally {
      mixed.close();
      src.close();
    }
    expect(readFileSync(join(dir, 'metadata.yaml'), 'utf8')).toContain('vendor_msgs/msg/Odd');
  });
});
