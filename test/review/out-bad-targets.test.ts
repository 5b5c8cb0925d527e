/**
 * Review (issue 9): an --out that is an existing regular file, lies under one, is /dev/full,
 * /sys/x or a 300-character name gave uncaught exceptions (exit 70), and `simulate --out /proc/x`
 * spun at 100 % CPU; `simulate` also ran the whole episode before it checked --out. Now each is
 * refused with exit 2 and the reason, before any work. (Linux: /proc, /sys are kernel file
 * systems and /dev/full a device that fails every write with ENOSPC, common practice; NAME_MAX
 * is 255 bytes, POSIX.)
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { checkOutputDir } from '../../src/util/outdir.js';
import { problemsOf } from '../support/files.js';
import { antiphon, tempDir } from './child.js';

describe('review: --out targets that are not a new folder of our own', () => {
  const dir = tempDir('out-targets');
  const file = join(dir, 'a-file.txt');
  writeFileSync(file, 'x\n');
  const cases: [string, string, RegExp][] = [
    ['a regular file', file, /exists and is a regular file, not a folder/],
    ['under a regular file', join(file, 'sub'), /lies under .*a-file\.txt, which is a regular file/],
    ['/dev/full', '/dev/full', /exists and is a character device/],
    ['/sys/x', '/sys/x', /in the system folder \/sys/],
    ['/proc/x', '/proc/x', /in the system folder \/proc/],
    ['a 300-character name', join(dir, 'n'.repeat(300)), /has a name of 300 bytes/],
    ['a 230-character name (no room for the temporary name)', join(dir, 'n'.repeat(230)), /last name is 230 bytes long/],
  ];
  for (const [what, out, message] of cases) {
    it(`simulate --out ${what}: exit 2 before the episode runs`, () => {
      // --duration 600: if the check came after the episode, the 30 s bound would fail the test.
      const r = antiphon(['simulate', '--out', out, '--overwrite', '--duration', '600']);
      expect(r.signal).toBeNull();
      expect(r.status).toBe(2);
      expect(r.stderr).toMatch(message);
      expect(r.stderr).not.toMatch(/internal error/);
    });
  }

  it('the same refusals from the library check, with their codes', () => {
    expect(problemsOf(() => checkOutputDir(file))[0]!.code).toBe('out.not_a_folder');
    expect(problemsOf(() => checkOutputDir(join(file, 'sub')))[0]!.code).toBe('out.under_a_file');
    expect(problemsOf(() => checkOutputDir('/dev/full'))[0]!.code).toBe('out.not_a_folder');
    expect(problemsOf(() => checkOutputDir('/dev/shm/x'))[0]!.code).toBe('out.system_folder');
    expect(problemsOf(() => checkOutputDir('/'))[0]!.code).toBe('out.system_folder');
    expect(problemsOf(() => checkOutputDir('/usr'))[0]!.code).toBe('out.system_folder');
  });
});
