/**
 * Reading timestamped wrench tables: separators, column order, comments, and every bad cell
 * refused with its line (and column), nothing returned unless the whole file is valid.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { estimateRate, parseWrenchCsv, readWrenchCsv, WRENCH_COLUMNS } from '../../src/io/wrench-csv.js';
import { Rng } from '../../src/util/rng.js';
import { InputError, type Problem } from '../../src/util/errors.js';

const EXAMPLE = fileURLToPath(new URL('../../examples/beam-carry-wrench.csv', import.meta.url));
const dir = mkdtempSync(join(tmpdir(), 'antiphon-csv-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function problemsOf(fn: () => unknown): Problem[] {
  let result: unknown;
  try {
    result = fn();
  } catch (e) {
    if (e instanceof InputError) return [...e.problems];
    throw e;
  }
  throw new Error(`expected an InputError, got ${JSON.stringify(result)?.slice(0, 80)}`);
}

const parse = (text: string) => parseWrenchCsv(text, 'w.csv');
const ROWS = [
  [0.0, 1.5, -0.9, -8.8, 0.08, -0.01, 0.04],
  [0.001, 2.0, -0.87, -8.8, 0.046, -0.014, 0.014],
  [0.002, 2.5, -1.05, -8.4, 0.045, -0.0485, 0.0034],
];

function expectRows(table: ReturnType<typeof parse>, rows: number[][] = ROWS): void {
  expect(table.samples).toBe(rows.length);
  expect(Array.from(table.t)).toEqual(rows.map((r) => r[0]));
  expect(Array.from(table.wrench)).toEqual(rows.flatMap((r) => r.slice(1)));
}

describe('reading', () => {
  it('comma, tab and whitespace separated tables read the same', () => {
    // the module's documented format: header t,fx,fy,fz,tx,ty,tz; comma, tab or whitespace
    const comma = ['t,fx,fy,fz,tx,ty,tz', ...ROWS.map((r) => r.join(','))].join('\n');
    const commaSpaced = ['t, fx, fy, fz, tx, ty, tz', ...ROWS.map((r) => r.join(' , '))].join('\n');
    const tab = ['t\tfx\tfy\tfz\ttx\tty\ttz', ...ROWS.map((r) => r.join('\t'))].join('\n');
    const spaces = ['  t   fx fy  fz tx ty tz', ...ROWS.map((r) => '   ' + r.join('    ') + '  ')].join('\n');
    for (const text of [comma, commaSpaced, tab, spaces]) expectRows(parse(text));
  });

  it('extra columns are ignored, the order is free and names are case-insensitive', () => {
    // the module's documented format: any order, case-insensitive, extra columns ignored
    const header = 'seq,FZ,T,note,TZ,ty,Tx,fy,fx';
    const lines = ROWS.map((r, k) => [k, r[3], r[0], 'ok', r[6], r[5], r[4], r[2], r[1]].join(','));
    expectRows(parse([header, ...lines].join('\n')));
  });

  it('comment lines, blank lines and CRLF line ends are skipped', () => {
    // common practice for CSV logs: '#' comments, Windows line ends
    const text = ['# logged on the pick stand', '', 't,fx,fy,fz,tx,ty,tz', '# before the first sample', ...ROWS.map((r) => r.join(',')).flatMap((l) => [l, '  ', '   # between']), ''].join('\r\n');
    expectRows(parse(text));
  });

  it('a UTF-8 byte-order mark before the header is not part of the first name', () => {
    // common practice: spreadsheet exports often start with U+FEFF
    expectRows(parse(['\uFEFFt,fx,fy,fz,tx,ty,tz', ...ROWS.map((r) => r.join(','))].join('\n')));
  });

  it('the example log reads in full', () => {
    // examples/beam-carry-wrench.csv: 8 s at 1 kHz (src/sim/synthetic-wrench.ts defaults)
    const table = readWrenchCsv(EXAMPLE);
    expect(table.samples).toBe(8000);
    expect(table.t[0]).toBe(0);
    expect(table.t[7999]).toBe(7.999);
    expect(table.wrench.length).toBe(6 * 8000);
    expect(estimateRate(table.t)).toBeCloseTo(1000, 6);
  });

  it('the column list is the documented one', () => {
    expect(WRENCH_COLUMNS).toEqual(['t', 'fx', 'fy', 'fz', 'tx', 'ty', 'tz']);
  });
});

describe('refusals, with line, column and code', () => {
  const good = (r: number[]) => r.join(',');
  const HEAD = 't,fx,fy,fz,tx,ty,tz';

  it('a missing column, at the header line', () => {
    // the module's documented format: all seven columns are needed
    const ps = problemsOf(() => parse(['# log', HEAD.replace(',tz', ''), ...ROWS.map((r) => r.slice(0, 6).join(','))].join('\n')));
    expect(ps).toEqual([expect.objectContaining({ code: 'csv.missing_column', where: { file: 'w.csv', line: 2 } })]);
    expect(ps[0]!.message).toBe('missing column tz');
    const two = problemsOf(() => parse('time fx fy fz tx ty\n0 1 2 3 4 5\n'));
    expect(two[0]!.message).toBe('missing columns t, tz');
  });

  it('a non-numeric cell, an empty cell, NaN and infinity: line and column', () => {
    // common practice: report the row's line (1-based, comments counted) and the cell's column (1-based)
    const text = [HEAD, good(ROWS[0]!), '0.001,2.0,abc,-8.8,0.046,-0.014,0.014', '0.002,2.5,-1.05,-8.4,,-0.0485,0.0034', '0.003,NaN,0,0,0,0,0', '0.004,0,0,0,0,0,-Infinity', '0.005,0,0,0,0,0,0'].join('\n');
    const ps = problemsOf(() => parse(text));
    expect(ps.map((p) => [p.code, p.where?.line, p.where?.column])).toEqual([
      ['csv.non_numeric', 3, 3],
      ['csv.non_numeric', 4, 5],
      ['csv.nan', 5, 2],
      ['csv.non_numeric', 6, 7],
    ]);
    expect(ps[0]!.message).toBe("column fy: 'abc' is not a finite number");
    expect(ps[2]!.message).toBe("column fx: 'NaN' is not a finite number");
  });

  it('the column is the cell position in the file, whatever the column order', () => {
    // common practice: the column the user sees in a spreadsheet
    const ps = problemsOf(() => parse(['note,tz,ty,tx,fz,fy,fx,t', 'a,0,0,0,0,0,0,0', 'b,0,0,0,0,x,0,0.001'].join('\n')));
    expect(ps).toEqual([expect.objectContaining({ code: 'csv.non_numeric', where: { file: 'w.csv', line: 3, column: 6 } })]);
  });

  it('time that does not increase (equal or backwards), at the t column', () => {
    // the module's documented format: samples in strictly increasing time
    const text = ['fx,t,fy,fz,tx,ty,tz', '0,0.000,0,0,0,0,0', '0,0.001,0,0,0,0,0', '0,0.001,0,0,0,0,0', '0,0.0005,0,0,0,0,0', '0,0.003,0,0,0,0,0'].join('\n');
    const ps = problemsOf(() => parse(text));
    expect(ps.map((p) => [p.code, p.where?.line, p.where?.column])).toEqual([
      ['csv.time_not_increasing', 4, 2],
      ['csv.time_not_increasing', 5, 2],
    ]);
    expect(ps[0]!.message).toBe('t = 0.001 s does not increase (previous 0.001 s)');
    expect(ps[0]!.hint).toBe('samples must be in strictly increasing time');
  });

  it('a short row, at its line', () => {
    // common practice: a row needs every column the header names
    const ps = problemsOf(() => parse([HEAD, good(ROWS[0]!), '0.001,2.0,-0.87', good(ROWS[2]!)].join('\n')));
    expect(ps).toEqual([{ code: 'csv.short_row', message: 'row has 3 cells, the header needs 7', where: { file: 'w.csv', line: 3 } }]);
  });

  it('several bad rows are all listed; at most 20', () => {
    // src/io/wrench-csv.ts: every bad cell is reported (up to a cap)
    const rows = [HEAD];
    for (let k = 0; k < 40; k++) rows.push(k % 2 ? `${k * 0.001},0,0,0,0,0,0` : `${k * 0.001},bad,0,0,0,0,0`);
    const ps = problemsOf(() => parse(rows.join('\n')));
    expect(ps).toHaveLength(20);
    expect(ps.every((p) => p.code === 'csv.non_numeric' && p.where?.column === 2)).toBe(true);
    expect(ps.map((p) => p.where?.line)).toEqual(Array.from({ length: 20 }, (_, k) => 2 + 2 * k));
  });

  it('an empty file, a header only, a single sample', () => {
    // src/io/wrench-csv.ts: at least two samples (a rate needs an interval)
    expect(problemsOf(() => parse('# nothing here\n\n'))[0]!.code).toBe('csv.empty');
    expect(problemsOf(() => parse(HEAD + '\n'))[0]).toMatchObject({ code: 'csv.too_short', message: '0 samples; at least 2 are needed' });
    expect(problemsOf(() => parse(HEAD + '\n' + good(ROWS[0]!)))[0]).toMatchObject({ code: 'csv.too_short', message: '1 sample; at least 2 are needed' });
  });

  it('an unreadable file', () => {
    // common practice: name the file
    const f = join(dir, 'missing.csv');
    expect(problemsOf(() => readWrenchCsv(f))[0]).toMatchObject({ code: 'csv.unreadable', where: { file: f } });
  });

  it('a bad file read from disk names that file and returns nothing', () => {
    // src/io/wrench-csv.ts: nothing is returned unless the whole file is valid
    const f = join(dir, 'bad.csv');
    writeFileSync(f, [HEAD, good(ROWS[0]!), good(ROWS[1]!), '0.002,1,2,3,4,5,oops'].join('\n'));
    let got: unknown = 'nothing';
    try {
      got = readWrenchCsv(f);
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).problems[0]!.where).toEqual({ file: f, line: 4, column: 7 });
      expect((e as InputError).message).toContain(`${f}:4:7`);
    }
    expect(got).toBe('nothing');
  });
});

describe('estimateRate', () => {
  it('is the median interval: jittered 1 kHz timestamps give 1 kHz', () => {
    // common practice: the median interval is robust to jitter and to dropped samples
    const rng = new Rng(2026);
    const n = 5000;
    const t = new Float64Array(n);
    for (let k = 0; k < n; k++) t[k] = k / 1000 + rng.range(-0.2e-3, 0.2e-3);
    expect(Math.abs(estimateRate(t) - 1000) / 1000).toBeLessThan(0.01);
  });

  it('ignores a few dropped samples and a pause', () => {
    // common practice (as above)
    const times: number[] = [];
    for (let k = 0; k < 2000; k++) if (k % 37 !== 5) times.push(k / 500);
    times.push(times[times.length - 1]! + 3); // a 3 s pause
    expect(estimateRate(Float64Array.from(times))).toBeCloseTo(500, 6);
  });

  it('timestamps on a grid, written to the millisecond, give the nominal rate exactly at any length and offset', () => {
    // common practice: a logger on a fixed clock; the float error of t[k+1] − t[k] is not a rate
    for (const [n, rate, offset] of [[4000, 500, 0], [2750, 500, 0], [8000, 1000, 0], [100_000, 1000, 3000], [50_000, 250, 100_000]] as const) {
      const t = Float64Array.from({ length: n }, (_, k) => Number((offset + k / rate).toFixed(3)));
      expect(estimateRate(t), `${n} samples at ${rate} Hz from ${offset} s`).toBe(rate);
    }
  });

  it('two samples: the one interval', () => {
    expect(estimateRate(Float64Array.of(1, 1.004))).toBeCloseTo(250, 6);
  });

  it('property: within 2 % of the nominal rate for jitter up to 20 % of the period', () => {
    // common practice: symmetric jitter leaves the median interval at the period
    fc.assert(
      fc.property(fc.double({ min: 50, max: 8000, noNaN: true }), fc.double({ min: 0, max: 0.2, noNaN: true }), fc.integer({ min: 1, max: 1e6 }), (rate, jitter, seed) => {
        const rng = new Rng(seed);
        const n = 2001;
        const t = new Float64Array(n);
        for (let k = 0; k < n; k++) t[k] = k / rate + (jitter / rate) * rng.range(-0.5, 0.5);
        const est = estimateRate(t);
        expect(Math.abs(est - rate) / rate).toBeLessThan(0.02);
      }),
      { numRuns: 100 },
    );
  });
});
