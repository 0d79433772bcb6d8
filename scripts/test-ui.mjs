// `npm run test:ui`: browser tests of the window. Builds the renderer, starts the browser host in this
// process, drives Debian's Chromium through playwright-core, and runs every test/ui/*.e2e.mjs in order.
// Each test file exports `tests`: [{ name, run(ctx) }], run in sequence on one page (a workflow); after the
// first failure in a file the rest of that file is skipped (counted as failed).
// Prints `ui: N passed, M failed` and exits non-zero on any failure.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = resolve(fileURLToPath(new URL('..', import.meta.url)));
const CHROMIUM = '/usr/bin/chromium';
const only = process.argv[2];

if (!existsSync(CHROMIUM)) installChromium();
if (!existsSync(CHROMIUM)) {
  console.error(`ui: cannot run the browser tests: ${CHROMIUM} is missing. Install Debian's Chromium (sudo apt-get install -y chromium), then run npm test again.`);
  console.error('ui: 0 passed, 1 failed');
  process.exit(1);
}

const scratch = mkdtempSync(join(tmpdir(), 'pw-ui-'));
process.env.XDG_CONFIG_HOME = join(scratch, 'config');
process.env.XDG_CACHE_HOME = join(scratch, 'cache');

console.log('ui: building the renderer…');
const { buildRenderer } = await import('./build-renderer.mjs');
await buildRenderer({ quiet: true });

const { tsImport } = await import('tsx/esm/api');
const { startBrowserHost } = await tsImport('../src-main/host/browser-host.ts', import.meta.url);
const { chromium } = await import('playwright-core');

let passed = 0;
let failed = 0;
const host = await startBrowserHost();
const context = await chromium.launchPersistentContext(join(scratch, 'profile'), {
  executablePath: CHROMIUM,
  headless: true,
  acceptDownloads: true,
  viewport: { width: 1400, height: 900 },
  args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-quic', '--no-first-run', '--disable-component-update', '--disable-sync'],
});
try {
  const files = readdirSync(join(root, 'test/ui')).filter((f) => f.endsWith('.e2e.mjs') && (!only || f.includes(only))).sort();
  for (const file of files) {
    const { tests } = await import(pathToFileURL(join(root, 'test/ui', file)).href);
    const page = await context.newPage();
    const pageErrors = [];
    page.on('pageerror', (e) => pageErrors.push(e.message));
    const ctx = { page, host, root, scratch, pageErrors, state: {} };
    let broken = null;
    for (const t of tests) {
      const label = `${file.replace(/\.e2e\.mjs$/, '')} › ${t.name}`;
      if (broken) {
        failed++;
        console.log(`  ✗ ${label} (skipped after "${broken}" failed)`);
        continue;
      }
      const t0 = Date.now();
      try {
        await t.run(ctx);
        if (pageErrors.length) throw new Error(`the page threw: ${pageErrors.join(' | ')}`);
        passed++;
        console.log(`  ✓ ${label} (${((Date.now() - t0) / 1000).toFixed(1)} s)`);
      } catch (e) {
        failed++;
        broken = t.name;
        console.log(`  ✗ ${label}\n      ${String(e?.stack ?? e).split('\n').slice(0, 6).join('\n      ')}`);
        await page.screenshot({ path: join(scratch, `failure-${file}.png`) }).catch(() => {});
        console.log(`      (screenshot: ${join(scratch, `failure-${file}.png`)})`);
      }
    }
    await page.close();
  }
} finally {
  await context.close();
  await host.stop();
  if (failed === 0) rmSync(scratch, { recursive: true, force: true });
}
console.log(`ui: ${passed} passed, ${failed} failed`);
process.exit(failed === 0 ? 0 : 1);

/**
 * Install Debian's Chromium as CI does (.ci/run), where this process may: as root, or with password-less sudo.
 * Elsewhere it only says what to run.
 */
function installChromium() {
  const apt = ['/usr/bin/apt-get'].find((p) => existsSync(p));
  if (!apt) return;
  const asRoot = typeof process.getuid === 'function' && process.getuid() === 0;
  const sudo = !asRoot && spawnSync('sudo', ['-n', 'true'], { stdio: 'ignore' }).status === 0;
  if (!asRoot && !sudo) return;
  console.error(`ui: ${CHROMIUM} is missing; installing Debian's Chromium (apt-get install -y chromium)…`);
  const run = (args) => spawnSync(asRoot ? args[0] : 'sudo', asRoot ? args.slice(1) : ['-n', ...args], { stdio: 'inherit', env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' } });
  run([apt, 'update', '-qq']);
  run([apt, 'install', '-y', '-qq', 'chromium']);
}
