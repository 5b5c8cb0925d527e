/**
 * Review (issue 9): `simulate --out '' --overwrite`, run in a folder, deleted everything in that
 * folder. Now an empty --out, the current folder and its ancestors are refused (exit 2) before
 * the episode runs. Run only inside a fresh mkdtemp folder, as cwd.
 */
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { antiphon, tempDir } from './child.js';

describe("review: simulate --out '' --overwrite must never delete the current folder", () => {
  const dir = tempDir('empty-out');
  const cwd = join(dir, 'work');
  mkdirSync(cwd);
  const keep = join(cwd, 'precious.txt');
  writeFileSync(keep, 'keep me\n');

  it("--out '' is refused with exit 2 and the folder keeps its files", () => {
    const r = antiphon(['simulate', '--out', '', '--overwrite', '--duration', '0.05'], { cwd });
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--out is empty/);
    expect(r.stderr).not.toMatch(/internal error/);
    expect(readFileSync(keep, 'utf8')).toBe('keep me\n');
  });

  it("--out . and --out .. (the current folder and its parent) are refused too", () => {
    for (const out of ['.', '..', cwd]) {
      const r = antiphon(['simulate', '--out', out, '--overwrite', '--duration', '0.05'], { cwd });
      expect(r.status, out).toBe(2);
      expect(r.stderr).toMatch(/is the current folder/);
      expect(existsSync(keep)).toBe(true);
    }
  });
});
