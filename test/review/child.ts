/**
 * Regression tests of issue 9 run the built CLI as a real child process
 * (`node dist/src/cli/main.js …`, built by `npm test`), each under a time bound, so a hang or an
 * unbounded read fails the test instead of the machine. Temp folders come from mkdtemp only.
 */
import { spawnSync, type SpawnSyncReturns } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll } from 'vitest';

export const ROOT = resolve(__dirname, '../..');
export const CLI = join(ROOT, 'dist/src/cli/main.js');
export const DEMO_PARAMS = join(ROOT, 'config/demo_cell.yaml');

export interface Child {
  status: number | null;
  signal: NodeJS.Signals | null;
  stdout: string;
  stderr: string;
}

/** Run `antiphon args…` with a time bound (ms) and a 1 GB heap cap; `cwd` defaults to the repository. */
export function antiphon(args: readonly string[], opts: { cwd?: string; timeoutMs?: number; input?: string } = {}): Child {
  const r: SpawnSyncReturns<string> = spawnSync(process.execPath, ['--max-old-space-size=1024', CLI, ...args], {
    encoding: 'utf8',
    cwd: opts.cwd ?? ROOT,
    timeout: opts.timeoutMs ?? 30_000,
    env: { ...process.env, CI: '1', ANTIPHON_LOG_LEVEL: 'warn' },
    ...(opts.input !== undefined ? { input: opts.input } : {}),
  });
  return { status: r.status, signal: r.signal, stdout: r.stdout ?? '', stderr: r.stderr ?? '' };
}

/** Run a bash command line (for redirections and pipes) with a time bound. */
export function sh(line: string, opts: { cwd?: string; timeoutMs?: number } = {}): Child {
  const r = spawnSync('/bin/bash', ['-c', line], { encoding: 'utf8', cwd: opts.cwd ?? ROOT, timeout: opts.timeoutMs ?? 60_000, env: { ...process.env, CI: '1', ANTIPHON_LOG_LEVEL: 'warn' } });
  return { status: r.status, signal: r.signal, stdout: r.stdout ?? '', stderr: r.stderr ?? '' };
}

/** A fresh temp folder removed after the file's tests. */
export function tempDir(name: string): string {
  const dir = mkdtempSync(join(tmpdir(), `antiphon-review-${name}-`));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  return dir;
}

/** The quoted form of a path for a bash command line. */
export function q(s: string): string {
  return `'${s.replace(/'/g, `'\\''`)}'`;
}
