/**
 * Reading timestamped wrench samples from text tables: header `t,fx,fy,fz,tx,ty,tz`
 * (any order, case-insensitive, extra columns ignored), `t` in seconds, comma-, tab- or
 * whitespace-separated, `#` comment lines allowed. Every bad cell is reported with its line
 * and column name; nothing is returned unless the whole file is valid.
 *
 * Numbers are plain decimals (`12`, `-0.5`, `1.2e3`): hexadecimal, binary or octal forms
 * (`0x10`, `0b101`, `0o7`), `Infinity` and digit separators are refused. Magnitudes are bounded:
 * |force| ≤ MAX_FORCE_N, |torque| ≤ MAX_TORQUE_NM, |t| ≤ MAX_TIME_S; a value beyond is a
 * broken sample, not a measurement (wrist force-torque sensors are rated to a few kN at most,
 * common practice). The file itself is read with a size limit (INPUT_LIMITS.csv).
 */
import { InputError, type Problem } from '../util/errors.js';
import { INPUT_LIMITS, readInputText } from '../util/read-input.js';

export const WRENCH_COLUMNS = ['t', 'fx', 'fy', 'fz', 'tx', 'ty', 'tz'] as const;

/** Largest accepted |force|, N: a thousand times a large wrist sensor's range (common practice: a few kN). */
export const MAX_FORCE_N = 1e6;
/** Largest accepted |torque|, N·m. */
export const MAX_TORQUE_NM = 1e6;
/** Largest accepted |t|, s (about 317 years: Unix times in seconds fit). */
export const MAX_TIME_S = 1e10;
/** A plain decimal number. */
const DECIMAL = /^[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?$/;
/** A gap is reported when an interval exceeds this many median sample periods. */
export const GAP_PERIODS = 5;

export interface WrenchTable {
  readonly t: Float64Array;
  /** Six values per sample: fx fy fz tx ty tz. */
  readonly wrench: Float64Array;
  readonly samples: number;
  /** The 1-based file line of each sample. */
  readonly lines: Uint32Array;
}

const MAX_PROBLEMS = 20;

export function readWrenchCsv(path: string): WrenchTable {
  const text = readInputText(path, { what: 'CSV', code: 'csv', maxBytes: INPUT_LIMITS.csv, option: '--csv' });
  return parseWrenchCsv(text, path);
}

export function parseWrenchCsv(text: string, path: string): WrenchTable {
  const lines = text.split(/\r?\n/);
  let headerLine = -1;
  for (let k = 0; k < lines.length; k++) {
    const s = lines[k]!.trim();
    if (s !== '' && !s.startsWith('#')) {
      headerLine = k;
      break;
    }
  }
  if (headerLine < 0) throw new InputError({ code: 'csv.empty', message: 'no header line', where: { file: path }, hint: `the first line names the columns: ${WRENCH_COLUMNS.join(',')}` });
  const header = lines[headerLine]!;
  const sep: RegExp = header.includes(',') ? /\s*,\s*/ : header.includes('\t') ? /\t/ : /\s+/;
  const names = header.trim().split(sep).map((s) => s.trim().toLowerCase());
  const index = WRENCH_COLUMNS.map((c) => names.indexOf(c));
  const missing = WRENCH_COLUMNS.filter((_, k) => index[k]! < 0);
  if (missing.length) {
    throw new InputError({ code: 'csv.missing_column', message: `missing column${missing.length > 1 ? 's' : ''} ${missing.join(', ')}`, where: { file: path, line: headerLine + 1 }, hint: `the header must name ${WRENCH_COLUMNS.join(', ')} (extra columns are ignored)` });
  }
  const need = Math.max(...index) + 1;
  const rows: number[] = [];
  const lineOf: number[] = [];
  const problems: Problem[] = [];
  let count = 0;
  let lastT = Number.NEGATIVE_INFINITY;
  for (let k = headerLine + 1; k < lines.length && problems.length < MAX_PROBLEMS; k++) {
    const s = lines[k]!.trim();
    if (s === '' || s.startsWith('#')) continue;
    const cells = s.split(sep);
    const line = k + 1;
    if (cells.length < need) {
      problems.push({ code: 'csv.short_row', message: `row has ${cells.length} cells, the header needs ${need}`, where: { file: path, line } });
      continue;
    }
    let rowOk = true;
    for (let c = 0; c < WRENCH_COLUMNS.length; c++) {
      const raw = cells[index[c]!]!.trim();
      const decimal = DECIMAL.test(raw);
      const v = decimal ? Number(raw) : Number.NaN;
      const col = WRENCH_COLUMNS[c]!;
      if (!Number.isFinite(v)) {
        const plain = raw === '' ? Number.NaN : Number(raw);
        const code = /^[-+]?nan$/i.test(raw) ? 'csv.nan' : Number.isFinite(plain) ? 'csv.not_decimal' : 'csv.non_numeric';
        problems.push({
          code,
          message: `column ${col}: '${raw}' is not a ${code === 'csv.not_decimal' ? 'plain decimal' : 'finite'} number`,
          where: { file: path, line, column: index[c]! + 1 },
          ...(code === 'csv.not_decimal' ? { hint: 'write decimal numbers such as 16, -0.5 or 1.2e3 (no hexadecimal, binary or octal)' } : {}),
        });
        rowOk = false;
        break;
      }
      const bound = c === 0 ? MAX_TIME_S : c <= 3 ? MAX_FORCE_N : MAX_TORQUE_NM;
      if (Math.abs(v) > bound) {
        problems.push({ code: 'csv.out_of_range', message: `column ${col}: ${raw} ${c === 0 ? 's' : c <= 3 ? 'N' : 'N·m'} is beyond ${bound.toExponential(0)} ${c === 0 ? 's' : c <= 3 ? 'N' : 'N·m'}, not a physical sample`, where: { file: path, line, column: index[c]! + 1 }, hint: `|${col}| at most ${bound.toExponential(0)}` });
        rowOk = false;
        break;
      }
      if (c === 0) {
        if (!(v > lastT)) problems.push({ code: 'csv.time_not_increasing', message: `t = ${v} s does not increase (previous ${lastT} s)`, where: { file: path, line, column: index[0]! + 1 }, hint: 'samples must be in strictly increasing time' });
        lastT = v;
      }
      rows.push(v);
    }
    if (!rowOk) continue;
    lineOf.push(line);
    count++;
  }
  if (problems.length) throw new InputError(problems);
  if (count < 2) throw new InputError({ code: 'csv.too_short', message: `${count} sample${count === 1 ? '' : 's'}; at least 2 are needed`, where: { file: path } });
  const t = new Float64Array(count);
  const wrench = new Float64Array(6 * count);
  for (let n = 0; n < count; n++) {
    t[n] = rows[7 * n]!;
    for (let c = 0; c < 6; c++) wrench[6 * n + c] = rows[7 * n + 1 + c]!;
  }
  return { t, wrench, samples: count, lines: Uint32Array.from(lineOf) };
}

export interface Gap {
  /** Time of the sample before the gap, and of the one after, s. */
  readonly from_s: number;
  readonly to_s: number;
  readonly duration_s: number;
  /** File line of the sample after the gap. */
  readonly line: number;
}

/** Intervals longer than `periods` sample periods at `rateHz` (the first `max` of them, and how many in all). */
export function findGaps(table: WrenchTable, rateHz: number, periods = GAP_PERIODS, max = 20): { gaps: Gap[]; count: number } {
  const limit = periods / rateHz;
  const gaps: Gap[] = [];
  let count = 0;
  for (let k = 1; k < table.samples; k++) {
    const d = table.t[k]! - table.t[k - 1]!;
    if (d > limit) {
      count++;
      if (gaps.length < max) gaps.push({ from_s: table.t[k - 1]!, to_s: table.t[k]!, duration_s: d, line: table.lines[k]! });
    }
  }
  return { gaps, count };
}

/**
 * Median sample interval, as a rate in Hz, to 9 significant digits: timestamps on a grid give the
 * nominal rate exactly, not one a rounding error of their differences above or below it.
 */
export function estimateRate(t: Float64Array): number {
  const d = new Float64Array(t.length - 1);
  for (let k = 1; k < t.length; k++) d[k - 1] = t[k]! - t[k - 1]!;
  d.sort();
  const mid = d.length >> 1;
  const med = d.length % 2 ? d[mid]! : (d[mid - 1]! + d[mid]!) / 2;
  return Number((1 / med).toPrecision(9));
}
