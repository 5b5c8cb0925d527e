/**
 * Writing bags: one MCAP file in the `ros2` profile (schemas `ros2msg` with the full definition
 * text, messages `cdr`, zstd-compressed chunks) plus a metadata.yaml beside it (version 5), or,
 * with `storage: 'sqlite3'`, one `.db3` file (sqlite-writer.ts). Both are written under a
 * temporary name and renamed when complete. Deterministic: the same topics and messages give
 * byte-identical files (no wall-clock anywhere, fixed library string).
 */
import { McapWriter, type IWritable } from '@mcap/core';
import { closeSync, existsSync, mkdirSync, openSync, renameSync, rmSync, writeFileSync, writeSync } from 'node:fs';
import { basename, join, resolve } from 'node:path';
import { stringify as stringifyYaml } from 'yaml';
import { InputError } from '../util/errors.js';
import { logger, warnOnce } from '../util/log.js';
import { builtinDefinition, canonicalType } from './definitions.js';
import { formatMetadataYaml, INT64_MAX } from './metadata.js';
import { RIHS01_PATTERN, typeHash } from './type-hash.js';
import type { Bag, DefinitionText, QosProfile, ReadOptions, StorageId } from './types.js';
import { zstdCompressor } from './zstd.js';

/** The MCAP header's library string. Fixed so that output does not depend on versions. */
export const WRITER_LIBRARY = 'antiphon';

export interface WriterTopic {
  readonly name: string;
  /** Either spelling; written as `pkg/msg/Type`. */
  readonly type: string;
  /** The offered QoS: YAML text as rosbag2 stores it, or profiles to serialize. Default ''. */
  readonly offeredQos?: string | readonly QosProfile[];
  /** Full definition text (with dependencies). Default: `definitions` option, then shipped. */
  readonly definition?: string;
  /** Encoding of `definition` (default `ros2msg`). */
  readonly definitionEncoding?: string;
  /** `RIHS01_<hex>` as a source bag recorded it; computed from the definition when absent. */
  readonly typeHash?: string;
  /** Default `cdr`. */
  readonly serializationFormat?: string;
}

export interface BagWriterOptions {
  /** Storage of the bag (default mcap). */
  readonly storage?: StorageId;
  /** Chunk compression (default zstd; uncompressed when the zstd module cannot load, with a warning). */
  readonly compression?: 'zstd' | 'none';
  readonly zstdLevel?: number;
  /** Uncompressed chunk size that closes a chunk (default 1 MiB). */
  readonly chunkSize?: number;
  /** MCAP header library string (default `antiphon`). */
  readonly library?: string;
  /** Storage file name without `_0.mcap` (default: the directory's name). */
  readonly fileStem?: string;
  /** Replace metadata.yaml and the storage file of an existing bag in `dir` (default false). */
  readonly overwrite?: boolean;
  /** Definition texts by type (either spelling), tried before the shipped ones. */
  readonly definitions?: ReadonlyMap<string, string | DefinitionText>;
  /** Write a schema with encoding '' (as rosbag2 does) when no definition is known, instead of failing. */
  readonly allowMissingDefinitions?: boolean;
}

export interface WrittenBag {
  readonly storage: StorageId;
  readonly dir: string;
  readonly file: string;
  readonly metadataPath: string;
  readonly messageCount: number;
  readonly startNs: bigint;
  readonly endNs: bigint;
  readonly compression: 'zstd' | 'none';
}

/** What both storages' writers do. */
export interface BagOutput {
  readonly dir: string;
  /** Final path of the storage file. */
  readonly file: string;
  readonly metadataPath: string;
  /** Declare a topic (before its first message). Returns its id for `write`. */
  addTopic(t: WriterTopic): Promise<number>;
  /** Append one serialized message (calls are taken in order; awaiting each is optional). */
  write(topic: number | string, logTimeNs: bigint, data: Uint8Array, publishTimeNs?: bigint): Promise<void>;
  /** Finish the storage file and metadata.yaml, renamed into place. */
  close(): Promise<WrittenBag>;
  /** Stop and remove the partial file. */
  abort(): void;
}

/**
 * The definition to record for a topic: its own, then the `definitions` option, then the shipped
 * one. Undefined only with `allowMissingDefinitions`; otherwise a missing one is an InputError.
 */
export function topicDefinition(t: WriterTopic, type: string, opts: BagWriterOptions): { encoding: string; text: string } | undefined {
  if (t.definition !== undefined) return { encoding: t.definitionEncoding ?? 'ros2msg', text: t.definition };
  const given = opts.definitions;
  if (given) {
    for (const [k, v] of given) {
      if (canonicalType(k) === type) return typeof v === 'string' ? { encoding: 'ros2msg', text: v } : { encoding: v.encoding, text: v.text };
    }
  }
  const shipped = builtinDefinition(type);
  if (shipped !== undefined) return { encoding: 'ros2msg', text: shipped };
  if (opts.allowMissingDefinitions) return undefined;
  throw new InputError({
    code: 'bag.no_definition',
    message: `no message definition for ${type}`,
    where: { topic: t.name },
    hint: 'pass `definition` for the topic or the `definitions` option',
  });
}

/**
 * The RIHS01 hash to record for a topic: the one given (copied from a source bag) when it is a
 * well-formed RIHS01 string, else computed
 * from the definition recorded for its type; '' (with one warning per type) when it cannot be
 * computed, never a guess.
 */
export function topicTypeHash(t: WriterTopic, type: string, def: { encoding: string; text: string } | undefined): string {
  if (t.typeHash !== undefined && RIHS01_PATTERN.test(t.typeHash)) return t.typeHash;
  const r = typeHash(type, def?.text ?? '', def ? def.encoding : '');
  let reason = r.ok ? undefined : r.reason;
  if (r.ok && def) {
    // A recorded text can be a stand-in (rosbag2 test bags carry placeholders): where antiphon
    // ships the type too, both must give the same hash, or none is written.
    const shipped = builtinDefinition(type);
    if (shipped !== undefined && shipped !== def.text) {
      const s = typeHash(type, shipped);
      if (s.ok && s.hash !== r.hash) reason = 'the recorded definition differs from the standard one antiphon ships, so which hash is right is unknown';
    }
  }
  if (r.ok && reason === undefined) return r.hash;
  warnOnce('bag', {
    code: 'bag.no_type_hash',
    message: `no RIHS01 type hash for ${type}: ${reason}; type_description_hash is written empty`,
    hint: 'a full ros2msg definition of the type and its nested types gives the hash',
  });
  return '';
}

/** The declared topic a write goes to, with its log time checked (bag.unknown_topic, bag.bad_time). */
export function writeTarget<T extends { readonly name: string }>(topic: number | string, logTimeNs: bigint, topics: readonly T[], byName: ReadonlyMap<string, T>): T {
  const t = typeof topic === 'number' ? topics[topic] : byName.get(topic);
  if (!t) {
    throw new InputError({ code: 'bag.unknown_topic', message: `write to undeclared topic ${String(topic)}`, where: { topic: String(topic) } });
  }
  if (logTimeNs < 0n || logTimeNs > INT64_MAX) {
    throw new InputError({ code: 'bag.bad_time', message: `log time ${logTimeNs} is outside 0 … 2^63-1 ns`, where: { topic: t.name } });
  }
  return t;
}

/**
 * Set up the directory of a new bag: refuse an existing bag unless `overwrite`, create the
 * directory, and name the storage file (`<stem>_0.<ext>`) and its temporary twin.
 */
export function prepareBagDir(dir: string, opts: BagWriterOptions, ext: string): { abs: string; file: string; tmp: string } {
  const abs = resolve(dir);
  if (existsSync(join(abs, 'metadata.yaml')) && !opts.overwrite) {
    throw new InputError({
      code: 'bag.output_exists',
      message: 'a bag already exists here (metadata.yaml present)',
      where: { file: join(abs, 'metadata.yaml') },
      hint: 'choose a new directory, or pass overwrite',
    });
  }
  mkdirSync(abs, { recursive: true });
  const stem = opts.fileStem ?? basename(abs);
  const file = join(abs, `${stem}_0.${ext}`);
  return { abs, file, tmp: `${file}.partial` };
}

/** Rename a finished storage file into place, then write metadata.yaml whole (temporary name, rename). */
export function publishBag(tmp: string, file: string, metadataPath: string, yaml: string): void {
  renameSync(tmp, file);
  const tmpMeta = `${metadataPath}.partial`;
  writeFileSync(tmpMeta, yaml);
  renameSync(tmpMeta, metadataPath);
}

/** metadata.yaml (rosbag2 version 5) of a written bag of one storage file. */
export function writtenMetadataYaml(storage: StorageId, file: string, topics: readonly { name: string; type: string; serializationFormat: string; qosText: string; typeHash: string; count: number }[], startNs: bigint | undefined, endNs: bigint | undefined, count: number): string {
  const start = startNs ?? INT64_MAX;
  const duration = startNs === undefined ? 0n : endNs! - startNs;
  const rel = basename(file);
  return formatMetadataYaml({
    storageIdentifier: storage,
    durationNs: duration,
    startingTimeNs: start,
    messageCount: count,
    topics: topics.map((t) => ({
      name: t.name,
      type: t.type,
      serializationFormat: t.serializationFormat,
      offeredQosText: t.qosText,
      offeredQos: [],
      typeDescriptionHash: t.typeHash,
      messageCount: t.count,
    })),
    compressionFormat: '',
    compressionMode: '',
    relativeFilePaths: [rel],
    files: [{ path: rel, startingTimeNs: start, durationNs: duration, messageCount: count }],
  });
}

/** QoS as rosbag2 stores it: the YAML text (profiles are serialized). */
export function qosText(q: WriterTopic['offeredQos']): string {
  return typeof q === 'string' ? q : q ? stringifyYaml(q).trimEnd() : '';
}

/** A positioned, synchronous file writable (McapWriter reuses the buffer it passes). */
class FdWritable implements IWritable {
  #fd: number;
  #pos = 0;
  constructor(fd: number) {
    this.#fd = fd;
  }
  async write(buffer: Uint8Array): Promise<void> {
    let done = 0;
    while (done < buffer.length) done += writeSync(this.#fd, buffer, done, buffer.length - done);
    this.#pos += buffer.length;
  }
  position(): bigint {
    return BigInt(this.#pos);
  }
}

interface TopicState {
  readonly name: string;
  readonly type: string;
  readonly serializationFormat: string;
  readonly qosText: string;
  readonly typeHash: string;
  readonly channelId: number;
  count: number;
}

export class BagWriter implements BagOutput {
  readonly dir: string;
  /** Final path of the MCAP file. */
  readonly file: string;
  readonly metadataPath: string;
  readonly compression: 'zstd' | 'none';
  readonly #tmp: string;
  readonly #fd: number;
  readonly #mcap: McapWriter;
  readonly #opts: BagWriterOptions;
  readonly #schemas = new Map<string, { id: number; def: { encoding: string; text: string } | undefined }>();
  readonly #topics: TopicState[] = [];
  readonly #byName = new Map<string, TopicState>();
  #pending: Promise<unknown> = Promise.resolve();
  #outstanding = 0;
  #error: unknown;
  #count = 0;
  #start: bigint | undefined;
  #end: bigint | undefined;
  #closed = false;

  private constructor(dir: string, file: string, fd: number, tmp: string, mcap: McapWriter, compression: 'zstd' | 'none', opts: BagWriterOptions) {
    this.dir = dir;
    this.file = file;
    this.metadataPath = join(dir, 'metadata.yaml');
    this.#fd = fd;
    this.#tmp = tmp;
    this.#mcap = mcap;
    this.compression = compression;
    this.#opts = opts;
  }

  /** Start a bag in directory `dir` (created if missing). */
  static async create(dir: string, opts: BagWriterOptions = {}): Promise<BagWriter> {
    const { abs, file, tmp } = prepareBagDir(dir, opts, 'mcap');
    let compression: 'zstd' | 'none' = opts.compression ?? 'zstd';
    let compressChunk: ((d: Uint8Array) => { compression: string; compressedData: Uint8Array }) | undefined;
    if (compression === 'zstd') {
      const z = await zstdCompressor();
      if (z) {
        const level = opts.zstdLevel ?? 3;
        compressChunk = (d) => ({ compression: 'zstd', compressedData: z.compress(d, level) });
      } else {
        compression = 'none';
        logger('bag').warn({ code: 'bag.no_zstd_compressor' }, 'zstd compressor unavailable; writing uncompressed chunks');
      }
    }
    const fd = openSync(tmp, 'w');
    const mcap = new McapWriter({
      writable: new FdWritable(fd),
      chunkSize: opts.chunkSize ?? 1 << 20,
      ...(compressChunk ? { compressChunk } : {}),
    });
    await mcap.start({ profile: 'ros2', library: opts.library ?? WRITER_LIBRARY });
    return new BagWriter(abs, file, fd, tmp, mcap, compression, opts);
  }

  /** Declare a topic (before its first message). Returns its id for `write`. */
  async addTopic(t: WriterTopic): Promise<number> {
    this.#assertOpen();
    if (this.#byName.has(t.name)) {
      throw new InputError({ code: 'bag.topic_twice', message: `topic ${t.name} is declared twice`, where: { topic: t.name } });
    }
    const type = canonicalType(t.type);
    let schema = this.#schemas.get(type);
    if (schema === undefined) {
      const def = topicDefinition(t, type, this.#opts);
      const id = await this.#mcap.registerSchema({
        name: type,
        encoding: def ? def.encoding : '',
        data: new TextEncoder().encode(def?.text ?? ''),
      });
      schema = { id, def };
      this.#schemas.set(type, schema);
    }
    const schemaId = schema.id;
    const hash = topicTypeHash(t, type, schema.def);
    const qos = qosText(t.offeredQos);
    // As rosbag2 (Iron and later) writes a channel: the QoS and the type hash ('' when unknown).
    const metadata = new Map<string, string>([['offered_qos_profiles', qos], ['topic_type_hash', hash]]);
    const channelId = await this.#mcap.registerChannel({
      topic: t.name,
      schemaId,
      messageEncoding: t.serializationFormat ?? 'cdr',
      metadata,
    });
    const state: TopicState = { name: t.name, type, serializationFormat: t.serializationFormat ?? 'cdr', qosText: qos, typeHash: hash, channelId, count: 0 };
    this.#topics.push(state);
    this.#byName.set(t.name, state);
    return this.#topics.length - 1;
  }

  /** Append one serialized message. Calls are queued in order; awaiting each is optional. */
  write(topic: number | string, logTimeNs: bigint, data: Uint8Array, publishTimeNs: bigint = logTimeNs): Promise<void> {
    this.#assertOpen();
    const t = writeTarget(topic, logTimeNs, this.#topics, this.#byName);
    t.count++;
    this.#count++;
    if (this.#start === undefined || logTimeNs < this.#start) this.#start = logTimeNs;
    if (this.#end === undefined || logTimeNs > this.#end) this.#end = logTimeNs;
    const msg = { channelId: t.channelId, sequence: 0, logTime: logTimeNs, publishTime: publishTimeNs, data };
    // McapWriter copies the bytes in the synchronous part of addMessage, but calls must not
    // overlap: call it at once when idle, else queue it behind the others with a copy (the caller
    // may reuse its buffer).
    let p: Promise<void>;
    if (this.#outstanding === 0) {
      p = this.#mcap.addMessage(msg);
    } else {
      const copy = { ...msg, data: data.slice() };
      p = this.#pending.then(() => this.#mcap.addMessage(copy));
    }
    this.#outstanding++;
    const done = p.finally(() => {
      this.#outstanding--;
    });
    this.#pending = done.catch((err: unknown) => {
      this.#error ??= err;
    });
    return done;
  }

  #assertOpen(): void {
    if (this.#closed) throw new Error('BagWriter: already closed');
  }

  /** Finish the MCAP file, write metadata.yaml, rename both into place. */
  async close(): Promise<WrittenBag> {
    this.#assertOpen();
    this.#closed = true;
    try {
      await this.#pending;
      if (this.#error !== undefined) throw this.#error;
      await this.#mcap.end();
    } catch (err) {
      this.#discard();
      throw err;
    } finally {
      closeSync(this.#fd);
    }
    publishBag(this.#tmp, this.file, this.metadataPath, writtenMetadataYaml('mcap', this.file, this.#topics, this.#start, this.#end, this.#count));
    return {
      storage: 'mcap',
      dir: this.dir,
      file: this.file,
      metadataPath: this.metadataPath,
      messageCount: this.#count,
      startNs: this.#start ?? 0n,
      endNs: this.#end ?? 0n,
      compression: this.compression,
    };
  }

  /** Stop and remove the partial file. */
  abort(): void {
    if (this.#closed) return;
    this.#closed = true;
    try {
      closeSync(this.#fd);
    } catch {
      /* already closed */
    }
    this.#discard();
  }

  #discard(): void {
    rmSync(this.#tmp, { force: true });
  }
}

/** Create a bag writer in `dir`, of the storage `opts.storage` (default mcap). */
export async function createBagWriter(dir: string, opts: BagWriterOptions = {}): Promise<BagOutput> {
  if (opts.storage === 'sqlite3') {
    const { SqliteBagWriter } = await import('./sqlite-writer.js');
    return SqliteBagWriter.create(dir, opts);
  }
  return BagWriter.create(dir, opts);
}

/** Parse a `--storage` option value. */
export function storageOption(raw: string | undefined, option = '--storage'): StorageId {
  if (raw === undefined || raw === 'mcap') return 'mcap';
  if (raw === 'sqlite3') return 'sqlite3';
  throw new InputError({ code: 'cli.bad_storage', message: `${option} must be mcap or sqlite3, got '${raw}'`, where: { option }, hint: 'mcap (default) or sqlite3' });
}

/**
 * Copy (some of) a bag into a new bag (MCAP, or sqlite3 with `storage`): every topic with its type, QoS, hash and the
 * definition the source carries (or a shipped one); messages in log-time order, bytes unchanged.
 */
export async function copyBag(bag: Bag, dir: string, opts: BagWriterOptions & ReadOptions = {}): Promise<WrittenBag> {
  const w = await createBagWriter(dir, { allowMissingDefinitions: true, ...opts });
  try {
    const wanted = opts.topics ? new Set(opts.topics) : undefined;
    const ids = new Map<string, number>();
    for (const t of bag.topics()) {
      if (wanted && !wanted.has(t.name)) continue;
      const d = bag.definition(t.type);
      // An empty text recorded as ros2msg is a type with no fields, not a missing definition.
      const usable = d && (d.text.trim() !== '' || d.encoding === 'ros2msg');
      ids.set(
        t.name,
        await w.addTopic({
          name: t.name,
          type: t.type,
          offeredQos: t.offeredQosText,
          ...(usable ? { definition: d.text, definitionEncoding: d.encoding } : {}),
          ...(t.typeHash ? { typeHash: t.typeHash } : {}),
          serializationFormat: t.serializationFormat,
        }),
      );
    }
    for (const b of bag.batches(opts)) {
      const topics = bag.topics();
      for (let i = 0; i < b.count; i++) {
        const id = ids.get(topics[b.topicIndex[i]!]!.name)!;
        const o = b.offset[i]!;
        await w.write(id, b.logTimeNs[i]!, b.bytes.subarray(o, o + b.length[i]!));
      }
    }
    return await w.close();
  } catch (err) {
    w.abort();
    throw err;
  }
}
