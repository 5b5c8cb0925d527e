/**
 * RIHS01 type hashes in the bags we write (MCAP channel metadata `topic_type_hash`, sqlite3
 * `topics.type_description_hash` and `message_definitions.type_description_hash`, metadata.yaml
 * `type_description_hash`), laid out as rosbag2 writes them (the fixtures' FORMAT-NOTES).
 *
 * Reference values: std_msgs/msg/String from ros2/ros2cli ros2topic/test/test_cli.py;
 * geometry_msgs/msg/WrenchStamped from rosidl_generator_c's output as committed in hpmicro/hpm_sdk
 * (middleware/microros/kilted/include/geometry_msgs/geometry_msgs/msg/detail/wrench_stamped__description.c).
 * The messages are invented (tests of our own behaviour).
 */
import { McapIndexedReader } from '@mcap/core';
import { FileHandleReadable } from '@mcap/nodejs';
import Database from 'better-sqlite3';
import { readFileSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { join } from 'node:path';
import { beforeEach, describe, expect, it, vi } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { copyBag, createBagWriter, openBag } from '../../src/bag/index.js';
import * as log from '../../src/util/log.js';
import { resetLogging } from '../../src/util/log.js';
import { fixture, SKIP_FIXTURES, tempDir } from './helpers.js';

const STRING = 'RIHS01_df668c740482bbd48fb39d76a70dfd4bd59db1288021743503259e948f6b1a18';
const WRENCH_STAMPED = 'RIHS01_8dc3deaf06b2ab281f9f9a742a8961c328ca7cec16e3fd6586d3a5c83fa78f77';
const CDR_STRING = new Uint8Array([0, 1, 0, 0, 3, 0, 0, 0, 0x68, 0x69, 0, 0]);

beforeEach(() => resetLogging());

async function writeBag(dir: string, storage: 'mcap' | 'sqlite3'): Promise<void> {
  const w = await createBagWriter(dir, { storage, allowMissingDefinitions: true });
  await w.addTopic({ name: '/left/wrench', type: 'geometry_msgs/msg/WrenchStamped' });
  await w.addTopic({ name: '/note', type: 'std_msgs/String' });
  await w.addTopic({ name: '/note2', type: 'std_msgs/msg/String' });
  await w.addTopic({ name: '/mystery', type: 'other_pkg/msg/Unknown' });
  await w.write('/note', 1_000n, CDR_STRING);
  await w.close();
}

function yamlHashes(dir: string): Record<string, string> {
  const y = parseYaml(readFileSync(join(dir, 'metadata.yaml'), 'utf8')) as {
    rosbag2_bagfile_information: { version: number; topics_with_message_count: { topic_metadata: { name: string; type_description_hash: string } }[] };
  };
  expect(y.rosbag2_bagfile_information.version).toBe(5);
  return Object.fromEntries(y.rosbag2_bagfile_information.topics_with_message_count.map((t) => [t.topic_metadata.name, t.topic_metadata.type_description_hash]));
}

const expected = { '/left/wrench': WRENCH_STAMPED, '/note': STRING, '/note2': STRING, '/mystery': '' };

describe('type hashes written', () => {
  it('MCAP: channel metadata topic_type_hash and metadata.yaml; one warning for a type without a definition', async () => {
    const spy = vi.spyOn(log, 'warnOnce');
    const dir = join(tempDir(), 'mcap');
    await writeBag(dir, 'mcap');
    const noHash = spy.mock.calls.filter(([, p]) => p.code === 'bag.no_type_hash');
    expect(noHash).toHaveLength(1);
    expect(noHash[0]![1].message).toMatch(/other_pkg\/msg\/Unknown/);
    spy.mockRestore();
    const handle = await open(join(dir, 'mcap_0.mcap'), 'r');
    try {
      const r = await McapIndexedReader.Initialize({ readable: new FileHandleReadable(handle) });
      const channels = Object.fromEntries([...r.channelsById.values()].map((c) => [c.topic, c.metadata.get('topic_type_hash')]));
      expect(channels).toEqual(expected);
    } finally {
      await handle.close();
    }
    expect(yamlHashes(dir)).toEqual(expected);
    const bag = await openBag(dir);
    expect(Object.fromEntries(bag.topics().map((t) => [t.name, t.typeHash]))).toEqual(expected);
  });

  it('sqlite3: topics and message_definitions rows, metadata.yaml and the metadata table', async () => {
    const dir = join(tempDir(), 'db');
    await writeBag(dir, 'sqlite3');
    const db = new Database(join(dir, 'db_0.db3'), { readonly: true });
    try {
      const topics = db.prepare('SELECT name, type_description_hash AS h FROM topics').all() as { name: string; h: string }[];
      expect(Object.fromEntries(topics.map((t) => [t.name, t.h]))).toEqual(expected);
      const defs = db.prepare('SELECT topic_type AS t, type_description_hash AS h FROM message_definitions').all() as { t: string; h: string }[];
      expect(Object.fromEntries(defs.map((d) => [d.t, d.h]))).toEqual({
        'geometry_msgs/msg/WrenchStamped': WRENCH_STAMPED,
        'std_msgs/msg/String': STRING,
        'other_pkg/msg/Unknown': '',
      });
      const meta = (db.prepare('SELECT metadata FROM metadata').get() as { metadata: string }).metadata;
      expect(meta).toContain(`type_description_hash: "${STRING}"`);
    } finally {
      db.close();
    }
    expect(yamlHashes(dir)).toEqual(expected);
  });

  it('a copy keeps a recorded well-formed hash and computes one where the source has none or a malformed one', async () => {
    const src = join(tempDir(), 'src');
    await writeBag(src, 'sqlite3');
    const db = new Database(join(src, 'src_0.db3'));
    const recorded = `RIHS01_${'ab'.repeat(32)}`;
    db.prepare("UPDATE topics SET type_description_hash = ? WHERE name = '/note'").run(recorded);
    db.prepare("UPDATE topics SET type_description_hash = 'hash1' WHERE name = '/note2'").run();
    db.prepare("UPDATE topics SET type_description_hash = '' WHERE name = '/left/wrench'").run();
    db.close();
    const out = join(tempDir(), 'copy');
    await copyBag(await openBag(src), out);
    expect(yamlHashes(out)).toEqual({ ...expected, '/note': recorded });
  });
});

describe.skipIf(SKIP_FIXTURES)('copies of the real rosbag2 talker recordings (fixtures)', () => {
  it('mcap-talker: std_msgs/msg/String gets the published hash from the recorded definition', async () => {
    const out = join(tempDir(), 'talker-copy');
    await copyBag(await openBag(fixture('mcap-talker')), out);
    expect(yamlHashes(out)['/topic']).toBe(STRING);
  });

  it('sqlite3-talker: a placeholder definition (rcl_interfaces/msg/Log as `uint8 level`) that differs from the shipped one gives no hash, not a wrong one', async () => {
    const spy = vi.spyOn(log, 'warnOnce');
    const out = join(tempDir(), 'talker-db-copy');
    await copyBag(await openBag(fixture('sqlite3-talker')), out);
    const h = yamlHashes(out);
    expect(h['/topic']).toBe(STRING);
    expect(h['/rosout']).toBe('');
    expect(spy.mock.calls.some(([, p]) => p.code === 'bag.no_type_hash' && /rcl_interfaces\/msg\/Log: the recorded definition differs/.test(p.message))).toBe(true);
    spy.mockRestore();
  });
});
