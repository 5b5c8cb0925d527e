/**
 * Without --params, `simulate` and `compare` run the demo cell shipped in the package and say
 * so in one line on stderr; `replay` says which parameters it used; `node` refuses (exit 2).
 * Our own behaviour (the demo cell is invented data: config/demo_cell.yaml).
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { register as registerCompare } from '../../src/cli/compare.js';
import { register as registerNode } from '../../src/cli/node.js';
import { register as registerReplay } from '../../src/cli/replay.js';
import { register as registerSimulate } from '../../src/cli/simulate.js';
import { demoCellPath } from '../../src/sim/demo-cell.js';
import { runRegistered } from '../support/run-command.js';

const dir = mkdtempSync(join(tmpdir(), 'antiphon-demo-default-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('the demo cell as the built-in default', () => {
  it('demoCellPath finds config/demo_cell.yaml of the package', () => {
    expect(demoCellPath().endsWith(join('config', 'demo_cell.yaml'))).toBe(true);
  });

  it('simulate without --params: the demo cell (two zones), one line on stderr', async () => {
    const r = await runRegistered(registerSimulate, 'simulate', ['--seed', '3', '--duration', '1', '--out', join(dir, 'sim'), '--json']);
    expect(r.code, r.stderr).toBe(0);
    const lines = r.stderr.split('\n').filter((l) => l.includes('--params'));
    expect(lines).toHaveLength(1);
    expect(lines[0]).toContain("using the demo cell's parameters shipped in the package");
    const s = JSON.parse(r.stdout);
    expect(Object.keys(s.world.occupied).sort()).toEqual(['clamp_post', 'tray_drop']);
  }, 120_000);

  it('compare without --params: the demo cell, one line on stderr, no "no zones" note', async () => {
    const r = await runRegistered(registerCompare, 'compare', ['--worlds', '1', '--strategies', 'centralized', '--duration', '1']);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain("compare: no --params given, using the demo cell's parameters");
    expect(r.stdout).not.toContain('no keep-out zones');
  }, 120_000);

  it('replay without --params says it used the built-in defaults', async () => {
    const r = await runRegistered(registerReplay, 'replay', [join(dir, 'sim', 'bag'), '--json']);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('replay: no --params given, using the built-in default of every parameter');
  }, 120_000);

  it('node without --params: exit 2', async () => {
    const r = await runRegistered(registerNode, 'node', ['--arm', 'left', '--dry-run']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('--params');
  });
});
