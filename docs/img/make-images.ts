/**
 * Makes the README pictures: `npx tsx docs/img/make-images.ts [DEMO_DIR]` runs the demo
 * scenario (unless DEMO_DIR already holds a dossier), screenshots the top of its HTML dossier
 * in headless Debian chromium, and renders docs/img/flow.svg to PNG.
 */
import { existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { pathToFileURL, fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';
import { main } from '../../src/cli/main.js';

const here = fileURLToPath(new URL('.', import.meta.url));
const demo = resolve(process.argv[2] ?? 'kerneldx-demo');
if (!existsSync(join(demo, 'dossier.html'))) {
  const code = await main(['node', 'kerneldx', 'demo', '--out', demo, '--quiet']);
  if (code !== 0) throw new Error(`demo failed with exit code ${code}`);
}
const ctx = await chromium.launchPersistentContext(join(demo, '.chromium-profile'), {
  executablePath: '/usr/bin/chromium', headless: true, viewport: { width: 1280, height: 860 },
  args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
});
const page = await ctx.newPage();
await page.goto(pathToFileURL(join(demo, 'dossier.html')).href);
await page.screenshot({ path: join(here, 'dossier-screenshot.png') });
await page.goto(pathToFileURL(join(here, 'flow.svg')).href);
await page.setViewportSize({ width: 960, height: 250 });
await page.screenshot({ path: join(here, 'flow.png') });
await ctx.close();
console.log(join(here, 'dossier-screenshot.png'));
console.log(join(here, 'flow.png'));
