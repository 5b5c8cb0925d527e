/**
 * Bounded reading of plain-file inputs (parameters, expectations, model files, wrench CSVs).
 *
 * Only regular files are read: a folder, a device (`/dev/zero`), a FIFO or a socket is refused
 * before it is opened, so nothing can block on open or stream without end. The size is checked
 * against a documented limit from `stat` before anything is read, and the read itself stops one
 * byte past the limit (a file that grows while it is read is refused too).
 */
import { closeSync, constants, fstatSync, openSync, readSync, statSync, type Stats } from 'node:fs';
import { InputError } from './errors.js';

const MiB = 1024 * 1024;

/** Documented size limits of the plain-file inputs (README: "Input limits"). */
export const INPUT_LIMITS = {
  /** ROS 2 parameters files (`--params`, `check-config`). */
  params: 16 * MiB,
  /** Expectations files (`replay --expect`). */
  expectations: 16 * MiB,
  /** Linear team model files (`analyze --model`). */
  model: 16 * MiB,
  /** Wrench CSV tables (`classify --csv`): about 2.5 million samples of 50 bytes. */
  csv: 128 * MiB,
} as const;

export interface ReadInputOptions {
  /** What the file is, for messages: 'parameters file', 'expectations file', ... */
  readonly what: string;
  /** Error code prefix of the reader: `param`, `expect`, `model`, `csv`. */
  readonly code: string;
  /** Largest size accepted, bytes. */
  readonly maxBytes: number;
  /** The option or argument that named the file, for the place of an error. */
  readonly option?: string;
  /** Code of a file that cannot be opened (default `<code>.unreadable`). */
  readonly unreadableCode?: string;
}

function kind(st: Stats): string {
  if (st.isDirectory()) return 'a folder';
  if (st.isCharacterDevice()) return 'a character device';
  if (st.isBlockDevice()) return 'a block device';
  if (st.isFIFO()) return 'a FIFO (named pipe)';
  if (st.isSocket()) return 'a socket';
  return 'not a regular file';
}

function mib(n: number): string {
  return n >= MiB ? `${(n / MiB).toFixed(n % MiB === 0 ? 0 : 1)} MiB` : `${n} bytes`;
}

/** Read a regular file of at most `maxBytes` as UTF-8 text. Throws InputError otherwise. */
export function readInputText(path: string, opts: ReadInputOptions): string {
  return Buffer.from(readInputBytes(path, opts)).toString('utf8');
}

/** Read a regular file of at most `maxBytes`. Throws InputError otherwise. */
export function readInputBytes(path: string, opts: ReadInputOptions): Uint8Array {
  const where = { file: path, ...(opts.option ? { option: opts.option } : {}) };
  const unreadable = opts.unreadableCode ?? `${opts.code}.unreadable`;
  const hint = `give a regular file of at most ${mib(opts.maxBytes)}`;
  if (path === '') throw new InputError({ code: unreadable, message: `the ${opts.what} name is empty`, where, hint });
  let st: Stats;
  try {
    st = statSync(path);
  } catch (err) {
    throw new InputError({ code: unreadable, message: `cannot read ${opts.what}: ${(err as Error).message}`, where });
  }
  const refuse = (s: Stats): never => {
    throw new InputError({ code: `${opts.code}.not_a_file`, message: `the ${opts.what} is ${kind(s)}, not a regular file`, where, hint });
  };
  const tooBig = (size: number): never => {
    throw new InputError({ code: `${opts.code}.too_large`, message: `the ${opts.what} has ${size > opts.maxBytes ? `${size} bytes` : 'grown while read'}, more than the limit of ${mib(opts.maxBytes)}`, where, hint });
  };
  if (!st.isFile()) refuse(st);
  if (st.size > opts.maxBytes) tooBig(st.size);
  let fd: number;
  try {
    // O_NONBLOCK: if the path was swapped for a FIFO since the stat, open does not wait for a writer.
    fd = openSync(path, constants.O_RDONLY | constants.O_NONBLOCK);
  } catch (err) {
    throw new InputError({ code: unreadable, message: `cannot read ${opts.what}: ${(err as Error).message}`, where });
  }
  try {
    const fst = fstatSync(fd);
    if (!fst.isFile()) refuse(fst);
    if (fst.size > opts.maxBytes) tooBig(fst.size);
    const buf = Buffer.allocUnsafe(Math.min(opts.maxBytes, fst.size) + 1);
    let n = 0;
    for (;;) {
      if (n === buf.length) tooBig(n);
      let got: number;
      try {
        got = readSync(fd, buf, n, buf.length - n, null);
      } catch (err) {
        throw new InputError({ code: unreadable, message: `cannot read ${opts.what}: ${(err as Error).message}`, where });
      }
      if (got === 0) break;
      n += got;
      if (n > opts.maxBytes) tooBig(n);
    }
    return buf.subarray(0, n);
  } finally {
    closeSync(fd);
  }
}
