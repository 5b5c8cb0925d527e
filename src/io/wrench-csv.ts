/**
 * Reading timestamped wrench samples from text tables: header `t,fx,fy,fz,tx,ty,tz`
 * (any order, case-insensitive, extra columns ignored), `t` in seconds, comma-, tab- or
 * whitespace-separated, `#` comment lines allowed. Every bad cell is reported with its line
 * and column name; nothing is returned unless the whole file is valid.
 */
import { readFileSync } from 'node:fs';
import { InputError, type Problem } from '../util/errors.js';

export const WRENCH_COLUMNS = ['t', 'fx', 'fy', 'fz', 'tx', 'ty', 'tz'] as const;

export interface WrenchTable {
  readonly t: Float64Array;
  /** Six values per sample: fx fy fz tx ty tz. */
  readonly wrench: Float64Array;
  readonly samples: number;
}

const MAX_PROBLEMS = 20;

export function readWrenchCsv(path: string): WrenchTable {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (err) {
    throw new InputError({ code: 'csv.unreadable', message: `cannot read CSV: ${(err as Error).message}`, where: { file: path } });
  }
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
    for (let c = 0; c < WRENCH_COLUMNS.length; c++) {
      const raw = cells[index[c]!]!.trim();
      const v = raw === '' ? Number.NaN : Number(raw);
      if (!Number.isFinite(v)) {
        problems.push({ code: Number.isNaN(v) && /^[-+]?nan$/i.test(raw) ? 'csv.nan' : 'csv.non_numeric', message: `column ${WRENCH_COLUMNS[c]}: '${raw}' is not a finite number`, where: { file: path, line, column: index[c]! + 1 } });
        break;
      }
      if (c === 0) {
        if (!(v > lastT)) problems.push({ code: 'csv.time_not_increasing', message: `t = ${v} s does not increase (previous ${lastT} s)`, where: { file: path, line, column: index[0]! + 1 }, hint: 'samples must be in strictly increasing time' });
        lastT = v;
      }
      rows.push(v);
    }
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
  return { t, wrench, samples: count };
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
