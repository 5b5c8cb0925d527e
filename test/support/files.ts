/**
 * Shared by the tests that read and write parameter and model files: where the repository and
 * the demo cell file are, a temp directory per test file, the problems of an InputError, an
 * exact one-place edit of the demo file, and the 1-based line and column of a piece of text.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, expect } from 'vitest';
import { InputError, type Problem } from '../../src/util/errors.js';

/** The repository root. */
export const ROOT = fileURLToPath(new URL('../..', import.meta.url));
/** config/demo_cell.yaml, and its text. */
export const DEMO = join(ROOT, 'config/demo_cell.yaml');
export const DEMO_TEXT = readFileSync(DEMO, 'utf8');

export interface TempFiles {
  /** The directory; removed after the test file's tests. */
  readonly dir: string;
  /** Writes `text` to a new file in `dir` (ending `.ext`, the default one unless given); returns its path. */
  write(text: string, ext?: string): string;
}

/**
 * A fresh temp directory `antiphon-<name>-XXXXXX` for the calling test file, removed after its
 * tests (call it at the top level of the file).
 */
export function tempFiles(name: string, defaultExt = 'yaml'): TempFiles {
  const dir = mkdtempSync(join(tmpdir(), `antiphon-${name}-`));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  let fileNo = 0;
  return {
    dir,
    write(text: string, ext = defaultExt): string {
      const f = join(dir, `f${fileNo++}.${ext}`);
      writeFileSync(f, text);
      return f;
    },
  };
}

/** The problems of the InputError that `fn` throws; any other outcome fails the test. */
export function problemsOf(fn: () => unknown): Problem[] {
  try {
    fn();
  } catch (e) {
    if (e instanceof InputError) return [...e.problems];
    throw e;
  }
  throw new Error('expected an InputError');
}

/** Replace one exact piece of the demo file (or of `text`), failing loudly if it is not there exactly once. */
export function edit(from: string, to: string, text = DEMO_TEXT): string {
  expect(text.split(from).length - 1, from).toBe(1);
  return text.replace(from, to);
}

/** 1-based line and column of `needle` in `text`, searching from the first `after` (if given). */
export function lineCol(text: string, needle: string, after = ''): { line: number; column: number } {
  const start = after ? text.indexOf(after) : 0;
  expect(start, after).toBeGreaterThanOrEqual(0);
  const at = text.indexOf(needle, start);
  expect(at, needle).toBeGreaterThanOrEqual(0);
  const before = text.slice(0, at).split('\n');
  return { line: before.length, column: before[before.length - 1]!.length + 1 };
}
