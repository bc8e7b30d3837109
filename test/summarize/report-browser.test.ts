import { existsSync } from 'node:fs';
import { mkdir } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { type Browser, chromium } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildReport } from '../../coordinator/summarize/build-report.js';
import { BURN_SWEEP, makeSweepFolder, type SweepFolder } from './sweep-folder.js';

const CHROMIUM = '/usr/bin/chromium';
const ARTIFACTS = resolve(import.meta.dirname, '..', '..', 'test-artifacts');

describe('the report page in headless Chromium', () => {
  let folder: SweepFolder;
  let browser: Browser;
  beforeAll(async () => {
    if (!existsSync(CHROMIUM))
      throw new Error(`${CHROMIUM} is missing: install Debian's chromium package (.ci/run does)`);
    // Half-finished, so the page also shows incomplete cells.
    folder = await makeSweepFolder(
      BURN_SWEEP,
      (job) => (job.point['successRate'] as number) <= 0.7 || job.replicate === 0,
    );
    await buildReport({ dir: folder.dir });
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
  });
  afterAll(async () => {
    await browser?.close();
    await folder?.cleanup();
  });

  it('opens from disk with no console errors or network requests, shows every cell, and a tooltip on hover', async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 1000 } });
    const problems: string[] = [];
    const requests: string[] = [];
    page.on('console', (m) => {
      if (m.type() === 'error' || m.type() === 'warning') problems.push(m.text());
    });
    page.on('pageerror', (e) => problems.push(e.message));
    page.on('request', (r) => {
      if (!r.url().startsWith('file:')) requests.push(r.url());
    });
    await page.goto(pathToFileURL(join(folder.dir, 'report', 'index.html')).href);

    const figures = page.locator('figure');
    expect(await figures.count()).toBe(1);
    // 11 successRate values x 2 burnMs values.
    expect(await figures.nth(0).locator('svg rect.cell').count()).toBe(22);
    // successRate 0.8, 0.9, 1 have one replicate of 4: 3 x 2 incomplete cells.
    expect(await page.locator('svg rect.cell.incomplete').count()).toBe(6);
    await expect.poll(() => page.locator('#completed').textContent()).toContain('% complete');

    const tip = page.locator('#cell-tip');
    expect(await tip.isVisible()).toBe(false);
    const cell = page.locator('svg rect.cell[data-x="3"][data-y="0"]');
    await cell.hover();
    await expect.poll(() => tip.isVisible()).toBe(true);
    const text = (await tip.textContent()) ?? '';
    expect(text).toContain('n = 4');
    expect(text).toMatch(/95% interval 0\.\d{3} to [01]\.\d{3}/);
    expect(text).toContain('successRate = 0.3');

    await mkdir(ARTIFACTS, { recursive: true });
    await page.screenshot({ path: join(ARTIFACTS, 'report.png'), fullPage: true });
    expect(existsSync(join(ARTIFACTS, 'report.png'))).toBe(true);
    expect(problems).toEqual([]);
    expect(requests).toEqual([]);
    await page.close();
  });

  for (const width of [1400, 390]) {
    it(`fits a ${width} px wide screen without sideways scrolling, diagrams scaled to fit and tables scrolling in their box`, async () => {
      const context = await browser.newContext({
        viewport: { width, height: 900 },
        ...(width < 600 ? { hasTouch: true, isMobile: true, deviceScaleFactor: 2 } : {}),
      });
      const page = await context.newPage();
      await page.goto(pathToFileURL(join(folder.dir, 'report', 'index.html')).href);
      const sizes = await page.evaluate(() => ({
        scroll: document.documentElement.scrollWidth,
        inner: window.innerWidth,
        svg: Math.max(...[...document.querySelectorAll('figure svg')].map((s) => s.getBoundingClientRect().right)),
        tables: [...document.querySelectorAll('.table-wrap')].map((w) => ({
          right: w.getBoundingClientRect().right,
          overflow: getComputedStyle(w).overflowX,
        })),
      }));
      expect(sizes.scroll).toBeLessThanOrEqual(sizes.inner);
      expect(sizes.svg).toBeLessThanOrEqual(sizes.inner);
      for (const t of sizes.tables) {
        expect(t.right).toBeLessThanOrEqual(sizes.inner);
        expect(t.overflow).toBe('auto');
      }
      await mkdir(ARTIFACTS, { recursive: true });
      await page.screenshot({ path: join(ARTIFACTS, `report-${width}.png`), fullPage: false });
      await context.close();
    });
  }

  it('shows on a tap what hovering shows, with a command that re-runs a trial of that cell', async () => {
    const context = await browser.newContext({
      viewport: { width: 390, height: 844 },
      hasTouch: true,
      isMobile: true,
    });
    const page = await context.newPage();
    await page.goto(pathToFileURL(join(folder.dir, 'report', 'index.html')).href);
    const tip = page.locator('#cell-tip');
    const cell = page.locator('svg rect.cell[data-x="3"][data-y="0"]');
    await cell.scrollIntoViewIfNeeded();
    await cell.tap();
    await expect.poll(() => tip.isVisible()).toBe(true);
    const text = (await tip.textContent()) ?? '';
    expect(text).toContain('successRate = 0.3');
    expect(text).toContain('n = 4');
    const key = (await cell.getAttribute('data-failure-job')) || (await cell.getAttribute('data-success-job'));
    expect(key).toMatch(/^[0-9a-f]{32}$/);
    expect(text).toContain(`--job ${key}`);
    // The tip stays inside the screen, and a second tap on the cell closes it.
    const box = await tip.boundingBox();
    expect((box?.x ?? -1) >= 0 && (box?.x ?? 0) + (box?.width ?? 0) <= 390).toBe(true);
    await cell.tap();
    await expect.poll(() => tip.isVisible()).toBe(false);
    await context.close();
  });
});
