/**
 * Tiny I/O seams for the bag readers: a synchronous random-access byte source. The readers never
 * touch `fs` directly except through these, so tests can feed bytes from memory and replay can
 * read chunks without a promise per read.
 */
import { closeSync, fstatSync, openSync, readSync, statSync, type Stats } from 'node:fs';
import type { McapTypes } from '@mcap/core';
import { InputError } from '../util/errors.js';

/** Random-access bytes. `read` returns exactly `length` bytes or throws. */
export interface ByteSource {
  /** A name for messages (usually the file path). */
  readonly name: string;
  size(): number;
  /** A fresh buffer (never reused by the source), so views into it stay valid. */
  read(offset: number, length: number): Uint8Array;
  close(): void;
}

/** What a path is, in words, for errors about non-regular files. */
function kindOf(st: Stats): string {
  if (st.isDirectory()) return 'a directory';
  if (st.isCharacterDevice()) return 'a character device';
  if (st.isBlockDevice()) return 'a block device';
  if (st.isFIFO()) return 'a named pipe';
  if (st.isSocket()) return 'a socket';
  return 'not a regular file';
}

/**
 * Check that `path` (after following links) is a regular file, before opening it: devices such
 * as /dev/zero never end, a FIFO blocks the open, a directory has no bytes. Returns its size.
 */
export function regularFileSize(path: string, what = 'file', shown = path): number {
  let st: Stats;
  try {
    st = statSync(path);
  } catch (err) {
    const e = err as NodeJS.ErrnoException;
    throw new InputError({
      code: e.code === 'ENOENT' ? 'bag.not_found' : 'bag.open_failed',
      message: e.code === 'ENOENT' ? `${what} does not exist` : `cannot read ${what}: ${e.message}`,
      where: { file: shown },
    });
  }
  if (!st.isFile()) {
    throw new InputError({
      code: 'bag.not_regular_file',
      message: `${what} is ${kindOf(st)}, not a regular file`,
      where: { file: shown },
      hint: 'only regular files are read (a link is followed: it must end at a regular file)',
    });
  }
  return st.size;
}

/** Read a whole regular file of at most `limit` bytes (checked before reading). */
export function readRegularFile(path: string, limit: number, what = 'file', shown = path): Buffer {
  const size = regularFileSize(path, what, shown);
  if (size > limit) {
    throw new InputError({
      code: 'bag.too_large',
      message: `${what} is ${size} bytes, more than the ${limit} allowed`,
      where: { file: shown },
    });
  }
  const src = new FileSource(path);
  try {
    return Buffer.from(src.read(0, src.size()));
  } finally {
    src.close();
  }
}

/** A file opened read-only, read with positioned `readSync`. Only regular files are opened. */
export class FileSource implements ByteSource {
  readonly name: string;
  #fd: number | undefined;
  #size: number;

  constructor(path: string) {
    this.name = path;
    regularFileSize(path);
    try {
      this.#fd = openSync(path, 'r');
      const st = fstatSync(this.#fd);
      if (!st.isFile()) {
        closeSync(this.#fd);
        this.#fd = undefined;
        throw new Error(`${kindOf(st)}, not a regular file`);
      }
      this.#size = st.size;
    } catch (err) {
      throw new InputError({
        code: 'bag.open_failed',
        message: `cannot open ${path}: ${(err as Error).message}`,
        where: { file: path },
      });
    }
  }

  size(): number {
    return this.#size;
  }

  read(offset: number, length: number): Uint8Array {
    if (this.#fd === undefined) throw new Error(`${this.name}: read after close`);
    if (offset < 0 || length < 0 || offset + length > this.#size) {
      throw new InputError({
        code: 'bag.read_out_of_range',
        message: `read of ${length} bytes at byte ${offset} runs past the end of the file (${this.#size} bytes)`,
        where: { file: this.name, byteOffset: offset },
        hint: 'the file is truncated or an index points outside it',
      });
    }
    const out = Buffer.allocUnsafe(length);
    let done = 0;
    while (done < length) {
      const n = readSync(this.#fd, out, done, length - done, offset + done);
      if (n === 0) {
        throw new InputError({
          code: 'bag.short_read',
          message: `file ended after ${done} of ${length} bytes at byte ${offset}`,
          where: { file: this.name, byteOffset: offset + done },
        });
      }
      done += n;
    }
    return out;
  }

  close(): void {
    if (this.#fd !== undefined) closeSync(this.#fd);
    this.#fd = undefined;
  }
}

/** Bytes already in memory (tests, decompressed files). */
export class MemorySource implements ByteSource {
  readonly name: string;
  readonly #bytes: Uint8Array;
  constructor(bytes: Uint8Array, name = '<memory>') {
    this.#bytes = bytes;
    this.name = name;
  }
  size(): number {
    return this.#bytes.byteLength;
  }
  read(offset: number, length: number): Uint8Array {
    if (offset < 0 || length < 0 || offset + length > this.#bytes.byteLength) {
      throw new InputError({
        code: 'bag.read_out_of_range',
        message: `read of ${length} bytes at byte ${offset} runs past the end (${this.#bytes.byteLength} bytes)`,
        where: { file: this.name, byteOffset: offset },
      });
    }
    // Views stay valid: the backing bytes are never modified.
    return this.#bytes.subarray(offset, offset + length);
  }
  close(): void {}
}

/** Adapt a ByteSource to the async readable that @mcap/core's indexed reader expects. */
export function mcapReadable(src: ByteSource): McapTypes.IReadable {
  return {
    size: async () => BigInt(src.size()),
    read: async (offset: bigint, length: bigint) => src.read(Number(offset), Number(length)),
  };
}
