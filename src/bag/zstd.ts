/**
 * zstd for bags: decompression through @mcap/support's handlers (also used for MCAP chunks),
 * compression through the same wasm module (@foxglove/wasm-zstd, which @mcap/support loads).
 * The one-shot wasm decoder needs the decompressed size, so frames are walked here
 * (zstd frame format, RFC 8878 §3.1) to read each frame's content size.
 */
import { loadDecompressHandlers } from '@mcap/support';
import type { McapTypes } from '@mcap/core';
import { InputError } from '../util/errors.js';
import { limitHint, maxUncompressedBytes, planted } from './limits.js';

export type DecompressHandlers = McapTypes.DecompressHandlers;

let handlers: DecompressHandlers | undefined;

/** Load (once) the decompressors for MCAP chunk compressions: zstd, lz4, bz2. */
export async function decompressHandlers(): Promise<DecompressHandlers> {
  handlers ??= await loadDecompressHandlers();
  return handlers;
}

/** The handlers if already loaded (synchronous paths call `decompressHandlers()` first). */
export function loadedHandlers(): DecompressHandlers | undefined {
  return handlers;
}

const ZSTD_MAGIC = 0xfd2fb528;

export interface ZstdFrame {
  offset: number;
  compressedSize: number;
  /** Content size from the frame header; undefined when the header does not carry it. */
  contentSize: number | undefined;
  /** The most its blocks can regenerate (raw and RLE blocks exactly, compressed ones 128 KiB each). */
  maxContent: number;
  skippable: boolean;
}

/** A zstd block never regenerates more than 128 KiB (RFC 8878 §3.1.1.2.3, Block_Maximum_Size). */
const ZSTD_BLOCK_MAX = 128 << 10;

/** True when the bytes start with a zstd frame (or skippable frame) magic number. */
export function looksLikeZstd(bytes: Uint8Array): boolean {
  if (bytes.length < 4) return false;
  const m = (bytes[0]! | (bytes[1]! << 8) | (bytes[2]! << 16) | (bytes[3]! << 24)) >>> 0;
  return m === ZSTD_MAGIC || (m & 0xfffffff0) >>> 0 === 0x184d2a50;
}

/** Walk the frames of a zstd stream. Throws a plain Error describing the first malformation. */
export function zstdFrames(bytes: Uint8Array): ZstdFrame[] {
  const frames: ZstdFrame[] = [];
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let p = 0;
  while (p < bytes.length) {
    if (p + 4 > bytes.length) throw new Error(`zstd: ${bytes.length - p} stray bytes at byte ${p}`);
    const magic = view.getUint32(p, true);
    if ((magic & 0xfffffff0) >>> 0 === 0x184d2a50) {
      if (p + 8 > bytes.length) throw new Error(`zstd: skippable frame header cut at byte ${p}`);
      const size = view.getUint32(p + 4, true);
      if (p + 8 + size > bytes.length) throw new Error(`zstd: skippable frame at byte ${p} runs past the end`);
      frames.push({ offset: p, compressedSize: 8 + size, contentSize: 0, maxContent: 0, skippable: true });
      p += 8 + size;
      continue;
    }
    if (magic !== ZSTD_MAGIC) throw new Error(`zstd: no frame magic at byte ${p}`);
    const start = p;
    p += 4;
    if (p >= bytes.length) throw new Error(`zstd: frame header cut at byte ${p}`);
    const fhd = bytes[p++]!;
    const fcsFlag = fhd >> 6;
    const singleSegment = (fhd >> 5) & 1;
    const checksum = (fhd >> 2) & 1;
    const dictFlag = fhd & 3;
    if (!singleSegment) p += 1; // window descriptor
    p += [0, 1, 2, 4][dictFlag]!;
    const fcsSize = fcsFlag === 0 ? (singleSegment ? 1 : 0) : [0, 2, 4, 8][fcsFlag]!;
    if (p + fcsSize > bytes.length) throw new Error(`zstd: frame header cut at byte ${p}`);
    let contentSize: number | undefined;
    if (fcsSize === 1) contentSize = bytes[p]!;
    else if (fcsSize === 2) contentSize = view.getUint16(p, true) + 256;
    else if (fcsSize === 4) contentSize = view.getUint32(p, true);
    else if (fcsSize === 8) contentSize = Number(view.getBigUint64(p, true));
    p += fcsSize;
    let maxContent = 0;
    for (;;) {
      if (p + 3 > bytes.length) throw new Error(`zstd: block header cut at byte ${p}`);
      const bh = bytes[p]! | (bytes[p + 1]! << 8) | (bytes[p + 2]! << 16);
      p += 3;
      const last = bh & 1;
      const type = (bh >> 1) & 3;
      const size = bh >>> 3;
      if (type === 3) throw new Error(`zstd: reserved block type at byte ${p - 3}`);
      p += type === 1 ? 1 : size;
      maxContent += type === 2 ? ZSTD_BLOCK_MAX : size;
      if (p > bytes.length) throw new Error(`zstd: block at byte ${p - size} runs past the end`);
      if (last) break;
    }
    if (checksum) p += 4;
    if (p > bytes.length) throw new Error('zstd: frame checksum cut at the end');
    frames.push({ offset: start, compressedSize: p - start, contentSize, maxContent, skippable: false });
  }
  return frames;
}

/**
 * Decompress a whole zstd stream (one or more frames). Throws InputError naming `file` and the
 * byte offset of the bad frame.
 */
export function decompressZstd(bytes: Uint8Array, h: DecompressHandlers, file: string, topic?: string, limit: number = maxUncompressedBytes()): Uint8Array {
  const fail = (message: string, byteOffset = 0): never => {
    throw new InputError({
      code: 'bag.zstd_failed',
      message,
      where: { file, byteOffset, ...(topic !== undefined ? { topic } : {}) },
      hint: 'the compressed data is cut or corrupt; try `zstd -t` on it',
    });
  };
  const zstd = h['zstd'];
  if (!zstd) return fail('no zstd decompressor available');
  let frames: ZstdFrame[] = [];
  try {
    frames = zstdFrames(bytes);
  } catch (err) {
    fail((err as Error).message);
  }
  // Every size is checked before anything is allocated: the declared total against the limit,
  // each frame's declared size against what its blocks can regenerate.
  let declared = 0;
  for (const f of frames) {
    if (f.skippable) continue;
    if (f.contentSize === undefined) fail('zstd frame does not record its decompressed size', f.offset);
    if (f.contentSize! > f.maxContent && !planted('zstd-bound')) {
      fail(`zstd frame declares ${f.contentSize} bytes, but its blocks can regenerate at most ${f.maxContent}`, f.offset);
    }
    declared += f.contentSize!;
  }
  if (declared > limit && !planted('zstd-bound')) {
    throw new InputError({
      code: 'bag.too_large',
      message: `zstd data declares ${declared} bytes uncompressed (from ${bytes.length} compressed), more than the limit`,
      where: { file, byteOffset: 0, ...(topic !== undefined ? { topic } : {}) },
      hint: limitHint(limit),
    });
  }
  const parts: Uint8Array[] = [];
  let total = 0;
  for (const f of frames) {
    if (f.skippable) continue;
    let out: Uint8Array = new Uint8Array(0);
    try {
      out = zstd(bytes.subarray(f.offset, f.offset + f.compressedSize), BigInt(f.contentSize!));
    } catch (err) {
      fail(`zstd frame does not decompress: ${(err as Error).message}`, f.offset);
    }
    if (out.length !== f.contentSize) fail(`zstd frame gave ${out.length} bytes, header says ${f.contentSize}`, f.offset);
    parts.push(out);
    total += out.length;
  }
  if (parts.length === 1) return parts[0]!;
  const all = new Uint8Array(total);
  let o = 0;
  for (const part of parts) {
    all.set(part, o);
    o += part.length;
  }
  return all;
}

/**
 * Check a compressed buffer's declared uncompressed size before decompressing it (MCAP chunks):
 * against `limit`, and against what the data can possibly hold (zstd: its block headers; lz4: its
 * largest ratio, 255:1). Returns a reason when it must not be decompressed, else undefined.
 */
export function declaredSizeProblem(compression: string, data: Uint8Array, declared: number, limit: number): string | undefined {
  if (declared > limit) return `declares ${declared} bytes uncompressed, more than the limit of ${limit} (raise ANTIPHON_MAX_UNCOMPRESSED_BYTES if genuine)`;
  if (planted('zstd-bound')) return undefined;
  if (compression === 'zstd') {
    let frames: ZstdFrame[];
    try {
      frames = zstdFrames(data);
    } catch (err) {
      return (err as Error).message;
    }
    let max = 0;
    let known = 0;
    let allKnown = true;
    for (const f of frames) {
      max += f.maxContent;
      if (f.contentSize === undefined) allKnown = false;
      else known += f.contentSize;
    }
    if (declared > max) return `declares ${declared} bytes uncompressed, but its zstd blocks can regenerate at most ${max}`;
    if (allKnown && known !== declared) return `declares ${declared} bytes uncompressed, its zstd frames say ${known}`;
  } else if (compression === 'lz4') {
    // LZ4 spends at least one byte per 255 bytes of match length (lz4 block format, common knowledge).
    if (declared > data.length * 255 + 1024) return `declares ${declared} bytes uncompressed, more than lz4 can expand ${data.length} bytes to`;
  }
  return undefined;
}

interface ZstdCompressor {
  compress(buffer: Uint8Array, level?: number): Uint8Array;
}
let compressor: ZstdCompressor | null | undefined;

/**
 * The zstd compressor, or null when the wasm module cannot be loaded. @mcap/support has no
 * compressor of its own; @foxglove/wasm-zstd (its dependency) has one.
 */
export async function zstdCompressor(): Promise<ZstdCompressor | null> {
  if (compressor !== undefined) return compressor;
  try {
    const mod = (await import('@foxglove/wasm-zstd')) as unknown as { default?: unknown };
    const z = (mod.default ?? mod) as { isLoaded: Promise<unknown>; compress: ZstdCompressor['compress'] };
    await z.isLoaded;
    compressor = { compress: (b, level) => z.compress(b, level) };
  } catch {
    compressor = null;
  }
  return compressor;
}
