/**
 * Review (issue 9): `replay <bag> --out <bag> --overwrite` deleted the input recording. Now an
 * --out that is, contains or lies inside an input is refused with exit 2 before any work, and
 * the bag survives. Everything inside a fresh mkdtemp folder.
 */
import { existsSync, readdirSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { checkOutputDir } from '../../src/util/outdir.js';
import { InputError } from '../../src/util/errors.js';
import { smallDemoBag } from './bag.js';
import { antiphon, DEMO_PARAMS, tempDir } from './child.js';

const codeOf = (fn: () => unknown): string => {
  try {
    fn();
  } catch (e) {
    if (e instanceof InputError) return e.problems[0]!.code;
    throw e;
  }
  return 'accepted';
};

describe('review: replay --out onto its own input', () => {
  const dir = tempDir('out-input');
  let bag: string;
  let before: string[];
  beforeAll(async () => {
    bag = await smallDemoBag(join(dir, 'demo'));
    before = readdirSync(bag).sort();
  }, 60_000);

  it('replay <bag> --out <bag> --overwrite: exit 2, the bag is untouched', () => {
    const r = antiphon(['replay', bag, '--params', DEMO_PARAMS, '--out', bag, '--overwrite']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/is the input/);
    expect(readdirSync(bag).sort()).toEqual(before);
    expect(statSync(join(bag, before.find((f) => f.endsWith('.mcap'))!)).size).toBeGreaterThan(0);
  });

  it('an --out around the input, inside it, or onto --params is refused as well', () => {
    expect(codeOf(() => checkOutputDir(dirname(bag), { overwrite: true, inputs: [bag] }))).toBe('out.contains_input');
    expect(codeOf(() => checkOutputDir(join(bag, 'sub'), { overwrite: true, inputs: [bag] }))).toBe('out.inside_input');
    expect(codeOf(() => checkOutputDir(DEMO_PARAMS, { overwrite: true, inputs: [bag, DEMO_PARAMS] }))).toMatch(/^out\.(is_input|not_a_folder)$/);
    const r = antiphon(['replay', bag, '--out', dir, '--overwrite']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/contains the input/);
    expect(existsSync(bag)).toBe(true);
  });
});
