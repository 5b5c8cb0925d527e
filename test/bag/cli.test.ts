/** `antiphon bag info` and `antiphon bag dump`, run in-process through commander. */
import { copyFileSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeEach, describe, expect, it } from 'vitest';
import { register } from '../../src/cli/bag.js';
import { createBagWriter, encodeWrenchStamped } from '../../src/bag/index.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered } from '../support/run-command.js';
import { copyFixture, SKIP_FIXTURES, fixture, tempDir, writeCellBag } from './helpers.js';

/** `antiphon <name> <args…>` in-process (`name` is `bag`), with stdout and stderr as `out` and `err`. */
// Each run is a fresh command: warnings already given by an earlier run are given again.
beforeEach(() => resetLogging());

async function run(name: string, ...args: string[]): Promise<{ code: number; out: string; err: string }> {
  const r = await runRegistered(register, name, args);
  return { code: r.code, out: r.stdout, err: r.stderr };
}

describe.skipIf(SKIP_FIXTURES)('bag info / bag dump on the ROS 2 fixtures', () => {
  it('info --json: storage, times, counts, topics with QoS', async () => {
    const r = await run('bag', 'info', fixture('mcap-talker'), '--json');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    // Source: the fixture's metadata.yaml (rosbag2 test resources).
    expect(j).toMatchObject({ ok: true, storage: 'mcap', start_ns: '1585866235112411371', duration_ns: '4531096768', message_count: 20 });
    expect(j.topics.map((t: { name: string; count: number }) => [t.name, t.count])).toEqual([['/parameter_events', 0], ['/rosout', 10], ['/topic', 10]]);
    expect(j.topics[2]).toMatchObject({ type: 'std_msgs/msg/String', serialization_format: 'cdr' });
    expect(j.topics[2].offered_qos[0]).toMatchObject({ reliability: 1, durability: 2 });
  });

  it('info (text) for the sqlite3 twin', async () => {
    // Source: the fixture's metadata.yaml (duration, counts) and its QoS (reliability 1, durability 2).
    const r = await run('bag', 'info', fixture('sqlite3-talker'));
    expect(r.code).toBe(0);
    expect(r.out).toContain('storage:   sqlite3 (1 file)');
    expect(r.out).toContain('duration:  4.531096768 s');
    expect(r.out).toMatch(/\/topic\s+std_msgs\/msg\/String\s+10 msgs/);
    expect(r.out).toContain('QoS: reliable, volatile');
  });

  it('dump: one JSON line per message, 64-bit integers as strings, uint8 arrays as base64', async () => {
    const r = await run('bag', 'dump', fixture('mcap-cdr_test'));
    expect(r.code).toBe(0);
    const lines = r.out.trim().split('\n').map((l) => JSON.parse(l));
    // Source: rosbag2 test resources (7 messages, BasicTypes int32_value 123).
    expect(lines).toHaveLength(7);
    expect(lines[0]).toMatchObject({ topic: '/test_topic', type: 'test_msgs/msg/BasicTypes', log_time_ns: '1586406456763032325' });
    expect(lines[0].message).toMatchObject({ int32_value: 123, int64_value: '0', uint64_value: '0' });
    const arrays = lines.find((l) => l.topic === '/array_topic').message;
    // Source: test_msgs Arrays.msg defaults: uint8[3] [0, 1, 255], uint64[3] [0, 1, 2^64-1].
    expect(arrays.uint8_values_default).toBe(Buffer.from([0, 1, 255]).toString('base64'));
    expect(arrays.uint64_values_default).toEqual(['0', '1', '18446744073709551615']);
    expect(arrays.int64_values_default).toEqual(['0', '9223372036854775807', '-9223372036854775808']);
  });

  it('dump --topic --start --end --limit', async () => {
    const all = await run('bag', 'dump', fixture('sqlite3-talker'), '--topic', '/topic');
    expect(all.out.trim().split('\n').map((l) => JSON.parse(l).message.data)).toEqual(Array.from({ length: 10 }, (_, i) => `Hello, world! ${i}`));
    const some = await run('bag', 'dump', fixture('sqlite3-talker'), '--topic', '/topic', '--start', '1', '--end', '2.1', '--limit', '2');
    // Source: fixture timing (the talker publishes every 0.5 s from 0.0002 s after the bag start).
    expect(some.out.trim().split('\n').map((l) => JSON.parse(l).message.data)).toEqual(['Hello, world! 2', 'Hello, world! 3']);
    // Source: src/util/errors.ts exit codes (2 for bad input).
    const bad = await run('bag', 'dump', fixture('sqlite3-talker'), '--topic', '/nope');
    expect(bad.code).toBe(2);
    expect(bad.err).toContain('topic /nope is not in the bag');
    expect((await run('bag', 'dump', fixture('sqlite3-talker'), '--limit', 'x')).code).toBe(2);
    expect((await run('bag', 'dump', fixture('sqlite3-talker'), '--start', '3', '--end', '1')).code).toBe(2);
  });

  it('dump --definitions takes definitions from another bag', async () => {
    // A copy of the sqlite3 twin without its message_definitions table rows.
    const dir = copyFixture('sqlite3-cdr_test');
    const Database = (await import('better-sqlite3')).default;
    const db = new Database(join(dir, 'cdr_test_0.db3'));
    db.exec('DELETE FROM message_definitions');
    db.close();
    const without = await run('bag', 'dump', dir);
    expect(without.code).toBe(1);
    // Nothing dropped: every message is a line; the undecoded ones carry their bytes and the reason.
    const lines = without.out.trim().split('\n').map((l) => JSON.parse(l));
    expect(lines).toHaveLength(7);
    expect(lines[0]).toMatchObject({ topic: '/test_topic', type: 'test_msgs/msg/BasicTypes', log_time_ns: '1586406456763032325', undecoded: expect.stringContaining('no message definition for type test_msgs/msg/BasicTypes') });
    // One warning per topic (JSON lines: stderr is not a terminal here), never one per message.
    const warnings = without.err.trim().split('\n').map((l) => JSON.parse(l));
    expect(warnings.map((w) => [w.where.topic, w.count])).toEqual([['/test_topic', 3], ['/array_topic', 4]]);
    expect(warnings[0].hint).toContain('--definitions');
    // Source: fixtures README (take the definitions from the MCAP twin).
    const withDefs = await run('bag', 'dump', dir, '--definitions', fixture('mcap-cdr_test'));
    expect(withDefs.code).toBe(0);
    expect(withDefs.out).toBe((await run('bag', 'dump', fixture('mcap-cdr_test'))).out);
  });

  it('bad input exits 2 and names the file', async () => {
    const dir = copyFixture('mcap-talker');
    writeFileSync(join(dir, 'metadata.yaml'), readFileSync(join(dir, 'metadata.yaml'), 'utf8').replace('storage_identifier: mcap', 'storage_identifier: foo'));
    const r = await run('bag', 'info', dir);
    // Source: src/util/errors.ts (exit 2 for bad input; file and key in the message).
    expect(r.code).toBe(2);
    expect(r.err).toContain(`${join(dir, 'metadata.yaml')}, key storage_identifier: storage_identifier 'foo' is not supported`);
    const j = await run('bag', 'info', dir, '--json');
    expect(JSON.parse(j.out)).toMatchObject({ ok: false, errors: [{ code: 'bag.unknown_storage' }] });
  });
});

describe('bag dump exit codes', () => {
  it('exit 1 and one warning for the topic whose messages it cannot decode; every message still a line', async () => {
    const dir = join(tempDir(), 'mixed');
    const w = await createBagWriter(dir, { allowMissingDefinitions: true });
    const good = await w.addTopic({ name: '/w', type: 'geometry_msgs/msg/WrenchStamped' });
    const odd = await w.addTopic({ name: '/odd', type: 'my_pkg/msg/Odd' });
    await w.write(good, 10n, encodeWrenchStamped([0, 10, 1, 2, 3, 4, 5, 6], 0, 'f'));
    await w.write(odd, 11n, new Uint8Array([0, 1, 0, 0]));
    await w.write(good, 12n, encodeWrenchStamped([0, 12, 1, 2, 3, 4, 5, 6], 0, 'f'));
    await w.close();
    const r = await run('bag', 'dump', dir);
    // Source: the task's exit-code rule (1 when some message could not be decoded).
    expect(r.code).toBe(1);
    const lines = r.out.trim().split('\n').map((l) => JSON.parse(l));
    expect(lines.map((l) => l.log_time_ns)).toEqual(['10', '11', '12']);
    // Source: the bytes written above, base64 (RFC 4648).
    expect(lines[1]).toEqual({ topic: '/odd', type: 'my_pkg/msg/Odd', log_time_ns: '11', cdr_base64: 'AAEAAA==', undecoded: expect.stringContaining('no message definition for type my_pkg/msg/Odd') });
    const warnings = r.err.trim().split('\n').map((l) => JSON.parse(l));
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatchObject({ code: 'bag.undecoded', where: { topic: '/odd' }, type: 'my_pkg/msg/Odd', count: 1 });
    expect(warnings[0].hint).toContain('my_pkg/msg/Odd.msg');
    const allowed = await run('bag', 'dump', dir, '--allow-undecoded');
    expect(allowed.code).toBe(0);
    expect(allowed.out).toBe(r.out);
  });

  it('exit 1 when a damaged chunk was skipped; the intact messages still print', async () => {
    const dir = join(tempDir(), 'cell');
    const { file } = await writeCellBag(dir, 0.05, { compression: 'none', chunkSize: 2048 });
    const bytes = readFileSync(file);
    bytes[3000] = bytes[3000]! ^ 0xff;
    const path = join(tempDir(), 'damaged.mcap');
    writeFileSync(path, bytes);
    // Source: MCAP specification (chunk CRC) and the task's exit-code rule.
    const r = await run('bag', 'dump', path, '--topic', '/left/wrench');
    expect(r.code).toBe(1);
    const warnings = r.err.trim().split('\n').map((l) => JSON.parse(l));
    expect(warnings.filter((w) => w.code === 'bag.mcap_chunk_corrupt')).toHaveLength(1);
    expect(warnings[0].where.file).toMatch(/damaged\.mcap$/);
    expect(warnings[0].msg).toMatch(/chunk at byte \d+ is damaged/);
    expect(r.out.trim().split('\n').length).toBeGreaterThan(10);
    const clean = join(tempDir(), 'clean.mcap');
    copyFileSync(file, clean);
    expect((await run('bag', 'dump', clean, '--limit', '3')).code).toBe(0);
  });
});
