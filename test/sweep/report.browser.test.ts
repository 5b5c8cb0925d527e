/**
 * The sweep report in a real browser: Debian's Chromium (/usr/bin/chromium) driven by
 * playwright-core, from a file:// URL, as test/report/report.browser.test.ts does. Without
 * Chromium the test is skipped locally and fails under CI (.ci/run installs it). The sweep is
 * over our own synthetic bags with knocks.
 */
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { register } from '../../src/cli/sweep.js';
import { resetLogging } from '../../src/util/log.js';
import { runRegistered } from '../support/run-command.js';
import { makeKnockBags } from './helpers.js';

const CHROMIUM = '/usr/bin/chromium';
const MISSING = '.ci/run must install chromium (apt-get install -y chromium) for /usr/bin/chromium';
const available = existsSync(CHROMIUM);

if (!available && process.env['CI']) {
  describe('sweep report in Chromium', () => {
    it('needs Chromium', () => {
      throw new Error(MISSING);
    });
  });
}

describe.skipIf(!available)(`sweep report in Chromium${available ? '' : ` (skipped: ${MISSING})`}`, () => {
  let dir: string;
  let browser: Browser;
  let page: Page;
  const consoleErrors: string[] = [];
  const pageErrors: string[] = [];
  const requests: string[] = [];

  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'antiphon-sweep-report-'));
    const { bags, labels } = await makeKnockBags(join(dir, 'bags'), 8);
    writeFileSync(join(dir, 'space.yaml'), 'version: 1\nparameters:\n  wrench_filter.impact.force_n:\n    grid: [0.3, 2.0, 15.0, 200.0]\n  roles.period_s:\n    grid: [0.25, 0.5, 1.0]\n');
    resetLogging();
    const r = await runRegistered(register, 'sweep', ['--params', 'config/demo_cell.yaml', '--space', join(dir, 'space.yaml'), '--bags', ...bags, '--labels', labels, '--out', join(dir, 'out')]);
    expect(r.code).toBe(0);
    browser = await chromium.launch({ executablePath: CHROMIUM, args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'] });
    page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    page.on('console', (m) => {
      if (m.type() === 'error') consoleErrors.push(m.text());
    });
    page.on('pageerror', (e) => pageErrors.push(String(e)));
    page.on('request', (q) => requests.push(q.url()));
    await page.goto(pathToFileURL(join(dir, 'out', 'report.html')).href);
  }, 300_000);

  afterAll(async () => {
    await browser?.close();
    rmSync(dir, { recursive: true, force: true });
  });

  it('loads with no console errors, no page errors and no request but the file itself', () => {
    expect(consoleErrors).toEqual([]);
    expect(pageErrors).toEqual([]);
    expect(requests.filter((u) => !u.endsWith('/report.html'))).toEqual([]);
  });

  it('draws the ROC, internal force against the role period and the Pareto front, with their points on screen', async () => {
    const charts = await page.evaluate(() =>
      Array.from(document.querySelectorAll('svg.chart')).map((s) => {
        const box = s.getBoundingClientRect();
        const pts = Array.from(s.querySelectorAll('circle')).map((c) => c.getBoundingClientRect());
        return { id: s.id, width: box.width, height: box.height, points: pts.length, inside: pts.every((p) => p.left >= box.left - 6 && p.right <= box.right + 6 && p.top >= box.top - 6 && p.bottom <= box.bottom + 6) };
      }),
    );
    const byId = Object.fromEntries(charts.map((c) => [c.id, c]));
    expect(Object.keys(byId).sort()).toEqual(['pareto', 'period-force', 'roc']);
    expect(byId['roc']!.points).toBe(2 + 4); // the chance line's ends and one point per threshold
    expect(byId['period-force']!.points).toBe(3);
    expect(byId['pareto']!.points).toBe(12);
    for (const c of charts) {
      expect(c.width).toBeGreaterThan(300);
      expect(c.inside).toBe(true);
    }
    const chosenRow = await page.locator('tr.chosen').count();
    expect(chosenRow).toBe(1);
  });
});
