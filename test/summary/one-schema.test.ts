/**
 * One summary schema for replay and simulate: the summary.json of a simulated episode and of
 * the replay of that episode's own bag, compared field by field (issue: outputs that agree).
 * Our own behaviour, no outside reference: the simulated cell is our own.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { register as registerReplay } from '../../src/cli/replay.js';
import { register as registerSimulate } from '../../src/cli/simulate.js';
import { INTERNAL_FORCE_SIGN, SUMMARY_SCHEMA, SUMMARY_VERSION } from '../../src/replay/summary.js';
import { tripText } from '../../src/core/trip-text.js';
import { DEMO, tempFiles } from '../support/files.js';
import { runRegistered } from '../support/run-command.js';

const tmp = tempFiles('one-schema');
type J = Record<string, any>;

/** Keys and types, recursively (numbers in strings blanked). */
function shape(x: unknown): unknown {
  if (Array.isArray(x)) return x.map(shape);
  if (x && typeof x === 'object') return Object.fromEntries(Object.entries(x).map(([k, v]) => [k, shape(v)]));
  if (typeof x === 'string') return x.replace(/-?\d+(\.\d+)?(e-?\d+)?/g, '#');
  return typeof x;
}

/** Equal, with numbers (also inside strings) to 1 % or 1e-3. */
function close(x: unknown, y: unknown, at: string): void {
  if (typeof x === 'number' && typeof y === 'number') {
    expect(Math.abs(x - y) <= Math.max(1e-3, 0.01 * Math.abs(y)), `${at}: ${x} against ${y}`).toBe(true);
  } else if (typeof x === 'string' && typeof y === 'string') {
    const nx = x.match(/-?\d+(\.\d+)?/g) ?? [], ny = y.match(/-?\d+(\.\d+)?/g) ?? [];
    expect(shape(x), at).toBe(shape(y));
    nx.forEach((v, k) => close(Number(v), Number(ny[k]), `${at} "${x}"`));
  } else if (Array.isArray(x) && Array.isArray(y)) {
    expect(x.length, at).toBe(y.length);
    x.forEach((v, k) => close(v, y[k], `${at}[${k}]`));
  } else if (x && y && typeof x === 'object' && typeof y === 'object') {
    expect(Object.keys(x).sort(), at).toEqual(Object.keys(y).sort());
    for (const k of Object.keys(x)) close((x as J)[k], (y as J)[k], `${at}.${k}`);
  } else {
    expect(x, at).toEqual(y);
  }
}

describe('replay and simulate write one summary schema', () => {
  it('shares schema, version, arms[], holds and the trips, field by field, for one episode with a hold', async () => {
    const sim = join(tmp.dir, 'sim');
    const rep = join(tmp.dir, 'rep');
    // A NaN wrench on the left arm at 2 s: a hold with a trip, and the partner holding too.
    const s = await runRegistered(registerSimulate, 'simulate', ['--params', DEMO, '--seed', '7', '--duration', '5', '--inject-hold', 'left:2.0', '--out', sim]);
    expect(s.code, s.stderr).toBe(0);
    const r = await runRegistered(registerReplay, 'replay', [join(sim, 'bag'), '--params', DEMO, '--out', rep]);
    expect(r.code, r.stderr).toBe(0);
    const a = JSON.parse(readFileSync(join(sim, 'summary.json'), 'utf8')) as J;
    const b = JSON.parse(readFileSync(join(rep, 'summary.json'), 'utf8')) as J;
    for (const x of [a, b]) {
      expect(x['schema']).toBe(SUMMARY_SCHEMA);
      expect(x['version']).toBe(SUMMARY_VERSION);
      expect(x['internal_force'].sign).toBe(INTERNAL_FORCE_SIGN);
    }
    expect(a['kind']).toBe('simulate');
    expect(b['kind']).toBe('replay');
    expect(a['duration_s']).toBe(b['duration_s']);
    // Every per-arm field, holds with their trips included, is the same: the same fields, the same
    // strings, the same numbers (to 1 %: replaying the written bag reorders messages that share a
    // log time, which moves the last bits of the arithmetic; a trip's value is a ratio of sums).
    expect(shape(a['arms'])).toEqual(shape(b['arms']));
    close(a['arms'], b['arms'], 'arms');
    expect(b['arms'][0].holds.length).toBeGreaterThan(0);
    // The holds of both arms: the same count and reasons; the same check, input, value, limit and text per trip.
    expect(a['holds'].count).toBe(b['holds'].count);
    expect(a['holds'].reasons).toEqual(b['holds'].reasons);
    const trips = (x: J) => x['holds'].events.flatMap((e: J) => e.reasons.map((t: J) => [e.arm, t.check, t.input, t.value, t.worst, t.limit, t.unit, t.text]));
    close(trips(a), trips(b), 'holds');
    // The estimated internal force is what replay computes; the true one is said to be true.
    close(a['internal_force_estimated'], b['internal_force'], 'internal_force');
    expect(a['internal_force'].source).toMatch(/^true/);
    expect(b['internal_force'].source).toMatch(/^estimated/);
  }, 300_000);

  it('gives a trip the same words wherever it is shown', () => {
    expect(tripText({ check: 'force_correction', input: 'wrench', value: 70, limit: 60, first: 62.4 })).toBe('force_correction on wrench: 62.4 N > 60 N; worst while held 70 N');
    expect(tripText({ check: 'impact', input: 'wrench.torque', value: 1.875, limit: 1, first: 1.02 })).toMatch(/^impact on wrench\.torque: impact score 1\.02 ≥ 1 \(score: impact band over its torque limit\); worst while held 1\.875$/);
    expect(tripText({ check: 'stale_input', input: 'tool_pose', value: Infinity, limit: 0.05 })).toBe('stale_input on tool_pose: never received (limit 0.05 s)');
  });
});
