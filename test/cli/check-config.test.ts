/**
 * `antiphon check-config`: resolves a parameters file for both arms (exit 0), or lists every
 * problem with file:line:column on stderr (exit 2). In-process through the command's own
 * `register`, plus an end-to-end run of the built binary for the exit codes.
 */
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { register } from '../../src/cli/check-config.js';
import { SCHEMA } from '../../src/params/schema.js';
import { DEMO, DEMO_TEXT, edit, lineCol, ROOT, tempFiles } from '../support/files.js';
import { runRegistered } from '../support/run-command.js';

const { dir, write } = tempFiles('check-config');
const run = (args: string[]) => runRegistered(register, 'check-config', args);

const MISSPELT = edit('      cutoff_hz: 5.0', '      cuttoff_hz: 5.0');
const MISSPELT_AT = lineCol(MISSPELT, 'cuttoff_hz');

describe('check-config (in-process)', () => {
  it('the demo file: exit 0, both arms, each value with its source', async () => {
    // config/demo_cell.yaml; src/cli/check-config.ts text format `key = value unit    (source)`
    const r = await run([DEMO]);
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    expect(r.stdout.split('\n')[0]).toBe(`parameters: ${DEMO} - ok`);
    expect(r.stdout).toContain('\n[left]\n');
    expect(r.stdout).toContain('\n[right]\n');
    const left = lineCol(DEMO_TEXT, '0', 'left:\n');
    const right = lineCol(DEMO_TEXT, '1', 'right:\n');
    expect(r.stdout).toContain(`  roles.phase = 0    (${DEMO}:${left.line}:${left.column} [left])`);
    expect(r.stdout).toContain(`  roles.phase = 1    (${DEMO}:${right.line}:${right.column} [right])`);
    expect(r.stdout).toContain('  belief.max_hidden_zones = 8    (default)');
    const lim = lineCol(DEMO_TEXT, '0.25', 'linear_speed_limit_m_s:');
    expect(r.stdout).toContain(`  watchdog.linear_speed_limit_m_s = 0.25 m/s    (${DEMO}:${lim.line}:${lim.column} [/**])`);
  });

  it('--json parses and carries every key for both arms with value, unit and source', async () => {
    // src/cli/check-config.ts JSON shape: { ok, file, arms: { left: { key: { value, unit, source } }, right } }
    const r = await run([DEMO, '--json']);
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.ok).toBe(true);
    expect(j.file).toBe(DEMO);
    expect(Object.keys(j.arms)).toEqual(['left', 'right']);
    for (const arm of ['left', 'right']) {
      const keys = Object.keys(j.arms[arm]);
      for (const s of SCHEMA) {
        if (s.key.includes('*')) {
          for (const zone of ['clamp_post', 'tray_drop']) expect(keys).toContain(s.key.replace('*', zone));
        } else expect(keys).toContain(s.key);
      }
    }
    expect(j.arms.left['roles.phase']).toEqual({ value: 0, unit: '1', source: { file: DEMO, section: 'left', ...lineCol(DEMO_TEXT, '0', 'left:\n') } });
    expect(j.arms.right['roles.phase'].value).toBe(1);
    expect(j.arms.left['belief.commit_probability']).toEqual({ value: 0.8, unit: '1', source: 'default' });
    expect(j.arms.left['task.goal_m']).toMatchObject({ value: [1.6, 0], unit: 'm', source: { section: '/**' } });
  });

  it('--arm right: only that arm; --arm with another name: exit 2 naming the option', async () => {
    // src/cli/check-config.ts
    const r = await run([DEMO, '--json', '--arm', 'right']);
    expect(r.code).toBe(0);
    expect(Object.keys(JSON.parse(r.stdout).arms)).toEqual(['right']);
    const bad = await run([DEMO, '--arm', 'middle']);
    expect(bad.code).toBe(2);
    expect(bad.stdout).toBe('');
    expect(bad.stderr).toMatch(/option --arm: --arm must be left or right, got 'middle'/);
  });

  it('without a file: the built-in defaults, exit 0', async () => {
    // src/params/schema.ts: roles.phase defaults to 0 on the left and 1 on the right
    const r = await run(['--json']);
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.file).toBeNull();
    expect(j.arms.left['roles.phase']).toEqual({ value: 0, unit: '1', source: 'default' });
    expect(j.arms.right['roles.phase']).toEqual({ value: 1, unit: '1', source: 'default' });
  });

  it('a misspelt key: exit 2, stderr names the key, line and column and suggests the right one', async () => {
    // common practice: unknown keys with the closest allowed spelling; file:line:column places
    const f = write(MISSPELT);
    const r = await run([f]);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    const lines = r.stderr.trim().split('\n');
    expect(lines).toHaveLength(1);
    expect(lines[0]).toContain(`${f}:${MISSPELT_AT.line}:${MISSPELT_AT.column}`);
    expect(lines[0]).toContain('key wrench_filter.cuttoff_hz');
    expect(lines[0]).toContain('did you mean wrench_filter.cutoff_hz?');
    expect(lines[0]).toMatch(/^antiphon: /);
  });

  it('a misspelt key with --json: exit 2, the problems as JSON on stdout', async () => {
    // src/cli/common.ts: { ok: false, errors: [{ code, message, where, hint }] }
    const f = write(MISSPELT);
    const r = await run([f, '--json']);
    expect(r.code).toBe(2);
    const j = JSON.parse(r.stdout);
    expect(j.ok).toBe(false);
    expect(j.errors).toEqual([
      expect.objectContaining({ code: 'param.unknown_key', where: { file: f, key: 'wrench_filter.cuttoff_hz', ...MISSPELT_AT } }),
    ]);
  });

  it('several problems: one stderr line each', async () => {
    // src/params/load.ts: every problem reported at once
    const text = MISSPELT.replace('order: 4', 'order: 4.0').replace('linear_speed_limit_m_s: 0.25', 'linear_speed_limit_m_s: 2.0').replace('kind: cable_tray', 'kind: cable-tray');
    const f = write(text);
    const r = await run([f]);
    expect(r.code).toBe(2);
    const lines = r.stderr.trim().split('\n');
    expect(lines).toHaveLength(4);
    expect(lines[0]).toContain(`${f}:${MISSPELT_AT.line}:${MISSPELT_AT.column}, key wrench_filter.cuttoff_hz`);
    expect(lines[1]).toContain(`${f}:${lineCol(text, '4.0').line}:${lineCol(text, '4.0').column}, key wrench_filter.order`);
    expect(lines[2]).toContain('key watchdog.linear_speed_limit_m_s: watchdog.linear_speed_limit_m_s = 2 is above its hard safety ceiling');
    expect(lines[3]).toContain("key task.zones.tray_drop.kind: task.zones.tray_drop.kind = 'cable-tray' is not allowed (string, one of clamp_post, cable_tray, other)");
  });

  it('cross-key problems exit 2 too', async () => {
    // src/params/config.ts: policy.speed_m_s above watchdog.linear_speed_limit_m_s; same phase on both arms
    const text = edit('speed_m_s: 0.15', 'speed_m_s: 0.3').replace('      phase: 1                 # the right arm speaks in odd slots', '      phase: 0');
    const r = await run([write(text), '--json']);
    expect(r.code).toBe(2);
    expect(JSON.parse(r.stdout).errors.map((e: { code: string }) => e.code).sort()).toEqual(['param.same_phase', 'param.speed_above_limit']);
  });

  it('a file that does not exist: exit 2', async () => {
    // common practice
    const r = await run([join(dir, 'nope.yaml')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/cannot read parameters file/);
  });

  it('--list lists every key with unit, default and what is allowed', async () => {
    // src/params/schema.ts is the one list of parameters
    const r = await run(['--list']);
    expect(r.code).toBe(0);
    const keyLines = r.stdout.split('\n').filter((l) => !l.startsWith(' '));
    expect(keyLines.filter((l) => l !== '').map((l) => l.split('  ')[0])).toEqual(SCHEMA.map((s) => s.key));
    expect(r.stdout).toContain('watchdog.linear_speed_limit_m_s  [m/s]  default 0.25');
    expect(r.stdout).toContain('allowed: floating-point number, from 0.001 to 1 m/s, hard ceiling 1 m/s');
    expect(r.stdout).toContain('task.zones.*.shape  [-]  default "required"');
    const j = await run(['--list', '--json']);
    expect(JSON.parse(j.stdout).map((s: { key: string }) => s.key)).toEqual(SCHEMA.map((s) => s.key));
  });
});

describe('check-config (the built binary)', () => {
  // Built with the project's build config into a private directory, so that parallel test files
  // never read half-written output. Emit only: type checking is the build's own job (npm run build).
  const out = join(dir, 'build');
  let main = '';
  beforeAll(() => {
    const tscBin = join(ROOT, 'node_modules/typescript/bin/tsc');
    const tsc = spawnSync(process.execPath, [tscBin, '-p', 'tsconfig.build.json', '--outDir', out, '--noCheck', '--sourceMap', 'false'], { cwd: ROOT, encoding: 'utf8' });
    main = join(out, 'src/cli/main.js');
    if (!existsSync(main)) throw new Error(`build failed:\n${tsc.stdout}\n${tsc.stderr}`);
    writeFileSync(join(out, 'package.json'), JSON.stringify({ type: 'module' }));
    symlinkSync(join(ROOT, 'node_modules'), join(out, 'node_modules'), 'dir');
  }, 180_000); // a whole tsc build: far more than the default hook time on a busy machine
  /** Run the binary; the runs of one test go in parallel (each start-up loads every command). */
  const antiphon = (args: string[]) =>
    new Promise<{ status: number | null; stdout: string; stderr: string }>((resolve) => {
      const child = spawn(process.execPath, [main, ...args], { cwd: ROOT });
      let stdout = '';
      let stderr = '';
      child.stdout.on('data', (d) => (stdout += String(d)));
      child.stderr.on('data', (d) => (stderr += String(d)));
      child.on('close', (status) => resolve({ status, stdout, stderr }));
    });

  it('exit codes: 0 for the demo file, 2 for a misspelt key (with its place), 2 for an unknown option', async () => {
    // src/util/errors.ts: 0 ok, 2 bad input; src/cli/main.ts: usage errors exit 2
    const f = write(MISSPELT);
    const [ok, bad, opt] = await Promise.all([
      antiphon(['check-config', 'config/demo_cell.yaml', '--json']),
      antiphon(['check-config', f]),
      antiphon(['check-config', '--no-such-option']),
    ]);
    expect(ok.status).toBe(0);
    const j = JSON.parse(ok.stdout);
    expect(j).toMatchObject({ ok: true, file: 'config/demo_cell.yaml' });
    expect(j.arms.right['roles.phase'].value).toBe(1);
    expect(bad.status).toBe(2);
    expect(bad.stdout).toBe('');
    expect(bad.stderr).toContain(`${f}:${MISSPELT_AT.line}:${MISSPELT_AT.column}, key wrench_filter.cuttoff_hz`);
    expect(opt.status).toBe(2);
    expect(opt.stderr).toMatch(/unknown option '--no-such-option'/);
  });
});
