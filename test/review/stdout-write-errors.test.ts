/**
 * Review (issue 9): stdout on a full disk (`> /dev/full`) or a closed pipe (`| head -1`) gave an
 * uncaught 'error' event with a stack trace, and `bag dump > /dev/full` wrote nothing and exited
 * 0 (ENOSPC swallowed). Now every command writes through the one stdout writer in
 * src/cli/common.ts: ENOSPC is a message and exit 74 (EX_IOERR, sysexits.h); a closed pipe ends
 * the output quietly with exit 0, as Unix tools do (common practice). Real child processes;
 * Linux /dev/full fails every write with ENOSPC (common practice).
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { smallDemoBag } from './bag.js';
import { CLI, q, sh, tempDir } from './child.js';

const node = `${q(process.execPath)} ${q(CLI)}`;

describe('review: stdout write errors', () => {
  const dir = tempDir('stdout');
  const csv = join(dir, 'long.csv');
  let bag: string;
  beforeAll(async () => {
    // 40,000 samples at 1 kHz of a quiet wrist (invented): about 1 MB of per-sample output.
    const rows = ['t,fx,fy,fz,tx,ty,tz'];
    for (let k = 0; k < 40_000; k++) rows.push(`${(k / 1000).toFixed(3)},0.1,-0.2,-11.8,0,0,0`);
    writeFileSync(csv, rows.join('\n') + '\n');
    bag = await smallDemoBag(join(dir, 'demo'));
  }, 60_000);

  it('check-config --list > /dev/full: a message and exit 74, no stack trace', () => {
    const r = sh(`${node} check-config --list > /dev/full`);
    expect(r.status).toBe(74);
    expect(r.stderr).toMatch(/antiphon: cannot write to stdout: no space left on the device \(ENOSPC\)/);
    expect(r.stderr).not.toMatch(/node:events|Unhandled|internal error/);
  });

  it('analyze --json > /dev/full and classify > /dev/full: exit 74', () => {
    expect(sh(`${node} analyze --model examples/linear-team.yaml --json > /dev/full`).status).toBe(74);
    expect(sh(`${node} classify --csv ${q(csv)} > /dev/full`).status).toBe(74);
  });

  it('bag dump > /dev/full exits non-zero with the reason', () => {
    const r = sh(`${node} bag dump ${q(bag)} > /dev/full`);
    expect(r.status).toBe(74);
    expect(r.stderr).toMatch(/ENOSPC/);
  });

  it('| head -1: quiet exit 0 (classify, bag dump)', () => {
    for (const cmd of [`classify --csv ${q(csv)}`, `bag dump ${q(bag)}`]) {
      const r = sh(`set -o pipefail; ${node} ${cmd} | head -1`);
      expect(r.status, cmd).toBe(0);
      expect(r.stdout.split('\n').filter(Boolean)).toHaveLength(1);
      expect(r.stderr, cmd).toBe('');
    }
  });
});
