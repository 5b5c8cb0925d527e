/**
 * src/cli/common.ts: how runCommand maps outcomes to exit codes. A file-system error while
 * writing an output (ENOSPC, EACCES: a Node SystemError with code and syscall) is a message
 * naming the file and exit 74 (EX_IOERR, sysexits.h), never an internal error with a stack; an
 * InputError exits 2; anything else is a bug (70, EX_SOFTWARE). The stdout side (ENOSPC, EPIPE)
 * is tested with real child processes in test/review/stdout-write-errors.test.ts.
 */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { runCommand } from '../../src/cli/common.js';
import { InputError } from '../../src/util/errors.js';

function sysError(code: string, syscall: string, path: string): NodeJS.ErrnoException {
  return Object.assign(new Error(`${code}: ${syscall} '${path}'`), { code, syscall, path, errno: -1 });
}

async function outcome(body: () => number): Promise<{ code: number; stderr: string }> {
  let stderr = '';
  const e = vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => ((stderr += String(s)), true));
  const before = process.exitCode;
  try {
    await runCommand(false, body);
    return { code: Number(process.exitCode ?? 0), stderr };
  } finally {
    e.mockRestore();
    process.exitCode = before;
  }
}

afterEach(() => vi.restoreAllMocks());

describe('runCommand exit codes', () => {
  it('ENOSPC and EACCES on an output file: the file and the reason, exit 74', async () => {
    const full = await outcome(() => {
      throw sysError('ENOSPC', 'write', '/data/out/.run.partial-1/summary.json');
    });
    expect(full.code).toBe(74);
    expect(full.stderr).toBe('antiphon: cannot write /data/out/.run.partial-1/summary.json: no space left on the device (ENOSPC)\n');
    const denied = await outcome(() => {
      throw sysError('EACCES', 'mkdir', '/data/locked');
    });
    expect(denied.code).toBe(74);
    expect(denied.stderr).toMatch(/cannot mkdir \/data\/locked: permission denied \(EACCES\)/);
  });

  it('bad input exits 2; a bug exits 70 with its stack', async () => {
    expect((await outcome(() => { throw new InputError({ code: 'x.y', message: 'bad' }); })).code).toBe(2);
    const bug = await outcome(() => { throw new TypeError('oops'); });
    expect(bug.code).toBe(70);
    expect(bug.stderr).toMatch(/internal error: TypeError: oops/);
  });
});

describe('runCommand: a missing path is bad input', () => {
  it('ENOENT from the file system: the path, exit 2', async () => {
    const r = await outcome(() => {
      throw sysError('ENOENT', 'open', '/data/gone/metadata.yaml');
    });
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('antiphon: cannot open /data/gone/metadata.yaml: no such file or folder (ENOENT)\n');
  });
});
