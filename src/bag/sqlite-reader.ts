/**
 * sqlite3 storage files (`.db3`), read-only through better-sqlite3. Handles every schema version:
 * v1 (topics without QoS), v2 (QoS column), v3 (`schema`, `metadata` tables), v4
 * (`message_definitions`, type hashes). Timestamps are read as exact 64-bit integers.
 *
 * A database in WAL mode whose `-wal` file is empty or missing is copied into memory (header
 * switched to rollback mode) so that reading never writes the `-shm` index beside the original;
 * with a non-empty `-wal` (an unclean recording) the file is opened in place.
 */
import Database from 'better-sqlite3';
import { closeSync, existsSync, openSync, readFileSync, readSync, statSync } from 'node:fs';
import type { Problem } from '../util/errors.js';
import { InputError } from '../util/errors.js';
import { makeBatch, type BatchSource } from './batch.js';
import { regularFileSize } from './io.js';
import { MAX_DEFINITION_BYTES, maxUncompressedBytes, planted } from './limits.js';
import { decompressZstd, type DecompressHandlers } from './zstd.js';
import type { DefinitionText, MessageBatch } from './types.js';

type DB = Database.Database;

export interface SqliteTopic {
  readonly id: number;
  readonly name: string;
  readonly type: string;
  readonly serializationFormat: string;
  readonly offeredQosText: string;
  readonly typeHash: string;
}

export interface SqliteOpenOptions {
  readonly warn: (p: Problem) => void;
  /** zstd-decompress every message blob (compression_mode MESSAGE). */
  readonly messageCompression?: boolean;
  readonly handlers?: DecompressHandlers;
  /** Name to report instead of the opened path (e.g. the `.db3.zstd` a temp copy came from). */
  readonly displayName?: string;
  /** Cap on one decompressed message (default: `maxUncompressedBytes()`). */
  readonly maxUncompressedBytes?: number;
}

/** A rosbag2 column that holds the wrong kind of value: a clear error naming table, row and column. */
function badColumn(file: string, table: string, id: unknown, column: string, value: unknown, want: string): InputError {
  return new InputError({
    code: 'bag.sqlite_bad_value',
    message: `${table} row id ${String(id)}: column ${column} is ${describeValue(value)}, expected ${want}`,
    where: { file, key: `${table}.${column}` },
    hint: 'the .db3 file was not written by rosbag2 or was edited; fix or remove that row',
  });
}

function describeValue(v: unknown): string {
  if (v === null || v === undefined) return 'NULL';
  if (typeof v === 'bigint' || typeof v === 'number') return `the number ${v}`;
  if (typeof v === 'string') return `text (${v.length} characters)`;
  if (v instanceof Uint8Array) return `a blob (${v.length} bytes)`;
  return typeof v;
}

const IN_MEMORY_LIMIT = 512 << 20;
const BATCH_ROWS = 4096;
const BATCH_BYTES = 4 << 20;

export class SqliteFile {
  readonly path: string;
  readonly schemaVersion: number;
  readonly rosDistro: string;
  readonly topics: SqliteTopic[] = [];
  readonly definitions = new Map<string, DefinitionText>();
  readonly counts = new Map<number, number>();
  /** The last row of the `metadata` table (bag metadata YAML without its top key), if any. */
  readonly metadataText: string | undefined;
  startNs = 0n;
  endNs = 0n;
  messageCount = 0;
  readonly #db: DB;
  readonly #opts: SqliteOpenOptions;
  readonly #limit: number;

  constructor(path: string, opts: SqliteOpenOptions) {
    this.path = opts.displayName ?? path;
    this.#opts = opts;
    this.#limit = opts.maxUncompressedBytes ?? maxUncompressedBytes();
    this.#db = openDatabase(path, this.path);
    try {
      const tables = new Set(
        (this.#db.prepare("SELECT name FROM sqlite_master WHERE type = 'table'").all() as { name: string }[]).map((r) => r.name),
      );
      if (!tables.has('messages') || !tables.has('topics')) {
        throw new InputError({
          code: 'bag.sqlite_not_rosbag2',
          message: `sqlite3 file has no ${tables.has('topics') ? 'messages' : 'topics'} table`,
          where: { file: this.path },
          hint: 'this is not a rosbag2 .db3 file',
        });
      }
      const topicCols = new Set((this.#db.prepare('PRAGMA table_info(topics)').all() as { name: string }[]).map((r) => r.name));
      let version = topicCols.has('offered_qos_profiles') ? 2 : 1;
      let distro = '';
      if (tables.has('schema')) {
        const row = this.#db.prepare('SELECT * FROM schema ORDER BY schema_version DESC LIMIT 1').get() as
          | { schema_version: bigint; ros_distro?: string }
          | undefined;
        if (row) {
          version = Number(row.schema_version);
          distro = row.ros_distro ?? '';
        }
      }
      this.schemaVersion = version;
      this.rosDistro = distro;
      const qosCol = topicCols.has('offered_qos_profiles') ? 'offered_qos_profiles' : "''";
      const hashCol = topicCols.has('type_description_hash') ? 'type_description_hash' : "''";
      const rows = this.#db
        .prepare(`SELECT id, name, type, serialization_format, ${qosCol} AS qos, ${hashCol} AS hash FROM topics ORDER BY id`)
        .all() as { id: unknown; name: unknown; type: unknown; serialization_format: unknown; qos: unknown; hash: unknown }[];
      const names = new Set<string>();
      for (const r of rows) {
        if (typeof r.id !== 'bigint') throw badColumn(this.path, 'topics', r.id, 'id', r.id, 'an integer');
        if (typeof r.name !== 'string' || r.name === '') throw badColumn(this.path, 'topics', r.id, 'name', r.name, 'a non-empty topic name (text)');
        if (typeof r.type !== 'string') throw badColumn(this.path, 'topics', r.id, 'type', r.type, 'a message type (text)');
        if (r.serialization_format !== null && typeof r.serialization_format !== 'string') {
          throw badColumn(this.path, 'topics', r.id, 'serialization_format', r.serialization_format, 'text (cdr)');
        }
        if (r.qos !== null && typeof r.qos !== 'string') throw badColumn(this.path, 'topics', r.id, 'offered_qos_profiles', r.qos, 'YAML text');
        if (r.hash !== null && typeof r.hash !== 'string') throw badColumn(this.path, 'topics', r.id, 'type_description_hash', r.hash, 'text');
        if (names.has(r.name)) {
          throw new InputError({
            code: 'bag.sqlite_duplicate_topic',
            message: `topics row id ${r.id}: topic ${JSON.stringify(r.name)} is listed twice`,
            where: { file: this.path, key: 'topics.name' },
          });
        }
        names.add(r.name);
        this.topics.push({
          id: Number(r.id),
          name: r.name,
          type: r.type,
          serializationFormat: (r.serialization_format as string | null) ?? 'cdr',
          offeredQosText: (r.qos as string | null) ?? '',
          typeHash: (r.hash as string | null) ?? '',
        });
      }
      if (tables.has('message_definitions')) {
        const defs = this.#db.prepare('SELECT id, topic_type, encoding, encoded_message_definition FROM message_definitions ORDER BY id').all() as {
          id: unknown;
          topic_type: string;
          encoding: string;
          encoded_message_definition: string;
        }[];
        for (const d of defs) {
          const t = 'message_definitions';
          if (typeof d.topic_type !== 'string' || d.topic_type === '') throw badColumn(this.path, t, d.id, 'topic_type', d.topic_type, 'a message type (text)');
          if (d.encoding !== null && typeof d.encoding !== 'string') throw badColumn(this.path, t, d.id, 'encoding', d.encoding, 'text (ros2msg, ros2idl)');
          if (typeof d.encoded_message_definition !== 'string') {
            throw badColumn(this.path, t, d.id, 'encoded_message_definition', d.encoded_message_definition, 'the definition text');
          }
          if (d.encoded_message_definition.length > MAX_DEFINITION_BYTES) {
            throw badColumn(this.path, t, d.id, 'encoded_message_definition', d.encoded_message_definition, `a definition of at most ${MAX_DEFINITION_BYTES} characters`);
          }
          d.encoding ??= '';
          this.definitions.set(d.topic_type, { encoding: d.encoding, text: d.encoded_message_definition, origin: this.path });
        }
      }
      let meta: string | undefined;
      if (tables.has('metadata')) {
        const row = this.#db.prepare('SELECT metadata FROM metadata ORDER BY id DESC LIMIT 1').get() as { metadata: unknown } | undefined;
        // Informative only: anything but text is ignored.
        meta = typeof row?.metadata === 'string' && row.metadata.length <= MAX_DEFINITION_BYTES ? row.metadata : undefined;
      }
      this.metadataText = meta;
      // Only integer, non-negative timestamps are ROS times. Rows with others (NULL, text, real,
      // negative) are counted apart and reported with their row ids, never dropped silently.
      const OK = "typeof(timestamp) = 'integer' AND timestamp >= 0";
      const stats = this.#db
        .prepare(
          `SELECT topic_id, SUM(${OK}) AS n, MIN(CASE WHEN ${OK} THEN timestamp END) AS t0, MAX(CASE WHEN ${OK} THEN timestamp END) AS t1, ` +
            `SUM(NOT (${OK})) AS bad FROM messages GROUP BY topic_id`,
        )
        .all() as { topic_id: unknown; n: bigint | null; t0: bigint | null; t1: bigint | null; bad: bigint | null }[];
      let first: bigint | undefined;
      let last: bigint | undefined;
      let bad = 0n;
      for (const s of stats) bad += s.bad ?? 0n;
      if (bad > 0n && !planted('sqlite-timestamp')) {
        const examples = this.#db
          .prepare(`SELECT id, typeof(timestamp) AS kind, CAST(timestamp AS TEXT) AS v FROM messages WHERE NOT (${OK}) ORDER BY id LIMIT 5`)
          .all() as { id: unknown; kind: string; v: string | null }[];
        opts.warn({
          code: 'bag.sqlite_bad_timestamp',
          message:
            `${bad} message${bad === 1n ? '' : 's'} ${bad === 1n ? 'has' : 'have'} a timestamp that is not a non-negative integer (ns since the epoch); skipped: ` +
            examples.map((e) => `row id ${String(e.id)} ${e.kind === 'null' ? 'NULL' : `${e.kind} ${JSON.stringify(String(e.v).slice(0, 40))}`}`).join(', ') +
            (bad > BigInt(examples.length) ? ', …' : ''),
          where: { file: this.path, key: 'messages.timestamp' },
          hint: 'rosbag2 writes receive times as int64 nanoseconds',
        });
      }
      for (const s of stats) {
        if (typeof s.topic_id !== 'bigint') {
          const n = (s.n ?? 0n) + (s.bad ?? 0n);
          opts.warn({
            code: 'bag.sqlite_unknown_topic',
            message: `${n} messages have topic_id ${describeValue(s.topic_id)}, not an integer; they are skipped`,
            where: { file: this.path, key: 'messages.topic_id' },
          });
          continue;
        }
        if (s.n === null || s.n === 0n || s.t0 === null || s.t1 === null) continue;
        this.counts.set(Number(s.topic_id), Number(s.n));
        this.messageCount += Number(s.n);
        if (first === undefined || s.t0 < first) first = s.t0;
        if (last === undefined || s.t1 > last) last = s.t1;
        if (!this.topics.some((t) => t.id === Number(s.topic_id))) {
          opts.warn({
            code: 'bag.sqlite_unknown_topic',
            message: `${s.n} messages refer to topic id ${s.topic_id}, which the topics table lacks; they are skipped`,
            where: { file: this.path },
          });
        }
      }
      this.startNs = first ?? 0n;
      this.endNs = last ?? 0n;
    } catch (err) {
      this.#db.close();
      throw sqliteError(err, this.path);
    }
  }

  /** One source over the whole file. `topicOf` maps topic id → topic index (absent: left out). */
  sources(topicOf: ReadonlyMap<number, number>, startNs: bigint, endNs: bigint): BatchSource[] {
    if (this.messageCount === 0) return [];
    const ids = [...topicOf.keys()].filter((id) => (this.counts.get(id) ?? 0) > 0);
    if (ids.length === 0) return [];
    const first = this.startNs > startNs ? this.startNs : startNs;
    return [{ firstNs: first, open: () => this.#rows(topicOf, ids, startNs, endNs) }];
  }

  *#rows(topicOf: ReadonlyMap<number, number>, ids: number[], startNs: bigint, endNs: bigint): Generator<MessageBatch> {
    const all = ids.length === this.counts.size;
    const sql =
      "SELECT topic_id, timestamp, data, id FROM messages WHERE typeof(timestamp) = 'integer' AND timestamp >= ? AND timestamp <= ?" +
      (all ? '' : ` AND topic_id IN (${ids.map(() => '?').join(',')})`) +
      ' ORDER BY timestamp, id';
    let stmt: Database.Statement;
    try {
      stmt = this.#db.prepare(sql).raw(true).safeIntegers(true);
    } catch (err) {
      throw sqliteError(err, this.path);
    }
    const params: (bigint | number)[] = [startNs, endNs, ...(all ? [] : ids)];
    const zstd = this.#opts.messageCompression === true;
    let rows: [number, bigint, Uint8Array][] = [];
    let bytes = 0;
    const flush = (): MessageBatch => {
      const n = rows.length;
      const buf = new Uint8Array(bytes);
      const ti = new Uint32Array(n);
      const lt = new BigInt64Array(n);
      const of = new Uint32Array(n);
      const ln = new Uint32Array(n);
      let o = 0;
      for (let i = 0; i < n; i++) {
        const r = rows[i]!;
        ti[i] = r[0];
        lt[i] = r[1];
        of[i] = o;
        ln[i] = r[2].length;
        buf.set(r[2], o);
        o += r[2].length;
      }
      rows = [];
      bytes = 0;
      return makeBatch(buf, ti, lt, of, ln, n);
    };
    try {
      for (const row of stmt.iterate(...params) as IterableIterator<[bigint, bigint, unknown, unknown]>) {
        const ti = topicOf.get(Number(row[0]));
        if (ti === undefined) continue;
        let data = row[2] as Uint8Array;
        if (!(data instanceof Uint8Array) && !planted('sqlite-data-type')) {
          const topic = this.topics.find((t) => t.id === Number(row[0]))?.name;
          const e = badColumn(this.path, 'messages', row[3], 'data', row[2], 'a blob (the serialized message)');
          throw new InputError({ ...e.problems[0]!, where: { ...e.problems[0]!.where, ...(topic !== undefined ? { topic } : {}) } });
        }
        if (zstd) data = decompressZstd(data, this.#opts.handlers!, this.path, this.topics.find((t) => t.id === Number(row[0]))?.name, this.#limit);
        rows.push([ti, row[1], data]);
        bytes += data.length;
        if (rows.length >= BATCH_ROWS || bytes >= BATCH_BYTES) yield flush();
      }
    } catch (err) {
      throw sqliteError(err, this.path);
    }
    if (rows.length > 0) yield flush();
  }

  close(): void {
    if (this.#db.open) this.#db.close();
  }
}

function sqliteError(err: unknown, file: string): Error {
  if (err instanceof InputError) return err;
  const e = err as { code?: string; message?: string };
  if (typeof e.code === 'string' && e.code.startsWith('SQLITE')) {
    return new InputError({
      code: 'bag.sqlite_error',
      message: `sqlite3 says: ${e.message} (${e.code})`,
      where: { file },
      hint: e.code === 'SQLITE_NOTADB' || e.code === 'SQLITE_CORRUPT' ? 'the .db3 file is damaged or not a database' : undefined,
    });
  }
  return err as Error;
}

function openDatabase(path: string, display: string): DB {
  try {
    let size: number;
    const head = Buffer.alloc(100);
    size = regularFileSize(path, 'sqlite3 storage file', display);
    try {
      const fd = openSync(path, 'r');
      try {
        readSync(fd, head, 0, 100, 0);
      } finally {
        closeSync(fd);
      }
    } catch (err) {
      throw new InputError({ code: 'bag.open_failed', message: `cannot open: ${(err as Error).message}`, where: { file: display } });
    }
    if (size < 100 || head.subarray(0, 16).toString('latin1') !== 'SQLite format 3\u0000') {
      throw new InputError({
        code: 'bag.sqlite_not_database',
        message: size < 100 ? `file is ${size} bytes, too short for sqlite3` : 'file is not an sqlite3 database (no "SQLite format 3" header)',
        where: { file: display, byteOffset: 0 },
      });
    }
    // Bytes 18 and 19 are the file format write/read versions: 2 means WAL mode.
    const wal = head[18] === 2 || head[19] === 2;
    const walFile = `${path}-wal`;
    const walEmpty = !existsSync(walFile) || statSync(walFile).size === 0;
    if (wal && walEmpty && size <= IN_MEMORY_LIMIT) {
      const copy = readFileSync(path);
      copy[18] = 1;
      copy[19] = 1;
      const db = new Database(copy, { readonly: true });
      db.defaultSafeIntegers(true);
      return db;
    }
    const db = new Database(path, { readonly: true, fileMustExist: true });
    db.defaultSafeIntegers(true);
    return db;
  } catch (err) {
    throw sqliteError(err, display);
  }
}
