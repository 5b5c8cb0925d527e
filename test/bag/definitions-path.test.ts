/**
 * The definition search path (src/bag/library.ts): the bag, --definitions, AMENT_PREFIX_PATH,
 * the shipped definitions; services, actions, empty types, both type spellings, IDL schemas,
 * and bad definitions reported with their file and line.
 *
 * Outside references: Debian's ros2-test-interface-files (ROS 2's own test interface files,
 * /usr/share/test_interface_files: msg, srv, action), laid out as an install prefix under the
 * package name test_msgs (ROS 2's test_msgs package is generated from these files: from memory);
 * the real rosbag2 recordings in ../shared/fixtures/rosbag2 (cdr_test: test_msgs BasicTypes and
 * Arrays); ROS 2's own .msg-to-.idl converter (Debian python3-rosidl with python3-empy); the CDR
 * layout of a service event as FORMAT-NOTES.md states it, encoded with @foxglove/cdr's writer.
 */
import { spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdirSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { CdrWriter } from '@foxglove/cdr';
import { beforeEach, describe, expect, it } from 'vitest';
import { bagDecoders, createBagWriter, encodeWrenchStamped, openBag, toJsonValue, type Bag } from '../../src/bag/index.js';
import { register } from '../../src/cli/bag.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered } from '../support/run-command.js';
import { copyFixture, FIXTURES, fixture, tempDir } from './helpers.js';

const TIF = '/usr/share/test_interface_files';
const haveTif = existsSync(join(TIF, 'msg', 'BasicTypes.msg'));
const CI = !!process.env['CI'];
const needTif = (): void => {
  if (!haveTif) throw new Error('ros2-test-interface-files is missing: .ci/run must install it');
};

beforeEach(() => resetLogging());

async function run(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  const r = await runRegistered(register, 'bag', args);
  return { code: r.code, out: r.stdout, err: r.stderr };
}

/** Debian's test interface files as an install prefix: <prefix>/share/test_msgs/{msg,srv,action}. */
function layPrefix(): string {
  const prefix = join(tempDir(), 'install');
  for (const sub of ['msg', 'srv', 'action']) {
    mkdirSync(join(prefix, 'share', 'test_msgs', sub), { recursive: true });
    for (const f of readdirSync(join(TIF, sub))) cpSync(join(TIF, sub, f), join(prefix, 'share', 'test_msgs', sub, f));
  }
  return prefix;
}

const json = (v: unknown): string => JSON.stringify(toJsonValue(v));
function decodedAll(bag: Bag, dec: ReturnType<typeof bagDecoders>): string[] {
  return [...bag.messages()].map((m) => `${m.topic} ${m.logTimeNs} ${json(dec.decode(m.type, m.data))}`);
}

/** A copy of the sqlite3 cdr_test fixture without any definitions (as a Humble recording has none). */
async function sqliteWithoutDefinitions(): Promise<string> {
  const dir = copyFixture('sqlite3-cdr_test');
  const Database = (await import('better-sqlite3')).default;
  const db = new Database(join(dir, 'cdr_test_0.db3'));
  db.exec('DROP TABLE message_definitions');
  db.close();
  return dir;
}

describe.skipIf(!FIXTURES || (!haveTif && !CI))('definitions from the ROS environment (ros2-test-interface-files as an install prefix)', () => {
  it('a sqlite3 bag without definitions decodes through AMENT_PREFIX_PATH, equal to its MCAP twin', async () => {
    needTif();
    const prefix = layPrefix();
    const dir = await sqliteWithoutDefinitions();
    const db = await openBag(dir);
    const mcap = await openBag(fixture('mcap-cdr_test'));
    try {
      expect(db.definitions().size).toBe(0);
      const none = bagDecoders(db, { amentPrefixPath: '', builtin: false });
      expect(none.origin('test_msgs/msg/BasicTypes').source).toBe('missing');
      const env = bagDecoders(db, { amentPrefixPath: `/nonexistent:${prefix}`, builtin: false });
      expect(env.origin('test_msgs/msg/Arrays')).toEqual({ source: 'environment', from: join(prefix, 'share/test_msgs/msg/Arrays.msg') });
      // Source: the MCAP twin, decoded with the definitions rosbag2 recorded in it.
      expect(decodedAll(db, env)).toEqual(decodedAll(mcap, bagDecoders(mcap, { amentPrefixPath: '' })));
    } finally {
      db.close();
      mcap.close();
    }
  });

  it('bag dump and bag info through the environment, an option folder and the old type spelling', async () => {
    needTif();
    const prefix = layPrefix();
    const dir = await sqliteWithoutDefinitions();
    const reference = await run('dump', fixture('mcap-cdr_test'));
    expect(reference.code).toBe(0);
    const saved = process.env['AMENT_PREFIX_PATH'];
    try {
      process.env['AMENT_PREFIX_PATH'] = prefix;
      const viaEnv = await run('dump', dir);
      expect(viaEnv.code, viaEnv.err).toBe(0);
      expect(viaEnv.out).toBe(reference.out);
      const info = JSON.parse((await run('info', dir, '--json')).out);
      expect(info.topics.map((t: { definition: { source: string } }) => t.definition.source)).toEqual(['ROS environment', 'ROS environment']);
      delete process.env['AMENT_PREFIX_PATH'];
      // A tree of packages (<pkg>/msg/…) and an install prefix, given as --definitions.
      expect((await run('dump', dir, '--definitions', join(prefix, 'share'))).out).toBe(reference.out);
      const opt = JSON.parse((await run('info', dir, '--json', '--definitions', prefix)).out);
      expect(opt.topics[1].definition).toEqual({ source: 'option', from: join(prefix, 'share/test_msgs/msg/BasicTypes.msg') });
      // Older bags spell types pkg/Type: the same type everywhere.
      const Database = (await import('better-sqlite3')).default;
      const db = new Database(join(dir, 'cdr_test_0.db3'));
      db.exec("UPDATE topics SET type = replace(type, 'test_msgs/msg/', 'test_msgs/')");
      db.close();
      const old = await run('dump', dir, '--definitions', prefix);
      expect(old.code).toBe(0);
      expect(old.out).toBe(reference.out);
      const oldInfo = JSON.parse((await run('info', dir, '--json', '--definitions', prefix)).out);
      expect(oldInfo.topics[1]).toMatchObject({ type: 'test_msgs/msg/BasicTypes', recorded_type: 'test_msgs/BasicTypes', definition: { source: 'option' } });
    } finally {
      if (saved === undefined) delete process.env['AMENT_PREFIX_PATH'];
      else process.env['AMENT_PREFIX_PATH'] = saved;
    }
  });
});

/** A service event of test_msgs/srv/BasicTypes, laid out as FORMAT-NOTES.md says, request only. */
function basicTypesEvent(seq: bigint): Uint8Array {
  const w = new CdrWriter();
  w.uint8(1); // event_type REQUEST_RECEIVED
  w.int32(1700000000).uint32(250);
  w.uint8Array(Array.from({ length: 16 }, (_, i) => i + 1), false); // client_gid char[16]
  w.int64(seq);
  w.sequenceLength(1); // request[<=1]
  w.int8(1).uint8(2).uint8(3).float32(1.5).float64(-2.25).int8(-4).uint8(5).int16(-6).uint16(7).int32(-8).uint32(9).int64(-10n).uint64(11n).string('beam');
  w.sequenceLength(0); // response[<=1]
  return w.data;
}

const BASIC_REQUEST = { bool_value: true, byte_value: 2, char_value: 3, float32_value: 1.5, float64_value: -2.25, int8_value: -4, uint8_value: 5, int16_value: -6, uint16_value: 7, int32_value: -8, uint32_value: 9, int64_value: '-10', uint64_value: '11', string_value: 'beam' };

describe.skipIf(!haveTif && !CI)('services, actions and empty types', () => {
  it('a service-event MCAP whose schema is the .srv text decodes (info, request, response)', async () => {
    needTif();
    const srv = readFileSync(join(TIF, 'srv', 'BasicTypes.srv'), 'utf8');
    const dir = join(tempDir(), 'events');
    const w = await createBagWriter(dir);
    const t = await w.addTopic({ name: '/basic/_service_event', type: 'test_msgs/srv/BasicTypes_Event', definition: srv });
    await w.write(t, 100n, basicTypesEvent(42n));
    await w.close();
    const r = await run('dump', dir);
    expect(r.code, r.err).toBe(0);
    const line = JSON.parse(r.out.trim());
    expect(line.type).toBe('test_msgs/srv/BasicTypes_Event');
    expect(line.message.info).toEqual({ event_type: 1, stamp: { sec: 1700000000, nanosec: 250 }, client_gid: Buffer.from(Array.from({ length: 16 }, (_, i) => i + 1)).toString('base64'), sequence_number: '42' });
    expect(line.message.request).toEqual([BASIC_REQUEST]);
    expect(line.message.response).toEqual([]);
    const info = JSON.parse((await run('info', dir, '--json')).out);
    expect(info.topics[0].definition.source).toBe('bag');
  });

  it('the same event, its _Request type and an action feedback from files on the search path', async () => {
    needTif();
    const prefix = layPrefix();
    const dir = join(tempDir(), 'nodefs');
    const w = await createBagWriter(dir, { allowMissingDefinitions: true });
    const ev = await w.addTopic({ name: '/basic/_service_event', type: 'test_msgs/srv/BasicTypes_Event' });
    const req = await w.addTopic({ name: '/basic_request', type: 'test_msgs/srv/BasicTypes_Request' });
    const fb = await w.addTopic({ name: '/fibonacci/_action/feedback', type: 'test_msgs/action/Fibonacci_FeedbackMessage' });
    const st = await w.addTopic({ name: '/fibonacci/_action/status', type: 'action_msgs/msg/GoalStatusArray' });
    const empty = await w.addTopic({ name: '/empty', type: 'test_msgs/msg/Empty' });
    await w.write(ev, 1n, basicTypesEvent(7n));
    const r0 = new CdrWriter();
    r0.int8(0).uint8(0).uint8(0).float32(0).float64(0).int8(0).uint8(0).int16(0).uint16(0).int32(0).uint32(0).int64(0n).uint64(0n).string('');
    await w.write(req, 2n, r0.data);
    // Feedback message: goal_id (UUID, uint8[16]), feedback (int32[] sequence).
    const f = new CdrWriter();
    f.uint8Array(Array.from({ length: 16 }, () => 9), false);
    f.int32Array([0, 1, 1, 2], true);
    await w.write(fb, 3n, f.data);
    // Goal status array: one status (goal_info: goal_id, stamp), status 4 (SUCCEEDED).
    const s = new CdrWriter();
    s.sequenceLength(1).uint8Array(Array.from({ length: 16 }, () => 9), false).int32(5).uint32(6).int8(4);
    await w.write(st, 4n, s.data);
    // An empty struct is one byte (FORMAT-NOTES.md).
    await w.write(empty, 5n, new Uint8Array([0, 1, 0, 0, 0]));
    await w.close();
    const without = await run('dump', dir);
    expect(without.code).toBe(1);
    const r = await run('dump', dir, '--definitions', prefix);
    expect(r.code, r.err).toBe(0);
    const lines = r.out.trim().split('\n').map((l) => JSON.parse(l));
    expect(lines[0].message.request).toEqual([BASIC_REQUEST]);
    expect(lines[1].message).toMatchObject({ bool_value: false, string_value: '' });
    expect(lines[2].message).toEqual({ goal_id: { uuid: Buffer.alloc(16, 9).toString('base64') }, feedback: { sequence: [0, 1, 1, 2] } });
    expect(lines[3].message).toEqual({ status_list: [{ goal_info: { goal_id: { uuid: Buffer.alloc(16, 9).toString('base64') }, stamp: { sec: 5, nanosec: 6 } }, status: 4 }] });
    expect(lines[4].message).toEqual({});
    const info = JSON.parse((await run('info', dir, '--json', '--definitions', prefix)).out);
    const src = Object.fromEntries(info.topics.map((t: { name: string; definition: { source: string; from?: string } }) => [t.name, t.definition]));
    expect(src['/basic/_service_event']).toEqual({ source: 'option', from: join(prefix, 'share/test_msgs/srv/BasicTypes.srv') });
    expect(src['/fibonacci/_action/feedback']).toEqual({ source: 'option', from: join(prefix, 'share/test_msgs/action/Fibonacci.action') });
    // Our writer recorded the shipped GoalStatusArray definition in the bag.
    expect(src['/fibonacci/_action/status']).toEqual({ source: 'bag', from: join(dir, 'nodefs_0.mcap') });
    const bag = await openBag(dir);
    try {
      expect(bagDecoders(bag, { amentPrefixPath: '' }).library.resolve('action_msgs/msg/GoalStatusArray')).toMatchObject({ ok: true });
      expect(bagDecoders({ definitions: () => new Map() }, { amentPrefixPath: '' }).origin('action_msgs/msg/GoalStatusArray')).toEqual({ source: 'builtin', from: 'built-in' });
    } finally {
      bag.close();
    }
    expect(src['/empty']).toEqual({ source: 'option', from: join(prefix, 'share/test_msgs/msg/Empty.msg') });
  });

  it('an empty message type recorded with an empty definition text is a type, not a missing definition', async () => {
    const dir = join(tempDir(), 'empty');
    const w = await createBagWriter(dir);
    const t = await w.addTopic({ name: '/tick', type: 'my_pkg/Tick', definition: '' });
    await w.write(t, 1n, new Uint8Array([0, 1, 0, 0, 0]));
    await w.close();
    const r = await run('dump', dir);
    expect(r.code, r.err).toBe(0);
    expect(JSON.parse(r.out)).toEqual({ topic: '/tick', type: 'my_pkg/msg/Tick', log_time_ns: '1', message: {} });
    expect(JSON.parse((await run('info', dir, '--json')).out).topics[0].definition.source).toBe('bag');
  });
});

const py = '/usr/bin/python3';
const haveIdl = spawnSync(py, ['-c', 'from rosidl_adapter.msg import convert_msg_to_idl'], { encoding: 'utf8' }).status === 0;

describe.skipIf(!FIXTURES || ((!haveIdl || !haveTif) && !CI))('ros2idl schemas', () => {
  it('an MCAP whose schemas are ROS 2 IDL (made by rosidl from the same .msg files) decodes like the ros2msg one', async () => {
    needTif();
    if (!haveIdl) throw new Error('python3-rosidl with python3-empy is missing: .ci/run must install them');
    const out = tempDir();
    const conv = spawnSync(py, ['-c', `
import pathlib, sys
from rosidl_adapter.msg import convert_msg_to_idl
for n in ['Arrays', 'BasicTypes', 'Constants', 'Defaults']:
    convert_msg_to_idl(pathlib.Path('${TIF}'), 'test_msgs', pathlib.Path('msg/%s.msg' % n), pathlib.Path(sys.argv[1]))
`, out], { encoding: 'utf8' });
    expect(conv.status, conv.stderr).toBe(0);
    const idl = (n: string): string => readFileSync(join(out, `${n}.idl`), 'utf8');
    const sep = '='.repeat(80);
    // As rosbag2 writes an IDL schema: the root's IDL, then `IDL: <type>` blocks of its dependencies.
    const arrays = idl('Arrays') + ['BasicTypes', 'Constants', 'Defaults'].map((n) => `\n${sep}\nIDL: test_msgs/msg/${n}\n${idl(n)}`).join('');
    const src = await openBag(fixture('mcap-cdr_test'));
    const dir = join(tempDir(), 'idl');
    const w = await createBagWriter(dir);
    const ids = new Map<string, number>();
    for (const t of src.topics()) {
      const text = t.type.endsWith('Arrays') ? arrays : idl('BasicTypes');
      ids.set(t.name, await w.addTopic({ name: t.name, type: t.type, definition: text, definitionEncoding: 'ros2idl', offeredQos: t.offeredQosText }));
    }
    for (const m of src.messages()) await w.write(ids.get(m.topic)!, m.logTimeNs, m.data);
    await w.close();
    const bag = await openBag(dir);
    try {
      const dec = bagDecoders(bag, { builtin: false, amentPrefixPath: '' });
      expect(dec.origin('test_msgs/msg/Arrays').source).toBe('bag');
      expect(decodedAll(bag, dec)).toEqual(decodedAll(src, bagDecoders(src, { amentPrefixPath: '' })));
    } finally {
      bag.close();
      src.close();
    }
  });
});

describe('bad definitions: reported with file and line, the topic undecoded, every other topic decoding', () => {
  it('a definition that does not parse, a nested type that cannot be found, a cycle of nested types', async () => {
    const dir = join(tempDir(), 'bad');
    const w = await createBagWriter(dir);
    const sep = '='.repeat(80);
    const topics = [
      ['/bad_parse', 'my_pkg/msg/BadParse', 'float64 x\n# a comment\nthis is not a field!\nfloat64 y'],
      ['/missing', 'my_pkg/msg/Outer', 'float64 a\nInner inner'],
      ['/cycle', 'my_pkg/msg/A', `B b\n${sep}\nMSG: my_pkg/B\nfloat64 x\nA a`],
    ] as const;
    const ids: number[] = [];
    for (const [name, type, definition] of topics) ids.push(await w.addTopic({ name, type, definition }));
    const good = await w.addTopic({ name: '/wrench', type: 'geometry_msgs/msg/WrenchStamped' });
    for (let k = 0; k < 3; k++) {
      for (const id of ids) await w.write(id, BigInt(10 * k + 1), new Uint8Array([0, 1, 0, 0, 1, 2, 3, 4, 5, 6, 7, 8]));
      await w.write(good, BigInt(10 * k + 2), encodeWrenchStamped([0, k, 1, 2, 3, 4, 5, 6], 0, 'ft'));
    }
    const { file } = await w.close();
    const r = await run('dump', dir);
    // Source: the task's rules (exit 1 when messages are left undecoded; nothing dropped).
    expect(r.code).toBe(1);
    const lines = r.out.trim().split('\n').map((l) => JSON.parse(l));
    expect(lines).toHaveLength(12);
    expect(lines.filter((l) => l.topic === '/wrench').map((l) => l.message.wrench.force.x)).toEqual([1, 1, 1]);
    expect(lines.filter((l) => l.undecoded !== undefined)).toHaveLength(9);
    const warnings = r.err.trim().split('\n').map((l) => JSON.parse(l));
    expect(warnings).toHaveLength(3);
    const by = Object.fromEntries(warnings.map((x) => [x.where.topic, x]));
    expect(by['/bad_parse'].msg).toContain(`${file}:3, key schema my_pkg/msg/BadParse: definition of my_pkg/msg/BadParse does not parse`);
    expect(by['/missing'].msg).toContain(`${file}:2, key schema my_pkg/msg/Outer: nested type my_pkg/msg/Inner (field inner of my_pkg/msg/Outer) is not defined`);
    expect(by['/cycle'].msg).toContain(`${file}:5, key schema my_pkg/msg/A: nested types form a cycle: my_pkg/msg/A -> my_pkg/msg/B -> my_pkg/msg/A`);
    for (const x of warnings) expect(x.count).toBe(3);
    const info = JSON.parse((await run('info', dir, '--json')).out);
    const defs = Object.fromEntries(info.topics.map((t: { name: string; definition: unknown }) => [t.name, t.definition]));
    expect(defs['/missing']).toMatchObject({ source: 'missing', problem: { code: 'bag.definition_missing_nested', where: { file, line: 2 } } });
    expect(defs['/wrench']).toMatchObject({ source: 'bag' });
  });

  it('a bad file on the search path names that file and line', async () => {
    const prefix = join(tempDir(), 'install');
    mkdirSync(join(prefix, 'share', 'my_pkg', 'msg'), { recursive: true });
    mkdirSync(join(prefix, 'share', 'my_pkg', 'srv'), { recursive: true });
    writeFileSync(join(prefix, 'share', 'my_pkg', 'msg', 'Bad.msg'), 'float64 x\nfloat64 [oops\n');
    writeFileSync(join(prefix, 'share', 'my_pkg', 'srv', 'Half.srv'), 'float64 x\n');
    const dir = join(tempDir(), 'bad-file');
    const w = await createBagWriter(dir, { allowMissingDefinitions: true });
    await w.write(await w.addTopic({ name: '/bad', type: 'my_pkg/Bad' }), 1n, new Uint8Array([0, 1, 0, 0]));
    await w.write(await w.addTopic({ name: '/half/_service_event', type: 'my_pkg/srv/Half_Event' }), 2n, new Uint8Array([0, 1, 0, 0]));
    await w.close();
    const bag = await openBag(dir);
    try {
      const dec = bagDecoders(bag, { amentPrefixPath: prefix });
      expect(dec.origin('my_pkg/msg/Bad')).toMatchObject({ source: 'missing', problem: { code: 'bag.definition_unparsed', where: { file: join(prefix, 'share/my_pkg/msg/Bad.msg'), line: 2 } } });
      expect(dec.origin('my_pkg/srv/Half_Event').problem?.message).toContain("one '---' line");
    } finally {
      bag.close();
    }
  });

  it('--definitions that names nothing is bad input (exit 2) naming the option', async () => {
    const dir = join(tempDir(), 'one');
    const w = await createBagWriter(dir);
    await w.write(await w.addTopic({ name: '/w', type: 'geometry_msgs/msg/WrenchStamped' }), 1n, encodeWrenchStamped([0, 1, 1, 2, 3, 4, 5, 6], 0, 'ft'));
    await w.close();
    const r = await run('dump', dir, '--definitions', join(dir, 'nowhere'));
    // Source: src/util/errors.ts (exit 2 for bad input, with the option).
    expect(r.code).toBe(2);
    expect(r.err).toContain('option --definitions');
    expect(r.out).toBe('');
  });
});
