/**
 * The report in a real browser: Debian's Chromium (/usr/bin/chromium) driven by
 * playwright-core, loading the file from a file:// URL. Without Chromium the test is
 * skipped locally and fails under CI (.ci/run installs it).
 *
 * Writes test-output/report/report.html and report.png (git-ignored) for a look by eye.
 */
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { renderReport } from '../../src/report/html.js';
import type { ReportInput } from '../../src/report/types.js';
import { syntheticInput } from './synthetic.js';

const CHROMIUM = '/usr/bin/chromium';
const MISSING = '.ci/run must install chromium (apt-get install -y chromium) for /usr/bin/chromium';
const available = existsSync(CHROMIUM);

if (!available && process.env['CI']) {
  describe('HTML report in Chromium', () => {
    it('needs Chromium', () => {
      throw new Error(MISSING);
    });
  });
}

const OUT = resolve('test-output/report');
const INJECT = '<img src=x onerror="window.__pwned=1"><script>window.__pwned=2</script>';

interface CanvasCheck {
  plot: string;
  kind: string;
  title: string;
  vertices: number;
  nonBackground: number;
  colours: { colour: string; label: string; pixels: number }[];
}

describe.skipIf(!available)(`HTML report in Chromium${available ? '' : ` (skipped: ${MISSING})`}`, () => {
  let browser: Browser;
  let page: Page;
  let input: ReportInput;
  const consoleErrors: string[] = [];
  const pageErrors: string[] = [];
  const requests: string[] = [];

  beforeAll(async () => {
    // Three minutes at 1 kHz per arm; one extra event whose text tries to inject markup.
    input = syntheticInput(180, { extraEvents: [{ t_s: 30, kind: 'note', text: INJECT }] });
    mkdirSync(OUT, { recursive: true });
    const file = join(OUT, 'report.html');
    writeFileSync(file, renderReport(input));
    // playwright-core gives the browser a fresh temporary profile of its own.
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: [
        '--headless',
        '--no-sandbox',
        '--disable-gpu',
        '--disable-quic',
        '--no-first-run',
        '--disable-background-networking',
        '--disable-component-update',
        '--disable-sync',
      ],
    });
    page = await browser.newPage({ viewport: { width: 1280, height: 900 }, deviceScaleFactor: 1 });
    page.on('console', (m) => {
      if (m.type() === 'error') consoleErrors.push(m.text());
    });
    page.on('pageerror', (e) => pageErrors.push(String(e)));
    page.on('request', (r) => requests.push(r.url()));
    await page.goto(pathToFileURL(file).href);
    await page.waitForFunction(() => document.body.getAttribute('data-drawn') !== null);
  });

  afterAll(async () => {
    await browser?.close();
  });

  it('loads with no console errors, no page errors and no request but the file itself', () => {
    expect(consoleErrors).toEqual([]);
    expect(pageErrors).toEqual([]);
    expect(requests.filter((u) => !u.startsWith('file://') || !u.endsWith('/report.html'))).toEqual([]);
  });

  it('draws every plot: data vertices, non-background pixels, and pixels of every legend colour inside the plot area', async () => {
    const checks: CanvasCheck[] = await page.evaluate(() => {
      const M = { l: 76, r: 16, t: 10, b: 40 };
      const hex = (h: string): number[] => [1, 3, 5].map((i) => parseInt(h.slice(i, i + 2), 16));
      return Array.from(document.querySelectorAll('figure[data-plot]')).map((f) => {
        const c = f.querySelector('canvas')!;
        const g = c.getContext('2d')!;
        const sx = c.width / c.clientWidth;
        const x0 = Math.ceil((M.l + 2) * sx);
        const x1 = Math.floor((c.clientWidth - M.r - 2) * sx);
        const y0 = Math.ceil((M.t + 1) * sx);
        const y1 = Math.floor((c.clientHeight - M.b - 2) * sx);
        const img = g.getImageData(x0, y0, x1 - x0, y1 - y0).data;
        const swatches = Array.from(f.querySelectorAll('.legend li')).map((li) => ({
          colour: li.querySelector('.sw')!.getAttribute('data-color')!,
          label: li.textContent ?? '',
        }));
        const targets = swatches.map((s) => hex(s.colour));
        const counts = targets.map(() => 0);
        let nonBackground = 0;
        for (let i = 0; i < img.length; i += 4) {
          const r = img[i]!;
          const gg = img[i + 1]!;
          const b = img[i + 2]!;
          if (!(r === 255 && gg === 255 && b === 255) && !(r === 0xeb && gg === 0xe8 && b === 0xe1)) nonBackground++;
          for (let k = 0; k < targets.length; k++) {
            const t = targets[k]!;
            if (Math.abs(r - t[0]!) + Math.abs(gg - t[1]!) + Math.abs(b - t[2]!) <= 60) counts[k]!++;
          }
        }
        return {
          plot: f.getAttribute('data-plot')!,
          kind: f.getAttribute('data-kind')!,
          title: f.querySelector('h3')!.textContent ?? '',
          vertices: Number(c.getAttribute('data-vertices')),
          nonBackground,
          colours: swatches.map((s, k) => ({ ...s, pixels: counts[k]! })),
        };
      });
    });
    // Per arm: force, role, events, belief, speed; then the internal force plot.
    expect(checks.map((c) => c.title)).toEqual([
      ...['left', 'right'].flatMap(() => ['Force magnitude', 'Role', 'Events', 'Belief over hidden zones', 'Tool speed']),
      'Opposing force between the arms along the object',
    ]);
    for (const c of checks) {
      expect(c.vertices, `${c.title} (plot ${c.plot}) vertices`).toBeGreaterThan(0);
      expect(c.nonBackground, `${c.title} (plot ${c.plot}) drawn pixels`).toBeGreaterThan(500);
      for (const col of c.colours) {
        // The hold shading is drawn under the data in the role and event strips too, so every legend colour must show.
        expect(col.pixels, `${c.title} (plot ${c.plot}): legend entry "${col.label}" (${col.colour})`).toBeGreaterThan(0);
      }
    }
  });

  it('shows the reliability diagram: visible, one bar per non-empty bin with its height the observed frequency', async () => {
    const r = await page.evaluate(() => {
      const svg = document.querySelector('#calibration svg.reliability')!;
      const box = svg.getBoundingClientRect();
      const bars = Array.from(svg.querySelectorAll('rect.bar')).map((b) => ({ bin: Number(b.getAttribute('data-bin')), h: b.getBoundingClientRect().height }));
      const dots = svg.querySelectorAll('circle.conf').length;
      return { w: box.width, h: box.height, bars, dots, visible: getComputedStyle(svg).display !== 'none' };
    });
    expect(r.visible).toBe(true);
    expect(r.w).toBeGreaterThan(200);
    expect(r.h).toBeGreaterThan(200);
    const full = input.calibration!.bins.map((b, i) => ({ ...b, i })).filter((b) => b.count > 0);
    expect(r.bars.map((b) => b.bin)).toEqual(full.map((b) => b.i));
    expect(r.dots).toBe(full.length);
    // Rendered heights in the ratio of the observed frequencies (the plot area is 250 of the 300 px).
    r.bars.forEach((b, k) => expect(b.h / ((250 * r.h) / 300)).toBeCloseTo(full[k]!.observed_frequency!, 2));
  });

  it('lists every event of each arm, in time order, with the text as plain text (no markup from the input)', async () => {
    for (let a = 0; a < input.arms.length; a++) {
      const arm = input.arms[a]!;
      const rows: string[][] = await page.evaluate(
        (id) => Array.from(document.querySelectorAll(`#${id} tr`)).map((tr) => Array.from(tr.children).map((td) => td.textContent ?? '')),
        `events-${a}`,
      );
      const expected = [...arm.events]
        .map((e, i) => ({ e, i }))
        .sort((x, y) => x.e.t_s - y.e.t_s || x.i - y.i)
        .map(({ e }) => [e.t_s.toFixed(3), e.kind, e.text]);
      expect(rows.length).toBe(arm.events.length);
      expect(rows).toEqual(expected);
    }
    const injected = await page.evaluate(() => ({
      pwned: (window as unknown as { __pwned?: number }).__pwned ?? null,
      imgs: document.querySelectorAll('img').length,
      scripts: document.querySelectorAll('script').length,
    }));
    expect(injected).toEqual({ pwned: null, imgs: 0, scripts: 2 });
  });

  it('marks verdicts with a word and a sign, and filters the event table by kind', async () => {
    const verdicts = await page.$$eval('table.checks tbody tr td:first-child', (tds) => tds.map((td) => td.textContent?.trim()));
    expect(verdicts).toEqual(['✓ PASS', '✓ PASS', '✗ FAIL']);
    await page.selectOption('select[data-filter="events-0"]', { label: 'trip (2)' });
    const visible = await page.$$eval('#events-0 tr', (trs) => trs.filter((tr) => !(tr as HTMLElement).hidden).map((tr) => tr.children[1]?.textContent));
    expect(visible).toEqual(['trip', 'trip']);
    await page.selectOption('select[data-filter="events-0"]', 'all');
  });

  it('shows the time and values under the pointer in every plot', async () => {
    const canvas = page.locator('canvas[data-plot="0"]');
    const box = (await canvas.boundingBox())!;
    await canvas.hover({ position: { x: 76 + (box.width - 92) * 0.42, y: box.height / 2 } });
    const reads = await page.$$eval('.tread', (els) => els.map((e) => e.textContent ?? ''));
    expect(reads.every((r) => /^t = \d+\.\d{3} s/.test(r))).toBe(true);
    const values = await page.$$eval('figure[data-plot="0"] .rv', (els) => els.map((e) => e.textContent ?? ''));
    expect(values.every((v) => v.length > 0 && v !== '—')).toBe(true);
    await page.mouse.move(0, 0);
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.screenshot({ path: join(OUT, 'report.png'), fullPage: true });
  });
});
