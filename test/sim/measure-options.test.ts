/**
 * The measurement options of the MuJoCo cell: the correction-band disturbance (an
 * Ornstein-Uhlenbeck process on each wrist's force x and y after the tare), the injected NaN
 * wrench sample, their validation and their command-line options; and the new summary fields.
 *
 * The disturbance is recovered exactly from the record: with and without it the white-noise
 * stream is the same, so (measured - true wrench) with it minus the same without it is the
 * disturbance itself. It is checked against the exact discretization of an OU process (handbook
 * fact): x[k+1] = a x[k] + sigma sqrt(1 - a^2) w[k], a = exp(-dt / tau), w ~ N(0, 1).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { runEpisode } from '../../src/sim/episode.js';
import { DISTURBANCE_TAU_S, simOptions } from '../../src/sim/options.js';
import { injectHoldOption, measureOptions } from '../../src/cli/simulate.js';
import { InputError } from '../../src/util/errors.js';

const cell = loadCell('config/demo_cell.yaml');
const built = existsSync('dist/src/cli/main.js');
const cli = (...args: string[]) => spawnSync(process.execPath, ['dist/src/cli/main.js', ...args], { encoding: 'utf8' });
const episode = (options: Record<string, unknown>, duration_s = 3) =>
  runEpisode({ left: cell.left.config, right: cell.right.config, strategy: { name: 'alternating', k: 500 }, seed: 12, options, duration_s });

describe('MuJoCo cell: correction-band disturbance', () => {
  it('0 N changes nothing; 4 N adds an OU process with tau = 0.2 s to force x and y only, from the sample after the tare', async () => {
    const base = await episode({});
    const zero = await episode({ disturbance_n: 0 });
    expect(JSON.stringify(zero.summary)).toBe(JSON.stringify(base.summary));
    expect(Buffer.from(zero.record!.left.wrench.buffer).equals(Buffer.from(base.record!.left.wrench.buffer))).toBe(true);

    const sigma = 4;
    const dist = await episode({ disturbance_n: sigma });
    expect(dist.summary.disturbance_n).toBe(4);
    const a = base.record!, b = dist.record!;
    const n = Math.min(a.samples, b.samples);
    const dt = 1 / a.sample_rate_hz;
    for (const side of ['left', 'right'] as const) {
      const tare = base.summary.tared_at_s[side]!;
      const d: number[][] = [[], []];
      for (let i = 0; i < n; i++) {
        for (let ax = 0; ax < 6; ax++) {
          const diff = (b[side].wrench[6 * i + ax]! - b[side].wrenchTrue[6 * i + ax]!) - (a[side].wrench[6 * i + ax]! - a[side].wrenchTrue[6 * i + ax]!);
          if (ax >= 2 || a.t[i]! <= tare) expect(Math.abs(diff), `${side} axis ${ax} at ${a.t[i]}`).toBeLessThan(1e-9);
          else d[ax]!.push(diff);
        }
      }
      const A = Math.exp(-dt / DISTURBANCE_TAU_S);
      for (const x of d) {
        expect(x.length).toBeGreaterThan(2000);
        // Least-squares AR(1) coefficient and the innovation standard deviation.
        let sxy = 0, sxx = 0;
        for (let k = 0; k + 1 < x.length; k++) {
          sxy += x[k]! * x[k + 1]!;
          sxx += x[k]! * x[k]!;
        }
        const aHat = sxy / sxx;
        let se = 0;
        for (let k = 0; k + 1 < x.length; k++) se += (x[k + 1]! - aHat * x[k]!) ** 2;
        const innov = Math.sqrt(se / (x.length - 1));
        expect(Math.abs(aHat - A)).toBeLessThan(0.01);
        expect(innov / (sigma * Math.sqrt(1 - A * A))).toBeGreaterThan(0.9);
        expect(innov / (sigma * Math.sqrt(1 - A * A))).toBeLessThan(1.1);
      }
    }
  }, 60_000);
});

describe('MuJoCo cell: injected hold and the new summary fields', () => {
  it('one NaN sample on the left wrench at 1.0 s latches a non_finite hold there; the summary carries every measure', async () => {
    const r = await episode({ inject_hold: { arm: 'left', t_s: 1.0 }, hold_timeout_s: 0 }, 2.5);
    const rec = r.record!;
    let nan = 0, at = -1;
    for (let i = 0; i < rec.samples; i++) {
      if (Number.isNaN(rec.left.wrench[6 * i]!)) {
        nan++;
        at = rec.t[i]!;
        for (let ax = 0; ax < 6; ax++) expect(rec.left.wrench[6 * i + ax]).toBeNaN();
      }
      for (let ax = 0; ax < 6; ax++) expect(Number.isNaN(rec.right.wrench[6 * i + ax]!)).toBe(false);
    }
    expect(nan).toBe(1);
    expect(at).toBe(1.0);
    const s = r.summary;
    expect(s.partner_hold!.injected_at_s).toBe(1.0);
    expect(s.partner_hold!.held_at_s).toBe(1.0);
    expect(s.partner_hold!.arm).toBe('left');
    expect(s.holds.events[0]!.arm).toBe('left');
    expect(s.holds.events[0]!.reasons.map((x) => x.check)).toContain('non_finite');
    expect(s.end_reason).not.toBe('hold'); // the hold timeout is off: the episode goes on
    expect(Object.keys(s.belief.calibration)).toEqual(['updates', 'ece', 'p_truth_below_0_05_rate', 'bins']);
    expect(s.belief.calibration.bins).toHaveLength(10);
    expect(Object.keys(s.commitments)).toEqual(['switches', 'disagreeing', 'rate', 'fresh_disagreeing', 'fresh_rate', 'onsets', 'repair_s', 'repair_slots_max', 'unrepaired']);
    expect(Object.keys(s.same_role)).toEqual(['total_s', 'both_speaker_s', 'both_listener_s', 'fraction', 'sampled_s']);
    const plain = await episode({}, 0.5);
    expect(plain.summary.partner_hold).toBeNull();
  }, 60_000);
});

describe('validation of the measurement options', () => {
  it('refuses a disturbance outside 0..100 N and a malformed injection, naming the key', () => {
    const key = (o: Record<string, unknown>) => {
      try {
        simOptions(o);
      } catch (e) {
        return (e as InputError).problems.map((p) => p.where?.key);
      }
      return [];
    };
    expect(key({ disturbance_n: -1 })).toEqual(['sim.disturbance_n']);
    expect(key({ disturbance_n: Number.NaN })).toEqual(['sim.disturbance_n']);
    expect(key({ inject_hold: { arm: 'middle', t_s: 1 } })).toEqual(['sim.inject_hold']);
    expect(key({ inject_hold: { arm: 'left', t_s: -1 } })).toEqual(['sim.inject_hold']);
    expect(key({ inject_hold: { arm: 'right', t_s: Number.POSITIVE_INFINITY } })).toEqual(['sim.inject_hold']);
    expect(key({ disturbance_n: 1.5, inject_hold: { arm: 'right', t_s: 0 } })).toEqual([]);
  });

  it('parses --inject-hold ARM:T; an injection turns off the hold timeout', () => {
    expect(injectHoldOption('left:3.0')).toEqual({ arm: 'left', t_s: 3 });
    expect(injectHoldOption(' right:0.25 ')).toEqual({ arm: 'right', t_s: 0.25 });
    expect(injectHoldOption(undefined)).toBeUndefined();
    for (const bad of ['left', 'left:', 'left:x', 'left:-0.1', 'both:1', 'left:1:2', ':1']) {
      expect(() => injectHoldOption(bad), bad).toThrow(InputError);
    }
    expect(measureOptions(1.5, { arm: 'left', t_s: 3 })).toEqual({ disturbance_n: 1.5, inject_hold: { arm: 'left', t_s: 3 }, hold_timeout_s: 0 });
    expect(measureOptions(undefined, undefined)).toEqual({});
  });

  it.skipIf(!built)('simulate and compare refuse bad --inject-hold and --disturbance-n with exit 2, naming the option', () => {
    const sim = ['simulate', '--duration', '0.1'];
    const cmp = ['compare', '--worlds', '1', '--duration', '0.1'];
    const cases: Array<[string[], string, string]> = [[sim, '--inject-hold', 'left'], [sim, '--inject-hold', 'up:3'], [sim, '--disturbance-n', '-1'], [cmp, '--inject-hold', 'left:-1'], [cmp, '--disturbance-n', 'x']];
    for (const [cmd, opt, v] of cases) {
      {
        const r = cli(...cmd, opt, v, '--json');
        expect(r.status, `${cmd[0]} ${opt} ${v}`).toBe(2);
        const j = JSON.parse(r.stdout) as { ok: boolean; errors: Array<{ where: { option: string } }> };
        expect(j.errors[0]!.where.option).toBe(opt);
      }
    }
  });

  it.skipIf(!built)('compare --json carries the pooled calibration, commitments, same-role time and partner-hold figures', () => {
    const r = cli('compare', '--worlds', '1', '--seed', '3', '--strategies', 'alternating:500', '--duration', '2', '--params', 'config/demo_cell.yaml', '--inject-hold', 'right:1.2', '--disturbance-n', '1.5', '--json');
    expect(r.status, r.stderr).toBe(0);
    const s = (JSON.parse(r.stdout) as { strategies: Array<Record<string, any>> }).strategies[0]!;
    expect(s['calibration'].bins).toHaveLength(10);
    expect(s['commitments']).toHaveProperty('repair_s');
    expect(s['same_role']).toHaveProperty('total_s');
    expect(s['partner_hold'].runs).toBe(1);
    expect(s['partner_hold']).toHaveProperty('never_rate');
  });
});

describe.skipIf(!built)('simulate with --inject-hold and --disturbance-n', () => {
  it('writes a bag that replays to the closed loop exactly (the NaN sample included), the measures in summary.json and the reliability diagram in the report', () => {
    const dir = mkdtempSync(join(tmpdir(), 'antiphon-measure-'));
    try {
      const out = join(dir, 'ep');
      const r = cli('simulate', '--params', 'config/demo_cell.yaml', '--seed', '5', '--duration', '2.5', '--inject-hold', 'right:1.5', '--disturbance-n', '1.5', '--out', out, '--json');
      expect(r.status, r.stderr).toBe(0);
      const s = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8')) as Record<string, any>;
      expect(s['bag_replay_matches_closed_loop']).toBe(true);
      expect(s['disturbance_n']).toBe(1.5);
      expect(s['partner_hold'].injected_at_s).toBe(1.5);
      expect(s['belief'].calibration.bins).toHaveLength(10);
      const html = readFileSync(join(out, 'report.html'), 'utf8');
      expect(html).toContain('<section id="calibration">');
      expect(html).toContain('<th scope="row">partner hold</th>');
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
