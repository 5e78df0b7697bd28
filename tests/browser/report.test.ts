import { existsSync, mkdirSync, rmSync } from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { errata, REPO_ROOT, removeDir, tempDir } from '../helpers/project.js';
import { CLOSING_CELL, IMG_CELL, makeReportProject, SCRIPT_CELL } from '../report/report-project.js';

/**
 * The report opened from disk in real headless Chromium (Debian's package, driven by playwright-core):
 * plots render, filters work from the keyboard, hostile cells stay text, and no request leaves the page.
 */

const CHROMIUM = '/usr/bin/chromium';
const ARTIFACTS = path.join(REPO_ROOT, 'test-artifacts');

describe('errata report in a browser', () => {
  let root: string;
  let profileDir: string;
  let context: BrowserContext;
  let page: Page;
  let reportUrl: string;
  const requests: string[] = [];
  const errors: string[] = [];

  beforeAll(async () => {
    if (!existsSync(CHROMIUM)) {
      throw new Error(`${CHROMIUM} is missing: the browser tests need Debian's chromium. Install it with \`sudo apt-get install -y chromium\` (.ci/run does this on CI).`);
    }
    root = await makeReportProject();
    const made = await errata(root, ['report', '--out', 'report.html']);
    expect(made.code, made.stderr).toBe(0);
    reportUrl = pathToFileURL(path.join(root, 'report.html')).href;
    profileDir = tempDir('errata-chromium-');
    context = await chromium.launchPersistentContext(profileDir, {
      executablePath: CHROMIUM,
      headless: true,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
      viewport: { width: 1280, height: 900 },
    });
    context.on('request', (request) => requests.push(request.url()));
    page = context.pages()[0] ?? (await context.newPage());
    page.on('pageerror', (error) => errors.push(error.message));
    await page.goto(reportUrl, { waitUntil: 'load' });
  });

  afterAll(async () => {
    await context?.close();
    if (profileDir) rmSync(profileDir, { recursive: true, force: true });
    if (root) removeDir(root);
  });

  it('renders every plot as an SVG with a non-zero size, bars included', async () => {
    const sizes = await page.$$eval('svg.chart', (svgs) => svgs.map((s) => s.getBoundingClientRect()).map((r) => [r.width, r.height]));
    // Four variables (pid has no plot; site and comment are coded, weight_kg numeric) plus the discrepancies.
    expect(sizes.length).toBe(4);
    for (const [width, height] of sizes) {
      expect(width).toBeGreaterThan(0);
      expect(height).toBeGreaterThan(0);
    }
    const bars = await page.$$eval('svg.chart rect.bar', (rects) => rects.map((r) => r.getBoundingClientRect()).filter((r) => r.width > 0 && r.height > 0).length);
    expect(bars).toBeGreaterThan(10);
    expect(errors).toEqual([]);
  });

  it('filters the diff by column so only that column\'s rows remain', async () => {
    const table = page.locator('#diff-1 table.cells tbody tr');
    expect(await table.count()).toBe(7);
    await page.selectOption('#diff-1 select[name=column]', 'weight_kg');
    const columns = await table.evaluateAll((rows) => rows.map((r) => r.getAttribute('data-column')));
    expect(columns).toEqual(['weight_kg', 'weight_kg', 'weight_kg', 'weight_kg']);
    await expect.poll(() => page.locator('#diff-1 .diff-status').textContent()).toContain('of 4 matching');
    await page.selectOption('#diff-1 select[name=column]', '');
    expect(await table.count()).toBe(7);
  });

  it('filters by key from the keyboard alone', async () => {
    await page.focus('#diff-1 input[name=key]');
    await page.keyboard.type('7');
    const keys = await page.locator('#diff-1 table.cells tbody th').allTextContents();
    expect(keys).toEqual(['7']);
    await page.keyboard.press('Backspace');
    expect(await page.locator('#diff-1 table.cells tbody tr').count()).toBe(7);
  });

  it('shows cells holding markup as text and runs none of it', async () => {
    const pwned = await page.evaluate(() => (window as unknown as { __pwned?: unknown }).__pwned);
    expect(pwned).toBeUndefined();
    const row = page.locator('#diff-1 table.cells tbody tr', { has: page.locator('th', { hasText: /^7$/ }) });
    await expect.poll(() => row.locator('td.old').textContent()).toBe(`− ${SCRIPT_CELL}`);
    expect(await row.locator('td.new').textContent()).toBe(`+ ${IMG_CELL}`);
    expect(await row.locator('td.old').isVisible()).toBe(true);
    const closing = page.locator('#diff-1 table.cells tbody tr', { has: page.locator('th', { hasText: /^9$/ }) });
    expect(await closing.locator('td.new').textContent()).toBe(`+ ${CLOSING_CELL}`);
    expect(await page.locator('#diff-1 img, main img').count()).toBe(0);
  });

  it('shows a correction\'s cells when its audit-trail link is followed', async () => {
    await page.click('a[data-show-correction="0001-pounds-and-comments.yaml"]');
    expect(await page.inputValue('#diff-1 select[name=correction]')).toBe('0001-pounds-and-comments.yaml');
    await expect.poll(() => page.locator('#diff-1 .diff-status').textContent()).toContain('of 7 matching');
  });

  it('hides the controls in print', async () => {
    await page.emulateMedia({ media: 'print' });
    expect(await page.locator('#diff-1 form.filters').isVisible()).toBe(false);
    expect(await page.locator('nav').isVisible()).toBe(false);
    expect(await page.locator('#diff-1 table.cells').isVisible()).toBe(true);
    await page.emulateMedia({ media: 'screen' });
  });

  it('makes no request beyond the report file itself, and saves a screenshot', async () => {
    expect(requests.length).toBeGreaterThan(0);
    for (const url of requests) expect(url === reportUrl || url.startsWith('data:'), url).toBe(true);
    mkdirSync(ARTIFACTS, { recursive: true });
    const shot = path.join(ARTIFACTS, 'report.png');
    await page.screenshot({ path: shot, fullPage: true });
    console.log(`screenshot: ${shot}`);
    expect(existsSync(shot)).toBe(true);
  });
});
