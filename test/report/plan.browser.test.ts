/**
 * The plan view of a simulated episode's report and the compare report in a real browser:
 * Debian's Chromium (/usr/bin/chromium) driven by playwright-core from file:// URLs. Without
 * Chromium the test is skipped locally and fails under CI (.ci/run installs it).
 *
 * The episode: a world of the 'changing' family (a zone changes during the transfer) run with
 * the independent strategy (which collides), 8 s. The side view: 8 s of examples/path_cell.yaml
 * (a task with waypoints, every zone occupied). Writes test-output/plan/ (git-ignored).
 */
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeEpisodeArtifacts } from '../../src/cli/simulate.js';
import { reportFamily } from '../../src/cli/compare.js';
import { loadCell } from '../../src/params/config.js';
import { renderCompareReport } from '../../src/report/compare-html.js';
import { runCompare } from '../../src/sim/compare.js';
import { runEpisode } from '../../src/sim/episode.js';
import { drawFamilyWorld, loadFamily } from '../../src/sim/family.js';
import { DEMO, ROOT } from '../support/files.js';

const CHROMIUM = '/usr/bin/chromium';
const MISSING = '.ci/run must install chromium (apt-get install -y chromium) for /usr/bin/chromium';
const available = existsSync(CHROMIUM);

if (!available && process.env['CI']) {
  describe('plan view and compare report in Chromium', () => {
    it('needs Chromium', () => {
      throw new Error(MISSING);
    });
  });
}

const OUT = resolve('test-output/plan');

describe.skipIf(!available)(`plan view and compare report in Chromium${available ? '' : ` (skipped: ${MISSING})`}`, () => {
  let browser: Browser;
  const errors: string[] = [];
  let change: { zone: string; t_s: number; occupied: boolean };

  const open = async (file: string): Promise<Page> => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 }, deviceScaleFactor: 1 });
    page.on('console', (m) => {
      if (m.type() === 'error') errors.push(`${file}: ${m.text()}`);
    });
    page.on('pageerror', (e) => errors.push(`${file}: ${String(e)}`));
    await page.goto(pathToFileURL(file).href);
    return page;
  };

  beforeAll(async () => {
    mkdirSync(OUT, { recursive: true });
    const cell = loadCell(DEMO);
    const fam = loadFamily(join(ROOT, 'examples/families/changing.yaml'), cell.left.config);
    let seed = 1;
    let fw = drawFamilyWorld(fam, cell.left.config, {}, seed);
    while (!(fw.world.changes ?? []).some((c) => c.t_s < 5)) fw = drawFamilyWorld(fam, cell.left.config, {}, ++seed);
    const result = await runEpisode({ left: { ...cell.left.config, task: fw.task }, right: { ...cell.right.config, task: fw.task }, strategy: { name: 'independent', k: null }, seed, options: fw.options, duration_s: 8, world: fw.world, family: { name: 'changing', redraws: fw.redraws } });
    const z = result.summary.world.zones.find((zz) => zz.changes.length > 0)!;
    change = { zone: z.name, t_s: z.changes[0]!.t_s, occupied: z.changes[0]!.occupied };
    await writeEpisodeArtifacts(join(OUT, 'episode'), result, true);
    const pc = loadCell(join(ROOT, 'examples/path_cell.yaml'));
    const pathRun = await runEpisode({ left: pc.left.config, right: pc.right.config, strategy: { name: 'alternating', k: 500 }, seed: 7, duration_s: 8 });
    await writeEpisodeArtifacts(join(OUT, 'path'), pathRun, true);
    const cmp = await runCompare({ left: cell.left.config, right: cell.right.config, worlds: 2, seed: 3, strategies: [{ name: 'centralized', k: null }, { name: 'alternating', k: 500 }], duration_s: 3, family: fam });
    writeFileSync(join(OUT, 'compare.html'), renderCompareReport([reportFamily(cmp), { ...reportFamily(cmp), name: '<b>x</b>' }]));
    browser = await chromium.launch({ executablePath: CHROMIUM, args: ['--headless', '--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'] });
  }, 300_000);

  afterAll(async () => {
    await browser?.close();
  });

  it('the episode report draws the plan view: zones, three paths, the object; the slider shows the change and the beliefs', async () => {
    const page = await open(join(OUT, 'episode', 'report.html'));
    await page.waitForFunction(() => document.body.getAttribute('data-plan') === 'drawn' && document.body.getAttribute('data-drawn') !== null);
    expect(await page.locator('#plan-svg [data-zone]').count()).toBeGreaterThanOrEqual(2);
    expect(await page.locator('#plan-svg path[data-path]').count()).toBe(3);
    const state = async (t: number) => {
      // Put the slider at time t of the whole record.
      return page.evaluate(([tt, name]) => {
        const s = document.getElementById('plan-t') as HTMLInputElement;
        const P = JSON.parse(document.getElementById('antiphon-plan')!.textContent!);
        const a = P.t[0], b = P.t[P.t.length - 1];
        s.value = String(Math.round((1000 * ((tt as number) - a)) / (b - a)));
        s.dispatchEvent(new Event('input'));
        return { occupied: document.querySelector(`#plan-svg [data-zone="${name}"]`)!.getAttribute('data-occupied'), rows: document.querySelectorAll('#plan-belief tr').length, t: Number(document.body.getAttribute('data-plan-t')) };
      }, [t, change.zone] as const);
    };
    const before = await state(Math.max(0, change.t_s - 0.5));
    const after = await state(change.t_s + 0.5);
    expect(before.occupied).toBe(change.occupied ? '0' : '1');
    expect(after.occupied).toBe(change.occupied ? '1' : '0');
    expect(after.rows).toBeGreaterThan(0); // each arm's belief about each zone it infers
    expect(await page.locator('#plan-object').getAttribute('x1')).not.toBeNull();
    await page.close();
  });

  it('wheel zoom on a time plot narrows every plot\'s view and the slider follows; double click restores it', async () => {
    const page = await open(join(OUT, 'episode', 'report.html'));
    await page.waitForFunction(() => document.body.getAttribute('data-plan') === 'drawn' && document.body.getAttribute('data-drawn') !== null);
    const canvas = page.locator('canvas[data-plot]').first();
    await canvas.scrollIntoViewIfNeeded();
    const box = (await canvas.boundingBox())!;
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
    for (let i = 0; i < 4; i++) await page.mouse.wheel(0, -100);
    await page.waitForFunction(() => document.body.getAttribute('data-view') !== null);
    const [a, b] = (await page.evaluate(() => document.body.getAttribute('data-view')!)).split(',').map(Number);
    expect(b! - a!).toBeLessThan(8 * 0.5);
    expect(b! - a!).toBeGreaterThan(0);
    // Drag pans the view; the slider's end is the view's end.
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width / 2 + 100, box.y + box.height / 2);
    await page.mouse.up();
    const [a2, b2] = (await page.evaluate(() => document.body.getAttribute('data-view')!)).split(',').map(Number);
    expect(a2!).toBeLessThan(a!);
    expect(b2! - a2!).toBeCloseTo(b! - a!, 6);
    const tEnd = await page.evaluate(() => {
      const s = document.getElementById('plan-t') as HTMLInputElement;
      s.value = '1000';
      s.dispatchEvent(new Event('input'));
      return Number(document.body.getAttribute('data-plan-t'));
    });
    expect(tEnd).toBeCloseTo(b2!, 2);
    await canvas.dblclick();
    const [a3, b3] = (await page.evaluate(() => document.body.getAttribute('data-view')!)).split(',').map(Number);
    expect(b3! - a3!).toBeGreaterThan(7);
    await page.close();
  });

  it('a task with waypoints gets a side view: the nominal path, both grasp heights, the zones at their heights, the object', async () => {
    const page = await open(join(OUT, 'path', 'report.html'));
    await page.waitForFunction(() => document.body.getAttribute('data-plan') === 'drawn');
    expect(await page.locator('#side-svg [data-side-zone]').count()).toBe(3);
    expect(await page.locator('#side-svg path[data-side-path]').count()).toBe(4);
    // The tray drop hangs from 0.8 m: its rectangle's top is above its bottom on the page, the column reaches past the view.
    const tray = page.locator('#side-svg [data-side-zone="tray_drop"]');
    expect(Number(await tray.getAttribute('height'))).toBeGreaterThan(10);
    // The yawed tray drop is turned in the plan.
    expect(await page.locator('#plan-svg [data-zone="tray_drop"]').getAttribute('transform')).toMatch(/^rotate\(-36\.6/);
    await page.evaluate(() => {
      const s = document.getElementById('plan-t') as HTMLInputElement;
      s.value = '900';
      s.dispatchEvent(new Event('input'));
    });
    expect(await page.locator('#side-object').getAttribute('x1')).not.toBeNull();
    await page.close();
  });

  it('the planar demo report has no side view', async () => {
    const page = await open(join(OUT, 'episode', 'report.html'));
    await page.waitForFunction(() => document.body.getAttribute('data-plan') === 'drawn');
    expect(await page.locator('#side-svg').count()).toBe(0);
    await page.close();
  });

  it('the compare report loads: tables, bars with whiskers, paired results, escaped names', async () => {
    const page = await open(join(OUT, 'compare.html'));
    expect(await page.locator('section[id^="family-"]').count()).toBe(2);
    expect(await page.locator('svg[role="img"]').count()).toBe(6);
    expect(await page.locator('section#family-0 table').nth(1).locator('tbody tr').count()).toBe(1);
    expect(await page.locator('h2').nth(1).textContent()).toBe('Family <b>x</b>');
    await page.close();
  });

  it('no console errors and no page errors', () => {
    expect(errors).toEqual([]);
  });
});
