/**
 * Review (issue 9): `classify` let a 1,000 s hole in t pass unnoticed, gave "peak score Infinity"
 * and 98 impacts for one 1e308 N sample, and read `0x10` and `0b101` as numbers. Now: a warning
 * with the line for a gap longer than GAP_PERIODS sample periods; non-decimal numbers and
 * magnitudes beyond MAX_FORCE_N / MAX_TORQUE_NM refused with file, line and column, exit 2.
 * (Wrist force-torque sensors are rated to a few kN at most: common practice.) Invented samples.
 */
import { describe, expect, it } from 'vitest';
import { register } from '../../src/cli/classify.js';
import { MAX_FORCE_N, parseWrenchCsv } from '../../src/io/wrench-csv.js';
import { problemsOf, tempFiles } from '../support/files.js';
import { runRegistered } from '../support/run-command.js';

const files = tempFiles('review-classify', 'csv');

function table(n: number, edit?: (k: number, row: string[]) => void): string {
  const rows = ['t,fx,fy,fz,tx,ty,tz'];
  for (let k = 0; k < n; k++) {
    const row = [(k / 1000).toFixed(3), '0.1', '-0.2', '-11.8', '0', '0', '0'];
    edit?.(k, row);
    rows.push(row.join(','));
  }
  return rows.join('\n') + '\n';
}

describe('review: classify input checks', () => {
  it('a 1,000 s hole in t: a warning naming the line (text on stderr, JSON in warnings)', async () => {
    const f = files.write(table(3000, (k, row) => { if (k >= 1500) row[0] = (1000 + k / 1000).toFixed(3); }));
    const r = await runRegistered(register, 'classify', ['--csv', f, '--summary']);
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(new RegExp(`warning: ${f}:1502: no sample for 1000 s`));
    expect(r.stdout).toMatch(/# 1 gap longer than 5 sample periods/);
    const j = JSON.parse((await runRegistered(register, 'classify', ['--csv', f, '--json'])).stdout);
    expect(j.warnings).toEqual([expect.objectContaining({ code: 'csv.gap', where: { file: f, line: 1502 } })]);
  });

  it('one 1e308 N sample is refused with its line and column', async () => {
    const f = files.write(table(3000, (k, row) => { if (k === 1200) row[3] = '1e308'; }));
    const r = await runRegistered(register, 'classify', ['--csv', f]);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(new RegExp(`${f}:1202:4: column fz: 1e308 N is beyond 1e\\+6 N`));
    expect(problemsOf(() => parseWrenchCsv(`t,fx,fy,fz,tx,ty,tz\n0,${MAX_FORCE_N * 1.01},0,0,0,0,0\n0.001,0,0,0,0,0,0\n`, 'x.csv'))[0]!.code).toBe('csv.out_of_range');
  });

  it('0x10, 0b101 and 0o7 are refused as non-decimal, with the line', () => {
    for (const bad of ['0x10', '0b101', '0o7', '1_000', 'Infinity']) {
      const p = problemsOf(() => parseWrenchCsv(`t,fx,fy,fz,tx,ty,tz\n0,1,2,3,0,0,0\n0.001,${bad},0,0,0,0,0\n`, 'x.csv'));
      expect(p[0], bad).toMatchObject({ where: { file: 'x.csv', line: 3, column: 2 } });
      expect(p[0]!.code, bad).toMatch(bad === '0x10' || bad === '0b101' || bad === '0o7' ? /^csv\.not_decimal$/ : /^csv\.non_numeric$/);
    }
    // plain decimals stay accepted
    expect(parseWrenchCsv('t,fx,fy,fz,tx,ty,tz\n0,+1.5,-.5,2.,1e3,-1E-3,0\n0.001,0,0,0,0,0,0\n', 'ok.csv').samples).toBe(2);
  });
});
