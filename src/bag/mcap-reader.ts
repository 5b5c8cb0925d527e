/**
 * MCAP storage files. The summary (schemas, channels, chunk indexes, statistics) is read with
 * @mcap/core's McapIndexedReader. Chunks are then read synchronously: one read per chunk,
 * decompress, check the CRC, and parse the records in place into a MessageBatch (no object or
 * copy per message). Files without a usable summary (not indexed, truncated, summary damaged)
 * are scanned record by record instead: every intact chunk is used, and a warning says where
 * reading stopped.
 */
import { McapIndexedReader } from '@mcap/core';
import type { Problem } from '../util/errors.js';
import { InputError } from '../util/errors.js';
import { logger } from '../util/log.js';
import { makeBatch, sortBatch, type BatchSource } from './batch.js';
import { crc32 } from './crc32.js';
import { mcapReadable, type ByteSource } from './io.js';
import { MIN_MCAP_MESSAGE_RECORD, maxUncompressedBytes, planted } from './limits.js';
import { declaredSizeProblem, decompressHandlers, type DecompressHandlers } from './zstd.js';
import type { MessageBatch } from './types.js';

const MAGIC = [0x89, 0x4d, 0x43, 0x41, 0x50]; // \x89 M C A P, then the version byte and \r\n
const OP = {
  HEADER: 0x01,
  FOOTER: 0x02,
  SCHEMA: 0x03,
  CHANNEL: 0x04,
  MESSAGE: 0x05,
  CHUNK: 0x06,
  DATA_END: 0x0f,
} as const;
const OP_NAMES: Record<number, string> = {
  1: 'Header', 2: 'Footer', 3: 'Schema', 4: 'Channel', 5: 'Message', 6: 'Chunk', 7: 'MessageIndex',
  8: 'ChunkIndex', 9: 'Attachment', 10: 'AttachmentIndex', 11: 'Statistics', 12: 'Metadata',
  13: 'MetadataIndex', 14: 'SummaryOffset', 15: 'DataEnd',
};
const LOOSE_REGION_MAX = 4 << 20;
const LITTLE_ENDIAN_HOST = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;
const textDecoder = new TextDecoder();

export interface McapSchema {
  readonly id: number;
  readonly name: string;
  readonly encoding: string;
  readonly data: Uint8Array;
}

export interface McapChannel {
  readonly id: number;
  readonly schemaId: number;
  readonly topic: string;
  readonly messageEncoding: string;
  readonly metadata: ReadonlyMap<string, string>;
}

/** A chunk record, or (`loose`) a run of top-level Schema/Channel/Message records. */
export interface ChunkRef {
  readonly offset: number;
  readonly length: number;
  readonly startNs: bigint;
  readonly endNs: bigint;
  readonly compression: string;
  /** Channels with messages in it, when the index tells. */
  readonly channels: ReadonlySet<number> | undefined;
  readonly loose: boolean;
}

export interface McapOpenOptions {
  readonly validateCrc?: boolean;
  readonly warn: (p: Problem) => void;
  /** Cap on one decompressed chunk (default: `maxUncompressedBytes()`). */
  readonly maxUncompressedBytes?: number;
}

/** Messages whose log time is 2^63 ns or later (not a valid ROS time): counted, then skipped. */
export interface BadTimes {
  count: number;
  /** Offset (in the parsed region) of the first such message record. */
  first: number;
}

class ChunkError extends Error {}

/** A small cursor for the non-hot records (schemas, channels, chunk headers). */
class Cursor {
  p: number;
  constructor(
    readonly view: DataView,
    start: number,
    readonly end: number,
  ) {
    this.p = start;
  }
  need(n: number): void {
    if (this.p + n > this.end) throw new ChunkError(`record field runs past its record (${n} bytes at +${this.p})`);
  }
  u16(): number {
    this.need(2);
    const v = this.view.getUint16(this.p, true);
    this.p += 2;
    return v;
  }
  u32(): number {
    this.need(4);
    const v = this.view.getUint32(this.p, true);
    this.p += 4;
    return v;
  }
  u64(): bigint {
    this.need(8);
    const v = this.view.getBigUint64(this.p, true);
    this.p += 8;
    return v;
  }
  bytes(n: number): Uint8Array {
    this.need(n);
    const v = new Uint8Array(this.view.buffer, this.view.byteOffset + this.p, n);
    this.p += n;
    return v;
  }
  str(): string {
    return textDecoder.decode(this.bytes(this.u32()));
  }
}

function parseSchema(view: DataView, p: number, end: number): McapSchema {
  const c = new Cursor(view, p, end);
  const id = c.u16();
  const name = c.str();
  const encoding = c.str();
  const data = c.bytes(c.u32()).slice();
  return { id, name, encoding, data };
}

function parseChannel(view: DataView, p: number, end: number): McapChannel {
  const c = new Cursor(view, p, end);
  const id = c.u16();
  const schemaId = c.u16();
  const topic = c.str();
  const messageEncoding = c.str();
  const metaEnd = c.u32() + c.p;
  if (metaEnd > end) throw new ChunkError('channel metadata runs past its record');
  const metadata = new Map<string, string>();
  while (c.p < metaEnd) metadata.set(c.str(), c.str());
  return { id, schemaId, topic, messageEncoding, metadata };
}

/** Byte `p` of a record region holds an opcode; returns content length or throws. */
function recordLength(view: DataView, p: number, n: number): number {
  if (p + 9 > n) throw new ChunkError(`record header cut at +${p}`);
  const lo = view.getUint32(p + 1, true);
  const hi = view.getUint32(p + 5, true);
  const len = hi * 0x1_0000_0000 + lo;
  if (p + 9 + len > n) throw new ChunkError(`${OP_NAMES[view.getUint8(p)] ?? 'record'} at +${p} claims ${len} bytes, ${n - p - 9} left`);
  return len;
}

export interface RecordSink {
  schema?(s: McapSchema): void;
  channel?(c: McapChannel): void;
}

/**
 * Parse a region of Schema/Channel/Message records into a batch. `topicOf[channelId]` is the
 * topic index, -1 to leave the channel out; channels beyond the table or marked -2 are unknown.
 * Time bounds are inclusive. Other record kinds are skipped.
 */
export function parseRecords(
  records: Uint8Array,
  topicOf: Int32Array,
  startNs: bigint,
  endNs: bigint,
  sink: RecordSink = {},
  onUnknownChannel?: (channelId: number, at: number) => void,
  badTimes?: BadTimes,
): MessageBatch {
  const view = new DataView(records.buffer, records.byteOffset, records.byteLength);
  const n = records.length;
  // Pass 1: frame the records and count messages.
  let count = 0;
  let p = 0;
  while (p < n) {
    const len = recordLength(view, p, n);
    if (records[p] === OP.MESSAGE) {
      if (len < 22) throw new ChunkError(`Message at +${p} is ${len} bytes, shorter than its 22-byte prefix`);
      count++;
    }
    p += 9 + len;
  }
  const topicIndex = new Uint32Array(count);
  const logTime = new BigInt64Array(count);
  const words = new Uint32Array(logTime.buffer);
  const offset = new Uint32Array(count);
  const length = new Uint32Array(count);
  const sHi = Number(startNs >> 32n);
  const sLo = Number(startNs & 0xffffffffn);
  const eHi = Number(endNs >> 32n);
  const eLo = Number(endNs & 0xffffffffn);
  const tableLen = topicOf.length;
  let k = 0;
  let sorted = true;
  let pHi = -1;
  let pLo = -1;
  p = 0;
  while (p < n) {
    const op = records[p]!;
    const len = view.getUint32(p + 1, true) + view.getUint32(p + 5, true) * 0x1_0000_0000;
    const c = p + 9;
    if (op === OP.MESSAGE) {
      const ch = view.getUint16(c, true);
      const ti = ch < tableLen ? topicOf[ch]! : -2;
      if (ti >= 0) {
        const lo = view.getUint32(c + 6, true);
        const hi = view.getUint32(c + 10, true);
        if (hi >= 0x80000000) {
          // uint64 log time beyond int64: not a ROS time. Counted so it is reported, not dropped silently.
          if (badTimes) {
            if (badTimes.count === 0) badTimes.first = p;
            badTimes.count++;
          }
        } else if ((hi > sHi || (hi === sHi && lo >= sLo)) && (hi < eHi || (hi === eHi && lo <= eLo))) {
          if (hi < pHi || (hi === pHi && lo < pLo)) sorted = false;
          pHi = hi;
          pLo = lo;
          if (LITTLE_ENDIAN_HOST) {
            words[2 * k] = lo;
            words[2 * k + 1] = hi;
          } else {
            logTime[k] = view.getBigInt64(c + 6, true);
          }
          topicIndex[k] = ti;
          offset[k] = c + 22;
          length[k] = len - 22;
          k++;
        }
      } else if (ti === -2 && onUnknownChannel) {
        onUnknownChannel(ch, p);
      }
    } else if (op === OP.SCHEMA && sink.schema) {
      sink.schema(parseSchema(view, c, c + len));
    } else if (op === OP.CHANNEL && sink.channel) {
      sink.channel(parseChannel(view, c, c + len));
    }
    p = c + len;
  }
  const batch = makeBatch(records, topicIndex.subarray(0, k), logTime.subarray(0, k), offset.subarray(0, k), length.subarray(0, k), k);
  return sorted ? batch : sortBatch(batch);
}

interface ChunkHeader {
  startNs: bigint;
  endNs: bigint;
  uncompressedSize: number;
  crc: number;
  compression: string;
  records: Uint8Array;
}

function parseChunkRecord(rec: Uint8Array): ChunkHeader {
  const view = new DataView(rec.buffer, rec.byteOffset, rec.byteLength);
  if (rec[0] !== OP.CHUNK) throw new ChunkError(`expected a Chunk record, found opcode 0x${(rec[0] ?? 0).toString(16)}`);
  const len = recordLength(view, 0, rec.length);
  const c = new Cursor(view, 9, 9 + len);
  const startNs = c.u64();
  const endNs = c.u64();
  const uncompressedSize = Number(c.u64());
  const crc = c.u32();
  const compression = c.str();
  const recLen = Number(c.u64());
  const records = c.bytes(recLen);
  return { startNs, endNs, uncompressedSize, crc, compression, records };
}

/** Decompress and check a chunk record's content. Throws ChunkError on any damage. */
function chunkContent(rec: Uint8Array, handlers: DecompressHandlers | undefined, validateCrc: boolean, limit: number): { h: ChunkHeader; records: Uint8Array } {
  const h = parseChunkRecord(rec);
  let records = h.records;
  if (h.compression !== '') {
    const fn = handlers?.[h.compression];
    if (!fn) throw new ChunkError(`unsupported chunk compression '${h.compression}'`);
    // Checked before the decompressor allocates the declared size.
    const why = declaredSizeProblem(h.compression, h.records, h.uncompressedSize, limit);
    if (why !== undefined) throw new ChunkError(`chunk ${why}`);
    try {
      records = fn(h.records, BigInt(h.uncompressedSize));
    } catch (err) {
      throw new ChunkError(`${h.compression} decompression failed: ${(err as Error).message}`);
    }
  }
  if (records.length !== h.uncompressedSize) {
    throw new ChunkError(`chunk holds ${records.length} bytes, its header says ${h.uncompressedSize}`);
  }
  if (validateCrc && h.crc !== 0) {
    const actual = crc32(records);
    if (actual !== h.crc) throw new ChunkError(`CRC mismatch: computed ${hex32(actual)}, recorded ${hex32(h.crc)}`);
  }
  return { h, records };
}

function sameSchema(a: McapSchema, b: McapSchema): boolean {
  return a.name === b.name && a.encoding === b.encoding && a.data.length === b.data.length && a.data.every((x, i) => x === b.data[i]);
}

function sameChannel(a: McapChannel, b: McapChannel): boolean {
  if (a.topic !== b.topic || a.schemaId !== b.schemaId || a.messageEncoding !== b.messageEncoding || a.metadata.size !== b.metadata.size) return false;
  for (const [k, v] of a.metadata) if (b.metadata.get(k) !== v) return false;
  return true;
}

function describeChannel(c: McapChannel): string {
  return `topic ${JSON.stringify(c.topic)} (schema ${c.schemaId}, ${c.messageEncoding || 'no encoding'})`;
}

function hex32(v: number): string {
  return '0x' + v.toString(16).padStart(8, '0');
}

export class McapFile {
  readonly path: string;
  readonly profile: string;
  readonly library: string;
  readonly schemas = new Map<number, McapSchema>();
  readonly channels = new Map<number, McapChannel>();
  readonly chunks: ChunkRef[] = [];
  readonly counts = new Map<number, number>();
  startNs = 0n;
  endNs = 0n;
  messageCount = 0;
  /** False when the file was scanned because it had no usable summary. */
  indexed = true;
  readonly #src: ByteSource;
  readonly #validateCrc: boolean;
  readonly #limit: number;
  readonly #warn: (p: Problem) => void;
  #handlers: DecompressHandlers | undefined;
  readonly #unknownChannels = new Set<number>();

  private constructor(src: ByteSource, opts: McapOpenOptions, profile: string, library: string) {
    this.#src = src;
    this.path = src.name;
    this.#validateCrc = opts.validateCrc ?? true;
    this.#limit = opts.maxUncompressedBytes ?? maxUncompressedBytes();
    this.#warn = opts.warn;
    this.profile = profile;
    this.library = library;
  }

  static async open(src: ByteSource, opts: McapOpenOptions): Promise<McapFile> {
    const size = src.size();
    const head = src.read(0, Math.min(size, 8));
    if (head.length < 8 || !MAGIC.every((b, i) => head[i] === b) || head[6] !== 0x0d || head[7] !== 0x0a) {
      throw new InputError({
        code: 'bag.mcap_bad_magic',
        message: size < 8 ? `file is ${size} bytes, too short for MCAP` : 'file does not start with the MCAP magic bytes',
        where: { file: src.name, byteOffset: 0 },
        hint: 'expected an MCAP file (89 4D 43 41 50 30 0D 0A)',
      });
    }
    const handlers = await decompressHandlers();
    let reader: McapIndexedReader | undefined;
    let reason = '';
    try {
      reader = await McapIndexedReader.Initialize({ readable: mcapReadable(src) });
    } catch (err) {
      reason = (err as Error).message;
    }
    if (reader && reader.chunkIndexes.length === 0 && (reader.statistics?.messageCount ?? 0n) > 0n) {
      reason = 'messages are not in indexed chunks';
      reader = undefined;
    } else if (reader && reader.chunkIndexes.length === 0 && reader.statistics === undefined) {
      // A summary without chunk indexes or statistics says nothing about the messages (the
      // specification makes both optional): count them from the data section, not as zero.
      reason = 'not indexed: the summary has neither chunk indexes nor statistics';
      reader = undefined;
    }
    if (reader) {
      const f = new McapFile(src, opts, reader.header.profile, reader.header.library);
      f.#handlers = handlers;
      f.#fromSummary(reader);
      return f;
    }
    const f = new McapFile(src, opts, '', '');
    f.#handlers = handlers;
    f.indexed = false;
    const notIndexed = /not indexed/i.test(reason);
    logger('bag').debug({ file: src.name, reason }, 'no usable MCAP summary; scanning');
    if (!notIndexed) {
      f.#warn({
        code: 'bag.mcap_no_summary',
        message: `no usable summary (${reason.replace(/ \[library=.*\]$/, '')}); scanning the data section instead`,
        where: { file: src.name },
        hint: 'the file may be truncated or damaged; every intact chunk is still read',
      });
    }
    f.#scan();
    return f;
  }

  /** The summary reader keeps the last of two Schema or Channel records with one id: look for such pairs. */
  #checkSummaryIds(r: McapIndexedReader): void {
    const start = Number(r.footer.summaryStart);
    const end = this.#src.size() - 8 - 29; // the Footer record (29 bytes) and the closing magic
    if (start <= 0 || start >= end) return;
    const seenS = new Map<number, McapSchema>();
    const seenC = new Map<number, McapChannel>();
    const region = this.#src.read(start, end - start);
    const sink: RecordSink = {
      schema: (x) => {
        const old = seenS.get(x.id);
        if (old && !sameSchema(old, x)) this.#conflict('Schema', x.id, `${old.name} (${old.encoding})`, `${x.name} (${x.encoding})`, start);
        seenS.set(x.id, x);
      },
      channel: (x) => {
        const old = seenC.get(x.id);
        if (old && !sameChannel(old, x)) this.#conflict('Channel', x.id, describeChannel(old), describeChannel(x), start);
        seenC.set(x.id, x);
      },
    };
    try {
      parseRecords(region, new Int32Array(0), 0n, 0n, sink);
    } catch (err) {
      if (err instanceof InputError) throw err;
      /* the summary reader accepted the section; framing quirks here are not ours to report */
    }
  }

  #fromSummary(r: McapIndexedReader): void {
    this.#checkSummaryIds(r);
    for (const [id, s] of r.schemasById) this.schemas.set(id, { id, name: s.name, encoding: s.encoding, data: s.data });
    for (const [id, c] of r.channelsById) {
      this.channels.set(id, { id, schemaId: c.schemaId, topic: c.topic, messageEncoding: c.messageEncoding, metadata: c.metadata });
    }
    for (const ci of r.chunkIndexes) {
      this.chunks.push({
        offset: Number(ci.chunkStartOffset),
        length: Number(ci.chunkLength),
        startNs: ci.messageStartTime,
        endNs: ci.messageEndTime,
        compression: ci.compression,
        channels: ci.messageIndexOffsets.size > 0 ? new Set(ci.messageIndexOffsets.keys()) : undefined,
        loose: false,
      });
    }
    this.#sortChunks();
    const st = r.statistics;
    // Statistics are declarations: trusted only when the chunks can hold that many messages
    // (each Message record is at least 31 bytes), the per-channel counts add up and every time
    // is a valid ROS time. Otherwise every chunk is read once to count.
    const MAXT = 0x7fffffffffffffffn;
    let capacity = 0;
    for (const ci of r.chunkIndexes) capacity += Math.floor(Math.min(Number(ci.uncompressedSize), this.#limit) / MIN_MCAP_MESSAGE_RECORD);
    const badChunkTime = this.chunks.some((c) => c.endNs > MAXT || c.startNs > MAXT);
    let why: string | undefined;
    if (st) {
      let sum = 0n;
      for (const n of st.channelMessageCounts.values()) sum += n;
      if (st.messageCount > BigInt(capacity) && !planted('mcap-statistics')) {
        why = `statistics claim ${st.messageCount} messages, more than its chunks can hold (at most ${capacity})`;
      } else if (sum !== st.messageCount && st.channelMessageCounts.size > 0) {
        why = `statistics claim ${st.messageCount} messages, their per-channel counts add up to ${sum}`;
      } else if (st.messageCount > 0n && (st.messageStartTime > MAXT || st.messageEndTime > MAXT || st.messageStartTime > st.messageEndTime)) {
        why = `statistics give log times ${st.messageStartTime} to ${st.messageEndTime} (valid ROS times are below 2^63 ns)`;
      } else if (badChunkTime) {
        why = 'a chunk index gives log times of 2^63 ns or later';
      }
    }
    if (why !== undefined) {
      this.#warn({
        code: 'bag.mcap_bad_statistics',
        message: `${why}; counting by reading every chunk instead`,
        where: { file: this.path },
        hint: 'the summary section is damaged or was written by a faulty tool',
      });
    }
    if (st && why === undefined && (st.channelMessageCounts.size > 0 || st.messageCount === 0n)) {
      for (const [id, n] of st.channelMessageCounts) this.counts.set(id, Number(n));
      this.messageCount = Number(st.messageCount);
      this.startNs = st.messageCount > 0n ? st.messageStartTime : 0n;
      this.endNs = st.messageCount > 0n ? st.messageEndTime : 0n;
    } else {
      // No (usable) statistics: count by reading every chunk once.
      this.#countAll();
    }
    // The profile and library are facts of the header record; nothing else to check here.
  }

  #sortChunks(): void {
    this.chunks.sort((a, b) => (a.startNs < b.startNs ? -1 : a.startNs > b.startNs ? 1 : a.offset - b.offset));
  }

  #allChannelsTable(): Int32Array {
    let max = -1;
    for (const id of this.channels.keys()) max = Math.max(max, id);
    const t = new Int32Array(max + 1).fill(-2);
    for (const id of this.channels.keys()) t[id] = id; // "topic index" = channel id while counting
    return t;
  }

  #countAll(): void {
    const table = this.#allChannelsTable();
    let first: bigint | undefined;
    let last: bigint | undefined;
    for (const ch of this.chunks) {
      const b = this.#load(ch, table, 0n, 0xffffffffffffffffn >> 1n);
      if (!b) continue;
      for (let i = 0; i < b.count; i++) this.counts.set(b.topicIndex[i]!, (this.counts.get(b.topicIndex[i]!) ?? 0) + 1);
      this.messageCount += b.count;
      if (b.count > 0) {
        if (first === undefined || b.logTimeNs[0]! < first) first = b.logTimeNs[0]!;
        if (last === undefined || b.logTimeNs[b.count - 1]! > last) last = b.logTimeNs[b.count - 1]!;
      }
    }
    this.startNs = first ?? 0n;
    this.endNs = last ?? 0n;
  }

  /** Walk the data section record by record (files without a usable summary). */
  #scan(): void {
    const src = this.#src;
    const size = src.size();
    let p = 8;
    let ended = false;
    let intactChunks = 0;
    let looseStart = -1;
    let looseEnd = -1;
    let looseFirst: bigint | undefined;
    let looseLast: bigint | undefined;
    let looseChannels = new Set<number>();
    // While scanning, every channel counts as itself; Channel records (which precede their
    // messages, possibly in the same chunk) enter the table as they are parsed.
    const table = new Int32Array(65536).fill(-2);
    for (const id of this.channels.keys()) table[id] = id;
    const recordChannels = (): Int32Array => table;
    const sink: RecordSink = {
      schema: (s) => {
        const old = this.schemas.get(s.id);
        if (old && !sameSchema(old, s)) this.#conflict('Schema', s.id, `${old.name} (${old.encoding})`, `${s.name} (${s.encoding})`, p);
        this.schemas.set(s.id, s);
      },
      channel: (c) => {
        const old = this.channels.get(c.id);
        if (old && !sameChannel(old, c)) this.#conflict('Channel', c.id, describeChannel(old), describeChannel(c), p);
        this.channels.set(c.id, c);
        table[c.id] = c.id;
      },
    };
    const looseBad: BadTimes = { count: 0, first: 0 };
    const closeLoose = (): void => {
      if (looseBad.count > 0) {
        this.#badTimes(looseBad.first, looseBad, false, looseBad.first);
        looseBad.count = 0;
      }
      if (looseStart < 0) return;
      this.chunks.push({
        offset: looseStart,
        length: looseEnd - looseStart,
        startNs: looseFirst ?? 0n,
        endNs: looseLast ?? 0n,
        compression: '',
        channels: looseChannels,
        loose: true,
      });
      looseStart = -1;
      looseFirst = undefined;
      looseLast = undefined;
      looseChannels = new Set();
    };
    let first: bigint | undefined;
    let last: bigint | undefined;
    const tally = (b: MessageBatch, chans: Set<number>): void => {
      for (let i = 0; i < b.count; i++) {
        const id = b.topicIndex[i]!;
        chans.add(id);
        this.counts.set(id, (this.counts.get(id) ?? 0) + 1);
      }
      this.messageCount += b.count;
      if (b.count > 0) {
        if (first === undefined || b.logTimeNs[0]! < first) first = b.logTimeNs[0]!;
        if (last === undefined || b.logTimeNs[b.count - 1]! > last) last = b.logTimeNs[b.count - 1]!;
      }
    };
    const unknown = (ch: number, at: number): void => this.#unknownChannel(ch, at);
    while (p < size) {
      if (p + 9 > size) {
        this.#truncated(p, `a record header (${size - p} of 9 bytes)`, intactChunks);
        ended = true;
        break;
      }
      const hdr = src.read(p, 9);
      const hv = new DataView(hdr.buffer, hdr.byteOffset, 9);
      const op = hdr[0]!;
      const len = hv.getUint32(1, true) + hv.getUint32(5, true) * 0x1_0000_0000;
      const total = 9 + len;
      if (p + total > size) {
        this.#truncated(p, `a ${OP_NAMES[op] ?? `0x${op.toString(16)}`} record of ${total} bytes (${size - p} left)`, intactChunks);
        ended = true;
        break;
      }
      if (op === OP.SCHEMA || op === OP.CHANNEL || op === OP.MESSAGE) {
        if (looseStart >= 0 && p + total - looseStart > LOOSE_REGION_MAX) closeLoose();
        const rec = src.read(p, total);
        try {
          const bad: BadTimes = { count: 0, first: 0 };
          const b = parseRecords(rec, recordChannels(), 0n, 0x7fffffffffffffffn, sink, unknown, bad);
          if (bad.count > 0) {
            if (looseBad.count === 0) looseBad.first = p;
            looseBad.count += bad.count;
          }
          if (b.count > 0) {
            const t = b.logTimeNs[0]!;
            if (looseFirst === undefined || t < looseFirst) looseFirst = t;
            if (looseLast === undefined || t > looseLast) looseLast = t;
          }
          if (looseStart < 0) looseStart = p;
          looseEnd = p + total;
          tally(b, looseChannels);
        } catch (err) {
          if (err instanceof InputError) throw err;
          closeLoose();
          this.#corrupt(p, (err as Error).message, undefined);
        }
      } else {
        closeLoose();
        if (op === OP.HEADER) {
          try {
            const rec = src.read(p, total);
            const c = new Cursor(new DataView(rec.buffer, rec.byteOffset, rec.byteLength), 9, total);
            (this as { profile: string }).profile = c.str();
            (this as { library: string }).library = c.str();
          } catch {
            /* a damaged header only loses the profile name */
          }
        } else if (op === OP.CHUNK) {
          const rec = src.read(p, total);
          try {
            const { h, records } = chunkContent(rec, this.#handlers, this.#validateCrc, this.#limit);
            const chans = new Set<number>();
            const bad: BadTimes = { count: 0, first: 0 };
            const b = parseRecords(records, recordChannels(), 0n, 0x7fffffffffffffffn, sink, unknown, bad);
            this.#badTimes(p, bad, true);
            tally(b, chans);
            this.chunks.push({ offset: p, length: total, startNs: h.startNs, endNs: h.endNs, compression: h.compression, channels: chans, loose: false });
            intactChunks++;
          } catch (err) {
            if (!(err instanceof ChunkError)) throw err;
            this.#corrupt(p, err.message, undefined);
          }
        } else if (op === OP.DATA_END || op === OP.FOOTER) {
          ended = true;
          break;
        }
      }
      p += total;
    }
    closeLoose();
    if (!ended) {
      this.#warn({
        code: 'bag.mcap_no_footer',
        message: `file ends at byte ${size} without a DataEnd or Footer record (${intactChunks} intact chunks, ${this.messageCount} messages read)`,
        where: { file: this.path, byteOffset: size },
        hint: 'the recording was probably interrupted; everything before the end is used',
      });
    }
    this.#sortChunks();
    this.startNs = first ?? 0n;
    this.endNs = last ?? 0n;
  }

  #truncated(p: number, what: string, intactChunks: number): void {
    this.#warn({
      code: 'bag.mcap_truncated',
      message: `file is cut at byte ${this.#src.size()} inside ${what} starting at byte ${p}; stopped there after ${intactChunks} intact chunks (${this.messageCount} messages)`,
      where: { file: this.path, byteOffset: p },
      hint: 'the recording was interrupted or the copy is incomplete; every intact chunk before it is used',
    });
  }

  #corrupt(p: number, why: string, chunk: ChunkRef | undefined): void {
    const topics = chunk?.channels ? [...chunk.channels].map((id) => this.channels.get(id)?.topic ?? `channel ${id}`) : [];
    this.#warn({
      code: 'bag.mcap_chunk_corrupt',
      message: `${chunk?.loose ? 'records' : 'chunk'} at byte ${p} is damaged (${why}); its messages are skipped${topics.length ? ` (topics ${topics.join(', ')})` : ''}`,
      where: { file: this.path, byteOffset: p, ...(topics.length === 1 ? { topic: topics[0]! } : {}) },
      hint: 'the rest of the file is still read',
    });
  }

  #conflict(kind: string, id: number, was: string, now: string, at: number): never {
    throw new InputError({
      code: 'bag.mcap_id_conflict',
      message: `${kind} id ${id} is defined twice with different contents: ${was}, then ${now}`,
      where: { file: this.path, byteOffset: at },
      hint: 'a valid MCAP file defines each id once (repeats must be identical); the file is damaged or was merged wrongly',
    });
  }

  readonly #badReported = new Set<number>();

  /** Warn (once per chunk) about messages with log times at or after 2^63 ns. */
  #badTimes(chunkOffset: number, bad: BadTimes, inChunk = false, at?: number): void {
    if (bad.count === 0 || this.#badReported.has(chunkOffset)) return;
    this.#badReported.add(chunkOffset);
    this.#warn({
      code: 'bag.invalid_log_time',
      message: `${bad.count} message${bad.count === 1 ? '' : 's'} ${inChunk ? `in the chunk at byte ${chunkOffset}` : `at byte ${at ?? chunkOffset}`} ${bad.count === 1 ? 'has a log time' : 'have log times'} of 2^63 ns or later (not a valid ROS time); skipped`,
      where: { file: this.path, byteOffset: at ?? chunkOffset },
      hint: inChunk ? `the first is at byte ${bad.first} of the decompressed chunk` : 'log times are nanoseconds since the epoch below 2^63',
    });
  }

  #unknownChannel(ch: number, at: number): void {
    if (this.#unknownChannels.has(ch)) return;
    this.#unknownChannels.add(ch);
    this.#warn({
      code: 'bag.mcap_unknown_channel',
      message: `message on channel ${ch}, which no Channel record defines; such messages are skipped`,
      where: { file: this.path, byteOffset: at },
    });
  }

  /** Read one chunk into a batch; undefined (after a warning) when it is damaged. */
  #load(ch: ChunkRef, topicOf: Int32Array, startNs: bigint, endNs: bigint): MessageBatch | undefined {
    let rec: Uint8Array;
    try {
      rec = this.#src.read(ch.offset, ch.length);
    } catch (err) {
      this.#corrupt(ch.offset, (err as Error).message, ch);
      return undefined;
    }
    try {
      const records = ch.loose ? rec : chunkContent(rec, this.#handlers, this.#validateCrc, this.#limit).records;
      const base = ch.loose ? ch.offset : undefined;
      const bad: BadTimes = { count: 0, first: 0 };
      const b = parseRecords(records, topicOf, startNs, endNs, {}, (c, at) => this.#unknownChannel(c, (base ?? ch.offset) + at), bad);
      this.#badTimes(ch.offset, bad, !ch.loose, base === undefined ? undefined : base + bad.first);
      return b;
    } catch (err) {
      if (!(err instanceof ChunkError)) throw err;
      this.#corrupt(ch.offset, err.message, ch);
      return undefined;
    }
  }

  /**
   * Sources for the merge: one per chunk that may hold wanted messages. `topicOf[channelId]` is
   * the topic index (or -1 to leave the channel out).
   */
  sources(topicOf: Int32Array, startNs: bigint, endNs: bigint): BatchSource[] {
    const out: BatchSource[] = [];
    for (const ch of this.chunks) {
      if (ch.endNs < startNs || ch.startNs > endNs) continue;
      if (ch.channels && ![...ch.channels].some((id) => (topicOf[id] ?? -2) >= 0 || (topicOf[id] ?? -2) === -2)) continue;
      const firstNs = ch.startNs > startNs ? ch.startNs : startNs;
      out.push({
        firstNs,
        open: () => {
          const b = this.#load(ch, topicOf, startNs, endNs);
          return (b ? [b] : [])[Symbol.iterator]();
        },
      });
    }
    return out;
  }

  close(): void {
    this.#src.close();
  }
}
