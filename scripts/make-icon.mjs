// Renders resources/icon.svg to resources/icon.png (512×512, transparent corners) with Debian's Chromium.
// Run once after changing the SVG: node scripts/make-icon.mjs
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';

const root = resolve(fileURLToPath(new URL('..', import.meta.url)));
const scratch = mkdtempSync(join(tmpdir(), 'pw-icon-'));
process.env.XDG_CONFIG_HOME = join(scratch, 'config');
process.env.XDG_CACHE_HOME = join(scratch, 'cache');
const ctx = await chromium.launchPersistentContext(join(scratch, 'profile'), {
  executablePath: '/usr/bin/chromium',
  headless: true,
  viewport: { width: 512, height: 512 },
  args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--no-first-run'],
});
try {
  const page = ctx.pages()[0] ?? (await ctx.newPage());
  const svg = readFileSync(join(root, 'resources/icon.svg'), 'utf8');
  await page.setContent(`<html><body style="margin:0;background:transparent">${svg}</body></html>`);
  await page.locator('svg').screenshot({ path: join(root, 'resources/icon.png'), omitBackground: true });
  console.log('wrote resources/icon.png');
} finally {
  await ctx.close();
  rmSync(scratch, { recursive: true, force: true });
}
