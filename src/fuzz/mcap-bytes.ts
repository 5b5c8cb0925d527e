/**
 * Hand-made MCAP bytes (MCAP specification, record layouts): for crafting damaged or hostile
 * files that no well-behaved writer produces (duplicate ids, huge declared sizes, zero-size
 * element schemas, bombs). Used by the fuzzer and the regression tests. Little-endian throughout.
 */

export const MCAP_MAGIC = Uint8Array.of(0x89, 0x4d, 0x43, 0x41, 0x50, 0x30, 0x0d, 0x0a);
const enc = new TextEncoder();

/** Growable little-endian byte writer. */
export class Bytes {
  #buf = new Uint8Array(256);
  #view = new DataView(this.#buf.buffer);
  length = 0;
  #room(n: number): void {
    if (this.length + n <= this.#buf.length) return;
    let cap = this.#buf.length * 2;
    while (cap < this.length + n) cap *= 2;
    const next = new Uint8Array(cap);
    next.set(this.#buf.subarray(0, this.length));
    this.#buf = next;
    this.#view = new DataView(next.buffer);
  }
  u8(v: number): this {
    this.#room(1);
    this.#view.setUint8(this.length, v);
    this.length += 1;
    return this;
  }
  u16(v: number): this {
    this.#room(2);
    this.#view.setUint16(this.length, v, true);
    this.length += 2;
    return this;
  }
  u32(v: number): this {
    this.#room(4);
    this.#view.setUint32(this.length, v >>> 0, true);
    this.length += 4;
    return this;
  }
  u64(v: bigint | number): this {
    this.#room(8);
    this.#view.setBigUint64(this.length, BigInt(v), true);
    this.length += 8;
    return this;
  }
  raw(b: Uint8Array): this {
    this.#room(b.length);
    this.#buf.set(b, this.length);
    this.length += b.length;
    return this;
  }
  str(s: string): this {
    const b = enc.encode(s);
    return this.u32(b.length).raw(b);
  }
  done(): Uint8Array {
    return this.#buf.slice(0, this.length);
  }
}

/** One record: opcode, uint64 content length, content. */
export function record(op: number, content: Uint8Array): Uint8Array {
  return new Bytes().u8(op).u64(content.length).raw(content).done();
}

export function headerRecord(profile = 'ros2', library = 'antiphon-fuzz'): Uint8Array {
  return record(0x01, new Bytes().str(profile).str(library).done());
}

export function schemaRecord(id: number, name: string, encoding: string, data: string | Uint8Array): Uint8Array {
  const d = typeof data === 'string' ? enc.encode(data) : data;
  return record(0x03, new Bytes().u16(id).str(name).str(encoding).u32(d.length).raw(d).done());
}

export function channelRecord(id: number, schemaId: number, topic: string, metadata: Record<string, string> = {}, encoding = 'cdr'): Uint8Array {
  const m = new Bytes();
  for (const [k, v] of Object.entries(metadata)) m.str(k).str(v);
  const mb = m.done();
  return record(0x04, new Bytes().u16(id).u16(schemaId).str(topic).str(encoding).u32(mb.length).raw(mb).done());
}

export function messageRecord(channelId: number, logTime: bigint, data: Uint8Array, publishTime = logTime, sequence = 0): Uint8Array {
  return record(0x05, new Bytes().u16(channelId).u32(sequence).u64(logTime).u64(publishTime).raw(data).done());
}

/** A Chunk record around `records` (already compressed when `compression` is set). */
export function chunkRecord(
  records: Uint8Array,
  opts: { startNs?: bigint; endNs?: bigint; uncompressedSize?: bigint | number; crc?: number; compression?: string } = {},
): Uint8Array {
  return record(
    0x06,
    new Bytes()
      .u64(opts.startNs ?? 0n)
      .u64(opts.endNs ?? 0n)
      .u64(opts.uncompressedSize ?? records.length)
      .u32(opts.crc ?? 0)
      .str(opts.compression ?? '')
      .u64(records.length)
      .raw(records)
      .done(),
  );
}

export function dataEndRecord(): Uint8Array {
  return record(0x0f, new Bytes().u32(0).done());
}

/** A Footer with no summary (summary_start 0): readers then scan the data section. */
export function footerRecord(): Uint8Array {
  return record(0x02, new Bytes().u64(0).u64(0).u32(0).done());
}

/** A complete unindexed MCAP file: magic, Header, the given records, DataEnd, Footer, magic. */
export function mcapFile(records: readonly Uint8Array[], opts: { footer?: boolean } = {}): Uint8Array {
  const b = new Bytes().raw(MCAP_MAGIC).raw(headerRecord());
  for (const r of records) b.raw(r);
  if (opts.footer !== false) b.raw(dataEndRecord()).raw(footerRecord()).raw(MCAP_MAGIC);
  return b.done();
}

/** CDR (little-endian, plain) header: 00 01 00 00. */
export const CDR_LE = Uint8Array.of(0, 1, 0, 0);

/**
 * A zstd frame of RLE blocks (RFC 8878): `blocks` blocks of 128 KiB of `value` each, with the
 * content size in the header. A few bytes per 128 KiB: a genuine decompression bomb.
 */
export function zstdRleBomb(blocks: number, value = 0): { frame: Uint8Array; size: number } {
  const block = 128 << 10;
  const size = blocks * block;
  const b = new Bytes().u32(0xfd2fb528).u8(0xe0).u64(size); // single segment, 8-byte content size
  for (let i = 0; i < blocks; i++) {
    const last = i === blocks - 1 ? 1 : 0;
    const bh = (block << 3) | (1 << 1) | last;
    b.u8(bh & 0xff).u8((bh >> 8) & 0xff).u8((bh >> 16) & 0xff).u8(value);
  }
  return { frame: b.done(), size };
}
