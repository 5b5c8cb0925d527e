/**
 * Reading the real ROS 2 recordings (source: rosbag2 test resources, recorded by ROS 2; see
 * the fixtures' README.md). When the fixtures folder is missing ($ANTIPHON_FIXTURES, else
 * ../shared/fixtures/rosbag2; test/support/fixtures.ts) they are skipped locally with a
 * message, and fail under CI=true.
 */
import { McapIndexedReader } from '@mcap/core';
import { FileHandleReadable } from '@mcap/nodejs';
import { loadDecompressHandlers } from '@mcap/support';
import { parse as parseMsg } from '@foxglove/rosmsg';
import Database from 'better-sqlite3';
import { readFileSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { bagDecoders, openBag, type Bag, type BagMessage } from '../../src/bag/index.js';
import { SKIP_FIXTURES, fixture } from './helpers.js';

const BAGS = ['mcap-talker', 'sqlite3-talker', 'mcap-cdr_test', 'sqlite3-cdr_test'] as const;

function all(bag: Bag, opts = {}): BagMessage[] {
  return [...bag.messages(opts)];
}

/** metadata.yaml read independently of our parser (yaml with exact integers). */
function metadataOf(name: string): Record<string, unknown> {
  const doc = parseYaml(readFileSync(join(fixture(name), 'metadata.yaml'), 'utf8'), { intAsBigInt: true }) as Record<string, unknown>;
  return doc['rosbag2_bagfile_information'] as Record<string, unknown>;
}

describe.skipIf(SKIP_FIXTURES)('rosbag2 fixtures', () => {
  for (const name of BAGS) {
    it(`${name}: topics, types and counts match metadata.yaml`, async () => {
      const meta = metadataOf(name);
      const bag = await openBag(fixture(name));
      try {
        // Source: the fixture's metadata.yaml (written by rosbag2 when it recorded the bag).
        expect(bag.storage).toBe(meta['storage_identifier']);
        const expected = (meta['topics_with_message_count'] as Record<string, unknown>[])
          .map((e) => {
            const tm = e['topic_metadata'] as Record<string, unknown>;
            return { name: tm['name'], type: tm['type'], serializationFormat: tm['serialization_format'], count: Number(e['message_count']) };
          })
          .sort((a, b) => String(a.name).localeCompare(String(b.name)));
        expect(bag.topics().map((t) => ({ name: t.name, type: t.type, serializationFormat: t.serializationFormat, count: t.count }))).toEqual(expected);
        expect(bag.messageCount).toBe(Number(meta['message_count']));
        // Source: metadata.yaml starting_time / duration (first and last receive time).
        const start = (meta['starting_time'] as Record<string, bigint>)['nanoseconds_since_epoch']!;
        const duration = (meta['duration'] as Record<string, bigint>)['nanoseconds']!;
        expect(bag.startNs).toBe(start);
        expect(bag.endNs - bag.startNs).toBe(duration);
        // Counting the messages themselves gives the same per-topic counts.
        const counted = new Map<string, number>();
        for (const m of bag.messages()) counted.set(m.topic, (counted.get(m.topic) ?? 0) + 1);
        for (const t of bag.topics()) expect(counted.get(t.name) ?? 0).toBe(t.count);
        expect(bag.warnings).toEqual([]);
      } finally {
        bag.close();
      }
    });

    it(`${name}: every payload starts with the CDR encapsulation header 00 01 00 00, in log-time order`, async () => {
      const bag = await openBag(fixture(name));
      try {
        let prev = 0n;
        for (const m of bag.messages()) {
          // Source: OMG CDR / XCDR1 encapsulation (plain CDR, little-endian), as the fixtures README states.
          expect(Array.from(m.data.subarray(0, 4))).toEqual([0, 1, 0, 0]);
          expect(m.logTimeNs >= prev).toBe(true);
          prev = m.logTimeNs;
        }
      } finally {
        bag.close();
      }
    });

    it(`${name}: offered QoS parses to the profiles the recorder wrote`, async () => {
      const bag = await openBag(fixture(name));
      try {
        for (const t of bag.topics()) {
          // Source: the recorded offered_qos_profiles YAML string (rmw integer enums).
          expect(t.offeredQos).toEqual(parseYaml(t.offeredQosText));
          expect(t.offeredQos[0]).toMatchObject({ reliability: 1, avoid_ros_namespace_conventions: false });
        }
      } finally {
        bag.close();
      }
    });
  }

  for (const name of ['mcap-talker', 'sqlite3-talker']) {
    it(`${name}: the talker published Hello, world! 0 … 9, the first at 1585866235112609068 ns`, async () => {
      const bag = await openBag(fixture(name));
      try {
        const dec = bagDecoders(bag);
        const msgs = all(bag, { topics: ['/topic'] });
        // Source: rosbag2 test resources README (talker recording).
        expect(msgs[0]!.logTimeNs).toBe(1585866235112609068n);
        expect(msgs.map((m) => (dec.decode(m.type, m.data) as { data: string }).data)).toEqual(
          Array.from({ length: 10 }, (_, i) => `Hello, world! ${i}`),
        );
        // /rosout carries the publisher's own log lines of the same strings.
        const logs = all(bag, { topics: ['/rosout'] }).map((m) => dec.decode(m.type, m.data) as { msg: string; level: number; name: string });
        expect(logs.map((l) => l.msg)).toEqual(Array.from({ length: 10 }, (_, i) => `Publishing: 'Hello, world! ${i}'`));
        expect(logs.every((l) => l.level === 20 && l.name === 'minimal_publisher')).toBe(true);
      } finally {
        bag.close();
      }
    });
  }

  it('the sqlite3 talker twin holds the same messages as the MCAP one', async () => {
    const a = await openBag(fixture('mcap-talker'));
    const b = await openBag(fixture('sqlite3-talker'));
    try {
      // Source: fixtures README ("the same talker recording").
      const strip = (m: BagMessage) => ({ topic: m.topic, type: m.type, t: m.logTimeNs, data: Buffer.from(m.data).toString('hex') });
      expect(all(b).map(strip)).toEqual(all(a).map(strip));
    } finally {
      a.close();
      b.close();
    }
  });

  it('the talker .db3 placeholder definition of Log is set aside for a fitting one', async () => {
    const bag = await openBag(fixture('sqlite3-talker'));
    try {
      // Source: fixtures README: the talker.db3 message_definitions rows are placeholders.
      expect(bag.definition('rcl_interfaces/msg/Log')?.text).toBe('uint8 level');
      const dec = bagDecoders(bag);
      const first = all(bag, { topics: ['/rosout'] })[0]!;
      expect((dec.decode(first.type, first.data) as { msg: string }).msg).toBe("Publishing: 'Hello, world! 0'");
      expect(dec.notes.map((n) => n.code)).toEqual(['bag.definition_fallback']);
    } finally {
      bag.close();
    }
  });

  it('cdr_test: every field of test_msgs BasicTypes and Arrays', async () => {
    const bag = await openBag(fixture('mcap-cdr_test'));
    try {
      const dec = bagDecoders(bag);
      const basic = all(bag, { topics: ['/test_topic'] }).map((m) => dec.decode(m.type, m.data));
      // Source: the values the rosbag2 test recorder published (read from the recording; every
      // message the same): int32_value 123, every other field zero / false.
      const zeroBasic = {
        bool_value: false, byte_value: 0, char_value: 0, float32_value: 0, float64_value: 0, int8_value: 0, uint8_value: 0,
        int16_value: 0, uint16_value: 0, int32_value: 0, uint32_value: 0, int64_value: 0n, uint64_value: 0n,
      };
      expect(basic).toEqual(Array.from({ length: 3 }, () => ({ ...zeroBasic, int32_value: 123 })));

      const schemaText = bag.definition('test_msgs/msg/Arrays')!.text;
      // Source: the defaults written in test_msgs' Arrays.msg / Defaults.msg (carried in the schema).
      const defs = parseMsg(schemaText, { ros2: true });
      const arraysDef = defs[0]!.definitions;
      const defaultsDef = defs.find((d) => d.name === 'test_msgs/Defaults')!.definitions;
      const arrays = all(bag, { topics: ['/array_topic'] }).map((m) => dec.decode(m.type, m.data) as Record<string, unknown>);
      expect(arrays).toHaveLength(4);
      const plain = (v: unknown): unknown => (ArrayBuffer.isView(v) ? Array.from(v as unknown as ArrayLike<unknown>) : v);
      for (const a of arrays) {
        expect(a['bool_values']).toEqual([true, false, true]);
        expect(a['string_values']).toEqual(['Complex Hello1', 'Complex Hello2', 'Complex Hello3']);
        for (const f of ['byte_values', 'char_values', 'float32_values', 'float64_values', 'int8_values', 'uint8_values', 'int16_values', 'uint16_values', 'int32_values', 'uint32_values']) {
          expect(plain(a[f])).toEqual([0, 0, 0]);
        }
        expect(plain(a['int64_values'])).toEqual([0n, 0n, 0n]);
        expect(plain(a['uint64_values'])).toEqual([0n, 0n, 0n]);
        expect(a['basic_types_values']).toEqual([zeroBasic, zeroBasic, zeroBasic]);
        // Constants has no fields: one padding byte each on the wire, nothing decoded.
        expect(a['constants_values']).toEqual([{}, {}, {}]);
        const defaults = Object.fromEntries(defaultsDef.map((f) => [f.name, typeof f.defaultValue === 'number' && /int64/.test(f.type) ? BigInt(f.defaultValue) : f.defaultValue]));
        expect(a['defaults_values']).toEqual([defaults, defaults, defaults]);
        for (const f of arraysDef.filter((d) => d.name.endsWith('_default'))) {
          const want = (f.defaultValue as unknown[]).map((x) => (/int64/.test(f.type) ? BigInt(x as number | bigint) : x));
          const got = plain(a[f.name]) as unknown[];
          if (f.type === 'float32') expect(got).toEqual(want.map((x) => Math.fround(x as number)));
          else expect(got).toEqual(want);
        }
        expect(a['alignment_check']).toBe(0);
        expect(Object.keys(a)).toEqual(arraysDef.filter((d) => !d.isConstant).map((d) => d.name));
      }
    } finally {
      bag.close();
    }
  });

  it('cdr_test: the sqlite3 twin decodes to the same values with the MCAP twin`s definitions', async () => {
    const mcap = await openBag(fixture('mcap-cdr_test'));
    const db = await openBag(fixture('sqlite3-cdr_test'));
    try {
      const fromMcap = bagDecoders(mcap);
      // Source: fixtures README ("take the message definitions from the MCAP twin").
      const borrowed = bagDecoders(db, { extra: mcap.definitions(), builtin: false });
      const own = bagDecoders(db, { builtin: false });
      const a = all(mcap).map((m) => ({ topic: m.topic, t: m.logTimeNs, v: fromMcap.decode(m.type, m.data) }));
      const b = all(db).map((m) => ({ topic: m.topic, t: m.logTimeNs, v: borrowed.decode(m.type, m.data) }));
      const c = all(db).map((m) => ({ topic: m.topic, t: m.logTimeNs, v: own.decode(m.type, m.data) }));
      expect(b).toEqual(a);
      expect(c).toEqual(a);
    } finally {
      mcap.close();
      db.close();
    }
  });

  it('MCAP messages equal what @mcap/core`s own indexed reader returns', async () => {
    for (const name of ['mcap-talker', 'mcap-cdr_test']) {
      const path = join(fixture(name), name === 'mcap-talker' ? 'talker.mcap' : 'cdr_test_0.mcap');
      const fh = await open(path);
      try {
        // Source: @mcap/core McapIndexedReader + @mcap/nodejs FileHandleReadable (MCAP reference reader).
        const ref = await McapIndexedReader.Initialize({ readable: new FileHandleReadable(fh), decompressHandlers: await loadDecompressHandlers() });
        const want: unknown[] = [];
        for await (const m of ref.readMessages()) {
          want.push({ topic: ref.channelsById.get(m.channelId)!.topic, t: m.logTime, data: Buffer.from(m.data).toString('hex') });
        }
        const bag = await openBag(path);
        const got = all(bag).map((m) => ({ topic: m.topic, t: m.logTimeNs, data: Buffer.from(m.data).toString('hex') }));
        bag.close();
        expect(got).toEqual(want);
      } finally {
        await fh.close();
      }
    }
  });

  it('sqlite3 messages equal a plain SQL read of the messages table', async () => {
    for (const [name, file] of [['sqlite3-talker', 'talker.db3'], ['sqlite3-cdr_test', 'cdr_test_0.db3']] as const) {
      // Source: rosbag2 sqlite3 schema (FORMAT-NOTES.md): messages(topic_id, timestamp, data), read by timestamp then id.
      const raw = new Database(readFileSync(join(fixture(name), file)).fill(1, 18, 20), { readonly: true });
      raw.defaultSafeIntegers(true);
      const rows = raw
        .prepare('SELECT t.name AS topic, m.timestamp AS t, hex(m.data) AS data FROM messages m JOIN topics t ON t.id = m.topic_id ORDER BY m.timestamp, m.id')
        .all() as { topic: string; t: bigint; data: string }[];
      raw.close();
      const bag = await openBag(join(fixture(name), file));
      const got = all(bag).map((m) => ({ topic: m.topic, t: m.logTimeNs, data: Buffer.from(m.data).toString('hex').toUpperCase() }));
      bag.close();
      expect(got).toEqual(rows);
    }
  });

  it('topic and time filters select the same messages as filtering everything', async () => {
    for (const name of BAGS) {
      const bag = await openBag(fixture(name));
      try {
        const every = all(bag);
        const mid = every[Math.floor(every.length / 2)]!.logTimeNs;
        const topic = every[0]!.topic;
        const want = every.filter((m) => m.topic === topic && m.logTimeNs >= every[1]!.logTimeNs && m.logTimeNs <= mid);
        // Source: common practice (inclusive time bounds, as MCAP readers use).
        expect(all(bag, { topics: [topic], startNs: every[1]!.logTimeNs, endNs: mid })).toEqual(want);
        expect(all(bag, { topics: ['/not/there'] })).toEqual([]);
        expect(all(bag, { startNs: bag.endNs + 1n })).toEqual([]);
      } finally {
        bag.close();
      }
    }
  });

  it('a single storage file opens without its directory`s metadata.yaml', async () => {
    const bag = await openBag(join(fixture('mcap-talker'), 'talker.mcap'));
    try {
      // Source: fixture metadata.yaml counts (the file alone tells the same).
      expect(bag.messageCount).toBe(20);
      expect(bag.metadata).toBeUndefined();
      expect(bag.topics().find((t) => t.name === '/parameter_events')?.count).toBe(0);
    } finally {
      bag.close();
    }
  });
});
