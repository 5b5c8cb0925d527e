/**
 * The MCAP writer: round trips of the ROS 2 fixtures, determinism, the ros2 profile layout
 * (checked with @mcap/core's reference reader), metadata.yaml, temporary names.
 */
import { McapIndexedReader } from '@mcap/core';
import { parse as parseMsg } from '@foxglove/rosmsg';
import { MessageReader, MessageWriter } from '@foxglove/rosmsg2-serialization';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parse as parseYaml } from 'yaml';
import {
  assembleDefinition,
  builtinDefinition,
  builtinTypes,
  copyBag,
  createBagWriter,
  encodeWrenchStamped,
  openBag,
  parseDefinition,
  WRITER_LIBRARY,
  type Bag,
} from '../../src/bag/index.js';
import { InputError } from '../../src/util/errors.js';
import { SKIP_FIXTURES, fixture, T0, tempDir, writeCellBag, mcapSummary } from './helpers.js';

const snapshot = (bag: Bag) => ({
  topics: bag.topics().map((t) => ({ name: t.name, type: t.type, count: t.count, qos: t.offeredQosText, fmt: t.serializationFormat })),
  messages: [...bag.messages()].map((m) => ({ topic: m.topic, type: m.type, t: m.logTimeNs, data: Buffer.from(m.data).toString('hex') })),
});


describe.skipIf(SKIP_FIXTURES)('round trip of the ROS 2 fixtures', () => {
  for (const name of ['mcap-talker', 'sqlite3-talker', 'mcap-cdr_test', 'sqlite3-cdr_test']) {
    it(`${name}: read, write with our writer, read back equal (topics, types, times, bytes)`, async () => {
      const src = await openBag(fixture(name));
      const out = join(tempDir(), `${name}-copy`);
      try {
        const written = await copyBag(src, out);
        const back = await openBag(out);
        try {
          // Source: the fixture itself (rosbag2 test resources), as read by our reader.
          expect(snapshot(back)).toEqual(snapshot(src));
          expect(back.storage).toBe('mcap');
          expect(written.messageCount).toBe(src.messageCount);
          for (const t of src.topics()) expect(back.definition(t.type)?.text).toBe(src.definition(t.type)?.text);
          expect(back.warnings).toEqual([]);
        } finally {
          back.close();
        }
      } finally {
        src.close();
      }
    });
  }

  it('the same inputs give byte-identical files', async () => {
    const src = await openBag(fixture('mcap-talker'));
    const a = join(tempDir(), 'a', 'bag');
    const b = join(tempDir(), 'b', 'bag');
    try {
      await copyBag(src, a);
      await copyBag(src, b);
    } finally {
      src.close();
    }
    // Source: common practice (reproducible outputs); no wall-clock, fixed library string.
    expect(readFileSync(join(a, 'bag_0.mcap')).equals(readFileSync(join(b, 'bag_0.mcap')))).toBe(true);
    expect(readFileSync(join(a, 'metadata.yaml'), 'utf8')).toBe(readFileSync(join(b, 'metadata.yaml'), 'utf8'));
  });
});

describe('MCAP writer (ros2 profile)', () => {
  it('writes the ros2 profile: header, schemas ros2msg, channels cdr with QoS, zstd chunks', async () => {
    const dir = join(tempDir(), 'cell');
    const written = await writeCellBag(dir, 0.05, { chunkSize: 2048 });
    expect(written.compression).toBe('zstd');
    // Source: MCAP specification, read with @mcap/core's McapIndexedReader (reference reader).
    const r = await mcapSummary(written.file);
    expect(r.header).toEqual({ type: 'Header', profile: 'ros2', library: WRITER_LIBRARY });
    expect(r.chunkIndexes.length).toBeGreaterThan(1);
    expect(r.chunkIndexes.every((c) => c.compression === 'zstd' && c.compressedSize < c.uncompressedSize)).toBe(true);
    const schemas = [...r.schemasById.values()];
    expect(schemas.map((s) => s.name).sort()).toEqual(['geometry_msgs/msg/PoseStamped', 'geometry_msgs/msg/TwistStamped', 'geometry_msgs/msg/WrenchStamped', 'sensor_msgs/msg/JointState']);
    expect(schemas.every((s) => s.encoding === 'ros2msg')).toBe(true);
    for (const c of r.channelsById.values()) {
      expect(c.messageEncoding).toBe('cdr');
      expect(c.metadata.has('offered_qos_profiles')).toBe(true);
    }
    expect(r.statistics?.messageCount).toBe(50n + 25n + 5n + 5n);
    // Source: FORMAT-NOTES.md (definition text: root, then per dependency 80 '=' and MSG: pkg/Type).
    const wrench = new TextDecoder().decode(schemas.find((s) => s.name === 'geometry_msgs/msg/WrenchStamped')!.data);
    const sep = '\n' + '='.repeat(80) + '\n';
    expect(wrench.split(sep).map((b) => b.split('\n')[0])).toEqual([
      'std_msgs/Header header',
      'MSG: std_msgs/Header',
      'MSG: builtin_interfaces/Time',
      'MSG: geometry_msgs/Wrench',
      'MSG: geometry_msgs/Vector3',
    ]);
    // The reference .msg parser reads it.
    expect(parseMsg(wrench, { ros2: true }).map((d) => d.name)).toEqual([undefined, 'std_msgs/Header', 'builtin_interfaces/Time', 'geometry_msgs/Wrench', 'geometry_msgs/Vector3']);
  });

  it('metadata.yaml is rosbag2 version 5 with counts, times and the file list', async () => {
    const dir = join(tempDir(), 'meta');
    const w = await createBagWriter(dir);
    const a = await w.addTopic({ name: '/a', type: 'std_msgs/String', offeredQos: [{ history: 1, depth: 10, reliability: 1, durability: 2 }] });
    await w.addTopic({ name: '/silent', type: 'geometry_msgs/msg/WrenchStamped' });
    const str = new MessageWriter(parseDefinition('std_msgs/msg/String', builtinDefinition('std_msgs/msg/String')!));
    await w.write(a, 1_000n, str.writeMessage({ data: 'x' }));
    await w.write(a, 3_500n, str.writeMessage({ data: 'y' }));
    await w.close();
    // Source: FORMAT-NOTES.md (metadata.yaml fields per version).
    const m = (parseYaml(readFileSync(join(dir, 'metadata.yaml'), 'utf8'), { intAsBigInt: true }) as Record<string, Record<string, unknown>>)['rosbag2_bagfile_information']!;
    expect(m['version']).toBe(5n);
    expect(m['storage_identifier']).toBe('mcap');
    expect(m['message_count']).toBe(2n);
    expect(m['starting_time']).toEqual({ nanoseconds_since_epoch: 1000n });
    expect(m['duration']).toEqual({ nanoseconds: 2500n });
    expect(m['relative_file_paths']).toEqual(['meta_0.mcap']);
    expect(m['files']).toEqual([{ path: 'meta_0.mcap', starting_time: { nanoseconds_since_epoch: 1000n }, duration: { nanoseconds: 2500n }, message_count: 2n }]);
    const topics = m['topics_with_message_count'] as { topic_metadata: Record<string, string>; message_count: bigint }[];
    expect(topics.map((t) => [t.topic_metadata['name'], t.topic_metadata['type'], t.message_count])).toEqual([
      ['/a', 'std_msgs/msg/String', 2n],
      ['/silent', 'geometry_msgs/msg/WrenchStamped', 0n],
    ]);
    expect(parseYaml(topics[0]!.topic_metadata['offered_qos_profiles']!)).toEqual([{ history: 1, depth: 10, reliability: 1, durability: 2 }]);
    const bag = await openBag(dir);
    expect(bag.topics().map((t) => [t.name, t.count])).toEqual([['/a', 2], ['/silent', 0]]);
    expect(bag.topics()[0]!.offeredQos).toEqual([{ history: 1, depth: 10, reliability: 1, durability: 2 }]);
    bag.close();
  });

  it('writes under a temporary name and renames when complete; refuses to overwrite a bag', async () => {
    const dir = join(tempDir(), 'tmpname');
    const w = await createBagWriter(dir, { compression: 'none' });
    const t = await w.addTopic({ name: '/w', type: 'geometry_msgs/msg/WrenchStamped' });
    await w.write(t, T0, encodeWrenchStamped([1, 2, 3, 4, 5, 6, 7, 8], 0, 'f'));
    // Source: common practice (atomic publication by rename).
    expect(readdirSync(dir)).toEqual(['tmpname_0.mcap.partial']);
    await w.close();
    expect(readdirSync(dir).sort()).toEqual(['metadata.yaml', 'tmpname_0.mcap']);
    await expect(createBagWriter(dir)).rejects.toThrow(InputError);
    const again = await createBagWriter(dir, { overwrite: true });
    again.abort();
    expect(readdirSync(dir).sort()).toEqual(['metadata.yaml', 'tmpname_0.mcap']);
  });

  it('refuses a type without a definition unless told, then writes an empty schema as rosbag2 does', async () => {
    const w = await createBagWriter(join(tempDir(), 'nodef'));
    await expect(w.addTopic({ name: '/x', type: 'my_pkg/msg/Thing' })).rejects.toThrow(/no message definition for my_pkg\/msg\/Thing/);
    w.abort();
    const dir = join(tempDir(), 'nodef2');
    const w2 = await createBagWriter(dir, { allowMissingDefinitions: true });
    await w2.write(await w2.addTopic({ name: '/x', type: 'my_pkg/msg/Thing' }), 5n, new Uint8Array([0, 1, 0, 0, 9]));
    const done = await w2.close();
    // Source: FORMAT-NOTES.md (schema encoding '' when the definition was not found).
    const r = await mcapSummary(done.file);
    expect([...r.schemasById.values()].map((s) => [s.name, s.encoding, s.data.length])).toEqual([['my_pkg/msg/Thing', '', 0]]);
  });

  it('ships definitions for the types antiphon uses, including its own msg/ folder', () => {
    const types = builtinTypes();
    for (const t of [
      'geometry_msgs/msg/WrenchStamped', 'geometry_msgs/msg/TwistStamped', 'geometry_msgs/msg/PoseStamped', 'geometry_msgs/msg/Wrench',
      'geometry_msgs/msg/Twist', 'geometry_msgs/msg/Pose', 'geometry_msgs/msg/Vector3', 'geometry_msgs/msg/Point', 'geometry_msgs/msg/Quaternion',
      'std_msgs/msg/Header', 'builtin_interfaces/msg/Time', 'sensor_msgs/msg/JointState', 'diagnostic_msgs/msg/DiagnosticArray',
      'diagnostic_msgs/msg/DiagnosticStatus', 'diagnostic_msgs/msg/KeyValue', 'std_msgs/msg/String',
      'antiphon/msg/RoleState', 'antiphon/msg/Belief', 'antiphon/msg/WatchdogStatus', 'antiphon/msg/WatchdogTrip', 'antiphon/msg/ZoneView',
    ]) {
      expect(types).toContain(t);
      // Every shipped type parses with the reference .msg parser and its CDR round-trips.
      const text = builtinDefinition(t)!;
      const defs = parseDefinition(t, text);
      expect(parseMsg(text, { ros2: true }).length).toBe(defs.length);
    }
    // The project's WatchdogStatus refers to WatchdogTrip inside the package.
    expect(assembleDefinition('antiphon/msg/WatchdogStatus')).toContain('MSG: antiphon/WatchdogTrip');
    const defs = parseDefinition('antiphon/msg/WatchdogStatus', builtinDefinition('antiphon/msg/WatchdogStatus')!);
    const msg = {
      header: { stamp: { sec: 1, nanosec: 2 }, frame_id: 'cell' },
      held: true,
      ready_to_release: false,
      clear_for_s: 0.25,
      trips: [{ check: 'force_raw', input: 'wrench', value: 61.5, limit: 60, stamp: { sec: 1, nanosec: 0 } }],
    };
    // Source: OMG CDR, via @foxglove/rosmsg2-serialization writer and reader.
    expect(new MessageReader(defs).readMessage(new MessageWriter(defs).writeMessage(msg))).toEqual(msg);
  });

  it('rejects topics declared twice, writes to unknown topics and times outside int64', async () => {
    // Source: common practice (refuse misuse instead of writing a broken bag).
    const w = await createBagWriter(join(tempDir(), 'misuse'));
    await w.addTopic({ name: '/a', type: 'std_msgs/msg/String' });
    await expect(w.addTopic({ name: '/a', type: 'std_msgs/msg/String' })).rejects.toThrow(InputError);
    expect(() => w.write('/b', 0n, new Uint8Array(4))).toThrow(InputError);
    expect(() => w.write('/a', -1n, new Uint8Array(4))).toThrow(InputError);
    w.abort();
    expect(existsSync(join(tempDir(), 'misuse', 'misuse_0.mcap'))).toBe(false);
  });
});
