/**
 * Output folders, written whole or not at all, and never where they could destroy something.
 *
 * - `checkOutputDir` refuses (InputError, exit 2, before any work) an `--out` that is empty,
 *   the current folder or one of its ancestors, the home folder, equal to or containing or
 *   inside an input, an existing regular file or device, under a regular file, in a system
 *   folder (/proc, /sys, /dev, ...) or on a kernel pseudo file system, or a name too long.
 * - Everything is written into a temporary sibling `.NAME.partial-PID`, renamed into place
 *   only when complete. A failed or interrupted (SIGINT, SIGTERM) run removes it; one left by
 *   a killed process is removed by the next run into the same parent folder (or reported,
 *   when it holds no marker).
 * - Every folder antiphon writes holds a marker file, `.antiphon-output`. `--overwrite`
 *   replaces only such a folder (moved aside, the new one renamed in, the old one removed);
 *   any other non-empty folder is refused with the reason.
 */
import { existsSync, lstatSync, mkdirSync, readdirSync, realpathSync, renameSync, rmSync, statfsSync, statSync, writeFileSync, type Stats } from 'node:fs';
import { homedir } from 'node:os';
import { basename, dirname, join, resolve, sep } from 'node:path';
import { InputError, type Problem } from './errors.js';
import { interruptsWatched } from './interrupt.js';
import { logger } from './log.js';

/** The marker file in every output folder antiphon writes. */
export const OUTPUT_MARKER = '.antiphon-output';
/** Longest last component of `--out`, bytes (the temporary name adds `.` and `.partial-PID`). */
export const MAX_OUT_NAME_BYTES = 200;
/** Longest component anywhere in the path (Linux NAME_MAX) and the whole path (below PATH_MAX). */
const NAME_MAX = 255;
const PATH_MAX = 4000;

/** Folders that are never an output folder themselves. */
const SYSTEM_EXACT = ['/', '/bin', '/boot', '/dev', '/etc', '/home', '/lib', '/lib32', '/lib64', '/libx32', '/media', '/mnt', '/opt', '/proc', '/root', '/run', '/sbin', '/srv', '/sys', '/tmp', '/usr', '/var'];
/** Trees nothing is written into: kernel and device file systems. */
const SYSTEM_TREES = ['/proc', '/sys', '/dev'];
/** statfs f_type of kernel pseudo file systems (linux/magic.h). */
const PSEUDO_FS = new Map<number, string>([
  [0x9fa0, 'proc'],
  [0x62656572, 'sysfs'],
  [0x1cd1, 'devpts'],
  [0x27e0eb, 'cgroup'],
  [0x63677270, 'cgroup2'],
  [0x64626720, 'debugfs'],
  [0x74726163, 'tracefs'],
  [0x73636673, 'securityfs'],
  [0x6165676c, 'pstore'],
  [0xcafe4a11, 'bpf'],
  [0x62656570, 'configfs'],
  [0xde5e81e4, 'efivarfs'],
  [0x65735543, 'fusectl'],
  [0x19800202, 'mqueue'],
  [0x42494e4d, 'binfmt_misc'],
]);

export interface OutputDirOptions {
  /** Replace an existing folder that antiphon wrote (it holds the marker). */
  readonly overwrite?: boolean;
  /** Every input of the command (files or folders); the output may not touch any of them. */
  readonly inputs?: readonly (string | undefined)[];
  /** The option naming the folder, for messages (default `--out`). */
  readonly option?: string;
}

function kindOf(st: Stats): string {
  if (st.isFile()) return 'a regular file';
  if (st.isCharacterDevice()) return 'a character device';
  if (st.isBlockDevice()) return 'a block device';
  if (st.isFIFO()) return 'a FIFO';
  if (st.isSocket()) return 'a socket';
  return 'not a folder';
}

function within(child: string, parent: string): boolean {
  return parent === sep ? child !== sep : child.startsWith(parent + sep);
}

/** The real path of `p` (resolved), following symbolic links as far as the path exists. */
export function realPathOf(p: string): string {
  const abs = resolve(p);
  let head = abs;
  const tail: string[] = [];
  for (;;) {
    try {
      lstatSync(head);
      break;
    } catch {
      const up = dirname(head);
      if (up === head) break;
      tail.unshift(basename(head));
      head = up;
    }
  }
  let real = head;
  try {
    real = realpathSync(head);
  } catch {
    // a dangling link: keep the path as written
  }
  return tail.length ? join(real, ...tail) : real;
}

/**
 * Check an output folder before any work. Returns the absolute path. Throws InputError with the
 * reason when the folder may not be written.
 */
export function checkOutputDir(out: string, opts: OutputDirOptions = {}): string {
  const option = opts.option ?? '--out';
  const fail = (code: string, message: string, hint?: string): never => {
    const p: Problem = { code, message, where: { file: out, option }, ...(hint ? { hint } : {}) };
    throw new InputError(p);
  };
  if (out.trim() === '') fail('out.empty', `${option} is empty`, 'name a new folder, e.g. out/run1');
  if (out.includes('\0')) fail('out.bad_name', `${option} contains a NUL character`);
  const final = resolve(out);
  const parts = final.split(sep).filter(Boolean);
  if (Buffer.byteLength(final) > PATH_MAX) fail('out.name_too_long', `${option} is ${Buffer.byteLength(final)} bytes long as an absolute path`, `at most ${PATH_MAX} bytes`);
  const long = parts.find((c) => Buffer.byteLength(c) > NAME_MAX);
  if (long !== undefined) fail('out.name_too_long', `${option} has a name of ${Buffer.byteLength(long)} bytes`, `each name in the path at most ${NAME_MAX} bytes`);
  if (Buffer.byteLength(basename(final)) > MAX_OUT_NAME_BYTES) fail('out.name_too_long', `${option}'s last name is ${Buffer.byteLength(basename(final))} bytes long`, `at most ${MAX_OUT_NAME_BYTES} bytes (room for the temporary name beside it)`);

  // The nearest part of the path that exists must be a folder (or the output folder itself).
  let head = final;
  let st: Stats | undefined;
  for (;;) {
    try {
      st = statSync(head);
      break;
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code;
      if (code === 'ENOTDIR') {
        head = dirname(head);
        continue;
      }
      if (code !== 'ENOENT') fail('out.unusable', `cannot use ${option} ${out}: ${(err as Error).message}`);
      const up = dirname(head);
      if (up === head) break;
      head = up;
    }
  }
  if (st && !st.isDirectory()) {
    if (head === final) fail('out.not_a_folder', `${option} ${out} exists and is ${kindOf(st)}, not a folder`, 'name a new folder or an output folder antiphon wrote');
    fail('out.under_a_file', `${option} ${out} lies under ${head}, which is ${kindOf(st)}`, 'name a folder whose parents are folders');
  }

  const real = realPathOf(final);
  const sys = SYSTEM_TREES.find((t) => real === t || within(real, t));
  if (sys !== undefined || SYSTEM_EXACT.includes(real)) fail('out.system_folder', `${option} ${out} is ${sys !== undefined ? `in the system folder ${sys}` : `the system folder ${real}`}`, 'write outputs into a folder of your own');
  try {
    const fs = PSEUDO_FS.get(Number(statfsSync(head).type));
    if (fs !== undefined) fail('out.system_folder', `${option} ${out} is on the kernel's ${fs} file system`, 'write outputs into a folder of your own');
  } catch (err) {
    if (err instanceof InputError) throw err;
  }
  const cwd = realPathOf(process.cwd());
  if (real === cwd || within(cwd, real)) fail('out.contains_cwd', `${option} ${out} is the current folder${real === cwd ? '' : ' or one of its parents'}`, 'name a new folder, e.g. out/run1');
  const home = realPathOf(homedir());
  if (real === home || within(home, real)) fail('out.contains_home', `${option} ${out} is the home folder${real === home ? '' : ' or one of its parents'}`, 'name a new folder, e.g. out/run1');
  for (const input of opts.inputs ?? []) {
    if (input === undefined || input === '') continue;
    const rin = realPathOf(input);
    if (rin === real) fail('out.is_input', `${option} ${out} is the input ${input}`, 'write outputs beside the input, never onto it');
    if (within(rin, real)) fail('out.contains_input', `${option} ${out} contains the input ${input}`, 'write outputs beside the input, never around it');
    if (within(real, rin)) fail('out.inside_input', `${option} ${out} lies inside the input ${input}`, 'write outputs beside the input, never into it');
  }

  if (st && head === final && readdirSync(final).length > 0) {
    if (!opts.overwrite) fail('out.exists', `output folder ${out} exists and is not empty`, 'choose another --out or pass --overwrite');
    if (!isOurs(final)) {
      fail('out.not_ours', `${out} exists and was not written by antiphon (it holds no ${OUTPUT_MARKER} marker), so --overwrite will not replace it`, 'antiphon replaces only folders it wrote itself; choose another --out or remove that folder yourself');
    }
  }
  return final;
}

/** Does the folder hold antiphon's marker file? */
function isOurs(dir: string): boolean {
  try {
    return lstatSync(join(dir, OUTPUT_MARKER)).isFile();
  } catch {
    return false;
  }
}

function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return (err as NodeJS.ErrnoException).code === 'EPERM';
  }
}

const LEFTOVER = /^\.(.+)\.(partial|old)-(\d+)$/;

/**
 * Remove the `.NAME.partial-PID` / `.NAME.old-PID` folders that processes no longer running left
 * in `parent`; those without antiphon's marker are reported, not removed. Returns what was done.
 */
export function cleanStalePartials(parent: string): { removed: string[]; reported: string[] } {
  const removed: string[] = [];
  const reported: string[] = [];
  let names: string[];
  try {
    names = readdirSync(parent);
  } catch {
    return { removed, reported };
  }
  for (const name of names) {
    const m = LEFTOVER.exec(name);
    if (!m) continue;
    const pid = Number(m[3]);
    if (pid === process.pid || alive(pid)) continue;
    const path = join(parent, name);
    let st: Stats;
    try {
      st = lstatSync(path);
    } catch {
      continue;
    }
    if (st.isDirectory() && isOurs(path)) {
      try {
        rmSync(path, { recursive: true, force: true });
        removed.push(path);
      } catch {
        reported.push(path);
      }
    } else reported.push(path);
  }
  const log = logger('out');
  for (const p of removed) log.info({ path: p }, 'removed an unfinished output folder left by a process that is no longer running');
  for (const p of reported) log.warn({ path: p }, 'found an unfinished output left by a process that is no longer running, without antiphon\'s marker: left in place, remove it by hand');
  return { removed, reported };
}

/** The marker's content: what wrote the folder. */
function markerText(): string {
  return JSON.stringify({ written_by: 'antiphon', format: 1, note: 'antiphon --overwrite replaces only folders holding this file' }) + '\n';
}

/**
 * Write an output folder whole or not at all. `opts` is the overwrite flag or the full options
 * (inputs to keep clear of). The body writes into the temporary folder it is given.
 */
export async function withOutputDir<T>(out: string, opts: boolean | OutputDirOptions, body: (tmp: string) => Promise<T>): Promise<T> {
  const o: OutputDirOptions = typeof opts === 'boolean' ? { overwrite: opts } : opts;
  const final = checkOutputDir(out, o);
  const parent = dirname(final);
  mkdirSync(parent, { recursive: true });
  cleanStalePartials(parent);
  const tmp = join(parent, `.${basename(final)}.partial-${process.pid}`);
  rmSync(tmp, { recursive: true, force: true });
  mkdirSync(tmp);
  const cleanup = (): void => {
    try {
      rmSync(tmp, { recursive: true, force: true });
    } catch {
      // nothing more to do on the way out
    }
  };
  const onSignal = (sig: NodeJS.Signals): void => {
    // A command watching interruptions finishes its unit and completes this folder itself.
    if (interruptsWatched()) return;
    cleanup();
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
    process.kill(process.pid, sig);
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  try {
    writeFileSync(join(tmp, OUTPUT_MARKER), markerText());
    const result = await body(tmp);
    // The folder may have appeared or changed while the body ran: check again.
    checkOutputDir(out, o);
    if (existsSync(final)) {
      const old = join(parent, `.${basename(final)}.old-${process.pid}`);
      rmSync(old, { recursive: true, force: true });
      renameSync(final, old);
      renameSync(tmp, final);
      rmSync(old, { recursive: true, force: true });
    } else {
      renameSync(tmp, final);
    }
    return result;
  } catch (err) {
    cleanup();
    throw err;
  } finally {
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
  }
}

/** Write a file via a temporary name in the same folder, renamed when complete. */
export function writeFileAtomic(path: string, data: string | Uint8Array): void {
  const tmp = join(dirname(path), `.${basename(path)}.partial-${process.pid}`);
  try {
    writeFileSync(tmp, data);
    renameSync(tmp, path);
  } catch (err) {
    rmSync(tmp, { force: true });
    throw err;
  }
}
