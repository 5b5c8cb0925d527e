/**
 * `simulate --out --storage sqlite3`: the episode's bag as a rosbag2 sqlite3 bag, holding the same
 * topics, definitions and messages as the MCAP one of the same seed (our own simulated scenario).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { openBag, type Bag } from '../../src/bag/index.js';
import { tempDir } from './helpers.js';

const root = resolve(__dirname, '../..');
const cli = join(root, 'dist/src/cli/main.js');
const sim = (out: string, storage: string) =>
  spawnSync(process.execPath, [cli, 'simulate', '--params', 'config/demo_cell.yaml', '--seed', '7', '--duration', '1', '--out', out, '--storage', storage, '--json'], { cwd: root, encoding: 'utf8', env: { ...process.env, CI: '1' } });

beforeAll(() => {
  // `npm test` builds first; build here only when run alone on a fresh clone.
  if (!existsSync(cli)) spawnSync('npx', ['tsc', '-p', 'tsconfig.build.json'], { cwd: root, stdio: 'ignore' });
}, 120_000);

const contents = (bag: Bag) => ({
  topics: bag.topics().map((t) => [t.name, t.type, t.count, t.offeredQosText]),
  definitions: [...bag.definitions()].map(([k, d]) => [k, d.encoding, d.text]).sort(),
  messages: [...bag.messages()].map((m) => [m.topic, m.logTimeNs.toString(), Buffer.from(m.data).toString('base64')]),
});

describe('simulate --storage', () => {
  it('sqlite3 holds what the MCAP bag of the same seed holds; the replay check still passes', async () => {
    const base = tempDir();
    const a = sim(join(base, 'mcap'), 'mcap');
    const b = sim(join(base, 'db3'), 'sqlite3');
    expect(a.status, a.stderr).toBe(0);
    expect(b.status, b.stderr).toBe(0);
    expect(JSON.parse(b.stdout).bag_replay_matches_closed_loop).toBe(true);
    expect(readdirSync(join(base, 'db3', 'bag')).sort()).toEqual(['bag_0.db3', 'metadata.yaml']);
    const x = await openBag(join(base, 'mcap', 'bag'));
    const y = await openBag(join(base, 'db3', 'bag'));
    try {
      expect(y.storage).toBe('sqlite3');
      expect(contents(y)).toEqual(contents(x));
    } finally {
      x.close();
      y.close();
    }
    const bad = sim(join(base, 'bad'), 'ros1');
    expect(bad.status).toBe(2);
    expect(bad.stderr).toContain('--storage must be mcap or sqlite3');
  });
});
