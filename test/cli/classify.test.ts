/**
 * `antiphon classify`: labels every wrench sample quiet, correction or impact. The example log
 * and our own synthetic logs (src/sim/synthetic-wrench.ts: still second, partner push and pull,
 * a single-sample electrical spike at 3.0 s, the beam tip knocking the clamp post at 5.8 s).
 * Run in-process through the command's own `register`.
 */
import { join } from 'node:path';
import { Command, CommanderError } from 'commander';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { register } from '../../src/cli/classify.js';
import { beamCarryWrench, toCsv } from '../../src/sim/synthetic-wrench.js';
import { DEMO, ROOT, tempFiles } from '../support/files.js';
import { runRegistered } from '../support/run-command.js';

const EXAMPLE = join(ROOT, 'examples/beam-carry-wrench.csv');
const { dir, write } = tempFiles('classify', 'csv');
const run = (args: string[]) => runRegistered(register, 'classify', args);

// The usage-error test below captures stderr itself.
afterEach(() => {
  vi.restoreAllMocks();
  process.exitCode = undefined;
});

interface ClassifyJson {
  rate_hz: number;
  rate_source: string;
  samples: number;
  tared_at_s: number | null;
  counts: { quiet: number; correction: number; impact: number; untared: number };
  labels: string[];
  scores: number[];
  impacts: { start_s: number; end_s: number; peak_score: number }[];
  params: { sample_rate_hz: number; cutoff_hz: number; [k: string]: unknown };
}

async function classifyJson(args: string[]): Promise<ClassifyJson> {
  const r = await run([...args, '--json']);
  expect(r.stderr).toBe('');
  expect(r.code).toBe(0);
  return JSON.parse(r.stdout) as ClassifyJson;
}

/** Label at time t (s) for a log that starts at 0 s at `rate` Hz. */
const at = (j: ClassifyJson, t: number, rate: number) => j.labels[Math.round(t * rate)];

describe('classify: the example log', () => {
  it('--json: rate ≈ 1000 Hz, every sample labelled, one impact near 5.8 s, none at the 3.0 s spike', async () => {
    // src/sim/synthetic-wrench.ts: 8 s at 1 kHz, spike at 3.0 s (one sample), knock 5.8–5.808 s
    const j = await classifyJson(['--csv', EXAMPLE]);
    expect(Object.keys(j)).toEqual(expect.arrayContaining(['rate_hz', 'samples', 'labels', 'impacts', 'params']));
    expect(j.rate_hz).toBe(1000); // timestamps on a 1 ms grid: the nominal rate (src/io/wrench-csv.ts estimateRate)
    expect(j.rate_source).toBe('estimated');
    expect(j.samples).toBe(8000);
    expect(j.labels).toHaveLength(8000);
    expect(j.scores).toHaveLength(8000);
    expect(new Set(j.labels)).toEqual(new Set(['untared', 'quiet', 'correction', 'impact']));
    expect(j.counts.quiet + j.counts.correction + j.counts.impact + j.counts.untared).toBe(8000);
    expect(j.impacts).toHaveLength(1);
    const [imp] = j.impacts;
    expect(imp!.start_s).toBeGreaterThanOrEqual(5.8);
    expect(imp!.start_s).toBeLessThan(5.82);
    expect(imp!.end_s).toBeLessThan(6.0);
    expect(imp!.peak_score).toBeGreaterThan(1);
    // No impact anywhere near the single-sample spike.
    for (let k = 2900; k <= 3100; k++) expect(j.labels[k]).not.toBe('impact');
    // Impact labels only inside the impact interval.
    j.labels.forEach((l, k) => {
      if (l === 'impact') {
        expect(k / 1000).toBeGreaterThanOrEqual(imp!.start_s - 1e-9);
        expect(k / 1000).toBeLessThanOrEqual(imp!.end_s + 1e-9);
      }
    });
  });

  it('labels follow the scenario: quiet while still, correction during the push and pull', async () => {
    // src/sim/synthetic-wrench.ts: still until 2.0 s, 8 N push 2.0–3.5 s (peak 2.75 s), 6 N pull 4.0–5.0 s (peak 4.5 s)
    const j = await classifyJson(['--csv', EXAMPLE, '--params', DEMO]);
    expect(j.tared_at_s).not.toBeNull();
    expect(j.tared_at_s!).toBeLessThan(1.0); // tare window 0.5 s of a still second
    expect(at(j, 1.0, 1000)).toBe('quiet');
    expect(at(j, 1.9, 1000)).toBe('quiet');
    expect(at(j, 2.75, 1000)).toBe('correction');
    expect(at(j, 4.5, 1000)).toBe('correction');
    expect(at(j, 7.5, 1000)).toBe('quiet');
  });

  it('params: the wrench filter used, at the rate used', async () => {
    // config/demo_cell.yaml wrench_filter.*: cutoff 5 Hz, order 4, impact 15 N
    const j = await classifyJson(['--csv', EXAMPLE, '--params', DEMO]);
    expect(j.params).toMatchObject({ sample_rate_hz: j.rate_hz, cutoff_hz: 5, order: 4, impact: { force_n: 15 }, correction_force_n: 2 });
  });

  it('--rate overrides the estimate', async () => {
    // src/cli/classify.ts: --rate <Hz>, default estimated from t
    const j = await classifyJson(['--csv', EXAMPLE, '--rate', '500']);
    expect(j.rate_hz).toBe(500);
    expect(j.rate_source).toBe('option');
    expect(j.params.sample_rate_hz).toBe(500);
    expect(j.samples).toBe(8000);
  });

  it('text output: a line per sample, then the summary; --summary prints only the summary', async () => {
    // src/cli/classify.ts text format
    const r = await run(['--csv', EXAMPLE]);
    expect(r.code).toBe(0);
    const lines = r.stdout.trimEnd().split('\n');
    expect(lines[0]).toBe('t_s\tlabel\timpact_score');
    expect(lines[1]).toMatch(/^0\tuntared\t\d+\.\d{3}$/); // the first sample is always before the tare
    expect(lines.filter((l) => !l.startsWith('#'))).toHaveLength(8001);
    const s = await run(['--csv', EXAMPLE, '--summary']);
    expect(s.code).toBe(0);
    const summary = s.stdout.trimEnd().split('\n');
    expect(summary.every((l) => l.startsWith('# '))).toBe(true);
    expect(summary[0]).toMatch(/^# 8000 samples at 1000\.0 Hz \(estimated from t\); tared at 0\.\d{3} s$/);
    expect(summary).toHaveLength(3);
    expect(summary[2]).toMatch(/^# impact 5\.8\d\d-5\.\d{3} s, peak score \d+\.\d\d$/);
  });
});

describe('classify: samples before the tare', () => {
  it('are labelled untared, not correction, though they carry a bias above the correction level; the rest never is', async () => {
    // own signal: 2 s at 1 kHz, still, with a 3 N sensor bias across (above the 2 N
    // default correction level, src/params/schema.ts); before the start-up tare the correction band carries the bias itself
    const rows = ['t,fx,fy,fz,tx,ty,tz'];
    for (let k = 0; k < 2000; k++) rows.push([(k / 1000).toFixed(3), '3', '0.1', '-11.77', '0', '0', '0'].join(','));
    const j = await classifyJson(['--csv', write(rows.join('\n'))]);
    expect(j.tared_at_s).not.toBeNull();
    const first = Math.round(j.tared_at_s! * 1000); // the sample at which the tare completed
    expect(first).toBeGreaterThan(0);
    expect(j.counts.untared).toBe(first);
    expect(j.labels.slice(0, first).every((l) => l === 'untared')).toBe(true);
    expect(j.labels.slice(first).includes('untared')).toBe(false);
    expect(j.counts.correction).toBe(0);
    expect(j.labels[1999]).toBe('quiet');
  });

  it('the example log: untared exactly until tared_at_s, and the summary counts them', async () => {
    const j = await classifyJson(['--csv', EXAMPLE, '--params', DEMO]);
    const first = Math.round(j.tared_at_s! * 1000);
    expect(j.labels.indexOf('untared')).toBe(0);
    expect(j.labels.lastIndexOf('untared')).toBe(first - 1);
    const s = await run(['--csv', EXAMPLE, '--params', DEMO, '--summary']);
    expect(s.stdout).toContain(`untared ${first} (before the tare)`);
  });
});

describe('classify: our own signals', () => {
  it('another seed at 500 Hz: rate 500, one impact near 5.8 s, none at 3.0 s', async () => {
    // src/sim/synthetic-wrench.ts with seed 11 at 500 Hz (same events)
    const sig = beamCarryWrench({ rate_hz: 500, seed: 11 });
    const j = await classifyJson(['--csv', write(toCsv(sig))]);
    expect(j.rate_hz).toBe(500);
    expect(j.samples).toBe(4000);
    expect(j.impacts).toHaveLength(1);
    expect(j.impacts[0]!.start_s).toBeGreaterThanOrEqual(5.8);
    expect(j.impacts[0]!.start_s).toBeLessThan(5.82);
    for (let k = 1450; k <= 1550; k++) expect(j.labels[k]).not.toBe('impact');
    expect(at(j, 2.75, 500)).toBe('correction');
    expect(at(j, 1.5, 500)).toBe('quiet');
  });

  it('a log that ends before the knock has no impact, tab-separated with extra columns', async () => {
    // src/sim/synthetic-wrench.ts: 5.5 s leaves out the 5.8 s knock but keeps the spike and both pushes
    const sig = beamCarryWrench({ rate_hz: 500, seed: 5, duration_s: 5.5 });
    const lines = ['# our own log: knock-free', 'seq\tt\tfx\tfy\tfz\ttx\tty\ttz\tgripper'];
    for (let k = 0; k < sig.t.length; k++) {
      const w = Array.from(sig.wrench.subarray(6 * k, 6 * k + 6), (v) => v.toFixed(4));
      lines.push([k, sig.t[k]!.toFixed(3), ...w, 'closed'].join('\t'));
    }
    // (This length once gave an estimated 499.99999999999955 Hz, a 1-sample debounce, and the spike as an impact.)
    const j = await classifyJson(['--csv', write(lines.join('\n') + '\n', 'tsv')]);
    expect(j.rate_hz).toBe(500);
    expect(j.samples).toBe(2750);
    expect(j.impacts).toEqual([]);
    expect(j.counts.impact).toBe(0);
    expect(j.counts.correction).toBeGreaterThan(0);
  });

  it('a knock of our own at 2.5 s on a still log is found there, a lone spike is not', async () => {
    // own signal: 3 s at 1 kHz, 0.25 N noise-free bias, 60 N half-sine over 10 ms at 2.5 s; a 30 N one-sample spike at 1.5 s
    const rows = ['t fx fy fz tx ty tz'];
    for (let k = 0; k < 3000; k++) {
      const t = k / 1000;
      const knock = t >= 2.5 && t < 2.51 ? 60 * Math.sin((Math.PI * (t - 2.5)) / 0.01) : 0;
      const spike = k === 1500 ? 30 : 0;
      rows.push([t.toFixed(3), (0.25 + knock + spike).toFixed(4), '0.1', '-11.77', '0.01', '0', String(0.04 * knock)].join('  '));
    }
    const j = await classifyJson(['--csv', write(rows.join('\n'))]);
    expect(j.impacts).toHaveLength(1);
    expect(j.impacts[0]!.start_s).toBeGreaterThanOrEqual(2.5);
    expect(j.impacts[0]!.start_s).toBeLessThan(2.52);
    for (let k = 1400; k <= 1600; k++) expect(j.labels[k]).not.toBe('impact');
  });
});

describe('classify: bad input exits 2 and prints nothing on stdout', () => {
  const HEAD = 't,fx,fy,fz,tx,ty,tz';
  const rows = (n: number, from = 0) => Array.from({ length: n }, (_, k) => `${((from + k) / 1000).toFixed(3)},0.1,0.2,-11.7,0,0,0`);

  it.each([
    // the CSV reader's documented format (src/io/wrench-csv.ts); line numbers are 1-based and count comments
    { name: 'non-numeric cell', text: ['# c', HEAD, ...rows(3), '0.003,0.1,x,-11.7,0,0,0', ...rows(3, 4)].join('\n'), place: ':6:3', code: 'csv.non_numeric' },
    { name: 'NaN', text: [HEAD, ...rows(5), '0.005,NaN,0,0,0,0,0'].join('\n'), place: ':7:2', code: 'csv.nan' },
    { name: 'time not increasing', text: [HEAD, ...rows(5), '0.004,0,0,0,0,0,0'].join('\n'), place: ':7:1', code: 'csv.time_not_increasing' },
    { name: 'short row', text: [HEAD, ...rows(2), '0.002,0,0', ...rows(2, 3)].join('\n'), place: ':4', code: 'csv.short_row' },
    { name: 'missing column', text: ['t,fx,fy,fz,tx,ty', '0,0,0,0,0,0', '0.001,0,0,0,0,0'].join('\n'), place: ':1', code: 'csv.missing_column' },
  ])('$name: the line number on stderr', async ({ text, place, code }) => {
    const f = write(text);
    const r = await run(['--csv', f]);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe(''); // no partial output
    expect(r.stderr).toContain(`antiphon: ${f}${place}`);
    const rj = await run(['--csv', f, '--json']);
    expect(rj.code).toBe(2);
    const j = JSON.parse(rj.stdout);
    expect(j).toEqual({ ok: false, errors: [expect.objectContaining({ code })] });
    expect(j.labels).toBeUndefined();
  });

  it('a missing CSV file', async () => {
    // common practice
    const r = await run(['--csv', join(dir, 'nope.csv')]);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(/cannot read CSV/);
  });

  it('t not in seconds (a rate outside 50 Hz..8 kHz)', async () => {
    // src/cli/classify.ts: the wrench filter supports 50 Hz to 8 kHz
    const ms = [HEAD, ...Array.from({ length: 50 }, (_, k) => `${k},0,0,0,0,0,0`)].join('\n');
    const r = await run(['--csv', write(ms)]);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(/the sample rate estimated from t is 1\.000 Hz/);
  });

  it('--rate out of range or not a number, --arm not an arm', async () => {
    // src/cli/common.ts numberOption: a finite number within [50, 8000]
    for (const rate of ['20', 'fast', '9000']) {
      const r = await run(['--csv', EXAMPLE, '--rate', rate]);
      expect(r.code).toBe(2);
      expect(r.stdout).toBe('');
      expect(r.stderr).toContain('option --rate');
    }
    const a = await run(['--csv', EXAMPLE, '--arm', 'middle']);
    expect(a.code).toBe(2);
    expect(a.stderr).toContain('option --arm');
  });

  it('a cut-off too high for the rate, and a bad parameters file', async () => {
    // src/params/schema.ts: the cut-off must be below 0.45 x the sample rate (0.45 · 60 = 27 Hz)
    const params = write('/**:\n  ros__parameters:\n    wrench_filter:\n      cutoff_hz: 40.0\n', 'yaml');
    const r = await run(['--csv', EXAMPLE, '--params', params, '--rate', '60']);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(/key wrench_filter\.cutoff_hz: .*too high for 60\.0 Hz samples/);
    const bad = write('/**:\n  ros__parameters:\n    wrench_filter:\n      cutoff_hz: 5\n', 'yaml');
    const rb = await run(['--csv', EXAMPLE, '--params', bad]);
    expect(rb.code).toBe(2);
    expect(rb.stderr).toContain(`${bad}:4:18, key wrench_filter.cutoff_hz`);
  });

  it('without --csv: a usage error (exit 2 in the binary)', async () => {
    // src/cli/main.ts maps commander usage errors to exit 2
    let err = '';
    vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => ((err += String(s)), true));
    const program = new Command('antiphon').exitOverride();
    register(program);
    await expect(program.parseAsync(['node', 'antiphon', 'classify'])).rejects.toBeInstanceOf(CommanderError);
    expect(err).toMatch(/required option '--csv <file>' not specified/);
  });
});
