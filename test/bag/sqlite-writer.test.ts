/**
 * sqlite3 output bags (src/bag/sqlite-writer.ts): `replay --out --storage sqlite3` read back
 * equal to the MCAP output, checked by an outside reader (Python's own sqlite3 module, Debian
 * python3), laid out like a real rosbag2 recording (the sqlite3 cdr_test fixture, written by
 * rosbag2), written under a temporary name. The input bags are demo bags of our own scenario
 * (invented data).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { bagDecoders, copyBag, createBagWriter, openBag, toJsonValue, type Bag } from '../../src/bag/index.js';
import { register as registerReplay } from '../../src/cli/replay.js';
import { loadCell } from '../../src/params/config.js';
import { writeDemoBag } from '../../src/sim/demo-bag.js';
import { InputError } from '../../src/util/errors.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered } from '../support/run-command.js';
import { FIXTURES, fixture, tempDir } from './helpers.js';

const root = join(__dirname, '../..');
let input: string;
let outMcap: string;
let outDb: string;

beforeEach(() => resetLogging());

beforeAll(async () => {
  const cell = loadCell(join(root, 'config/demo_cell.yaml'));
  input = join(tempDir(), 'demo');
  await writeDemoBag(input, { left: cell.left.config, right: cell.right.config, occupied: [true, false], seed: 5, duration_s: 3 });
  const base = tempDir();
  outMcap = join(base, 'as-mcap');
  outDb = join(base, 'as-sqlite3');
  const a = await runRegistered(registerReplay, 'replay', [input, '--out', outMcap]);
  expect(a.code, a.stderr).toBe(0);
  const b = await runRegistered(registerReplay, 'replay', [input, '--out', outDb, '--storage', 'sqlite3']);
  expect(b.code, b.stderr).toBe(0);
}, 120_000);

/** Everything a reader sees in a bag: topics, definitions, every message's topic, time and bytes. */
function contents(bag: Bag): unknown {
  return {
    topics: bag.topics().map((t) => ({ name: t.name, type: t.type, fmt: t.serializationFormat, count: t.count, qos: t.offeredQosText })),
    definitions: [...bag.definitions()].map(([k, d]) => [k, d.encoding, d.text]).sort(),
    messages: [...bag.messages()].map((m) => [m.topic, m.logTimeNs.toString(), Buffer.from(m.data).toString('base64')]),
    start: bag.startNs,
    end: bag.endNs,
    count: bag.messageCount,
  };
}

describe('sqlite3 output of replay', () => {
  it('round trip: MCAP -> replay -> sqlite3 -> read equals MCAP -> replay -> MCAP -> read', async () => {
    expect(readdirSync(join(outDb, 'bag')).sort()).toEqual(['bag_0.db3', 'metadata.yaml']);
    const a = await openBag(join(outMcap, 'bag'));
    const b = await openBag(join(outDb, 'bag'));
    try {
      expect(b.storage).toBe('sqlite3');
      expect(b.messageCount).toBeGreaterThan(10_000);
      expect(contents(b)).toEqual(contents(a));
      // Decoded through the definitions each carries (no shipped ones): the same values.
      const da = bagDecoders(a, { builtin: false, amentPrefixPath: '' });
      const db = bagDecoders(b, { builtin: false, amentPrefixPath: '' });
      const pick = (bag: Bag, d: typeof da) => [...bag.messages({ topics: ['/left/antiphon/belief', '/right/antiphon/watchdog', '/left/zone_view'] })].map((m) => JSON.stringify(toJsonValue(d.decode(m.type, m.data))));
      expect(pick(b, db)).toEqual(pick(a, da));
      // summary.json does not depend on the storage.
      expect(readFileSync(join(outDb, 'summary.json'), 'utf8')).toBe(readFileSync(join(outMcap, 'summary.json'), 'utf8'));
    } finally {
      a.close();
      b.close();
    }
  });

  it("Python's sqlite3 module counts the messages per topic and reads the definitions, as metadata.yaml says", () => {
    const py = spawnSync('/usr/bin/python3', ['-c', `
import json, sqlite3, sys
c = sqlite3.connect('file:' + sys.argv[1] + '?mode=ro', uri=True)
counts = dict(c.execute('SELECT t.name, COUNT(m.id) FROM topics t LEFT JOIN messages m ON m.topic_id = t.id GROUP BY t.id').fetchall())
types = dict(c.execute('SELECT name, type FROM topics').fetchall())
qos = dict(c.execute('SELECT name, offered_qos_profiles FROM topics').fetchall())
defs = {r[0]: [r[1], r[2]] for r in c.execute('SELECT topic_type, encoding, encoded_message_definition FROM message_definitions')}
version = c.execute('SELECT schema_version FROM schema').fetchone()[0]
integrity = c.execute('PRAGMA integrity_check').fetchone()[0]
journal = c.execute('PRAGMA journal_mode').fetchone()[0]
print(json.dumps({'counts': counts, 'types': types, 'qos': qos, 'defs': defs, 'version': version, 'integrity': integrity, 'journal': journal}))
`, join(outDb, 'bag', 'bag_0.db3')], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    const got = JSON.parse(py.stdout) as { counts: Record<string, number>; types: Record<string, string>; qos: Record<string, string>; defs: Record<string, [string, string]>; version: number; integrity: string; journal: string };
    // Source: the metadata.yaml beside it, read with the yaml package (not our reader).
    const meta = parseYaml(readFileSync(join(outDb, 'bag', 'metadata.yaml'), 'utf8')).rosbag2_bagfile_information;
    expect(meta.storage_identifier).toBe('sqlite3');
    expect(meta.relative_file_paths).toEqual(['bag_0.db3']);
    const metaCounts = Object.fromEntries(meta.topics_with_message_count.map((t: { topic_metadata: { name: string }; message_count: number }) => [t.topic_metadata.name, t.message_count]));
    expect(got.counts).toEqual(metaCounts);
    expect(Object.values(got.counts).reduce((x, y) => x + y, 0)).toBe(meta.message_count);
    for (const t of meta.topics_with_message_count) {
      expect(got.types[t.topic_metadata.name]).toBe(t.topic_metadata.type);
      expect(got.qos[t.topic_metadata.name]).toBe(t.topic_metadata.offered_qos_profiles);
      const d = got.defs[t.topic_metadata.type]!;
      expect(d[0]).toBe('ros2msg');
      expect(d[1].length).toBeGreaterThan(0);
    }
    expect(got.defs['antiphon/msg/WatchdogStatus']![1]).toContain('MSG: antiphon/WatchdogTrip');
    expect(got.version).toBe(4);
    expect(got.integrity).toBe('ok');
    // A plain rollback-journal database (no -wal / -shm files needed to read it).
    expect(got.journal).toBe('delete');
    // The sensor inputs were recorded best effort (QoS passed through from the input bag).
    expect(got.qos['/left/wrench']).toContain('reliability: 2');
  });

  it('has the tables and columns of a sqlite3 bag rosbag2 wrote (the cdr_test fixture)', async () => {
    if (!FIXTURES) {
      if (process.env['CI']) throw new Error('fixtures missing');
      return;
    }
    const Database = (await import('better-sqlite3')).default;
    const layout = (file: string) => {
      const db = new Database(file, { readonly: true });
      try {
        const tables = (db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").all() as { name: string }[]).map((r) => r.name);
        return Object.fromEntries(tables.map((t) => [t, (db.prepare(`PRAGMA table_info(${t})`).all() as { name: string; type: string; notnull: number; pk: number }[]).map((c) => [c.name, c.type, c.notnull, c.pk])]));
      } finally {
        db.close();
      }
    };
    // Source: the rosbag2-written fixture (its schema table says version 4).
    expect(layout(join(outDb, 'bag', 'bag_0.db3'))).toEqual(layout(fixture('sqlite3-cdr_test/cdr_test_0.db3')));
  });

  it('replay --storage refuses other values; nothing is written', async () => {
    const out = join(tempDir(), 'nope');
    const r = await runRegistered(registerReplay, 'replay', [input, '--out', out, '--storage', 'rosbag']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain("option --storage: --storage must be mcap or sqlite3, got 'rosbag'");
    expect(existsSync(out)).toBe(false);
  });
});

describe('sqlite3 writer', () => {
  it('copies the real recordings into sqlite3 and reads them back equal (types, QoS, definitions, bytes)', async () => {
    if (!FIXTURES) {
      if (process.env['CI']) throw new Error('fixtures missing');
      return;
    }
    for (const name of ['mcap-cdr_test', 'mcap-talker']) {
      const src = await openBag(fixture(name));
      const dir = join(tempDir(), name);
      try {
        const w = await copyBag(src, dir, { storage: 'sqlite3' });
        expect(w.storage).toBe('sqlite3');
        const back = await openBag(dir);
        try {
          const c = contents(back) as { definitions: unknown };
          const s = contents(src) as { definitions: unknown };
          expect({ ...c, definitions: undefined }).toEqual({ ...s, definitions: undefined });
          const dec = bagDecoders(back, { builtin: false, amentPrefixPath: '' });
          const ref = bagDecoders(src, { builtin: false, amentPrefixPath: '' });
          const msgs = [...src.messages()].filter((m) => ref.has(m.type) && ref.origin(m.type).source === 'bag');
          expect(msgs.length).toBeGreaterThan(0);
          expect([...back.messages()].filter((m) => dec.origin(m.type).source === 'bag').map((m) => JSON.stringify(toJsonValue(dec.decode(m.type, m.data))))).toEqual(
            msgs.map((m) => JSON.stringify(toJsonValue(ref.decode(m.type, m.data)))),
          );
        } finally {
          back.close();
        }
      } finally {
        src.close();
      }
    }
  });

  it('writes under a temporary name, renames when complete, removes it on abort, refuses an existing bag', async () => {
    const dir = join(tempDir(), 'tmpname');
    const w = await createBagWriter(dir, { storage: 'sqlite3' });
    const t = await w.addTopic({ name: '/w', type: 'geometry_msgs/WrenchStamped' });
    await w.write(t, 5n, new Uint8Array([0, 1, 0, 0, 1, 2, 3, 4]));
    expect(readdirSync(dir)).toEqual(['tmpname_0.db3.partial']);
    const done = await w.close();
    expect(readdirSync(dir).sort()).toEqual(['metadata.yaml', 'tmpname_0.db3']);
    expect(done).toMatchObject({ storage: 'sqlite3', messageCount: 1, startNs: 5n, endNs: 5n });
    await expect(createBagWriter(dir, { storage: 'sqlite3' })).rejects.toBeInstanceOf(InputError);
    const other = join(tempDir(), 'aborted');
    const a = await createBagWriter(other, { storage: 'sqlite3' });
    await a.addTopic({ name: '/w', type: 'geometry_msgs/msg/WrenchStamped' });
    a.abort();
    expect(readdirSync(other)).toEqual([]);
    const bag = await openBag(dir);
    try {
      expect(bag.topics()[0]).toMatchObject({ name: '/w', type: 'geometry_msgs/msg/WrenchStamped', count: 1 });
    } finally {
      bag.close();
    }
  });
});
