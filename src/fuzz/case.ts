/**
 * One fuzz case: files written into a fresh folder, an optional SQL statement applied to a
 * sqlite3 file there, then one antiphon command run in-process (the same commander program as
 * the CLI). A crash is an exception that is not the project's InputError: the command's exit
 * code 70 ("internal error"), or anything thrown past it. Usage errors (commander) are not
 * crashes. Used by the fuzzer's worker threads and by the corpus regression test.
 */
import Database from 'better-sqlite3';
import { CommanderError, Command } from 'commander';
import { mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { COMMANDS } from '../cli/commands.js';

export interface CaseFile {
  readonly name: string;
  readonly bytes: Uint8Array;
}

export interface FuzzCase {
  readonly id: number;
  readonly target: string;
  /** Which seed input the files come from, and what was done to it. */
  readonly seed: string;
  readonly mutation: string;
  readonly files: readonly CaseFile[];
  /** Applied with better-sqlite3 to `sqlFile` (a name in `files`) after writing. */
  readonly sql?: string;
  readonly sqlFile?: string;
  /** The command line; `{case}` is the case folder, `{file}` the mutated file, `{root}` the package root, `{demo}` a demo bag. */
  readonly args: readonly string[];
}

export type Outcome = 'ok' | 'crash' | 'usage' | 'skipped';

export interface CaseResult {
  readonly outcome: Outcome;
  readonly code: number;
  /** The first lines of stderr (crash: the stack). */
  readonly detail: string;
  readonly ms: number;
}

const KEEP = 4096;

/** Drop a table's NOT NULL constraints so a bad value can be planted (CREATE TABLE … AS keeps no constraints). */
function loosen(db: Database.Database, table: string): void {
  db.exec(`CREATE TABLE fuzz_loose AS SELECT * FROM "${table}"; DROP TABLE "${table}"; ALTER TABLE fuzz_loose RENAME TO "${table}";`);
}

function applySql(path: string, sql: string): boolean {
  let db: Database.Database;
  try {
    db = new Database(path);
  } catch {
    return false;
  }
  try {
    try {
      db.exec(sql);
    } catch (err) {
      const m = /(?:NOT NULL constraint failed|datatype mismatch|UNIQUE constraint failed): (\w+)/.exec((err as Error).message);
      const table = /UPDATE (\w+)|INSERT INTO (\w+)/.exec(sql);
      const t = m?.[1] ?? table?.[1] ?? table?.[2];
      if (!t) return false;
      loosen(db, t);
      db.exec(sql);
    }
    return true;
  } catch (err) {
    if (process.env['ANTIPHON_FUZZ_DEBUG']) process.stderr.write(`sql not applied: ${(err as Error).message}\n`);
    return false;
  } finally {
    db.close();
  }
}

export function expandArgs(c: FuzzCase, dir: string, vars: Readonly<Record<string, string>>): string[] {
  const file = join(dir, c.files[0]?.name ?? 'input');
  return c.args.map((a) => a.replaceAll('{case}', dir).replaceAll('{file}', file).replace(/\{(\w+)\}/g, (m, k: string) => vars[k] ?? m));
}

/** Run one case in `workDir/<id>` (removed afterwards). `vars` fills `{root}`, `{demo}`. */
export async function runCase(c: FuzzCase, workDir: string, vars: Readonly<Record<string, string>>): Promise<CaseResult> {
  const dir = join(workDir, `case-${c.id}`);
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const t0 = performance.now();
  try {
    for (const f of c.files) writeFileSync(join(dir, f.name), f.bytes);
    if (c.sql !== undefined && c.sqlFile !== undefined && !applySql(join(dir, c.sqlFile), c.sql)) {
      return { outcome: 'skipped', code: 0, detail: 'the SQL mutation does not apply', ms: performance.now() - t0 };
    }
    return await runCommandLine(expandArgs(c, dir, vars), t0);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** Run `antiphon <args>` in-process, capturing stdout and stderr (bounded). */
export async function runCommandLine(args: readonly string[], t0 = performance.now()): Promise<CaseResult> {
  let err = '';
  const out = process.stdout.write;
  const errw = process.stderr.write;
  const before = process.exitCode;
  process.exitCode = undefined;
  process.stdout.write = ((_s: unknown, ...rest: unknown[]) => {
    const cb = rest.find((x) => typeof x === 'function') as (() => void) | undefined;
    cb?.();
    return true;
  }) as typeof process.stdout.write;
  process.stderr.write = ((s: unknown, ...rest: unknown[]) => {
    if (err.length < KEEP) err += String(s);
    const cb = rest.find((x) => typeof x === 'function') as (() => void) | undefined;
    cb?.();
    return true;
  }) as typeof process.stderr.write;
  try {
    const program = new Command('antiphon').exitOverride().configureOutput({ writeOut: () => {}, writeErr: () => {} });
    for (const r of COMMANDS) r(program);
    await program.parseAsync(['node', 'antiphon', ...args]);
    const code = Number(process.exitCode ?? 0);
    const crash = code === 70 || err.includes('internal error');
    return { outcome: crash ? 'crash' : 'ok', code, detail: crash ? err.slice(0, KEEP) : '', ms: performance.now() - t0 };
  } catch (e) {
    if (e instanceof CommanderError) return { outcome: 'usage', code: e.exitCode, detail: e.message, ms: performance.now() - t0 };
    return { outcome: 'crash', code: 70, detail: `thrown: ${(e as Error)?.stack ?? String(e)}`.slice(0, KEEP), ms: performance.now() - t0 };
  } finally {
    process.stdout.write = out;
    process.stderr.write = errw;
    process.exitCode = before;
  }
}
