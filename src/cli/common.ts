/**
 * What every command shares: the JSON/text output switch, the one stdout writer, error printing
 * and exit codes. Command files stay thin: parse arguments, call into the library, print.
 *
 * stdout: every command writes through `printJson`, `printText` or `writeStdout`. A write error
 * on stdout is caught (never an uncaught 'error' event): a closed pipe (EPIPE, `| head -1`)
 * ends the output quietly with exit 0, as Unix tools do; any other error (ENOSPC on a full disk,
 * EIO, EACCES) is a message on stderr and exit 74. Write errors on output files end the
 * command with a message naming the file and exit 74 too.
 */
import { EXIT_BAD_INPUT, EXIT_IO_ERROR, EXIT_OK, InputError, formatProblem, problemToJson } from '../util/errors.js';

let stdoutError: NodeJS.ErrnoException | undefined;
let listening = false;

function listen(): void {
  if (listening) return;
  listening = true;
  // Keep listening for good: after a failure, later writes may still report errors.
  process.stdout.on('error', (err: NodeJS.ErrnoException) => {
    stdoutError ??= err;
  });
}

/** True once stdout has failed (a closed pipe, a full disk): stop producing output. */
export function stdoutFailed(): boolean {
  return stdoutError !== undefined;
}

/** Forget an earlier stdout failure (tests that run several commands in one process). */
export function resetStdoutState(): void {
  stdoutError = undefined;
}

/**
 * Write text on stdout; resolves false when stdout has failed (stop writing then). Waits for
 * 'drain' when the stream buffers, and gives a failed write its turn to be reported.
 */
export async function writeStdout(text: string): Promise<boolean> {
  listen();
  if (stdoutError) return false;
  const ok = process.stdout.write(text);
  if (!ok && !stdoutError) {
    await new Promise<void>((resolve) => {
      const done = (): void => {
        process.stdout.off('drain', done);
        process.stdout.off('error', done);
        process.stdout.off('close', done);
        resolve();
      };
      process.stdout.on('drain', done);
      process.stdout.on('error', done);
      process.stdout.on('close', done);
    });
  } else {
    await new Promise<void>((resolve) => setImmediate(resolve));
  }
  return stdoutError === undefined;
}

/** Write a value as one JSON document on stdout. */
export function printJson(value: unknown): void {
  listen();
  if (stdoutError) return;
  process.stdout.write(JSON.stringify(value, null, 2) + '\n');
}

/** Write plain text on stdout. */
export function printText(text: string): void {
  listen();
  if (stdoutError) return;
  process.stdout.write(text.endsWith('\n') ? text : text + '\n');
}

const FS_ERRORS: Record<string, string> = {
  ENOSPC: 'no space left on the device',
  EDQUOT: 'disk quota exceeded',
  EACCES: 'permission denied',
  EPERM: 'operation not permitted',
  EROFS: 'read-only file system',
  EIO: 'input/output error',
  EFBIG: 'file too large',
  ENAMETOOLONG: 'name too long',
  ENOTDIR: 'a part of the path is not a folder',
  EISDIR: 'is a folder',
  EEXIST: 'already exists',
  ENOENT: 'no such file or folder',
  EMFILE: 'too many open files',
  EXDEV: 'cannot rename across file systems',
  EBUSY: 'busy',
  EINVAL: 'invalid argument',
};

const PATH_ERRORS = new Set(['ENOENT', 'ENOTDIR', 'EISDIR', 'ENAMETOOLONG', 'EINVAL']);

/** A system error from the file system (has a code and a syscall), not a bug. */
function systemError(err: unknown): NodeJS.ErrnoException | undefined {
  const e = err as NodeJS.ErrnoException | null;
  return e && typeof e === 'object' && typeof e.code === 'string' && typeof e.syscall === 'string' && e.code in FS_ERRORS ? e : undefined;
}

/** The stdout failure, if any, after the command: EPIPE quiet (exit 0), others a message and exit 74. */
async function settleStdout(): Promise<void> {
  if (!listening) return;
  // Errors of the last synchronous writes are emitted on the next ticks.
  await new Promise<void>((resolve) => setImmediate(resolve));
  const err = stdoutError;
  if (!err) return;
  if (err.code === 'EPIPE') {
    if (process.exitCode === undefined || process.exitCode === EXIT_OK) process.exitCode = EXIT_OK;
    return;
  }
  process.stderr.write(`antiphon: cannot write to stdout: ${FS_ERRORS[err.code ?? ''] ?? err.message} (${err.code ?? 'error'})\n`);
  process.exitCode = EXIT_IO_ERROR;
}

/**
 * Run a command body, mapping its outcome to an exit code. The body returns the exit code
 * (0 ok, 1 checks failed). An InputError prints its problems (as JSON with `--json`) and exits 2.
 * A file-system error while writing (ENOSPC, EACCES, ...) prints the file and the reason and exits
 * 74 (EX_IOERR); one naming a path that does not exist or is of the wrong kind (ENOENT, ENOTDIR)
 * exits 2. Any other error is a bug: it prints the stack and exits 70 (EX_SOFTWARE).
 */
export async function runCommand(json: boolean, body: () => Promise<number> | number): Promise<void> {
  listen();
  try {
    process.exitCode = (await body()) ?? EXIT_OK;
  } catch (err) {
    if (err instanceof InputError) {
      if (json) printJson({ ok: false, errors: err.problems.map(problemToJson) });
      for (const p of err.problems) process.stderr.write(`antiphon: ${formatProblem(p)}\n`);
      process.exitCode = EXIT_BAD_INPUT;
    } else if (systemError(err)) {
      const e = systemError(err)!;
      const dest = (e as { dest?: string }).dest;
      const what = e.path ? `${e.path}${dest ? ` -> ${dest}` : ''}` : 'an output';
      process.stderr.write(`antiphon: cannot ${e.syscall} ${what}: ${FS_ERRORS[e.code!]} (${e.code})\n`);
      // A path that does not exist or is of the wrong kind is bad input; the rest is an I/O failure.
      process.exitCode = PATH_ERRORS.has(e.code!) ? EXIT_BAD_INPUT : EXIT_IO_ERROR;
    } else {
      process.stderr.write(`antiphon: internal error: ${(err as Error).stack ?? String(err)}\n`);
      process.exitCode = 70;
    }
  }
  await settleStdout();
}

/** Parse a number option, refusing anything that is not a finite number within [min, max]. */
export function numberOption(option: string, raw: string | undefined, min: number, max: number): number | undefined {
  if (raw === undefined) return undefined;
  const v = Number(raw);
  if (raw.trim() === '' || !Number.isFinite(v) || v < min || v > max) {
    throw new InputError({
      code: 'cli.bad_number',
      message: `${option} must be a number from ${min} to ${max}, got '${raw}'`,
      where: { option },
    });
  }
  return v;
}

/** Parse an integer option within [min, max]. */
export function integerOption(option: string, raw: string | undefined, min: number, max: number): number | undefined {
  const v = numberOption(option, raw, min, max);
  if (v !== undefined && !Number.isInteger(v)) {
    throw new InputError({ code: 'cli.bad_integer', message: `${option} must be a whole number, got '${raw}'`, where: { option } });
  }
  return v;
}
