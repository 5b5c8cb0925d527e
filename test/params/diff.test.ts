/**
 * Which parameters a run changed from the built-in defaults (src/params/diff.ts), on small
 * parameter files of our own: only values from a file count, per-arm defaults are the arm's own,
 * keys come sorted with their file:line:col, and the report line lists at most `max` of them.
 */
import { describe, expect, it } from 'vitest';
import { changedParams, changedParamsText } from '../../src/params/diff.js';
import { parseParamsText, resolveForArm } from '../../src/params/load.js';

const TEXT = `/**:
  ros__parameters:
    wrench_filter:
      cutoff_hz: 5.0
      order: 2
left:
  ros__parameters:
    roles:
      phase: 0
right:
  ros__parameters:
    roles:
      phase: 0
`;

describe('changedParams', () => {
  const file = parseParamsText(TEXT, 'cell.yaml');

  it('lists only file values that differ from the default, sorted, with where they came from', () => {
    const left = changedParams(resolveForArm(file, 'left'), 'left');
    // cutoff_hz 5.0 is the default (not listed); order 2 is not; left's phase 0 is left's default.
    expect(left).toEqual([{ key: 'wrench_filter.order', value: 2, default: 4, from: 'cell.yaml:5:14' }]);
    const right = changedParams(resolveForArm(file, 'right'), 'right');
    // right's own default phase is 1: phase 0 is a change for the right arm only.
    expect(right).toEqual([
      { key: 'roles.phase', value: 0, default: 1, from: 'cell.yaml:13:14' },
      { key: 'wrench_filter.order', value: 2, default: 4, from: 'cell.yaml:5:14' },
    ]);
  });

  it('is empty without a file', () => {
    expect(changedParams(resolveForArm(undefined, 'left'), 'left')).toEqual([]);
  });

  it('sorts by key whatever the order of the map, and gives null for a key without a default', () => {
    const spec = { key: 'x', type: 'double', unit: '', default: undefined, description: '' } as const;
    const mk = (key: string, line?: number) => [key, { key, value: 1, source: { kind: 'file' as const, file: 'f.yaml', line, column: line === undefined ? undefined : 3 }, spec: { ...spec, key } }] as const;
    const values = new Map([mk('b.z', 2), mk('a.y'), mk('b.a', 4), mk('b.z2', 5)]);
    const out = changedParams(values, 'left');
    expect(out.map((c) => c.key)).toEqual(['a.y', 'b.a', 'b.z', 'b.z2']);
    expect(out[0]).toEqual({ key: 'a.y', value: 1, default: null, from: 'f.yaml:?:?' });
    expect(out[1]!.from).toBe('f.yaml:4:3');
    // Two equal keys keep their order (the comparison says 0).
    const twice = changedParams(new Map([['k1', mk('k', 1)[1]], ['k2', mk('k', 2)[1]]]), 'left');
    expect(twice.map((c) => c.from)).toEqual(['f.yaml:1:3', 'f.yaml:2:3']);
  });
});

describe('changedParamsText', () => {
  const c = (k: number) => ({ key: `k${k}`, value: k, default: 0, from: 'f:1:1' });
  it('says so when nothing changed', () => {
    expect(changedParamsText([])).toBe('none: built-in defaults');
  });
  it('lists up to max changes, then how many more', () => {
    expect(changedParamsText([c(1), c(2)])).toBe('2 differ from the built-in defaults: k1 = 1, k2 = 2');
    expect(changedParamsText([c(1), c(2), c(3)], 3)).toBe('3 differ from the built-in defaults: k1 = 1, k2 = 2, k3 = 3');
    expect(changedParamsText([c(1), c(2), c(3)], 2)).toBe('3 differ from the built-in defaults: k1 = 1, k2 = 2, and 1 more (summary.json lists all)');
    const many = Array.from({ length: 13 }, (_, k) => c(k));
    expect(changedParamsText(many)).toMatch(/: k0 = 0, .*k11 = 11, and 1 more \(summary\.json lists all\)$/);
    expect(changedParamsText(many.slice(0, 12))).not.toMatch(/more/);
  });
});
