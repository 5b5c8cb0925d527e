/** Small pieces: CRC-32, zstd frame walking, definition texts, metadata.yaml writing. */
import { describe, expect, it } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { crc32 } from '../../src/bag/crc32.js';
import { canonicalType, fieldDependencies, joinDefinition, parseDefinition, shortType, splitDefinition } from '../../src/bag/definitions.js';
import { describeQos, formatMetadataYaml, isInfiniteDuration, parseMetadataYaml, parseQos } from '../../src/bag/metadata.js';
import { decompressHandlers, decompressZstd, looksLikeZstd, zstdCompressor, zstdFrames } from '../../src/bag/zstd.js';
import { openBag } from '../../src/bag/index.js';
import { InputError } from '../../src/util/errors.js';
import { SKIP_FIXTURES, fixture } from './helpers.js';

describe('CRC-32', () => {
  it('matches the standard check value and known vectors', () => {
    // Source: CRC-32/ISO-HDLC catalogue check value (CRC of "123456789").
    expect(crc32(new TextEncoder().encode('123456789'))).toBe(0xcbf43926);
    expect(crc32(new Uint8Array(0))).toBe(0);
    // Source: common practice (zlib crc32 of "The quick brown fox jumps over the lazy dog").
    expect(crc32(new TextEncoder().encode('The quick brown fox jumps over the lazy dog'))).toBe(0x414fa339);
    // Every length around the 8-byte stride gives the byte-at-a-time result.
    const slow = (b: Uint8Array): number => {
      let c = 0xffffffff;
      for (const x of b) {
        c ^= x;
        for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
      }
      return (c ^ 0xffffffff) >>> 0;
    };
    const data = Uint8Array.from({ length: 40 }, (_, i) => (i * 97 + 13) & 0xff);
    for (let n = 0; n <= data.length; n++) expect(crc32(data.subarray(0, n))).toBe(slow(data.subarray(0, n)));
  });
});

describe('zstd frames', () => {
  it('walks frames, reads content sizes, decompresses several frames', async () => {
    const z = (await zstdCompressor())!;
    const a = new TextEncoder().encode('first frame '.repeat(50));
    const b = new Uint8Array(70_000).map((_, i) => i % 251);
    const both = new Uint8Array([...z.compress(a, 3), ...z.compress(b, 3)]);
    // Source: zstd frame format (RFC 8878 §3.1.1: magic 28 B5 2F FD, Frame_Content_Size).
    expect(looksLikeZstd(both)).toBe(true);
    const frames = zstdFrames(both);
    expect(frames.map((f) => f.contentSize)).toEqual([a.length, b.length]);
    expect(frames[0]!.compressedSize + frames[1]!.compressedSize).toBe(both.length);
    const h = await decompressHandlers();
    const out = decompressZstd(both, h, 'x.zstd');
    expect(Buffer.from(out).equals(Buffer.concat([a, b]))).toBe(true);
    expect(() => decompressZstd(both.subarray(0, both.length - 5), h, 'x.zstd')).toThrow(InputError);
    expect(() => decompressZstd(new Uint8Array([1, 2, 3, 4, 5]), h, 'x.zstd')).toThrow(/no frame magic/);
  });
});

describe('definition texts', () => {
  it('type spellings', () => {
    // Source: FORMAT-NOTES.md (MSG: names may be pkg/Type or pkg/msg/Type).
    expect(canonicalType('std_msgs/Header')).toBe('std_msgs/msg/Header');
    expect(canonicalType('std_msgs/msg/Header')).toBe('std_msgs/msg/Header');
    expect(shortType('std_msgs/msg/Header')).toBe('std_msgs/Header');
    expect(canonicalType('example/srv/AddTwo_Event')).toBe('example/srv/AddTwo_Event');
  });

  it('splits, dedupes, accepts pkg/msg/Type in MSG: lines and fields', () => {
    const sep = '='.repeat(80);
    const text = `std_msgs/msg/Header header\nVector3 v\n${sep}\nMSG: std_msgs/msg/Header\nbuiltin_interfaces/Time stamp\nstring frame_id\n${sep}\nMSG: geometry_msgs/Vector3\nfloat64 x\n${sep}\nMSG: geometry_msgs/Vector3\nfloat64 x\n${sep}\nMSG: builtin_interfaces/Time\nint32 sec\nuint32 nanosec`;
    const blocks = splitDefinition('geometry_msgs/msg/Thing', text);
    expect(blocks.map((b) => b.name)).toEqual(['geometry_msgs/Thing', 'std_msgs/Header', 'geometry_msgs/Vector3', 'builtin_interfaces/Time']);
    const defs = parseDefinition('geometry_msgs/msg/Thing', text);
    expect(defs[0]!.name).toBe('geometry_msgs/Thing');
    expect(defs[0]!.definitions.map((f) => f.type)).toEqual(['std_msgs/Header', 'geometry_msgs/Vector3']);
    expect(joinDefinition(blocks.slice(0, 1))).toBe(blocks[0]!.text);
    expect(() => parseDefinition('a/msg/B', 'c/D field')).toThrow(/not defined|top level type definition/);
  });

  it('finds dependencies: package-relative names, arrays, bounds, constants, comments', () => {
    expect(fieldDependencies('antiphon', 'uint8 A=1 # c\nstd_msgs/Header header\nWatchdogTrip[] trips\nstring<=5 s\nfloat64[3] f\nPoint[<=2] p\n# Foo x\n')).toEqual([
      'std_msgs/Header',
      'antiphon/WatchdogTrip',
      'antiphon/Point',
    ]);
  });

  it.skipIf(SKIP_FIXTURES)('the talker fixture`s ParameterEvent schema (with duplicated blocks) parses', async () => {
    const bag = await openBag(fixture('mcap-talker'));
    const text = bag.definition('rcl_interfaces/msg/ParameterEvent')!.text;
    bag.close();
    // Source: rosbag2 test resources (schema text as recorded; FORMAT-NOTES: duplicated blocks occur).
    const defs = parseDefinition('rcl_interfaces/msg/ParameterEvent', text);
    expect(defs.map((d) => d.name)).toEqual([
      'rcl_interfaces/ParameterEvent',
      'builtin_interfaces/Time',
      'rcl_interfaces/Parameter',
      'rcl_interfaces/ParameterValue',
    ]);
  });
});

describe('metadata.yaml', () => {
  it('writes what it reads back', () => {
    const m = {
      storageIdentifier: 'mcap',
      durationNs: 5n,
      startingTimeNs: 9223372036854775807n,
      messageCount: 2,
      topics: [{ name: '/a b', type: 'x/msg/Y', serializationFormat: 'cdr', offeredQosText: '- history: 1\n  depth: "5"', offeredQos: [], typeDescriptionHash: '', messageCount: 2 }],
      compressionFormat: '',
      compressionMode: '',
      relativeFilePaths: ['a_0.mcap'],
      files: [{ path: 'a_0.mcap', startingTimeNs: 1n, durationNs: 5n, messageCount: 2 }],
    };
    const text = formatMetadataYaml(m);
    const back = parseMetadataYaml(text, 'metadata.yaml');
    // Source: yaml (the reference YAML parser) and FORMAT-NOTES.md field names.
    expect(parseYaml(text).rosbag2_bagfile_information.version).toBe(5);
    expect(back).toMatchObject({ version: 5, storageIdentifier: 'mcap', startingTimeNs: 9223372036854775807n, durationNs: 5n, messageCount: 2, relativeFilePaths: ['a_0.mcap'] });
    expect(back.topics[0]).toMatchObject({ name: '/a b', offeredQosText: m.topics[0]!.offeredQosText, offeredQos: [{ history: 1, depth: '5' }] });
    expect(formatMetadataYaml({ ...m, topics: [] })).toContain('topics_with_message_count: []');
  });

  it('QoS in words; infinite durations in their several spellings', () => {
    // Source: FORMAT-NOTES.md (rmw enums and infinity sentinels).
    expect(isInfiniteDuration({ sec: 9223372036, nsec: 854775807 })).toBe(true);
    expect(isInfiniteDuration({ sec: 2147483647, nsec: 4294967295 })).toBe(true);
    expect(isInfiniteDuration({ sec: 2147483647, nsec: 2147483647 })).toBe(true);
    expect(isInfiniteDuration({ sec: 1, nsec: 0 })).toBe(false);
    expect(describeQos({ history: 1, depth: 10, reliability: 2, durability: 1, liveliness: 3, deadline: { sec: 0, nsec: 5000000 } })).toBe(
      'best_effort, transient_local, keep_last depth 10, liveliness manual_by_topic, deadline 0.005000000 s',
    );
    expect(parseQos('').profiles).toEqual([]);
    expect(parseQos('- [unclosed').error).toBeDefined();
  });
});
