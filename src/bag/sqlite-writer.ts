/**
 * Writing rosbag2 sqlite3 bags (`<stem>_0.db3` + metadata.yaml) through better-sqlite3.
 *
 * Layout: schema version 4 (the tables `schema`, `metadata`, `topics` with
 * `offered_qos_profiles` and `type_description_hash`, `message_definitions`, `messages` with the
 * index `timestamp_idx`), with metadata.yaml version 5. Why (DEVELOPERS.md says more): version 4
 * is the only layout with a `message_definitions` table, and Humble's reader asks the `topics`
 * table only for the columns it knows and ignores tables it does not, so Humble and Jazzy both
 * read it (from memory of the rosbag2 sources); metadata.yaml version 5 is what Humble writes
 * and later distros read.
 *
 * The database is written in one transaction under `<file>.partial` (rollback journal in memory,
 * so no `-journal`/`-wal` files are left beside it), closed, then renamed; metadata.yaml last,
 * also under a temporary name. Deterministic: the same topics and messages give the same bytes.
 */
import Database from 'better-sqlite3';
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import { InputError } from '../util/errors.js';
import { canonicalType } from './definitions.js';
import { prepareBagDir, publishBag, writeTarget, qosText, topicDefinition, topicTypeHash, writtenMetadataYaml, type BagOutput, type BagWriterOptions, type WriterTopic, type WrittenBag } from './writer.js';

/** The sqlite3 schema version written (see the file comment). */
export const SQLITE_SCHEMA_VERSION = 4;

const SCHEMA = `
CREATE TABLE schema(schema_version INTEGER PRIMARY KEY, ros_distro TEXT NOT NULL);
CREATE TABLE metadata(id INTEGER PRIMARY KEY, metadata_version INTEGER NOT NULL, metadata TEXT NOT NULL);
CREATE TABLE topics(id INTEGER PRIMARY KEY, name TEXT NOT NULL, type TEXT NOT NULL, serialization_format TEXT NOT NULL, offered_qos_profiles TEXT NOT NULL, type_description_hash TEXT NOT NULL);
CREATE TABLE message_definitions(id INTEGER PRIMARY KEY, topic_type TEXT NOT NULL, encoding TEXT NOT NULL, encoded_message_definition TEXT NOT NULL, type_description_hash TEXT NOT NULL);
CREATE TABLE messages(id INTEGER PRIMARY KEY, topic_id INTEGER NOT NULL, timestamp INTEGER NOT NULL, data BLOB NOT NULL);
`;

interface TopicState {
  readonly id: number;
  readonly name: string;
  readonly type: string;
  readonly serializationFormat: string;
  readonly qosText: string;
  readonly typeHash: string;
  count: number;
}

export class SqliteBagWriter implements BagOutput {
  readonly dir: string;
  readonly file: string;
  readonly metadataPath: string;
  readonly #tmp: string;
  readonly #db: Database.Database;
  readonly #opts: BagWriterOptions;
  readonly #insert: Database.Statement;
  readonly #topics: TopicState[] = [];
  readonly #byName = new Map<string, TopicState>();
  /** The definition recorded for each type (message_definitions rows). */
  readonly #types = new Map<string, { encoding: string; text: string } | undefined>();
  #count = 0;
  #start: bigint | undefined;
  #end: bigint | undefined;
  #closed = false;

  private constructor(dir: string, file: string, tmp: string, db: Database.Database, opts: BagWriterOptions) {
    this.dir = dir;
    this.file = file;
    this.metadataPath = join(dir, 'metadata.yaml');
    this.#tmp = tmp;
    this.#db = db;
    this.#opts = opts;
    this.#insert = db.prepare('INSERT INTO messages (topic_id, timestamp, data) VALUES (?, ?, ?)');
  }

  /** Start a bag in directory `dir` (created if missing). */
  static async create(dir: string, opts: BagWriterOptions = {}): Promise<SqliteBagWriter> {
    const { abs, file, tmp } = prepareBagDir(dir, opts, 'db3');
    rmSync(tmp, { force: true });
    const db = new Database(tmp);
    try {
      db.pragma('journal_mode = MEMORY');
      db.pragma('synchronous = OFF');
      db.exec(SCHEMA);
      db.prepare('INSERT INTO schema (schema_version, ros_distro) VALUES (?, ?)').run(SQLITE_SCHEMA_VERSION, '');
      db.exec('BEGIN');
    } catch (err) {
      db.close();
      rmSync(tmp, { force: true });
      throw err;
    }
    return new SqliteBagWriter(abs, file, tmp, db, opts);
  }

  async addTopic(t: WriterTopic): Promise<number> {
    this.#assertOpen();
    if (this.#byName.has(t.name)) {
      throw new InputError({ code: 'bag.topic_twice', message: `topic ${t.name} is declared twice`, where: { topic: t.name } });
    }
    const type = canonicalType(t.type);
    const known = this.#types.has(type);
    const def = known ? this.#types.get(type) : topicDefinition(t, type, this.#opts);
    const hash = topicTypeHash(t, type, def);
    if (!known) {
      this.#db
        .prepare('INSERT INTO message_definitions (topic_type, encoding, encoded_message_definition, type_description_hash) VALUES (?, ?, ?, ?)')
        .run(type, def ? def.encoding : '', def?.text ?? '', hash);
      this.#types.set(type, def);
    }
    const qos = qosText(t.offeredQos);
    const id = this.#topics.length + 1;
    this.#db
      .prepare('INSERT INTO topics (id, name, type, serialization_format, offered_qos_profiles, type_description_hash) VALUES (?, ?, ?, ?, ?, ?)')
      .run(id, t.name, type, t.serializationFormat ?? 'cdr', qos, hash);
    const state: TopicState = { id, name: t.name, type, serializationFormat: t.serializationFormat ?? 'cdr', qosText: qos, typeHash: hash, count: 0 };
    this.#topics.push(state);
    this.#byName.set(t.name, state);
    return this.#topics.length - 1;
  }

  write(topic: number | string, logTimeNs: bigint, data: Uint8Array): Promise<void> {
    this.#assertOpen();
    const t = writeTarget(topic, logTimeNs, this.#topics, this.#byName);
    // better-sqlite3 copies the bytes during the call: the caller may reuse its buffer.
    this.#insert.run(t.id, logTimeNs, Buffer.isBuffer(data) ? data : Buffer.from(data.buffer, data.byteOffset, data.byteLength));
    t.count++;
    this.#count++;
    if (this.#start === undefined || logTimeNs < this.#start) this.#start = logTimeNs;
    if (this.#end === undefined || logTimeNs > this.#end) this.#end = logTimeNs;
    return Promise.resolve();
  }

  #assertOpen(): void {
    if (this.#closed) throw new Error('SqliteBagWriter: already closed');
  }

  async close(): Promise<WrittenBag> {
    this.#assertOpen();
    this.#closed = true;
    const yaml = writtenMetadataYaml('sqlite3', this.file, this.#topics, this.#start, this.#end, this.#count);
    try {
      // The metadata table holds the same document without its top key (as Jazzy writes it).
      const body = yaml.replace(/^rosbag2_bagfile_information:\n/, '').replace(/^ {2}/gm, '');
      this.#db.prepare('INSERT INTO metadata (metadata_version, metadata) VALUES (?, ?)').run(5, body);
      this.#db.exec('CREATE INDEX timestamp_idx ON messages (timestamp ASC)');
      this.#db.exec('COMMIT');
      this.#db.close();
    } catch (err) {
      this.#discard();
      throw err;
    }
    publishBag(this.#tmp, this.file, this.metadataPath, yaml);
    return {
      storage: 'sqlite3',
      dir: this.dir,
      file: this.file,
      metadataPath: this.metadataPath,
      messageCount: this.#count,
      startNs: this.#start ?? 0n,
      endNs: this.#end ?? 0n,
      compression: 'none',
    };
  }

  abort(): void {
    if (this.#closed) return;
    this.#closed = true;
    this.#discard();
  }

  #discard(): void {
    try {
      if (this.#db.open) this.#db.close();
    } catch {
      /* already closed */
    }
    rmSync(this.#tmp, { force: true });
    rmSync(`${this.#tmp}-journal`, { force: true });
  }
}
