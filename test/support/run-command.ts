/**
 * Runs one CLI command in-process through its own `register`, as `antiphon <name> <args…>`,
 * and returns what it wrote to stdout and stderr and its exit code (process.exitCode, 0 when
 * unset). The capture spies are removed and process.exitCode is put back before it returns,
 * also when the command throws (a commander usage error, for instance, with exitOverride).
 */
import { Command } from 'commander';
import { vi } from 'vitest';

export interface Run {
  code: number;
  stdout: string;
  stderr: string;
}

/** A command module's `register` (src/cli/*.ts). */
export type Register = (program: Command) => unknown;

export async function runRegistered(register: Register, name: string, args: readonly string[]): Promise<Run> {
  let stdout = '';
  let stderr = '';
  const o = vi.spyOn(process.stdout, 'write').mockImplementation((s: string | Uint8Array) => ((stdout += String(s)), true));
  const e = vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => ((stderr += String(s)), true));
  const before = process.exitCode;
  process.exitCode = undefined;
  try {
    const program = new Command('antiphon').exitOverride();
    register(program);
    await program.parseAsync(['node', 'antiphon', name, ...args]);
    return { code: Number(process.exitCode ?? 0), stdout, stderr };
  } finally {
    o.mockRestore();
    e.mockRestore();
    process.exitCode = before;
  }
}
