/**
 * Damaged, incomplete and unusual bags: each is a clear InputError or a warning naming the file,
 * byte offset or topic, and whatever is intact is still read. No crash, no hang.
 */
import { McapIndexedReader, McapStreamReader, McapWriter } from '@mcap/core';
import { FileHandleReadable } from '@mcap/nodejs';
import { loadDecompressHandlers } from '@mcap/support';
import Database from 'better-sqlite3';
import { copyFileSync, mkdirSync, readFileSync, renameSync, rmSync, truncateSync, writeFileSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { basename, join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { bagDecoders, createBagWriter, encodeWrenchStamped, openBag, parseMetadataYaml, type Bag } from '../../src/bag/index.js';
import { zstdCompressor } from '../../src/bag/zstd.js';
import { InputError, type Problem } from '../../src/util/errors.js';
import { copyFixture, SKIP_FIXTURES, fixture, T0, tempDir, writeCellBag, mcapSummary } from './helpers.js';

type Row = { topic: string; t: bigint; data: string };
const rows = (bag: Bag): Row[] => [...bag.messages()].map((m) => ({ topic: m.topic, t: m.logTimeNs, data: Buffer.from(m.data).toString('hex') }));

async function inputError(p: Promise<unknown>): Promise<Problem> {
  try {
    await p;
  } catch (err) {
    expect(err).toBeInstanceOf(InputError);
    return (err as InputError).problems[0]!;
  }
  throw new Error('expected an InputError');
}

/** What @mcap/core's streaming reader gets out of the same bytes (reference for partial files). */
async function streamReference(bytes: Uint8Array): Promise<Row[]> {
  const r = new McapStreamReader({ decompressHandlers: await loadDecompressHandlers() });
  r.append(bytes);
  const topics = new Map<number, string>();
  const out: Row[] = [];
  try {
    for (let rec = r.nextRecord(); rec; rec = r.nextRecord()) {
      if (rec.type === 'Channel') topics.set(rec.id, rec.topic);
      if (rec.type === 'Message') out.push({ topic: topics.get(rec.channelId)!, t: rec.logTime, data: Buffer.from(rec.data).toString('hex') });
    }
  } catch {
    /* the reference stops at the first damage */
  }
  return out;
}


/** A generated bag with many small chunks. */
async function multiChunk(compression: 'zstd' | 'none'): Promise<{ dir: string; file: string }> {
  const dir = join(tempDir(), `multi-${compression}`);
  const w = await writeCellBag(dir, 0.1, { chunkSize: 2048, compression });
  return { dir, file: w.file };
}

describe('truncated MCAP files', () => {
  it('every intact chunk is read, with a warning at the cut (same as the streaming reference reader)', async () => {
    for (const compression of ['none', 'zstd'] as const) {
      const { file } = await multiChunk(compression);
      const full = readFileSync(file);
      const chunks = (await mcapSummary(file)).chunkIndexes;
      expect(chunks.length).toBeGreaterThan(4);
      const third = chunks[3]!;
      for (const cut of [Number(third.chunkStartOffset) + 5, Number(third.chunkStartOffset) + Number(third.chunkLength) - 1, Math.floor(full.length * 0.6)]) {
        const path = join(tempDir(), `cut-${compression}-${cut}.mcap`);
        writeFileSync(path, full.subarray(0, cut));
        const bag = await openBag(path);
        const got = rows(bag);
        // Source: @mcap/core McapStreamReader (MCAP reference reader) on the same bytes.
        const want = await streamReference(full.subarray(0, cut));
        expect(got).toEqual([...want].sort((a, b) => (a.t < b.t ? -1 : a.t > b.t ? 1 : 0)));
        expect(got.length).toBeGreaterThan(0);
        const w = bag.warnings.find((x) => x.code === 'bag.mcap_truncated')!;
        expect(w.where?.file).toBe(path);
        expect(w.where?.byteOffset).toBeLessThan(cut);
        expect(w.message).toContain(`cut at byte ${cut}`);
        expect(bag.warnings.map((x) => x.code)).toContain('bag.mcap_no_summary');
        bag.close();
      }
    }
  });

  it.skipIf(SKIP_FIXTURES)('the talker fixture cut inside its only chunk: no messages, a warning naming byte 45', async () => {
    const dir = copyFixture('mcap-talker');
    truncateSync(join(dir, 'talker.mcap'), 2000);
    const bag = await openBag(dir);
    try {
      // Source: the fixture's layout (one zstd chunk at byte 45, read with @mcap/core).
      expect(rows(bag)).toEqual([]);
      const w = bag.warnings.find((x) => x.code === 'bag.mcap_truncated')!;
      expect(w.where).toEqual({ file: join(dir, 'talker.mcap'), byteOffset: 45 });
      // Topics are still known from metadata.yaml, with no messages read.
      expect(bag.topics().map((t) => [t.name, t.count])).toEqual([['/parameter_events', 0], ['/rosout', 0], ['/topic', 0]]);
    } finally {
      bag.close();
    }
  });

  it('a file cut right after its header, or too short for MCAP', async () => {
    const { file } = await multiChunk('none');
    const full = readFileSync(file);
    // Source: MCAP specification (magic, then records; Footer and trailing magic end a complete file).
    const p = join(tempDir(), 'header-only.mcap');
    writeFileSync(p, full.subarray(0, 8));
    const bag = await openBag(p);
    expect(rows(bag)).toEqual([]);
    expect(bag.warnings.map((w) => w.code)).toContain('bag.mcap_no_footer');
    bag.close();
    const q = join(tempDir(), 'tiny.mcap');
    writeFileSync(q, full.subarray(0, 5));
    expect(await inputError(openBag(q))).toMatchObject({ code: 'bag.mcap_bad_magic', where: { file: q, byteOffset: 0 } });
  });
});

describe('corrupt chunks', () => {
  it('a CRC mismatch skips that chunk with a warning (file, byte offset, topics); the rest is read', async () => {
    const { file } = await multiChunk('none');
    const ref = await mcapSummary(file);
    const victim = ref.chunkIndexes[2]!;
    const bytes = readFileSync(file);
    // Flip a byte in the last message of the chunk (its records end 1 byte before the record end).
    const at = Number(victim.chunkStartOffset + victim.chunkLength) - 3;
    bytes[at] = bytes[at]! ^ 0xff;
    const path = join(tempDir(), 'crc.mcap');
    writeFileSync(path, bytes);
    const intact = await openBag(file);
    const all = rows(intact);
    intact.close();
    const bag = await openBag(path);
    try {
      const got = rows(bag);
      // Source: MCAP specification (chunk uncompressed_crc: CRC-32 of the records).
      expect(got).toEqual(all.filter((r) => r.t < victim.messageStartTime || r.t > victim.messageEndTime));
      const w = bag.warnings.find((x) => x.code === 'bag.mcap_chunk_corrupt')!;
      expect(w.message).toMatch(/CRC mismatch/);
      expect(w.where?.file).toBe(path);
      expect(w.where?.byteOffset).toBe(Number(victim.chunkStartOffset));
      expect(w.message).toMatch(/topics .*\/left\//);
    } finally {
      bag.close();
    }
    const lax = await openBag(path, { validateCrc: false });
    expect(rows(lax).length).toBe(all.length);
    lax.close();
  });

  it.skipIf(SKIP_FIXTURES)('damaged zstd data in the talker fixture: a warning naming its topics, no crash', async () => {
    const dir = copyFixture('mcap-talker');
    const f = join(dir, 'talker.mcap');
    const bytes = readFileSync(f);
    for (let i = 200; i < 260; i++) bytes[i] = 0x55;
    writeFileSync(f, bytes);
    const bag = await openBag(dir);
    try {
      expect(rows(bag)).toEqual([]);
      const w = bag.warnings.find((x) => x.code === 'bag.mcap_chunk_corrupt')!;
      // Source: fixture layout (the chunk at byte 45 holds /rosout and /topic).
      expect(w.where).toMatchObject({ file: f, byteOffset: 45 });
      expect(w.message).toMatch(/\/rosout/);
      expect(w.message).toMatch(/\/topic/);
    } finally {
      bag.close();
    }
  });
});

describe('MCAP without a summary', () => {
  it('not indexed (chunked) and unchunked files read the same messages, without warnings', async () => {
    const { file } = await multiChunk('zstd');
    const src = await openBag(file);
    const want = rows(src);
    const handlers = await loadDecompressHandlers();
    for (const useChunks of [true, false]) {
      const path = join(tempDir(), `plain-${useChunks}.mcap`);
      const fh = await open(path, 'w');
      let pos = 0n;
      const writer = new McapWriter({
        writable: { write: async (b: Uint8Array) => { await fh.write(b); pos += BigInt(b.length); }, position: () => pos },
        useChunks,
        chunkSize: 4096,
        useStatistics: false,
        useSummaryOffsets: false,
        useChunkIndex: false,
        useMessageIndex: false,
        useAttachmentIndex: false,
        useMetadataIndex: false,
        repeatSchemas: false,
        repeatChannels: false,
      });
      await writer.start({ profile: 'ros2', library: 'test' });
      const ref = await mcapSummary(file);
      for (const s of ref.schemasById.values()) await writer.registerSchema({ name: s.name, encoding: s.encoding, data: s.data });
      for (const c of ref.channelsById.values()) await writer.registerChannel({ topic: c.topic, schemaId: c.schemaId, messageEncoding: c.messageEncoding, metadata: c.metadata });
      for await (const m of (await McapIndexedReader.Initialize({ readable: new FileHandleReadable(await open(file)), decompressHandlers: handlers })).readMessages()) {
        await writer.addMessage(m);
      }
      await writer.end();
      await fh.close();
      const bag = await openBag(path);
      // Source: @mcap/core McapWriter output (MCAP specification: summary is optional).
      expect(rows(bag)).toEqual(want);
      expect(bag.warnings).toEqual([]);
      expect(bag.topics().map((t) => t.count)).toEqual(src.topics().map((t) => t.count));
      bag.close();
    }
    src.close();
  });
});

describe('bag directories', () => {
  it.skipIf(SKIP_FIXTURES)('missing metadata.yaml: one storage file opens with a warning, several are an error', async () => {
    const dir = copyFixture('mcap-talker');
    rmSync(join(dir, 'metadata.yaml'));
    const bag = await openBag(dir);
    // Source: fixture metadata (20 messages), now read from the file alone.
    expect(bag.messageCount).toBe(20);
    expect(bag.warnings.map((w) => [w.code, w.where?.file])).toEqual([['bag.no_metadata', join(dir, 'metadata.yaml')]]);
    bag.close();
    copyFileSync(join(dir, 'talker.mcap'), join(dir, 'talker_1.mcap'));
    const p = await inputError(openBag(dir));
    expect(p).toMatchObject({ code: 'bag.no_metadata', where: { file: join(dir, 'metadata.yaml') } });
    expect(p.message).toContain('talker.mcap, talker_1.mcap');
    const empty = tempDir();
    expect((await inputError(openBag(empty))).code).toBe('bag.no_metadata');
  });

  it.skipIf(SKIP_FIXTURES)('unknown storage id, unknown compression, missing storage file, bad YAML', async () => {
    const dir = copyFixture('sqlite3-talker');
    const meta = join(dir, 'metadata.yaml');
    const text = readFileSync(meta, 'utf8');
    writeFileSync(meta, text.replace('storage_identifier: sqlite3', 'storage_identifier: rosbag_v1'));
    // Source: FORMAT-NOTES.md (storage_identifier is sqlite3 or mcap).
    expect(await inputError(openBag(dir))).toMatchObject({ code: 'bag.unknown_storage', where: { file: meta, key: 'storage_identifier' } });
    writeFileSync(meta, text.replace('compression_format: ""', 'compression_format: "lz4"'));
    expect(await inputError(openBag(dir))).toMatchObject({ code: 'bag.unknown_compression', where: { file: meta } });
    writeFileSync(meta, text.replace('- talker.db3', '- talker_0.db3'));
    expect(await inputError(openBag(dir))).toMatchObject({ code: 'bag.missing_file', where: { file: join(dir, 'talker_0.db3') } });
    writeFileSync(meta, text + '\n  bad: [unclosed\n');
    const y = await inputError(openBag(dir));
    expect(y.code).toBe('bag.metadata_yaml');
    expect(y.where?.file).toBe(meta);
    expect(y.where?.line).toBeGreaterThan(30);
    writeFileSync(meta, 'just: a map\n');
    expect((await inputError(openBag(dir))).code).toBe('bag.metadata_not_rosbag2');
  });

  it('files that are not bags', async () => {
    const d = tempDir();
    writeFileSync(join(d, 'x.mcap'), 'not an mcap file at all');
    writeFileSync(join(d, 'x.db3'), 'not a database, but long enough to have a header'.repeat(4));
    writeFileSync(join(d, 'notes.txt'), 'hello');
    // Source: MCAP specification (magic 89 4D 43 41 50 30 0D 0A) and the SQLite file format ("SQLite format 3\0" header).
    expect(await inputError(openBag(join(d, 'x.mcap')))).toMatchObject({ code: 'bag.mcap_bad_magic', where: { file: join(d, 'x.mcap'), byteOffset: 0 } });
    expect(await inputError(openBag(join(d, 'x.db3')))).toMatchObject({ code: 'bag.sqlite_not_database', where: { file: join(d, 'x.db3') } });
    expect((await inputError(openBag(join(d, 'notes.txt')))).code).toBe('bag.unknown_file');
    expect((await inputError(openBag(join(d, 'nothing-here')))).code).toBe('bag.not_found');
  });

  it.skipIf(SKIP_FIXTURES)('a damaged .db3 is an InputError naming the file, never a crash', async () => {
    /** Open the bag and read every message (either step may be the one that fails). */
    const readAll = async (path: string) => {
      const bag = await openBag(path);
      try {
        rows(bag);
      } finally {
        bag.close();
      }
    };
    const dir = copyFixture('sqlite3-cdr_test');
    const f = join(dir, 'cdr_test_0.db3');
    const bytes = readFileSync(f);
    for (let i = 100; i < bytes.length; i += 7) bytes[i] = 0xa5;
    // Source: SQLite file format (pages after the 100-byte header); common practice: report, do not crash.
    writeFileSync(f, bytes);
    const p = await inputError(readAll(dir));
    expect(p.code).toBe('bag.sqlite_error');
    expect(p.where?.file).toBe(f);
    const cut = copyFixture('sqlite3-talker');
    truncateSync(join(cut, 'talker.db3'), 9000);
    const q = await inputError(readAll(cut));
    expect(q.where?.file).toBe(join(cut, 'talker.db3'));
  });

  it('unknown type without a definition: decoding names the topic and time', async () => {
    const dir = join(tempDir(), 'unknown-type');
    const w = await createBagWriter(dir, { allowMissingDefinitions: true });
    await w.write(await w.addTopic({ name: '/mystery', type: 'my_pkg/msg/Thing' }), 42n, new Uint8Array([0, 1, 0, 0, 1, 2, 3, 4]));
    await w.close();
    const bag = await openBag(dir);
    const m = [...bag.messages()][0]!;
    const dec = bagDecoders(bag);
    // Source: common practice (name the topic and time of what cannot be decoded).
    try {
      dec.decode(m.type, m.data, { topic: m.topic, logTimeNs: m.logTimeNs });
      expect.unreachable();
    } catch (err) {
      const p = (err as InputError).problems[0]!;
      expect(p.code).toBe('bag.no_definition');
      expect(p.where).toEqual({ topic: '/mystery' });
      expect(p.message).toContain('my_pkg/msg/Thing');
      expect(p.message).toContain('42');
    }
    // A definition that does not fit the bytes.
    const bad = bagDecoders(bag, { extra: new Map([['my_pkg/msg/Thing', 'float64 x\nfloat64 y']]) });
    expect(() => bad.decode(m.type, m.data, { topic: m.topic })).toThrow(/cannot decode my_pkg\/msg\/Thing/);
    bag.close();
  });
});

describe('split bags, compression, older layouts', () => {
  it('several files are read in one log-time order; ties go to the earlier file', async () => {
    const root = tempDir();
    const mk = async (name: string, times: bigint[]): Promise<string> => {
      const w = await createBagWriter(join(root, name), { chunkSize: 512 });
      const t = await w.addTopic({ name: `/${name}`, type: 'geometry_msgs/msg/WrenchStamped' });
      for (const x of times) await w.write(t, x, encodeWrenchStamped([0, 0, Number(x - T0), 0, 0, 0, 0, 0], 0, name));
      return (await w.close()).file;
    };
    const a = await mk('a', Array.from({ length: 40 }, (_, i) => T0 + BigInt(2 * i)));
    const b = await mk('b', Array.from({ length: 40 }, (_, i) => T0 + BigInt(2 * i + 1)));
    const c = await mk('c', [T0 + 10n, T0 + 200n]);
    const dir = join(root, 'split');
    mkdirSync(dir);
    for (const f of [a, b, c]) renameSync(f, join(dir, basename(f)));
    const meta = readFileSync(join(root, 'a', 'metadata.yaml'), 'utf8')
      .replace(/relative_file_paths:\n(\s+- .*\n)+/, 'relative_file_paths:\n    - "c_0.mcap"\n    - "b_0.mcap"\n    - "a_0.mcap"\n')
      .replace(/  files:[\s\S]*$/, '');
    writeFileSync(join(dir, 'metadata.yaml'), meta);
    const bag = await openBag(dir);
    try {
      expect(bag.files.map((f) => basename(f))).toEqual(['c_0.mcap', 'b_0.mcap', 'a_0.mcap']);
      const got = [...bag.messages()].map((m) => [m.topic, m.logTimeNs - T0]);
      // Source: FORMAT-NOTES.md (split bags) and common practice (merge by time, stable by file order).
      const want = [
        ...Array.from({ length: 40 }, (_, i) => ['/a', BigInt(2 * i)]),
        ...Array.from({ length: 40 }, (_, i) => ['/b', BigInt(2 * i + 1)]),
        ['/c', 10n],
        ['/c', 200n],
      ].sort((x, y) => {
        const d = (x[1] as bigint) - (y[1] as bigint);
        return d < 0n ? -1 : d > 0n ? 1 : x[0] === '/c' ? -1 : 1; // file c is listed first
      });
      expect(got).toEqual(want);
      expect(bag.topics().map((t) => [t.name, t.count])).toEqual([['/a', 40], ['/b', 40], ['/c', 2]]);
    } finally {
      bag.close();
    }
  });

  it.skipIf(SKIP_FIXTURES)('a split sqlite3 bag of two identical files gives every message twice, first file first', async () => {
    const dir = copyFixture('sqlite3-cdr_test');
    copyFileSync(join(dir, 'cdr_test_0.db3'), join(dir, 'cdr_test_1.db3'));
    const meta = join(dir, 'metadata.yaml');
    writeFileSync(meta, readFileSync(meta, 'utf8').replace('    - cdr_test_0.db3\n', '    - cdr_test_0.db3\n    - cdr_test_1.db3\n'));
    const one = await openBag(fixture('sqlite3-cdr_test'));
    const want = rows(one).flatMap((r) => [r, r]);
    one.close();
    const bag = await openBag(dir);
    expect(rows(bag)).toEqual(want);
    bag.close();
  });

  it.skipIf(SKIP_FIXTURES)('zstd FILE compression (MCAP and sqlite3) reads the same as the plain files', async () => {
    const z = (await zstdCompressor())!;
    for (const [name, file] of [['mcap-talker', 'talker.mcap'], ['sqlite3-cdr_test', 'cdr_test_0.db3']] as const) {
      const plain = await openBag(fixture(name));
      const want = rows(plain);
      plain.close();
      const dir = copyFixture(name);
      writeFileSync(join(dir, `${file}.zstd`), z.compress(readFileSync(join(dir, file)), 3));
      rmSync(join(dir, file));
      const meta = join(dir, 'metadata.yaml');
      // Source: FORMAT-NOTES.md (FILE mode: each file becomes <file>.zstd; relative_file_paths renamed).
      writeFileSync(
        meta,
        readFileSync(meta, 'utf8')
          .replace(/compression_format: ["']{2}/, 'compression_format: zstd')
          .replace(/compression_mode: ["']{2}/, 'compression_mode: FILE')
          .replace(`- ${file}\n`, `- ${file}.zstd\n`),
      );
      const bag = await openBag(dir);
      expect(rows(bag)).toEqual(want);
      bag.close();
    }
  });

  it.skipIf(SKIP_FIXTURES)('zstd MESSAGE compression (sqlite3): every blob one zstd frame', async () => {
    const z = (await zstdCompressor())!;
    const plain = await openBag(fixture('sqlite3-cdr_test'));
    const want = rows(plain);
    plain.close();
    const dir = copyFixture('sqlite3-cdr_test');
    const db = new Database(join(dir, 'cdr_test_0.db3'));
    const upd = db.prepare('UPDATE messages SET data = ? WHERE id = ?');
    for (const r of db.prepare('SELECT id, data FROM messages').all() as { id: number; data: Buffer }[]) upd.run(z.compress(r.data, 3), r.id);
    db.close();
    const meta = join(dir, 'metadata.yaml');
    // Source: FORMAT-NOTES.md (MESSAGE mode: each data blob is one zstd frame).
    writeFileSync(meta, readFileSync(meta, 'utf8').replace('compression_format: ""', 'compression_format: zstd').replace('compression_mode: ""', 'compression_mode: MESSAGE'));
    const bag = await openBag(dir);
    expect(rows(bag)).toEqual(want);
    bag.close();
  });

  it.skipIf(SKIP_FIXTURES)('metadata.yaml before version 4 (bag folder prefix in paths, no QoS) and version 9 (nested QoS)', async () => {
    const dir = copyFixture('sqlite3-cdr_test');
    const meta = join(dir, 'metadata.yaml');
    // Source: FORMAT-NOTES.md (before 4, relative_file_paths carried the bag folder as prefix).
    writeFileSync(
      meta,
      [
        'rosbag2_bagfile_information:',
        '  version: 3',
        '  storage_identifier: sqlite3',
        '  relative_file_paths:',
        '    - sqlite3-cdr_test/cdr_test_0.db3',
        '  duration:',
        '    nanoseconds: 151137181',
        '  starting_time:',
        '    nanoseconds_since_epoch: 1586406456763032325',
        '  message_count: 7',
        '  topics_with_message_count:',
        '    - topic_metadata:',
        '        name: /test_topic',
        '        type: test_msgs/msg/BasicTypes',
        '        serialization_format: cdr',
        '      message_count: 3',
        '  compression_format: ""',
        '  compression_mode: ""',
        '',
      ].join('\n'),
    );
    const bag = await openBag(dir);
    expect(bag.metadata?.version).toBe(3);
    expect(bag.metadata?.topics[0]?.offeredQos).toEqual([]);
    expect(bag.messageCount).toBe(7);
    bag.close();
    // Source: FORMAT-NOTES.md (version 9: offered_qos_profiles a nested list with enum names).
    const v9 = parseMetadataYaml(
      [
        'rosbag2_bagfile_information:',
        '  version: 9',
        '  storage_identifier: mcap',
        '  starting_time:',
        '    nanoseconds_since_epoch: 9223372036854775807',
        '  topics_with_message_count:',
        '    - topic_metadata:',
        '        name: /w',
        '        type: geometry_msgs/msg/WrenchStamped',
        '        serialization_format: cdr',
        '        offered_qos_profiles:',
        '          - history: keep_last',
        '            depth: 10',
        '            reliability: reliable',
        '            durability: volatile',
        '            deadline:',
        '              sec: 9223372036',
        '              nsec: 854775807',
        '        type_description_hash: RIHS01_00',
        '      message_count: 0',
        '  custom_data: ~',
        '  ros_distro: jazzy',
      ].join('\n'),
      'metadata.yaml',
    );
    expect(v9.startingTimeNs).toBe(9223372036854775807n);
    expect(v9.rosDistro).toBe('jazzy');
    expect(v9.topics[0]!.offeredQos).toEqual([{ history: 'keep_last', depth: 10, reliability: 'reliable', durability: 'volatile', deadline: { sec: 9223372036, nsec: 854775807 } }]);
    expect(v9.topics[0]!.typeDescriptionHash).toBe('RIHS01_00');
    expect(v9.relativeFilePaths).toEqual([]);
  });

  it.skipIf(SKIP_FIXTURES)('sqlite3 schema version 1 (topics without QoS, no schema table)', async () => {
    const src = await openBag(fixture('sqlite3-talker'));
    const want = rows(src);
    src.close();
    const d = tempDir();
    const path = join(d, 'old.db3');
    const db = new Database(path);
    // Source: FORMAT-NOTES.md (schema 1: topics(id,name,type,serialization_format) and messages).
    db.exec('CREATE TABLE topics(id INTEGER PRIMARY KEY, name TEXT NOT NULL, type TEXT NOT NULL, serialization_format TEXT NOT NULL)');
    db.exec('CREATE TABLE messages(id INTEGER PRIMARY KEY, topic_id INTEGER NOT NULL, timestamp INTEGER NOT NULL, data BLOB NOT NULL)');
    const old = new Database(readFileSync(join(fixture('sqlite3-talker'), 'talker.db3')).fill(1, 18, 20), { readonly: true });
    old.defaultSafeIntegers(true);
    for (const t of old.prepare('SELECT id, name, type, serialization_format FROM topics').all()) db.prepare('INSERT INTO topics VALUES (?, ?, ?, ?)').run(...Object.values(t as object));
    db.defaultSafeIntegers(true);
    for (const m of old.prepare('SELECT id, topic_id, timestamp, data FROM messages').all()) db.prepare('INSERT INTO messages VALUES (?, ?, ?, ?)').run(...Object.values(m as object));
    old.close();
    db.close();
    const bag = await openBag(path);
    expect(rows(bag)).toEqual(want);
    expect(bag.topics().every((t) => t.offeredQos.length === 0)).toBe(true);
    // Without carried definitions, the shipped ones decode the talker's String and Log.
    const dec = bagDecoders(bag);
    expect([...bag.messages({ topics: ['/topic'] })].map((m) => (dec.decode(m.type, m.data) as { data: string }).data)[9]).toBe('Hello, world! 9');
    bag.close();
  });
});
