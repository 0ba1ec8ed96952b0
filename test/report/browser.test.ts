/**
 * The HTML dossier in a real browser (headless Debian chromium via playwright-core): no console
 * errors, no network request, every figure drawn with a nonzero size, a hostile title shown as
 * text with no script run, the download of a figure's data works offline; a screenshot is saved.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type BrowserContext } from 'playwright-core';
import { buildDossier } from '../../src/report/index.js';
import { dossierDir, fixtureFindings, tmp } from './helpers.js';
import { haveTool, CHROMIUM, CHROMIUM_ARGS } from './tools.js';

const enabled = haveTool('chromium');
export const SHOT_DIR = join(import.meta.dirname, '..', '..', 'test-output');

describe.skipIf(!enabled)('dossier in headless chromium', () => {
  let ctx: BrowserContext;
  beforeAll(async () => {
    ctx = await chromium.launchPersistentContext(tmp('kdx-chromium-'), { executablePath: CHROMIUM, headless: true, args: CHROMIUM_ARGS, viewport: { width: 1366, height: 900 }, acceptDownloads: true });
  });
  afterAll(async () => { await ctx?.close(); });

  async function open(html: string) {
    const page = await ctx.newPage();
    const errors: string[] = [], requests: string[] = [], dialogs: string[] = [];
    page.on('console', (m) => { if (m.type() === 'error') errors.push(m.text()); });
    page.on('pageerror', (e) => errors.push(String(e)));
    page.on('dialog', async (d) => { dialogs.push(d.message()); await d.dismiss(); });
    const url = pathToFileURL(html).href;
    page.on('request', (r) => { if (r.url() !== url && !r.url().startsWith('data:') && !r.url().startsWith('blob:')) requests.push(r.url()); });
    await page.goto(url, { waitUntil: 'load' });
    return { page, errors, requests, dialogs };
  }

  it('renders every figure, makes no request, logs no error, and saves a screenshot', async () => {
    const dir = await dossierDir();
    const { html } = await buildDossier(dir, { quiet: true });
    const { page, errors, requests } = await open(html);
    const sizes = await page.$$eval('figure.fig .plot svg', (els) => els.map((e) => { const r = e.getBoundingClientRect(); return [r.width, r.height]; }));
    const declared = (readFileSync(html, 'utf8').match(/<figure class="fig"/g) ?? []).length;
    expect(sizes.length).toBe(declared);
    expect(sizes.length).toBeGreaterThanOrEqual(10);
    for (const [w, h] of sizes) { expect(w).toBeGreaterThan(50); expect(h).toBeGreaterThan(50); }
    // figures carry alt text and the headings form an outline
    expect(await page.$$eval('.plot[role="img"]', (els) => els.every((e) => (e.getAttribute('aria-label') ?? '').length > 20))).toBe(true);
    expect(await page.locator('h1').count()).toBe(1);
    expect(await page.locator('h2').count()).toBeGreaterThanOrEqual(6);
    mkdirSync(SHOT_DIR, { recursive: true });
    await page.screenshot({ path: join(SHOT_DIR, 'dossier-top.png') });
    await page.screenshot({ path: join(SHOT_DIR, 'dossier-full.png'), fullPage: true });
    // the download button hands over the same numbers that sit in the page, with no request
    const dl = page.waitForEvent('download');
    await page.locator('#fig-spectrum button.dl').click();
    const file = await (await dl).path();
    const got = JSON.parse(readFileSync(file!, 'utf8')) as { sigma: number[] };
    const inPage = JSON.parse(await page.locator('#data-fig-spectrum').textContent() ?? 'null') as { sigma: number[] };
    expect(got.sigma.length).toBeGreaterThan(20);
    expect(got).toEqual(inPage);
    expect(errors).toEqual([]);
    expect(requests).toEqual([]);
    await page.close();
  });

  it('shows a study titled <script>alert(1)</script> as text and runs no injected script', async () => {
    const F = fixtureFindings() as unknown as Record<string, any>;
    const title = '<script>alert(1)</script>';
    F.study.title = title;
    F.study.units.x = '<img src=x onerror=alert(2)>';
    F.hypotheses[0].statement = 'Belt <script>alert(3)</script> section';
    const dir = await dossierDir({ findings: F as never });
    const { html } = await buildDossier(dir, { quiet: true });
    const { page, errors, requests, dialogs } = await open(html);
    expect(await page.locator('h1').textContent()).toBe(title);
    expect(await page.title()).toContain(title);
    expect(await page.locator('.hypothesis .statement').first().textContent()).toBe('Belt <script>alert(3)</script> section');
    await page.waitForTimeout(200);
    expect(dialogs).toEqual([]);
    expect(errors).toEqual([]);
    expect(requests).toEqual([]);
    await page.close();
  });
});
