// The window in Debian's Chromium against the browser host, for the scripts that drive it (screenshots, the
// quick-look timing): renderer built, host started, a headless browser with its profile in a temporary folder.
// `close()` stops both and removes the folder.
import { existsSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

export const root = resolve(fileURLToPath(new URL('..', import.meta.url)));
export const CHROMIUM = '/usr/bin/chromium';

export async function openBrowserSession(name, viewport) {
  if (!existsSync(CHROMIUM)) {
    console.error(`${name}: ${CHROMIUM} is missing; install Debian's Chromium (apt-get install -y chromium).`);
    process.exit(1);
  }
  const outDir = join(root, 'docs/screenshots');
  mkdirSync(outDir, { recursive: true });
  const scratch = mkdtempSync(join(tmpdir(), `pw-${name}-`));
  process.env.XDG_CONFIG_HOME = join(scratch, 'config');
  process.env.XDG_CACHE_HOME = join(scratch, 'cache');
  const { buildRenderer } = await import('./build-renderer.mjs');
  await buildRenderer({ quiet: true });
  const { tsImport } = await import('tsx/esm/api');
  const { startBrowserHost } = await tsImport('../src-main/host/browser-host.ts', import.meta.url);
  const { chromium } = await import('playwright-core');
  const host = await startBrowserHost();
  const context = await chromium.launchPersistentContext(join(scratch, 'profile'), {
    executablePath: CHROMIUM,
    headless: true,
    viewport,
    deviceScaleFactor: 1,
    args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-quic', '--no-first-run', '--disable-component-update', '--disable-sync'],
  });
  const page = context.pages()[0] ?? (await context.newPage());
  page.on('pageerror', (e) => console.error('page error:', e.message));
  const close = async () => {
    await context.close();
    await host.stop();
    rmSync(scratch, { recursive: true, force: true });
  };
  return { host, context, page, outDir, close };
}
