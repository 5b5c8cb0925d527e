/**
 * Errors are values: a stable code, a place (file:line:col, topic, byte offset, CLI option)
 * and a hint of what is allowed. The CLI prints them plainly and maps them to exit codes.
 */

/** Exit codes shared by every command. */
export const EXIT_OK = 0;
/** Checks ran and at least one failed (expectations, physics checks, orderings). */
export const EXIT_CHECKS_FAILED = 1;
/** Bad input: a file, an option or a value that is not allowed. Nothing was written as if valid. */
export const EXIT_BAD_INPUT = 2;
/** An output could not be written (full disk, permission, stdout failure other than a closed pipe): sysexits' EX_IOERR. */
export const EXIT_IO_ERROR = 74;

export interface Place {
  /** A file path, a topic name, an option name: what the user would look for. */
  readonly file?: string;
  readonly line?: number;
  readonly column?: number;
  readonly key?: string;
  readonly topic?: string;
  readonly byteOffset?: number;
  readonly option?: string;
}

export interface Problem {
  /** Stable machine-readable code, e.g. `param.unknown_key`, `csv.non_numeric`. */
  readonly code: string;
  readonly message: string;
  readonly where?: Place;
  /** What is allowed, or what to do instead. */
  readonly hint?: string;
}

/** A bad-input error carrying one or more problems. */
export class InputError extends Error {
  readonly problems: readonly Problem[];
  constructor(problems: Problem | readonly Problem[]) {
    const list = Array.isArray(problems) ? (problems as readonly Problem[]) : [problems as Problem];
    super(list.map(formatProblem).join('\n'));
    this.name = 'InputError';
    this.problems = list;
  }
}

export function formatPlace(p: Place | undefined): string {
  if (!p) return '';
  const parts: string[] = [];
  if (p.file !== undefined) {
    let s = p.file;
    if (p.line !== undefined) s += `:${p.line}`;
    if (p.line !== undefined && p.column !== undefined) s += `:${p.column}`;
    parts.push(s);
  }
  if (p.key !== undefined) parts.push(`key ${p.key}`);
  if (p.topic !== undefined) parts.push(`topic ${p.topic}`);
  if (p.byteOffset !== undefined) parts.push(`byte ${p.byteOffset}`);
  if (p.option !== undefined) parts.push(`option ${p.option}`);
  return parts.join(', ');
}

export function formatProblem(p: Problem): string {
  const place = formatPlace(p.where);
  let s = place ? `${place}: ${p.message}` : p.message;
  if (p.hint) s += ` (${p.hint})`;
  return s;
}

export function problemToJson(p: Problem): Record<string, unknown> {
  return { code: p.code, message: p.message, ...(p.where ? { where: p.where } : {}), ...(p.hint ? { hint: p.hint } : {}) };
}
