/**
 * The fuzzer's seed inputs: the real rosbag2 fixtures (when present: $ANTIPHON_FIXTURES or
 * ../shared/fixtures/rosbag2), bags our own writer generates (MCAP with and without zstd chunks,
 * a file-compressed `.mcap.zstd`, a rosbag2 sqlite3 file, a short demo recording of both arms),
 * hostile hand-made MCAP files, and the example CSV, parameters, model and expectations files.
 * Every generated seed is deterministic, so a saved case can name its seed and a patch.
 */
import Database from 'better-sqlite3';
import { existsSync, mkdirSync, readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { createBagWriter } from '../bag/writer.js';
import { encodeJointState, encodePoseStamped, encodeTwistStamped, encodeWrenchStamped } from '../bag/fast.js';
import { zstdCompressor } from '../bag/zstd.js';
import { loadCell } from '../params/config.js';
import { writeDemoBag } from '../sim/demo-bag.js';
import { Bytes, CDR_LE, channelRecord, chunkRecord, mcapFile, messageRecord, schemaRecord, zstdRleBomb } from './mcap-bytes.js';

/** The package root (src/fuzz and dist/src/fuzz both resolve to it). */
export const ROOT = ((): string => {
  for (const rel of ['../../', '../../../']) {
    const d = fileURLToPath(new URL(rel, import.meta.url));
    if (existsSync(join(d, 'package.json')) && existsSync(join(d, 'config'))) return d;
  }
  return process.cwd();
})();

export function fixturesDir(): string | undefined {
  const c = [process.env['ANTIPHON_FIXTURES'], resolve(ROOT, '../shared/fixtures/rosbag2'), resolve(ROOT, '../../shared/fixtures/rosbag2')];
  for (const d of c) if (d && existsSync(join(d, 'mcap-talker'))) return d;
  return undefined;
}

/** What a seed is: a bag directory (one file in it is mutated), a single file, or a text file. */
export interface Seed {
  /** Stable id, e.g. `fixture:mcap-talker/talker.mcap`, `gen:cell-zstd.mcap`. */
  readonly id: string;
  readonly kind: 'mcap' | 'mcap-zstd' | 'sqlite' | 'metadata' | 'csv' | 'params' | 'model' | 'expect';
  /** The file that is mutated (its bytes). */
  readonly bytes: Uint8Array;
  /** For bag directories: the other files (name → bytes), written beside the mutated one. */
  readonly siblings: ReadonlyMap<string, Uint8Array>;
  /** The mutated file's name in the case folder. */
  readonly name: string;
  /** True when the case folder (not the file) is what the command reads. */
  readonly asDir: boolean;
}

/** A plain copy (a Node Buffer's slice() is a view: mutators must never touch the seed). */
function own(b: Uint8Array): Uint8Array {
  return new Uint8Array(b);
}

function dirSeed(id: string, kind: Seed['kind'], dir: string, file: string): Seed {
  const siblings = new Map<string, Uint8Array>();
  for (const n of readdirSync(dir)) {
    if (n === file || !statSync(join(dir, n)).isFile()) continue;
    if (n.endsWith('-shm') || n.endsWith('-wal')) continue;
    siblings.set(n, own(readFileSync(join(dir, n))));
  }
  return { id, kind, bytes: own(readFileSync(join(dir, file))), siblings, name: file, asDir: true };
}

function fileSeed(id: string, kind: Seed['kind'], bytes: Uint8Array, name: string): Seed {
  return { id, kind, bytes: own(bytes), siblings: new Map(), name, asDir: false };
}

async function cellBag(dir: string, seconds: number, compression: 'zstd' | 'none', chunkSize: number): Promise<string> {
  const w = await createBagWriter(dir, { compression, chunkSize });
  const wrench = await w.addTopic({ name: '/left/wrench', type: 'geometry_msgs/msg/WrenchStamped' });
  const joints = await w.addTopic({ name: '/left/joint_states', type: 'sensor_msgs/msg/JointState' });
  const pose = await w.addTopic({ name: '/left/tool_pose', type: 'geometry_msgs/msg/PoseStamped' });
  const twist = await w.addTopic({ name: '/left/twist', type: 'geometry_msgs/msg/TwistStamped' });
  const T0 = 1_796_000_000_000_000_000n;
  const names = ['j1', 'j2', 'j3', 'j4', 'j5', 'j6', 'j7'];
  for (let k = 0; k < seconds * 1000; k++) {
    const t = T0 + BigInt(k) * 1_000_000n;
    const sec = Number(t / 1_000_000_000n);
    const nsec = Number(t % 1_000_000_000n);
    await w.write(wrench, t, encodeWrenchStamped([sec, nsec, Math.sin(k / 50), 0.5, -9.8, 0.01, 0.02, 0.03], 0, 'left_ft'));
    if (k % 2 === 0) {
      const q = names.map((_, j) => Math.sin(k / 100 + j));
      await w.write(joints, t, encodeJointState(sec, nsec, 'left_base', names, q, q, []));
    }
    if (k % 10 === 0) {
      await w.write(pose, t, encodePoseStamped([sec, nsec, 0.5 + k / 1e4, 0, 0.3, 0, 0, 0, 1], 0, 'cell'));
      await w.write(twist, t, encodeTwistStamped([sec, nsec, 0.05, 0, 0, 0, 0, 0], 0, 'cell'));
    }
  }
  const r = await w.close();
  return r.file;
}

/** A rosbag2 sqlite3 file (schema 4) holding the messages of an MCAP bag. */
async function sqliteTwin(mcapDir: string, out: string): Promise<void> {
  const { openBag } = await import('../bag/open.js');
  const bag = await openBag(mcapDir);
  const db = new Database(out);
  db.exec(`
    CREATE TABLE schema(schema_version INTEGER PRIMARY KEY, ros_distro TEXT NOT NULL);
    CREATE TABLE metadata(id INTEGER PRIMARY KEY, metadata_version INTEGER NOT NULL, metadata TEXT NOT NULL);
    CREATE TABLE topics(id INTEGER PRIMARY KEY, name TEXT NOT NULL, type TEXT NOT NULL, serialization_format TEXT NOT NULL, offered_qos_profiles TEXT NOT NULL, type_description_hash TEXT NOT NULL);
    CREATE TABLE message_definitions(id INTEGER PRIMARY KEY, topic_type TEXT NOT NULL, encoding TEXT NOT NULL, encoded_message_definition TEXT NOT NULL, type_description_hash TEXT NOT NULL);
    CREATE TABLE messages(id INTEGER PRIMARY KEY, topic_id INTEGER NOT NULL, timestamp INTEGER NOT NULL, data BLOB NOT NULL);
    CREATE INDEX timestamp_idx ON messages (timestamp ASC);
    INSERT INTO schema VALUES (4, 'jazzy');`);
  const ids = new Map<string, number>();
  bag.topics().forEach((t, k) => {
    ids.set(t.name, k + 1);
    db.prepare('INSERT INTO topics VALUES (?, ?, ?, ?, ?, ?)').run(k + 1, t.name, t.type, 'cdr', t.offeredQosText, '');
    const d = bag.definition(t.type);
    if (d) db.prepare('INSERT INTO message_definitions (topic_type, encoding, encoded_message_definition, type_description_hash) VALUES (?, ?, ?, ?)').run(t.type, d.encoding, d.text, '');
  });
  const ins = db.prepare('INSERT INTO messages (topic_id, timestamp, data) VALUES (?, ?, ?)');
  db.transaction(() => {
    for (const m of bag.messages()) ins.run(ids.get(m.topic)!, m.logTimeNs, Buffer.from(m.data));
  })();
  db.close();
  bag.close();
}

const STRING_DEF = 'string data';
const T0 = 1_796_000_000_000_000_000n;

/** Small hostile MCAP files (each read fine after the fixes; mutations push them further). */
function hostileSeeds(): Seed[] {
  const payload = new Bytes().raw(CDR_LE).str('hello\0').done();
  const base = [schemaRecord(1, 'std_msgs/msg/String', 'ros2msg', STRING_DEF), channelRecord(1, 1, '/topic')];
  const zeroDef = 'Z[] items\n' + '='.repeat(80) + '\nMSG: fuzz_msgs/Z\nuint8[0] pad';
  const seqDef = 'uint8[] data\nstring[] names\nfloat64[] values';
  const seq = new Bytes().raw(CDR_LE).u32(3).raw(Uint8Array.of(1, 2, 3, 0)).u32(1).str('a\0').u32(0).u32(1).u32(0).raw(new Uint8Array(8)).done();
  const bomb = zstdRleBomb(64);
  return [
    fileSeed('hostile:zero-size.mcap', 'mcap', mcapFile([schemaRecord(1, 'fuzz_msgs/msg/Holder', 'ros2msg', zeroDef), channelRecord(1, 1, '/holder'), messageRecord(1, T0, new Bytes().raw(CDR_LE).u32(5).done())]), 'zero.mcap'),
    fileSeed('hostile:sequences.mcap', 'mcap', mcapFile([schemaRecord(1, 'fuzz_msgs/msg/Seq', 'ros2msg', seqDef), channelRecord(1, 1, '/seq'), messageRecord(1, T0, seq), messageRecord(1, T0 + 1n, seq)]), 'seq.mcap'),
    fileSeed('hostile:loose.mcap', 'mcap', mcapFile([...base, messageRecord(1, T0, payload), messageRecord(1, T0 + 5n, payload)]), 'loose.mcap'),
    fileSeed('hostile:rle-chunk.mcap', 'mcap', mcapFile([...base, chunkRecord(bomb.frame, { uncompressedSize: bomb.size, compression: 'zstd', startNs: T0, endNs: T0 })]), 'rle.mcap'),
    fileSeed('hostile:no-footer.mcap', 'mcap', mcapFile([...base, chunkRecord(new Bytes().raw(messageRecord(1, T0, payload)).done(), { startNs: T0, endNs: T0 })], { footer: false }), 'nofooter.mcap'),
  ];
}

/** Build every seed in `work` (generated bags are written there once). */
export async function buildSeeds(work: string): Promise<Seed[]> {
  const seeds: Seed[] = [];
  mkdirSync(work, { recursive: true });
  const fx = fixturesDir();
  if (fx) {
    seeds.push(dirSeed('fixture:mcap-talker/talker.mcap', 'mcap', join(fx, 'mcap-talker'), 'talker.mcap'));
    seeds.push(dirSeed('fixture:mcap-cdr_test/cdr_test_0.mcap', 'mcap', join(fx, 'mcap-cdr_test'), 'cdr_test_0.mcap'));
    seeds.push(dirSeed('fixture:sqlite3-talker/talker.db3', 'sqlite', join(fx, 'sqlite3-talker'), 'talker.db3'));
    seeds.push(dirSeed('fixture:sqlite3-cdr_test/cdr_test_0.db3', 'sqlite', join(fx, 'sqlite3-cdr_test'), 'cdr_test_0.db3'));
    seeds.push(dirSeed('fixture:mcap-talker/metadata.yaml', 'metadata', join(fx, 'mcap-talker'), 'metadata.yaml'));
    seeds.push(dirSeed('fixture:sqlite3-cdr_test/metadata.yaml', 'metadata', join(fx, 'sqlite3-cdr_test'), 'metadata.yaml'));
  }
  const z = join(work, 'cell-zstd');
  const zf = await cellBag(z, 0.05, 'zstd', 4096);
  seeds.push(dirSeed('gen:cell-zstd', 'mcap', z, zf.split('/').pop()!));
  seeds.push(dirSeed('gen:cell-zstd/metadata.yaml', 'metadata', z, 'metadata.yaml'));
  const n = join(work, 'cell-none');
  const nf = await cellBag(n, 0.05, 'none', 2048);
  seeds.push(fileSeed('gen:cell-none.mcap', 'mcap', readFileSync(nf), 'cell.mcap'));
  const zstd = await zstdCompressor();
  if (zstd) seeds.push(fileSeed('gen:cell-none.mcap.zstd', 'mcap-zstd', zstd.compress(readFileSync(nf), 3), 'cell.mcap.zstd'));
  const db = join(work, 'cell.db3');
  await sqliteTwin(n, db);
  seeds.push(fileSeed('gen:cell.db3', 'sqlite', readFileSync(db), 'cell.db3'));
  seeds.push(...hostileSeeds());
  // Plain-file inputs of the other commands.
  const csv = readFileSync(join(ROOT, 'examples/beam-carry-wrench.csv'), 'utf8').split('\n').slice(0, 400).join('\n') + '\n';
  seeds.push(fileSeed('example:beam-carry-wrench.csv (first 400 lines)', 'csv', new TextEncoder().encode(csv), 'wrench.csv'));
  seeds.push(fileSeed('example:config/demo_cell.yaml', 'params', readFileSync(join(ROOT, 'config/demo_cell.yaml')), 'params.yaml'));
  seeds.push(fileSeed('example:examples/linear-team.yaml', 'model', readFileSync(join(ROOT, 'examples/linear-team.yaml')), 'model.yaml'));
  seeds.push(fileSeed('example:examples/expectations.yaml', 'expect', readFileSync(join(ROOT, 'examples/expectations.yaml')), 'expect.yaml'));
  return seeds;
}

/** A short demo recording of both arms (for replay with mutated expectations). */
export async function demoBag(dir: string): Promise<string> {
  if (existsSync(join(dir, 'metadata.yaml'))) return dir;
  const cell = loadCell(join(ROOT, 'config/demo_cell.yaml'));
  await writeDemoBag(dir, { left: cell.left.config, right: cell.right.config, occupied: [true, false], seed: 3, duration_s: 1 });
  return dir;
}

export function writeText(path: string, text: string): void {
  writeFileSync(path, text);
}
