/**
 * Interruption without loss, on real child processes of the built CLI (`npm test` builds it):
 * SIGINT or SIGTERM finishes the unit of work, finalizes the output bag (its MCAP summary
 * written, so our reader opens it without a warning), writes summary.json marked
 * `"interrupted": true` with the count done, and exits 130 or 143 (128 + signal number, the
 * POSIX shell convention: common practice). A SIGKILLed replay leaves a cut MCAP whose finished
 * chunks our reader still reads (with its truncation warning). Signals are sent either by the
 * parent or, to hit a known point of the work, by the child itself through the test hook of
 * src/util/interrupt.ts (a real kill(2) on its own pid). Invented demo bags; no timing asserted.
 */
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openBag } from '../../src/bag/index.js';
import { loadCell } from '../../src/params/config.js';
import { writeDemoBag } from '../../src/sim/demo-bag.js';
import { DEMO, ROOT } from '../support/files.js';

const CLI = join(ROOT, 'dist/src/cli/main.js');
const dir = mkdtempSync(join(tmpdir(), 'antiphon-interrupt-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const BAG = join(dir, 'demo');

beforeAll(async () => {
  const cell = loadCell(DEMO);
  await writeDemoBag(BAG, { left: cell.left.config, right: cell.right.config, occupied: [true, false], seed: 3, duration_s: 12 });
}, 120_000);

function run(args: string[], env: Record<string, string> = {}) {
  const r = spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8', timeout: 180_000, env: { ...process.env, CI: '1', ANTIPHON_LOG_LEVEL: 'warn', ...env } });
  return { status: r.status, signal: r.signal, stdout: r.stdout ?? '', stderr: r.stderr ?? '' };
}

async function samplesOf(bagDir: string): Promise<{ messages: number; warnings: string[] }> {
  const bag = await openBag(bagDir);
  try {
    let messages = 0;
    for (const b of bag.batches({})) messages += b.count;
    return { messages, warnings: bag.warnings.map((w) => w.code) };
  } finally {
    bag.close();
  }
}

describe.skipIf(!existsSync(CLI))('interruption (real child processes)', () => {
  it('replay: SIGINT keeps the samples done, a finalized bag and summary.json, exit 130; SIGTERM exits 143', async () => {
    const full = run(['replay', BAG, '--params', DEMO, '--json']);
    expect(full.status, full.stderr).toBe(0);
    const total = (JSON.parse(full.stdout).arms as { samples: number }[]).reduce((a, x) => a + x.samples, 0);
    for (const [sig, code] of [['SIGINT', 130], ['SIGTERM', 143]] as const) {
      const out = join(dir, `replay-${sig}`);
      const r = run(['replay', BAG, '--params', DEMO, '--out', out, '--json'], { ANTIPHON_TEST_SIGNAL_AFTER_YIELDS: '2', ANTIPHON_TEST_SIGNAL: sig });
      expect(r.status, r.stderr).toBe(code);
      expect(r.stderr).toMatch(new RegExp(`${sig} received`));
      const s = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8'));
      expect(s.interrupted).toBe(true);
      expect(s.signal).toBe(sig);
      expect(s.samples_done).toBeGreaterThan(0);
      expect(s.samples_done).toBeLessThan(total);
      expect(s.samples_done).toBe((s.arms as { samples: number }[]).reduce((a, x) => a + x.samples, 0));
      // The bag is finalized: it opens from its summary, without a warning, and holds the outputs of every sample done.
      const b = await samplesOf(join(out, 'bag'));
      expect(b.warnings).toEqual([]);
      expect(b.messages).toBeGreaterThan(s.samples_done);
      expect(existsSync(join(out, 'report.html'))).toBe(true);
    }
  }, 300_000);

  it('replay killed with SIGKILL leaves a cut MCAP whose finished chunks our reader reads', async () => {
    const out = join(dir, 'replay-kill');
    const r = run(['replay', BAG, '--params', DEMO, '--out', out], { ANTIPHON_TEST_SIGNAL_AFTER_YIELDS: '4', ANTIPHON_TEST_SIGNAL: 'SIGKILL' });
    expect(r.signal).toBe('SIGKILL');
    expect(existsSync(out)).toBe(false);
    const partial = readdirSync(dir).find((n) => n.startsWith('.replay-kill.partial-'));
    expect(partial).toBeDefined();
    const files = readdirSync(join(dir, partial!, 'bag'));
    const cut = files.find((f) => f.endsWith('.mcap.partial'));
    expect(cut, files.join(', ')).toBeDefined();
    const b = await samplesOf(join(dir, partial!, 'bag', cut!));
    expect(b.messages).toBeGreaterThan(0);
    expect(b.warnings).toContain('bag.mcap_no_summary');
  }, 300_000);

  it('compare: SIGINT finishes the episode running and reports the whole worlds done, exit 130', () => {
    // Two strategies per world; the signal comes as the second world starts: that world is finished too.
    const r = run(['compare', '--worlds', '5', '--strategies', 'alternating:500,fixed', '--params', DEMO, '--duration', '4', '--json'], { ANTIPHON_TEST_SIGNAL_AFTER_YIELDS: '2' });
    expect(r.status, r.stderr).toBe(130);
    const j = JSON.parse(r.stdout);
    expect(j.interrupted).toBe(true);
    expect(j.worlds).toBe(5);
    expect(j.worlds_done).toBeGreaterThanOrEqual(1);
    expect(j.worlds_done).toBeLessThan(5);
    expect(j.strategies.map((s: { runs: number }) => s.runs)).toEqual([j.worlds_done, j.worlds_done]);
  }, 300_000);

  it('faults: SIGTERM keeps the episodes done, exit 143', () => {
    const r = run(['faults', '--episodes', '40', '--skew-episodes', '0', '--json'], { ANTIPHON_TEST_SIGNAL_AFTER_YIELDS: '2', ANTIPHON_TEST_SIGNAL: 'SIGTERM' });
    expect(r.status, r.stderr).toBe(143);
    const j = JSON.parse(r.stdout);
    expect(j.interrupted).toBe(true);
    expect(j.episodes_done).toBeGreaterThan(0);
    expect(j.episodes_done).toBeLessThan(40);
    expect(j.violations).toBe(0);
  }, 300_000);

  it('simulate: a SIGTERM from the parent during the episode still writes its bag and summary.json, exit 143', async () => {
    const out = join(dir, 'sim-term');
    const child = spawn(process.execPath, [CLI, 'simulate', '--params', DEMO, '--seed', '7', '--duration', '40', '--inject-hold', 'left:1.0', '--out', out, '--json'], { env: { ...process.env, CI: '1', ANTIPHON_LOG_LEVEL: 'debug' } });
    let stderr = '';
    let sent = false;
    child.stderr.on('data', (d: Buffer) => {
      stderr += d.toString();
      // The command watches the signals from here on; its episode (40 s simulated) is still to run.
      if (!sent && stderr.includes('watching SIGINT and SIGTERM')) {
        sent = true;
        setTimeout(() => child.kill('SIGTERM'), 300);
      }
    });
    const status = await new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
    expect(status, stderr).toBe(143);
    const s = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8'));
    expect(s.interrupted).toBe(true);
    expect(s.episodes_done).toBe(1);
    const b = await samplesOf(join(out, 'bag'));
    expect(b.warnings).toEqual([]);
    expect(b.messages).toBeGreaterThan(0);
  }, 300_000);
});
