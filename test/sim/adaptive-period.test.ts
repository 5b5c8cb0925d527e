/** `adaptive:k` sets the adaptive scheduler's slot (our own behaviour); `adaptive` keeps roles.period_s. */
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { applyStrategy, parseStrategy, parseStrategyList } from '../../src/sim/strategies.js';
import { DEMO } from '../support/files.js';

const cell = loadCell(DEMO);

describe('adaptive with a period', () => {
  it('adaptive:200 slots of 200 samples; adaptive alone keeps the parameters file\'s period', () => {
    expect(parseStrategy('adaptive:200')).toEqual({ name: 'adaptive', k: 200 });
    expect(parseStrategy('adaptive')).toEqual({ name: 'adaptive', k: null });
    const a = applyStrategy({ name: 'adaptive', k: 200 }, cell.left.config, cell.right.config);
    expect(a.left.roles.period_s).toBeCloseTo(200 / cell.left.config.wrench_filter.sample_rate_hz, 12);
    expect(a.right.roles.scheduler).toBe('adaptive');
    const b = applyStrategy({ name: 'adaptive', k: null }, cell.left.config, cell.right.config);
    expect(b.left.roles.period_s).toBe(cell.left.config.roles.period_s);
    expect(parseStrategyList('adaptive:200,adaptive').map((s) => s.k)).toEqual([200, null]);
    expect(() => parseStrategy('adaptive:0')).toThrow(/whole number of wrench samples/);
  });
});
