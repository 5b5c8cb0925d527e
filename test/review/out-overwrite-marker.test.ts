/**
 * Review (issue 9): --overwrite deleted whatever folder --out named. Now it replaces only a
 * folder antiphon wrote (holding the `.antiphon-output` marker), and refuses any other with the
 * reason; outputs are written under `.NAME.partial-PID` and renamed; a partial folder left by a
 * process that no longer runs is removed by the next run into the same parent (one without the
 * marker is reported and kept). All inside a fresh mkdtemp folder.
 */
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { cleanStalePartials, OUTPUT_MARKER, withOutputDir } from '../../src/util/outdir.js';
import { InputError } from '../../src/util/errors.js';
import { tempDir } from './child.js';

/** A PID that is not running: beyond Linux's pid_max (at most 2^22, common practice). */
const DEAD_PID = 4_194_304 + 17;

describe('review: --overwrite replaces only folders antiphon wrote', () => {
  const dir = tempDir('overwrite');

  it('a folder of someone else is refused with the reason, and survives', async () => {
    const theirs = join(dir, 'theirs');
    mkdirSync(theirs);
    writeFileSync(join(theirs, 'notes.txt'), 'mine\n');
    const err = await withOutputDir(theirs, true, async () => 1).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).problems[0]).toMatchObject({ code: 'out.not_ours' });
    expect((err as InputError).message).toMatch(/was not written by antiphon/);
    expect(readFileSync(join(theirs, 'notes.txt'), 'utf8')).toBe('mine\n');
    expect(readdirSync(dir).filter((n) => n.includes('.partial-'))).toEqual([]);
  });

  it('a folder antiphon wrote is replaced whole; without --overwrite it is refused', async () => {
    const ours = join(dir, 'ours');
    await withOutputDir(ours, false, async (tmp) => writeFileSync(join(tmp, 'summary.json'), '{"run":1}\n'));
    expect(readdirSync(ours).sort()).toEqual([OUTPUT_MARKER, 'summary.json']);
    const again = await withOutputDir(ours, false, async () => 0).catch((e: unknown) => e);
    expect((again as InputError).problems[0]!.code).toBe('out.exists');
    await withOutputDir(ours, true, async (tmp) => writeFileSync(join(tmp, 'report.html'), '<p>2</p>\n'));
    expect(readdirSync(ours).sort()).toEqual([OUTPUT_MARKER, 'report.html']);
  });

  it('a failing body leaves neither the output nor a partial folder', async () => {
    const out = join(dir, 'failed');
    await expect(withOutputDir(out, false, async (tmp) => {
      writeFileSync(join(tmp, 'half.json'), '{');
      throw new Error('boom');
    })).rejects.toThrow('boom');
    expect(existsSync(out)).toBe(false);
    expect(readdirSync(dir).filter((n) => n.startsWith('.failed.'))).toEqual([]);
  });

  it('stale partial folders of dead processes are removed on the next run; unmarked ones are kept and reported', async () => {
    const parent = join(dir, 'parent');
    mkdirSync(parent);
    const stale = join(parent, `.run.partial-${DEAD_PID}`);
    mkdirSync(stale);
    writeFileSync(join(stale, OUTPUT_MARKER), '{}\n');
    const stranger = join(parent, `.other.partial-${DEAD_PID}`);
    mkdirSync(stranger);
    const alive = join(parent, `.live.partial-${process.ppid}`);
    mkdirSync(alive);
    writeFileSync(join(alive, OUTPUT_MARKER), '{}\n');
    expect(cleanStalePartials(parent)).toEqual({ removed: [stale], reported: [stranger] });
    await withOutputDir(join(parent, 'next'), false, async () => 0);
    expect(existsSync(stale)).toBe(false);
    expect(existsSync(stranger)).toBe(true);
    expect(existsSync(alive)).toBe(true);
  });
});
