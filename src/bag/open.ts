/**
 * `openBag`: one entry point for a rosbag2 bag directory (metadata.yaml + storage files, split
 * bags in `relative_file_paths` order, zstd file or message compression) or a single storage
 * file (`.mcap`, `.db3`, or either with `.zstd`).
 *
 * A directory without metadata.yaml is opened only when it holds exactly one storage file (with
 * a warning): with several, their order and completeness cannot be known, so it is an error.
 */
import { closeSync, existsSync, lstatSync, mkdtempSync, openSync, readSync, readdirSync, realpathSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, extname, join, resolve } from 'node:path';
import { InputError, type Problem } from '../util/errors.js';
import { warnOnce } from '../util/log.js';
import { mergeSources, type BatchSource } from './batch.js';
import { canonicalType } from './definitions.js';
import { FileSource, MemorySource, readRegularFile, regularFileSize, type ByteSource } from './io.js';
import { MAX_DEFINITION_BYTES, MAX_METADATA_BYTES, maxUncompressedBytes } from './limits.js';
import { McapFile } from './mcap-reader.js';
import { INT64_MAX, parseMetadataYaml, parseQos, type BagMetadata } from './metadata.js';
import { SqliteFile } from './sqlite-reader.js';
import type { Bag, BagMessage, DefinitionText, MessageBatch, ReadOptions, StorageId, TopicInfo } from './types.js';
import { decompressHandlers, decompressZstd } from './zstd.js';

export interface OpenOptions {
  /** Check MCAP chunk CRCs where recorded (default true). */
  readonly validateCrc?: boolean;
  /** Called for every warning (they are also logged and kept in `bag.warnings`). */
  readonly onWarning?: (p: Problem) => void;
  /**
   * Cap on one decompression (an MCAP chunk, a `.zstd` file, a compressed message), in bytes.
   * Default: $ANTIPHON_MAX_UNCOMPRESSED_BYTES, else 1 GiB.
   */
  readonly maxUncompressedBytes?: number;
}

const STORAGE_EXT: Record<string, StorageId> = { '.mcap': 'mcap', '.db3': 'sqlite3' };
const MAX_TIME = 0x7fffffffffffffffn;

function storageOfName(name: string): StorageId | undefined {
  const n = name.endsWith('.zstd') ? name.slice(0, -5) : name;
  return STORAGE_EXT[extname(n).toLowerCase()];
}

function sniff(path: string): StorageId | undefined {
  try {
    if (!statSync(path).isFile()) return undefined;
    const head = Buffer.alloc(16);
    const fd = openSync(path, 'r');
    try {
      readSync(fd, head, 0, 16, 0);
    } finally {
      closeSync(fd);
    }
    if (head[0] === 0x89 && head.subarray(1, 5).toString('latin1') === 'MCAP') return 'mcap';
    if (head.toString('latin1') === 'SQLite format 3\u0000') return 'sqlite3';
  } catch {
    /* fall through */
  }
  return undefined;
}

type StorageFile = { kind: 'mcap'; file: McapFile } | { kind: 'sqlite3'; file: SqliteFile };

interface FilePlan {
  /** The path as the user would look for it. */
  readonly path: string;
  readonly storage: StorageId;
  /** zstd FILE compression: the stored file is `<path>` ending in .zstd. */
  readonly fileCompressed: boolean;
}

class OpenedBag implements Bag {
  readonly path: string;
  readonly storage: StorageId;
  readonly files: readonly string[];
  readonly startNs: bigint;
  readonly endNs: bigint;
  readonly messageCount: number;
  readonly metadata: BagMetadata | undefined;
  readonly warnings: Problem[];
  readonly #files: StorageFile[];
  readonly #topics: TopicInfo[];
  readonly #topicIndex = new Map<string, number>();
  readonly #definitions = new Map<string, DefinitionText>();
  readonly #byCanonical = new Map<string, DefinitionText>();
  readonly #cleanup: (() => void)[];
  readonly #warnFn: (p: Problem) => void;

  constructor(args: {
    path: string;
    storage: StorageId;
    files: StorageFile[];
    metadata: BagMetadata | undefined;
    warnings: Problem[];
    warn: (p: Problem) => void;
    cleanup: (() => void)[];
  }) {
    this.path = args.path;
    this.storage = args.storage;
    this.#files = args.files;
    this.files = args.files.map((f) => f.file.path);
    this.metadata = args.metadata;
    this.warnings = args.warnings;
    this.#cleanup = args.cleanup;
    this.#warnFn = args.warn;

    const byName = new Map<string, { name: string; type: string; serializationFormat: string; count: number; qos: string; hash: string }>();
    const note = (name: string, type: string, fmt: string, count: number, qos: string, hash: string, where: string): void => {
      const t = byName.get(name);
      if (!t) {
        byName.set(name, { name, type, serializationFormat: fmt, count, qos, hash });
        return;
      }
      t.count += count;
      if (t.type === '' && type !== '') t.type = type;
      if (t.qos === '' && qos !== '') t.qos = qos;
      if (t.hash === '' && hash !== '') t.hash = hash;
      if (type !== '' && t.type !== type && canonicalType(t.type) !== canonicalType(type)) {
        this.#warn({
          code: 'bag.topic_type_conflict',
          message: `topic ${name} has type ${t.type} in one place and ${type} in ${where}; using ${t.type}`,
          where: { file: where, topic: name },
        });
      }
    };
    let start: bigint | undefined;
    let end: bigint | undefined;
    let total = 0;
    for (const sf of args.files) {
      if (sf.kind === 'mcap') {
        const f = sf.file;
        for (const ch of f.channels.values()) {
          const schema = f.schemas.get(ch.schemaId);
          note(ch.topic, schema?.name ?? '', ch.messageEncoding, f.counts.get(ch.id) ?? 0, ch.metadata.get('offered_qos_profiles') ?? '', ch.metadata.get('topic_type_hash') ?? '', f.path);
        }
        const dec = new TextDecoder();
        for (const s of f.schemas.values()) {
          if (s.data.length > MAX_DEFINITION_BYTES) {
            this.#warn({
              code: 'bag.definition_too_large',
              message: `the schema of ${s.name} is ${s.data.length} bytes, more than the ${MAX_DEFINITION_BYTES} a message definition may take; it is ignored`,
              where: { file: f.path },
            });
            continue;
          }
          if (!this.#definitions.has(s.name)) this.#addDefinition(s.name, { encoding: s.encoding, text: dec.decode(s.data), origin: f.path });
        }
      } else {
        const f = sf.file;
        for (const t of f.topics) note(t.name, t.type, t.serializationFormat, f.counts.get(t.id) ?? 0, t.offeredQosText, t.typeHash, f.path);
        for (const [type, d] of f.definitions) if (!this.#definitions.has(type)) this.#addDefinition(type, d);
      }
      const fs = sf.file;
      total += fs.messageCount;
      if (fs.messageCount > 0) {
        if (start === undefined || fs.startNs < start) start = fs.startNs;
        if (end === undefined || fs.endNs > end) end = fs.endNs;
      }
    }
    // Topics only metadata.yaml knows (declared, never recorded in the files we have).
    for (const t of args.metadata?.topics ?? []) {
      if (!byName.has(t.name)) note(t.name, t.type, t.serializationFormat, 0, t.offeredQosText, t.typeDescriptionHash, 'metadata.yaml');
    }
    this.#topics = [...byName.values()]
      .sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0))
      .map((t) => {
        const q = parseQos(t.qos);
        if (q.error) {
          this.#warn({ code: 'bag.qos_unparsed', message: `offered_qos_profiles is not valid YAML: ${q.error}`, where: { topic: t.name } });
        }
        return { name: t.name, type: t.type, serializationFormat: t.serializationFormat, count: t.count, offeredQos: q.profiles, offeredQosText: t.qos, typeHash: t.hash };
      });
    this.#topics.forEach((t, i) => this.#topicIndex.set(t.name, i));
    this.messageCount = total;
    this.startNs = start ?? 0n;
    this.endNs = end ?? 0n;
  }

  #addDefinition(type: string, d: DefinitionText): void {
    this.#definitions.set(type, d);
    const key = canonicalType(type);
    if (!this.#byCanonical.has(key)) this.#byCanonical.set(key, d);
  }

  #warn(p: Problem): void {
    this.#warnFn(p);
  }

  topics(): readonly TopicInfo[] {
    return this.#topics;
  }

  definition(type: string): DefinitionText | undefined {
    return this.#definitions.get(type) ?? this.#byCanonical.get(canonicalType(type));
  }

  definitions(): ReadonlyMap<string, DefinitionText> {
    return this.#definitions;
  }

  batches(opts: ReadOptions = {}): Iterable<MessageBatch> {
    const startNs = opts.startNs ?? 0n;
    const endNs = opts.endNs ?? MAX_TIME;
    const wanted = opts.topics ? new Set(opts.topics) : undefined;
    const keep = (name: string): number => {
      const i = this.#topicIndex.get(name);
      return i === undefined || (wanted && !wanted.has(name)) ? -1 : i;
    };
    const perFile: BatchSource[] = [];
    for (const sf of this.#files) {
      let inner: BatchSource[];
      if (sf.kind === 'mcap') {
        const f = sf.file;
        let max = -1;
        for (const id of f.channels.keys()) max = Math.max(max, id);
        const table = new Int32Array(max + 1).fill(-2);
        for (const [id, ch] of f.channels) table[id] = keep(ch.topic);
        inner = f.sources(table, startNs, endNs);
      } else {
        const f = sf.file;
        const m = new Map<number, number>();
        for (const t of f.topics) {
          const i = keep(t.name);
          if (i >= 0) m.set(t.id, i);
        }
        inner = f.sources(m, startNs, endNs);
      }
      if (inner.length === 0) continue;
      let first = inner[0]!.firstNs;
      for (const s of inner) if (s.firstNs < first) first = s.firstNs;
      // Ties between files go to the file listed first.
      perFile.push({ firstNs: first, order: perFile.length, open: () => mergeSources(inner) });
    }
    return { [Symbol.iterator]: () => (perFile.length === 0 ? [][Symbol.iterator]() : mergeSources(perFile)) };
  }

  messages(opts: ReadOptions = {}): Iterable<BagMessage> {
    const topics = this.#topics;
    const batches = this.batches(opts);
    return {
      *[Symbol.iterator]() {
        for (const b of batches) {
          for (let i = 0; i < b.count; i++) {
            const t = topics[b.topicIndex[i]!]!;
            const o = b.offset[i]!;
            yield { topic: t.name, type: t.type, logTimeNs: b.logTimeNs[i]!, data: b.bytes.subarray(o, o + b.length[i]!) };
          }
        }
      },
    };
  }

  close(): void {
    for (const f of this.#files) f.file.close();
    for (const c of this.#cleanup) {
      try {
        c();
      } catch {
        /* best effort */
      }
    }
    this.#cleanup.length = 0;
  }
}

/** Open a bag directory or a single storage file. Throws InputError for anything unusable. */
export async function openBag(path: string, opts: OpenOptions = {}): Promise<Bag> {
  const warnings: Problem[] = [];
  const warn = (p: Problem): void => {
    warnings.push(p);
    warnOnce('bag', p);
    opts.onWarning?.(p);
  };
  const abs = resolve(path);
  let st;
  try {
    st = statSync(abs);
  } catch {
    throw new InputError({ code: 'bag.not_found', message: `no such file or directory: ${path}`, where: { file: path } });
  }
  let plans: FilePlan[];
  let metadata: BagMetadata | undefined;
  let storage: StorageId;
  let messageCompression = false;
  if (st.isDirectory()) {
    const metaPath = join(abs, 'metadata.yaml');
    if (existsSync(metaPath) || isLink(metaPath)) {
      metadata = parseMetadataYaml(readRegularFile(metaPath, MAX_METADATA_BYTES, 'metadata.yaml').toString('utf8'), metaPath);
      ({ plans, storage, messageCompression } = planFromMetadata(abs, metaPath, metadata, warn));
    } else {
      const candidates = readdirSync(abs).filter((n) => storageOfName(n) !== undefined).sort();
      if (candidates.length !== 1) {
        throw new InputError({
          code: 'bag.no_metadata',
          message:
            candidates.length === 0
              ? 'directory has no metadata.yaml and no storage file (.mcap, .db3)'
              : `directory has no metadata.yaml and ${candidates.length} storage files (${candidates.join(', ')}): their order and completeness are unknown`,
          where: { file: metaPath },
          hint: candidates.length === 0 ? 'pass a bag directory or a .mcap/.db3 file' : 'restore metadata.yaml, or open one storage file directly',
        });
      }
      const only = candidates[0]!;
      warn({
        code: 'bag.no_metadata',
        message: `directory has no metadata.yaml; opening its only storage file ${only}`,
        where: { file: metaPath },
      });
      storage = storageOfName(only)!;
      plans = [{ path: join(abs, only), storage, fileCompressed: only.endsWith('.zstd') }];
    }
  } else {
    regularFileSize(abs, 'the bag file', path);
    const s = storageOfName(abs) ?? sniff(abs);
    if (!s) {
      throw new InputError({
        code: 'bag.unknown_file',
        message: 'not a bag: neither a directory nor an MCAP or sqlite3 file',
        where: { file: path },
        hint: 'pass a rosbag2 directory, a .mcap file or a .db3 file',
      });
    }
    storage = s;
    plans = [{ path: abs, storage: s, fileCompressed: abs.endsWith('.zstd') }];
  }

  const files: StorageFile[] = [];
  const cleanup: (() => void)[] = [];
  const limit = maxUncompressedBytes(opts.maxUncompressedBytes);
  try {
    const needZstd = messageCompression || plans.some((p) => p.fileCompressed);
    const handlers = needZstd ? await decompressHandlers() : undefined;
    for (const plan of plans) {
      if (plan.storage === 'mcap') {
        let src: ByteSource;
        if (plan.fileCompressed) {
          const raw = readRegularFile(plan.path, limit, 'compressed storage file');
          src = new MemorySource(decompressZstd(raw, handlers!, plan.path, undefined, limit), plan.path);
        } else {
          src = new FileSource(plan.path);
        }
        try {
          files.push({ kind: 'mcap', file: await McapFile.open(src, { validateCrc: opts.validateCrc ?? true, warn, maxUncompressedBytes: limit }) });
        } catch (err) {
          src.close();
          throw err;
        }
      } else {
        let dbPath = plan.path;
        if (plan.fileCompressed) {
          const dir = mkdtempSync(join(tmpdir(), 'antiphon-bag-'));
          cleanup.push(() => rmSync(dir, { recursive: true, force: true }));
          dbPath = join(dir, basename(plan.path, '.zstd'));
          writeFileSync(dbPath, decompressZstd(readRegularFile(plan.path, limit, 'compressed storage file'), handlers!, plan.path, undefined, limit));
        }
        files.push({
          kind: 'sqlite3',
          file: new SqliteFile(dbPath, { warn, messageCompression, ...(handlers ? { handlers } : {}), displayName: plan.path, maxUncompressedBytes: limit }),
        });
      }
    }
  } catch (err) {
    for (const f of files) f.file.close();
    for (const c of cleanup) c();
    throw err;
  }
  if (!metadata && files.length === 1 && files[0]!.kind === 'sqlite3' && files[0]!.file.metadataText) {
    try {
      metadata = parseMetadataYaml(files[0]!.file.metadataText, `${files[0]!.file.path} (metadata table)`);
    } catch {
      /* the table is informative only */
    }
  }
  const bag = new OpenedBag({ path, storage, files, metadata, warnings, warn, cleanup });
  if (metadata && plans.length > 0) crossCheckCounts(bag, metadata, warn);
  return bag;
}

function isLink(p: string): boolean {
  try {
    return lstatSync(p).isSymbolicLink();
  } catch {
    return false;
  }
}

/**
 * metadata.yaml promises a message count (in total and per topic): fewer messages in the storage
 * files means some were lost (a file cut on a chunk boundary loses its summary and tells nothing
 * itself), so say how many were read against the promise.
 */
function crossCheckCounts(bag: Bag, m: BagMetadata, warn: (p: Problem) => void): void {
  const short: string[] = [];
  const have = new Map(bag.topics().map((t) => [t.name, t.count]));
  for (const t of m.topics) {
    const n = have.get(t.name) ?? 0;
    if (t.messageCount > n) short.push(`${t.name}: ${n} of ${t.messageCount}`);
  }
  if (m.messageCount > bag.messageCount || short.length > 0) {
    warn({
      code: 'bag.messages_missing',
      message: `the storage files hold ${bag.messageCount} messages, metadata.yaml promises ${m.messageCount}${short.length ? ` (${short.slice(0, 8).join('; ')}${short.length > 8 ? `; ${short.length - 8} more topics` : ''})` : ''}`,
      where: { file: join(resolve(bag.path), 'metadata.yaml'), key: 'message_count' },
      hint: 'the recording is incomplete (a storage file is cut, damaged or missing); what is there is used',
    });
  }
}

function planFromMetadata(
  dir: string,
  metaPath: string,
  m: BagMetadata,
  warn: (p: Problem) => void,
): { plans: FilePlan[]; storage: StorageId; messageCompression: boolean } {
  let rel = [...m.relativeFilePaths];
  if (rel.length === 0) {
    rel = readdirSync(dir).filter((n) => storageOfName(n) !== undefined).sort(naturalOrder);
    if (rel.length === 0) {
      throw new InputError({
        code: 'bag.no_files',
        message: 'metadata.yaml lists no relative_file_paths and the directory has no storage file',
        where: { file: metaPath, key: 'relative_file_paths' },
      });
    }
    warn({
      code: 'bag.metadata_no_files',
      message: `metadata.yaml lists no relative_file_paths; using ${rel.join(', ')} in name order`,
      where: { file: metaPath, key: 'relative_file_paths' },
    });
  }
  let storage: StorageId;
  const id = m.storageIdentifier.trim();
  if (id === 'mcap' || id === 'sqlite3') storage = id;
  else if (id === '') {
    const s = storageOfName(rel[0]!);
    if (!s) {
      throw new InputError({
        code: 'bag.unknown_storage',
        message: 'metadata.yaml has no storage_identifier and the file names do not tell',
        where: { file: metaPath, key: 'storage_identifier' },
        hint: 'supported storage: mcap, sqlite3',
      });
    }
    storage = s;
  } else {
    throw new InputError({
      code: 'bag.unknown_storage',
      message: `storage_identifier '${id}' is not supported`,
      where: { file: metaPath, key: 'storage_identifier' },
      hint: 'supported storage: mcap, sqlite3',
    });
  }
  const format = m.compressionFormat.trim().toLowerCase();
  const mode = m.compressionMode.trim().toLowerCase();
  if (format !== '' && format !== 'zstd') {
    throw new InputError({
      code: 'bag.unknown_compression',
      message: `compression_format '${m.compressionFormat}' is not supported`,
      where: { file: metaPath, key: 'compression_format' },
      hint: 'supported: zstd (file or message mode)',
    });
  }
  if (format === 'zstd' && mode !== 'file' && mode !== 'message') {
    throw new InputError({
      code: 'bag.unknown_compression',
      message: `compression_mode '${m.compressionMode}' is not supported`,
      where: { file: metaPath, key: 'compression_mode' },
      hint: 'supported: FILE, MESSAGE',
    });
  }
  const seen = new Map<string, string>();
  const plans: FilePlan[] = [];
  for (const [i, r] of rel.entries()) {
    const key = `relative_file_paths[${i}]`;
    if (r.trim() === '' || r === '.' || r === '..') {
      throw new InputError({
        code: 'bag.bad_file_entry',
        message: `${key} is ${JSON.stringify(r)}, which names no storage file`,
        where: { file: metaPath, key },
        hint: 'each entry is a storage file name relative to the bag directory, e.g. mybag_0.mcap',
      });
    }
    // Before version 4, paths carried the bag folder as a prefix.
    const tries = [join(dir, r), join(dir, basename(r))];
    const found = tries.find((p) => existsSync(p));
    if (found) regularFileSize(found, `storage file ${r} (${key})`, found);
    if (found) {
      let real = found;
      try {
        real = realpathSync(found);
      } catch {
        /* checked above */
      }
      const first = seen.get(real);
      if (first !== undefined) {
        warn({
          code: 'bag.duplicate_file',
          message: `${key} (${r}) names the same file as ${first}; it is read once`,
          where: { file: metaPath, key },
        });
        continue;
      }
      seen.set(real, key);
    }
    if (!found) {
      throw new InputError({
        code: 'bag.missing_file',
        message: `storage file ${r} listed in metadata.yaml does not exist`,
        where: { file: join(dir, r) },
        hint: 'the bag is incomplete; restore the file or fix relative_file_paths',
      });
    }
    const fileCompressed = format === 'zstd' && mode === 'file';
    plans.push({ path: found, storage, fileCompressed: fileCompressed || found.endsWith('.zstd') });
  }
  return { plans, storage, messageCompression: format === 'zstd' && mode === 'message' };
}

function naturalOrder(a: string, b: string): number {
  return a.localeCompare(b, 'en', { numeric: true });
}

export { INT64_MAX };
