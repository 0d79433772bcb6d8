// Builds the component gallery (src-renderer/gallery.html, SYNTHETIC data) with vite and the Svelte plugin,
// serves it on 127.0.0.1 and saves a PNG of each gallery section to docs/screenshots/components-<id>.png,
// using Debian's Chromium through playwright-core. Fails on any page error or console error.
//   node scripts/gallery-screenshot.mjs [--only id,id]
import { build } from 'vite';
import { svelte, vitePreprocess } from '@sveltejs/vite-plugin-svelte';
import { chromium } from 'playwright-core';
import { createServer } from 'node:http';
import { mkdtempSync, mkdirSync, readFileSync, rmSync, existsSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve, extname, normalize } from 'node:path';

const repo = resolve(import.meta.dirname, '..');
const outDir = join(repo, 'out', 'gallery');
const shotDir = join(repo, 'docs', 'screenshots');
const onlyArg = process.argv.indexOf('--only');
const only = onlyArg > 0 ? new Set(process.argv[onlyArg + 1].split(',')) : null;

await build({
  root: join(repo, 'src-renderer'),
  configFile: false,
  base: './',
  logLevel: 'warn',
  plugins: [svelte({ configFile: false, preprocess: vitePreprocess({ script: true }) })],
  build: {
    outDir,
    emptyOutDir: true,
    minify: process.env.PW_GALLERY_MINIFY !== '0',
    rollupOptions: { input: { gallery: join(repo, 'src-renderer', 'gallery.html') } },
  },
});

const types = { '.html': 'text/html', '.js': 'text/javascript', '.css': 'text/css', '.svg': 'image/svg+xml', '.png': 'image/png' };
const server = createServer((req, res) => {
  const path = normalize(decodeURIComponent(new URL(req.url ?? '/', 'http://x').pathname)).replace(/^(\.\.[/\\])+/, '');
  const file = join(outDir, path === '/' ? 'gallery.html' : path);
  if (!file.startsWith(outDir) || !existsSync(file) || !statSync(file).isFile()) {
    res.writeHead(404).end('not found');
    return;
  }
  res.writeHead(200, { 'content-type': types[extname(file)] ?? 'application/octet-stream' });
  res.end(readFileSync(file));
});
await new Promise((ok) => server.listen(0, '127.0.0.1', ok));
const port = server.address().port;

const scratch = mkdtempSync(join(tmpdir(), 'pw-gallery-'));
process.env.XDG_CONFIG_HOME = scratch;
process.env.XDG_CACHE_HOME = scratch;
const context = await chromium.launchPersistentContext(join(scratch, 'profile'), {
  executablePath: '/usr/bin/chromium',
  headless: true,
  viewport: { width: 1500, height: 1000 },
  deviceScaleFactor: 1,
  args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-quic', '--no-first-run'],
});
const problems = [];
try {
  const page = await context.newPage();
  page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
  page.on('console', (m) => {
    if (m.type() === 'error' || m.type() === 'warning') problems.push(`console ${m.type()}: ${m.text()}`);
  });
  await page.goto(`http://127.0.0.1:${port}/gallery.html`);
  await page.waitForSelector('[data-gallery]');
  await page.waitForTimeout(300);
  mkdirSync(shotDir, { recursive: true });
  const ids = await page.$$eval('[data-gallery]', (els) => els.map((e) => e.id));
  for (const id of ids) {
    if (only && !only.has(id)) continue;
    const file = join(shotDir, `components-${id}.png`);
    await page.locator(`#${id}`).screenshot({ path: file });
    console.log(`saved ${file}`);
  }
  if (!only) {
    // Interaction: hover a parity dot, rotate and zoom the structure by keyboard, zoom the trajectory by wheel.
    const dot = page.locator('#parity-iso circle[fill-opacity="0.72"]').nth(17);
    await page.locator('#parity-iso').scrollIntoViewIfNeeded();
    const box = await dot.boundingBox();
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
    await page.waitForTimeout(100);
    await page.locator('#parity-iso').screenshot({ path: join(shotDir, 'components-parity-hover.png') });
    // keyboard on the parity chart: the first arrow press shows the frame with the largest error
    await page.locator('#parity-aniso .pw-parity').focus();
    await page.keyboard.press('ArrowRight');
    await page.locator('#parity-aniso').screenshot({ path: join(shotDir, 'components-parity-keyboard.png') });
    await page.keyboard.press('Enter');
    const selected = await page.title();
    if (!/^selected frame \d+$/.test(selected)) problems.push(`parity chart: Enter did not select a frame (title "${selected}")`);
    await page.locator('#structure-atoms .pw-structure').focus();
    for (const key of ['ArrowRight', 'ArrowRight', 'ArrowRight', 'ArrowDown', 'ArrowDown', '+', '+']) await page.keyboard.press(key);
    await page.locator('#structure-atoms').screenshot({ path: join(shotDir, 'components-structure-rotated.png') });
    await page.locator('#trajectory').scrollIntoViewIfNeeded();
    const plot = await page.locator('#trajectory svg').boundingBox();
    await page.mouse.move(plot.x + plot.width * 0.5, plot.y + plot.height * 0.4);
    for (let i = 0; i < 8; i++) await page.mouse.wheel(0, -240);
    await page.waitForTimeout(100);
    await page.locator('#trajectory').screenshot({ path: join(shotDir, 'components-trajectory-zoomed.png') });
    console.log('saved hover, rotated and zoomed views');
    // Export: the SVG must stand alone (no theme variables), the PNG must decode.
    for (const id of ['parity-iso', 'structure-molecules']) {
      const out = await page.evaluate((i) => window.pwGallery.exportFigure(i), id);
      if (out.svg.includes('var(--')) problems.push(`export of ${id}: SVG still uses theme variables`);
      if (!out.svg.startsWith('<?xml')) problems.push(`export of ${id}: SVG lacks the XML header`);
      const file = join(shotDir, `components-export-${id}.png`);
      writeFileSync(file, Buffer.from(out.png, 'base64'));
      console.log(`saved ${file} (exported PNG; SVG ${out.svg.length} characters)`);
    }
  }
  if (process.argv.includes('--perf')) {
    // Redraw time of the structure view with 972 atoms (per-atom ellipsoids, bonds): keyboard rotation steps,
    // each timed until two animation frames have passed. Printed, never asserted.
    const page = await context.newPage();
    await page.goto(`http://127.0.0.1:${port}/gallery.html?large`);
    await page.waitForSelector('#structure-large svg');
    await page.locator('#structure-large .pw-structure').focus();
    const times = [];
    for (let i = 0; i < 12; i++) {
      const t = await page.evaluate(async () => {
        const t0 = performance.now();
        document.activeElement.dispatchEvent(new KeyboardEvent('keydown', { key: 'ArrowRight', bubbles: true }));
        await new Promise((r) => setTimeout(r, 0));
        const t1 = performance.now();
        await new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r)));
        return [t1 - t0, performance.now() - t0];
      });
      times.push(t);
    }
    const script = times.map((t) => t[0]).sort((a, b) => a - b);
    const total = times.map((t) => t[1]).sort((a, b) => a - b);
    const count = await page.locator('#structure-large svg *').count();
    await page.locator('#structure-large').screenshot({ path: join(shotDir, 'components-structure-large.png') });
    console.log(
      `structure view, 972 atoms, ${count} SVG elements, rotation step: script + DOM update median ${script[6].toFixed(0)} ms; ` +
        `until painted median ${total[6].toFixed(0)} ms, max ${total[11].toFixed(0)} ms (headless chromium, --disable-gpu, 2 shared cores)`,
    );
  }
} finally {
  await context.close();
  server.close();
  rmSync(scratch, { recursive: true, force: true });
}
if (problems.length > 0) {
  console.error(problems.join('\n'));
  process.exit(1);
}
