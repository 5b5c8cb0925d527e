/**
 * Regression tests for the bag-reading defects of a probe with crafted inputs (one test per
 * defect, named by it). Inputs are made from the real rosbag2 fixtures (copied, then damaged) or
 * from bags our writer generates; hostile MCAP bytes come from src/fuzz/mcap-bytes.ts (record
 * layouts from the MCAP specification).
 */
import Database from 'better-sqlite3';
import { mkdirSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { resetLogging } from '../../src/util/log.js';
import { bagDecoders, createBagWriter, encodeWrenchStamped, openBag, parseDefinition, readTopicSeries } from '../../src/bag/index.js';
import { zstdCompressor } from '../../src/bag/zstd.js';
import { register } from '../../src/cli/bag.js';
import { CDR_LE, Bytes, channelRecord, chunkRecord, mcapFile, messageRecord, schemaRecord, zstdRleBomb } from '../../src/fuzz/mcap-bytes.js';
import { loadCell } from '../../src/params/config.js';
import { replayPath } from '../../src/replay/replay.js';
import { InputError, type Problem } from '../../src/util/errors.js';
import { copyFixture, FIXTURES, mcapSummary, T0, tempDir, writeCellBag } from '../bag/helpers.js';
import { runRegistered } from '../support/run-command.js';

if (!FIXTURES && process.env['CI']) throw new Error('CI: the rosbag2 fixtures are missing (../shared/fixtures/rosbag2 or $ANTIPHON_FIXTURES)');
if (!FIXTURES) console.warn('skipped: no rosbag2 fixtures at ../shared/fixtures/rosbag2 or $ANTIPHON_FIXTURES');

// Each command as in its own process: warnings are given once per process (src/util/log.ts).
const bag = (...args: string[]) => {
  resetLogging();
  return runRegistered(register, 'bag', args);
};

async function inputError(p: Promise<unknown> | (() => unknown)): Promise<Problem> {
  try {
    await (typeof p === 'function' ? p() : p);
  } catch (err) {
    expect(err).toBeInstanceOf(InputError);
    return (err as InputError).problems[0]!;
  }
  throw new Error('expected an InputError');
}

function write(name: string, bytes: Uint8Array): string {
  const p = join(tempDir(), name);
  writeFileSync(p, bytes);
  return p;
}

const STRING_DEF = 'string data';

/** Drop a table's NOT NULL constraints (CREATE TABLE … AS keeps columns, not constraints), to plant bad rows. */
function loosen(db: Database.Database, table: string): void {
  db.exec(`CREATE TABLE loose AS SELECT * FROM ${table}; DROP TABLE ${table}; ALTER TABLE loose RENAME TO ${table};`);
}

describe('tiny files that exhausted memory or hung', () => {
  it('zero-size sequence elements: a schema with Z[] where Z is uint8[0] is refused at definition time, not decoded forever', async () => {
    const def = 'Z[] items\n' + '='.repeat(80) + '\nMSG: fuzz_msgs/Z\nuint8[0] pad';
    expect(() => parseDefinition('fuzz_msgs/msg/Holder', def)).toThrow(/takes no bytes/);
    // The same as a bag: 2^32-1 elements declared in a message of a few bytes.
    const payload = new Bytes().raw(CDR_LE).u32(0xffffffff).done();
    const file = write('zero-size.mcap', mcapFile([schemaRecord(1, 'fuzz_msgs/msg/Holder', 'ros2msg', def), channelRecord(1, 1, '/holder'), messageRecord(1, T0, payload)]));
    expect(readFileSync(file).length).toBeLessThan(400);
    const b = await openBag(file);
    const m = [...b.messages()][0]!;
    const p = await inputError(() => bagDecoders(b).decode(m.type, m.data, { topic: m.topic }));
    expect(p.code).toBe('bag.decode_failed');
    expect(p.message).toMatch(/field items of fuzz_msgs\/(msg\/)?Holder is a sequence of fuzz_msgs\/(msg\/)?Z, which takes no bytes/);
    b.close();
    const r = await bag('dump', file);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/takes no bytes/);
    // An empty struct is one byte in CDR (ROS 2 adds a placeholder member): sequences of it stay fine.
    expect(() => parseDefinition('fuzz_msgs/msg/E', 'Empty[] e\n' + '='.repeat(80) + '\nMSG: fuzz_msgs/Empty\n')).not.toThrow();
  });

  it('the same zero-size path through a bad ZoneView definition in replay: the definition in the bag is refused, the shipped one meets the count as a decode error, no hang', async () => {
    const cell = loadCell(join(__dirname, '../../config/demo_cell.yaml'));
    const dir = join(tempDir(), 'zone-bad');
    const w = await createBagWriter(dir);
    const wrench = await w.addTopic({ name: '/left/wrench', type: 'geometry_msgs/msg/WrenchStamped' });
    const bad = 'std_msgs/Header header\nZ[] zones\nuint8[] state\n' + '='.repeat(80) + '\nMSG: antiphon/Z\nuint8[0] pad\n' + '='.repeat(80) + '\nMSG: std_msgs/Header\nbuiltin_interfaces/Time stamp\nstring frame_id\n' + '='.repeat(80) + '\nMSG: builtin_interfaces/Time\nint32 sec\nuint32 nanosec';
    const zone = await w.addTopic({ name: '/left/zone_view', type: 'antiphon/msg/ZoneView', definition: bad });
    for (let k = 0; k < 200; k++) {
      const ns = T0 + BigInt(k) * 1_000_000n;
      await w.write(wrench, ns, encodeWrenchStamped([Number(ns / 1_000_000_000n), Number(ns % 1_000_000_000n), 0, 0, -5, 0, 0, 0], 0, 'left_ft'));
      // header (sec, nanosec, frame_id ""), then a zone count of 2^32-1.
      if (k % 100 === 0) await w.write(zone, ns, new Bytes().raw(CDR_LE).u32(1).u32(0).u32(1).u8(0).u8(0).u8(0).u8(0).u32(0xffffffff).done());
    }
    await w.close();
    const p = await inputError(replayPath(dir, { arms: ['left'], configs: { left: cell.left.config, right: cell.right.config } }));
    expect(p.code).toBe('bag.decode_failed');
    expect(p.message).toMatch(/takes no bytes/);
    expect(p.where?.topic).toBe('/left/zone_view');
  });

  it('zstd chunk bomb: a 55 kB chunk declaring 1.8 GB is refused before decompressing (limit checked against the declared size)', async () => {
    const { frame, size } = zstdRleBomb(13733);
    expect(size).toBeGreaterThan(1.7e9);
    const inner = new Bytes().raw(schemaRecord(1, 'std_msgs/msg/String', 'ros2msg', STRING_DEF)).raw(channelRecord(1, 1, '/topic')).done();
    const file = write('bomb.mcap', mcapFile([chunkRecord(frame, { uncompressedSize: size, compression: 'zstd', startNs: T0, endNs: T0 })]));
    expect(readFileSync(file).length).toBeLessThan(60_000);
    expect(inner.length).toBeGreaterThan(0);
    const b = await openBag(file);
    const w = b.warnings.find((x) => x.code === 'bag.mcap_chunk_corrupt')!;
    expect(w.message).toContain(`declares ${size} bytes uncompressed, more than the limit of 1073741824`);
    b.close();
    // A limit is configurable: a small one refuses a genuine zstd chunk of a generated bag.
    const dir = join(tempDir(), 'zstd-bag');
    await writeCellBag(dir, 0.2, { compression: 'zstd' });
    const ok = await openBag(dir);
    expect(ok.warnings).toEqual([]);
    ok.close();
    const small = await openBag(dir, { maxUncompressedBytes: 1000 });
    expect(small.warnings.some((x) => x.code === 'bag.mcap_chunk_corrupt' && /more than the limit of 1000/.test(x.message))).toBe(true);
    small.close();
  });

  it('zstd chunk whose header declares more than its blocks can hold is refused without allocating the declared size', async () => {
    const zstd = (await zstdCompressor())!;
    const records = new Bytes().raw(schemaRecord(1, 'std_msgs/msg/String', 'ros2msg', STRING_DEF)).raw(channelRecord(1, 1, '/topic')).done();
    const frame = zstd.compress(records, 3);
    const file = write('liar.mcap', mcapFile([chunkRecord(frame, { uncompressedSize: 900_000_000, compression: 'zstd' })]));
    const b = await openBag(file);
    expect(b.warnings.find((x) => x.code === 'bag.mcap_chunk_corrupt')!.message).toMatch(/declares 900000000 bytes uncompressed, but its zstd blocks can regenerate at most \d+/);
    b.close();
  });

  it('.mcap.zstd bomb: a file-compressed bag whose frame declares 1.8 GB is a clear error naming the limit', async () => {
    const { frame } = zstdRleBomb(13733);
    const file = write('bomb.mcap.zstd', frame);
    const p = await inputError(openBag(file));
    expect(p.code).toBe('bag.too_large');
    expect(p.hint).toMatch(/ANTIPHON_MAX_UNCOMPRESSED_BYTES/);
  });

  it.skipIf(!FIXTURES)('metadata.yaml linked to /dev/zero (directly or through relative_file_paths) is refused, not read forever', async () => {
    const dir = copyFixture('mcap-talker');
    rmSync(join(dir, 'metadata.yaml'));
    symlinkSync('/dev/zero', join(dir, 'metadata.yaml'));
    const p = await inputError(openBag(dir));
    expect(p.code).toBe('bag.not_regular_file');
    expect(p.message).toMatch(/metadata.yaml is a character device/);

    const dir2 = copyFixture('mcap-talker');
    const meta = readFileSync(join(dir2, 'metadata.yaml'), 'utf8');
    writeFileSync(join(dir2, 'metadata.yaml'), meta.replace('compression_format: ""', 'compression_format: zstd').replace('compression_mode: ""', 'compression_mode: FILE').replace(/talker\.mcap/g, 'talker.mcap.zstd'));
    symlinkSync('/dev/zero', join(dir2, 'talker.mcap.zstd'));
    const q = await inputError(openBag(dir2));
    expect(q.code).toBe('bag.not_regular_file');
    expect(q.where?.file).toBe(join(dir2, 'talker.mcap.zstd'));
  });

  it.skipIf(!FIXTURES)('MCAP statistics claiming 10^12 messages: counted from the chunks instead, no "Invalid typed array length"', async () => {
    const dir = join(tempDir(), 'stats');
    const { file } = await writeCellBag(dir, 0.1, { compression: 'none' });
    const bytes = readFileSync(file);
    const s = await mcapSummary(file);
    // Find the Statistics record (opcode 0x0b) in the summary section and patch its counts.
    const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
    let p = Number(s.footer.summaryStart);
    let patched = false;
    while (p < bytes.length - 8 - 29) {
      const len = Number(view.getBigUint64(p + 1, true));
      if (bytes[p] === 0x0b) {
        const c = p + 9;
        const realTotal = view.getBigUint64(c, true);
        view.setBigUint64(c, 1_000_000_000_000n, true);
        // Keep the per-channel counts adding up: only the capacity check can catch it.
        // message_count u64, schema/channel/attachment/metadata/chunk counts (u16, 4 x u32), two
        // u64 times, then the map's u32 byte length and its first entry (u16 id, u64 count).
        const entry = c + 8 + 2 + 4 * 4 + 8 + 8 + 4;
        const first = view.getBigUint64(entry + 2, true);
        view.setBigUint64(entry + 2, first + 1_000_000_000_000n - realTotal, true);
        patched = true;
      }
      p += 9 + len;
    }
    expect(patched).toBe(true);
    view.setUint32(bytes.length - 8 - 4, 0, true); // summary CRC 0: not recorded
    const path = write('stats.mcap', bytes);
    const b = await openBag(path);
    expect(b.warnings.map((w) => w.code)).toContain('bag.mcap_bad_statistics');
    expect(b.messageCount).toBe(Number(s.statistics!.messageCount));
    const series = readTopicSeries(b, '/left/wrench');
    expect(series.count).toBe(100);
    b.close();
  });
});

describe('uncaught exceptions become clear errors', () => {
  it.skipIf(!FIXTURES)('a metadata.yaml that is a folder', async () => {
    const dir = copyFixture('mcap-talker');
    rmSync(join(dir, 'metadata.yaml'));
    mkdirSync(join(dir, 'metadata.yaml'));
    const p = await inputError(openBag(dir));
    expect(p.code).toBe('bag.not_regular_file');
    const r = await bag('info', dir);
    expect(r.code).toBe(2);
    expect(r.stderr).not.toMatch(/internal error/);
  });

  it.skipIf(!FIXTURES)('relative_file_paths naming a folder, "." or ""', async () => {
    for (const entry of ['"."', '""', 'sub']) {
      const dir = copyFixture('mcap-talker');
      mkdirSync(join(dir, 'sub'));
      const meta = readFileSync(join(dir, 'metadata.yaml'), 'utf8');
      writeFileSync(join(dir, 'metadata.yaml'), meta.replace(/- talker\.mcap/, `- ${entry}`));
      const p = await inputError(openBag(dir));
      expect(['bag.bad_file_entry', 'bag.not_regular_file']).toContain(p.code);
      expect(p.where?.key ?? p.message).toMatch(/relative_file_paths\[0\]/);
    }
  });

  it.skipIf(!FIXTURES)('sqlite3 NULL or wrongly typed columns (data, timestamp, topic name and type, definition)', async () => {
    const cases: [string, string, RegExp][] = [
      ['UPDATE messages SET data = NULL WHERE id = 3', 'dump', /messages row id 3: column data is NULL, expected a blob/],
      ['UPDATE messages SET data = 12 WHERE id = 3', 'dump', /messages row id 3: column data is the number 12/],
      ['UPDATE topics SET name = NULL WHERE id = 1', 'info', /topics row id 1: column name is NULL/],
      ['UPDATE topics SET type = x\'00ff\' WHERE id = 1', 'info', /topics row id 1: column type is a blob/],
      ['UPDATE message_definitions SET encoded_message_definition = NULL', 'info', /column encoded_message_definition is NULL/],
    ];
    for (const [sql, cmd, want] of cases) {
      const dir = copyFixture('sqlite3-talker');
      const db = new Database(join(dir, 'talker.db3'));
      for (const t of ['messages', 'topics', 'message_definitions']) loosen(db, t);
      db.exec(sql);
      db.close();
      const r = await bag(cmd, dir);
      expect(r.code, sql).toBe(2);
      expect(r.stderr, sql).toMatch(want);
      expect(r.stderr, sql).not.toMatch(/internal error/);
    }
  });

  it.skipIf(!FIXTURES)('a message definition text of 17 MB in a .db3 is refused (no giant strings)', async () => {
    const dir = copyFixture('sqlite3-talker');
    const db = new Database(join(dir, 'talker.db3'));
    db.prepare('UPDATE message_definitions SET encoded_message_definition = ? WHERE id = 1').run('#'.repeat(17 << 20));
    db.close();
    const p = await inputError(openBag(dir));
    expect(p.message).toMatch(/encoded_message_definition is text \(17825792 characters\), expected a definition of at most/);
  });
});

describe('data lost or nonsense accepted with exit 0', () => {
  it('an MCAP cut on a chunk boundary: exit 1, read against what metadata.yaml promised', async () => {
    const dir = join(tempDir(), 'cut');
    const { file } = await writeCellBag(dir, 0.2, { compression: 'zstd', chunkSize: 4096 });
    const s = await mcapSummary(file);
    const third = s.chunkIndexes[3]!;
    const full = readFileSync(file);
    writeFileSync(file, full.subarray(0, Number(third.chunkStartOffset)));
    const r = await bag('info', dir);
    expect(r.code).toBe(1);
    // The warning goes to stderr, once (bag info's stdout counts it).
    expect(r.stdout + r.stderr).toMatch(/the storage files hold \d+ messages, metadata.yaml promises 340 \(\/left\/wrench: \d+ of 200; \/left\/joint_states: \d+ of 100;/);
    const d = await bag('dump', dir, '--topic', '/left/twist');
    expect(d.code).toBe(1);
    expect(d.stderr).toMatch(/bag.mcap_no_footer|without a DataEnd or Footer|metadata.yaml promises/);
    // Without metadata.yaml: the missing footer alone makes the exit code 1.
    const single = write('cut.mcap', full.subarray(0, Number(third.chunkStartOffset)));
    const e = await bag('dump', single, '--limit', '1');
    expect(e.code).toBe(1);
    expect(e.stderr).toMatch(/without a DataEnd or Footer record \(3 intact chunks, \d+ messages read\)/);
  });

  it('log times at or after 2^63 ns are reported with their offset, not made to vanish', async () => {
    const rec = [schemaRecord(1, 'std_msgs/msg/String', 'ros2msg', STRING_DEF), channelRecord(1, 1, '/topic')];
    const payload = new Bytes().raw(CDR_LE).str('hi\0').done();
    rec.push(messageRecord(1, T0, payload), messageRecord(1, (1n << 63n) + 5n, payload), messageRecord(1, (1n << 64n) - 1n, payload));
    const file = write('late.mcap', mcapFile(rec));
    const r = await bag('info', file);
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(/messages:  1\n/);
    expect(r.stdout + r.stderr).toMatch(/2 messages at byte \d+ have log times of 2\^63 ns or later \(not a valid ROS time\); skipped/);
  });

  it.skipIf(!FIXTURES)('sqlite3 timestamps that are NULL, text or negative are reported with their row ids; info and dump agree; no 1970-…-5Z', async () => {
    const dir = copyFixture('sqlite3-talker');
    const db = new Database(join(dir, 'talker.db3'));
    loosen(db, 'messages');
    db.exec("UPDATE messages SET timestamp = NULL WHERE id = 2; UPDATE messages SET timestamp = 'soon' WHERE id = 4; UPDATE messages SET timestamp = -5 WHERE id = 6");
    db.close();
    const info = await bag('info', '--json', dir);
    const j = JSON.parse(info.stdout);
    expect(info.code).toBe(1);
    expect(j.message_count).toBe(17);
    const w = j.warnings.find((x: Problem) => x.code === 'bag.sqlite_bad_timestamp');
    expect(w.message).toMatch(/^3 messages have a timestamp that is not a non-negative integer .*row id 2 NULL, row id 4 text "soon", row id 6 integer "-5"/);
    const text = await bag('info', dir);
    expect(text.stdout).not.toMatch(/-5Z|1970-/);
    const d = await bag('dump', dir);
    expect(d.stdout.trim().split('\n')).toHaveLength(17);
    expect(d.code).toBe(1);
  });

  it.skipIf(!FIXTURES)('text in the data column is an error, not ""', async () => {
    const dir = copyFixture('sqlite3-talker');
    const db = new Database(join(dir, 'talker.db3'));
    db.exec("UPDATE messages SET data = 'Hello' WHERE id = 1");
    db.close();
    const r = await bag('dump', dir);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/messages row id 1: column data is text \(5 characters\), expected a blob/);
  });

  it.skipIf(!FIXTURES)('a file listed twice in relative_file_paths is read once, with a warning', async () => {
    const dir = copyFixture('mcap-talker');
    const meta = readFileSync(join(dir, 'metadata.yaml'), 'utf8');
    writeFileSync(join(dir, 'metadata.yaml'), meta.replace(/(\n(\s*)- talker\.mcap)/, '$1\n$2- ./talker.mcap'));
    const b = await openBag(dir);
    expect(b.files).toHaveLength(1);
    expect([...b.messages()]).toHaveLength(20);
    expect(b.warnings.find((w) => w.code === 'bag.duplicate_file')!.message).toMatch(/relative_file_paths\[1\] \(\.\/talker\.mcap\) names the same file as relative_file_paths\[0\]; it is read once/);
    b.close();
  });

  it('duplicate MCAP channel ids with different contents are an error (in the data section and in the summary)', async () => {
    const rec = [schemaRecord(1, 'std_msgs/msg/String', 'ros2msg', STRING_DEF), channelRecord(1, 1, '/topic'), channelRecord(1, 1, '/other')];
    const p = await inputError(openBag(write('dup.mcap', mcapFile(rec))));
    expect(p.code).toBe('bag.mcap_id_conflict');
    expect(p.message).toMatch(/Channel id 1 is defined twice with different contents: topic "\/topic".*then topic "\/other"/);
    // Repeats with the same contents are allowed (writers repeat channels in every chunk).
    const same = await openBag(write('same.mcap', mcapFile([...rec.slice(0, 2), channelRecord(1, 1, '/topic')])));
    same.close();
    // In an indexed file: the summary's two Channel records.
    const dir = join(tempDir(), 'sum');
    const { file } = await writeCellBag(dir, 0.05, { compression: 'none' });
    const bytes = readFileSync(file);
    const s = await mcapSummary(file);
    const start = Number(s.footer.summaryStart);
    const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
    // Give the second Channel record of the summary the first one's id.
    let q = start;
    const ids: number[] = [];
    while (q < bytes.length - 37) {
      const len = Number(view.getBigUint64(q + 1, true));
      if (bytes[q] === 0x04) {
        ids.push(q);
        if (ids.length === 2) view.setUint16(q + 9, view.getUint16(ids[0]! + 9, true), true);
      }
      q += 9 + len;
    }
    view.setUint32(bytes.length - 8 - 4, 0, true);
    const e = await inputError(openBag(write('dup-summary.mcap', bytes)));
    expect(e.code).toBe('bag.mcap_id_conflict');
  });

  it('terminal escape codes and newlines in topic names are escaped in bag info', async () => {
    const evil = '/a\u001b[2J\u001b]0;owned\u0007\nfake: line';
    const file = write('evil.mcap', mcapFile([schemaRecord(1, 'std_msgs/msg/String', 'ros2msg', STRING_DEF), channelRecord(1, 1, evil)]));
    const r = await bag('info', file);
    expect(r.code).toBe(0);
    expect(r.stdout).not.toMatch(/[\u0000-\u0009\u000b-\u001f\u007f]/);
    expect(r.stdout).toContain('/a\\x1b[2J\\x1b]0;owned\\x07\\nfake: line');
  });

  it('replay warns when the wrench rate is off sample_rate_hz by more than 5 %, and when many samples share one time', async () => {
    const cell = loadCell(join(__dirname, '../../config/demo_cell.yaml'));
    const configs = { left: cell.left.config, right: cell.right.config };
    const make = async (name: string, times: bigint[]): Promise<string> => {
      const dir = join(tempDir(), name);
      const w = await createBagWriter(dir);
      const t = await w.addTopic({ name: '/left/wrench', type: 'geometry_msgs/msg/WrenchStamped' });
      for (const ns of times) {
        const sec = Number(ns / 1_000_000_000n);
        const nsec = Number(ns % 1_000_000_000n);
        await w.write(t, ns, encodeWrenchStamped([sec, nsec, 0, 0, -5, 0, 0, 0], 0, 'left_ft'));
      }
      await w.close();
      return dir;
    };
    // 100 Hz for 3 s, while the parameters say 1000 Hz.
    const slow = await make('slow', Array.from({ length: 300 }, (_, k) => T0 + BigInt(k) * 10_000_000n));
    const a = await replayPath(slow, { arms: ['left'], configs });
    const rate = a.warnings.find((w) => w.code === 'replay.wrench_rate_mismatch')!;
    expect(rate.message).toMatch(/runs at 100\.0 Hz .*wrench_filter\.sample_rate_hz is 1000: more than 5 % apart/);
    // 1000 Hz, with 3000 samples sharing one time in the middle.
    const times = Array.from({ length: 2000 }, (_, k) => T0 + BigInt(k) * 1_000_000n);
    const burst = [...times.slice(0, 1000), ...Array.from({ length: 3000 }, () => times[1000]!), ...times.slice(1001)];
    const b = await replayPath(await make('burst', burst), { arms: ['left'], configs });
    expect(b.warnings.find((w) => w.code === 'replay.wrench_same_time')!.message).toMatch(/^2999 of 4999 wrench samples share the log time of the sample before \(longest: 3000 samples/);
    expect(b.warnings.some((w) => w.code === 'replay.wrench_rate_mismatch')).toBe(false);
    // The demo rate gives neither warning.
    const fine = await replayPath(await make('fine', times), { arms: ['left'], configs });
    expect(fine.warnings.filter((w) => w.code.startsWith('replay.wrench_'))).toEqual([]);
  });
});

describe('declared counts and lengths against the bytes that are left', () => {
  it('CDR sequence counts of 2^32-1 (uint8[], string[], float64[]) are decode errors, not allocations or long loops', async () => {
    const def = 'uint8[] data\nstring[] names\nfloat64[] values';
    const msgs = [
      new Bytes().raw(CDR_LE).u32(0xffffffff).done(),
      new Bytes().raw(CDR_LE).u32(0).u32(0xffffffff).u32(1).done(),
      new Bytes().raw(CDR_LE).u32(0).u32(0).u32(0xffffffff).done(),
    ];
    const file = write('seq.mcap', mcapFile([schemaRecord(1, 'fuzz_msgs/msg/Seq', 'ros2msg', def), channelRecord(1, 1, '/seq'), ...msgs.map((m, k) => messageRecord(1, T0 + BigInt(k), m))]));
    const b = await openBag(file);
    const dec = bagDecoders(b);
    for (const m of b.messages()) expect((await inputError(() => dec.decode(m.type, m.data))).code).toBe('bag.decode_failed');
    b.close();
  });

  it('a JointState whose first message declares 2^32-1 names is a layout error naming the topic, not a huge allocation', async () => {
    const dir = join(tempDir(), 'joints');
    const w = await createBagWriter(dir);
    const t = await w.addTopic({ name: '/left/joint_states', type: 'sensor_msgs/msg/JointState' });
    // header: stamp (8 bytes), frame_id "" (length 1, NUL), then the name count.
    await w.write(t, T0, new Bytes().raw(CDR_LE).u32(1).u32(2).u32(1).u8(0).u8(0).u8(0).u8(0).u32(0xffffffff).done());
    await w.close();
    const b = await openBag(dir);
    const p = await inputError(() => readTopicSeries(b, '/left/joint_states'));
    expect(p.where?.topic).toBe('/left/joint_states');
    b.close();
  });

  it('lz4 and zstd chunks: a declared size beyond what the compressed bytes can hold is refused before decompressing', async () => {
    const { declaredSizeProblem } = await import('../../src/bag/zstd.js');
    // LZ4 expands at most about 255:1 (lz4 block format: one length byte per 255 bytes of match).
    expect(declaredSizeProblem('lz4', new Uint8Array(1000), 10_000_000, 1 << 30)).toMatch(/more than lz4 can expand 1000 bytes to/);
    expect(declaredSizeProblem('lz4', new Uint8Array(1000), 200_000, 1 << 30)).toBeUndefined();
    expect(declaredSizeProblem('zstd', zstdRleBomb(2).frame, 2 * 131072, 1 << 30)).toBeUndefined();
    expect(declaredSizeProblem('zstd', zstdRleBomb(2).frame, 2 * 131072 + 1, 1 << 30)).toMatch(/can regenerate at most 262144/);
    expect(declaredSizeProblem('bz2', new Uint8Array(10), 2 ** 31, 1 << 30)).toMatch(/more than the limit/);
  });
});
