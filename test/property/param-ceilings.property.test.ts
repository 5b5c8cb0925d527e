/**
 * The parameter loader never accepts a value past a hard ceiling: any key that has one, any value
 * (past it or not, written plainly, with an exponent or a sign, in the shared section or an arm's
 * own), any companions. Whenever a file loads, every ceiling holds on both arms; a file with a
 * value past a ceiling is refused with `param.above_ceiling` on that key. The ceilings are our own
 * (src/params/schema.ts, pinned in test/hardening/param-ceilings.test.ts); the file format is
 * ROS 2's parameters file (rcl yaml). Fixed seed, bounded runs.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { loadCell } from '../../src/params/config.js';
import { SCHEMA } from '../../src/params/schema.js';
import { InputError } from '../../src/util/errors.js';
import { tempFiles } from '../support/files.js';

const { write } = tempFiles('ceiling-property');
const CEILED = SCHEMA.filter((s) => s.ceiling !== undefined && s.type === 'double');

/** A YAML float literal in one of several spellings ROS 2's loader reads as a double. */
function literal(v: number, form: number): string {
  if (form === 1) return v.toExponential();
  if (form === 2) return `+${Number.isInteger(v) ? `${v}.0` : String(v)}`;
  if (form === 3) return v.toPrecision(17);
  return Number.isInteger(v) ? `${v}.0` : String(v);
}

function fileText(values: [string, string][], section: string): string {
  const lines = values.map(([k, lit]) => `    ${k}: ${lit}`);
  return `${section}:\n  ros__parameters:\n${lines.join('\n')}\n`;
}

const pick = fc.record({
  key: fc.constantFrom(...CEILED.map((s) => s.key)),
  // Relative to the ceiling: below, at, just past, far past.
  factor: fc.oneof(fc.double({ min: 0.01, max: 1, noNaN: true }), fc.constant(1), fc.double({ min: 1 + 1e-12, max: 1.01, noNaN: true }), fc.double({ min: 1.01, max: 1e12, noNaN: true })),
  form: fc.integer({ min: 0, max: 3 }),
});

describe('parameter ceilings (properties)', () => {
  it('a loaded file never carries a value past a ceiling; one past it is refused on that key', () => {
    let refused = 0;
    let loaded = 0;
    fc.assert(
      fc.property(fc.uniqueArray(pick, { selector: (p) => p.key, minLength: 1, maxLength: 4 }), fc.constantFrom("'/**'", 'left', 'right'), (picks, section) => {
        const values = picks.map((p) => {
          const spec = CEILED.find((s) => s.key === p.key)!;
          return { key: p.key, value: spec.ceiling! * p.factor, lit: literal(spec.ceiling! * p.factor, p.form) };
        });
        const file = write(fileText(values.map((v) => [v.key, v.lit]), section));
        const past = values.filter((v) => Number(v.lit.replace(/^\+/, '')) > CEILED.find((s) => s.key === v.key)!.ceiling!);
        try {
          const cell = loadCell(file);
          loaded++;
          expect(past).toEqual([]);
          for (const arm of [cell.left, cell.right]) {
            for (const s of CEILED) {
              const v = s.key.split('.').reduce<unknown>((o, k) => (o as Record<string, unknown>)[k], arm.config);
              expect(v as number).toBeLessThanOrEqual(s.ceiling!);
            }
          }
        } catch (err) {
          if (!(err instanceof InputError)) throw err;
          refused++;
          for (const v of past) expect(err.problems.some((p) => p.code === 'param.above_ceiling' && p.message.includes(v.key))).toBe(true);
        }
      }),
      { seed: 1551, numRuns: 150 },
    );
    expect(refused).toBeGreaterThan(0);
    expect(loaded).toBeGreaterThan(0);
  });
});
