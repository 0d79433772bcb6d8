// Builds only the window (src-renderer → out/renderer) with the same Svelte settings as
// electron.vite.config.ts. Used by `npm start` without Electron, the UI tests and the screenshots.
// Usage: node scripts/build-renderer.mjs [--if-stale]
import { existsSync, readdirSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(fileURLToPath(new URL('..', import.meta.url)));
const outDir = join(root, 'out/renderer');

function newest(dir) {
  let t = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    t = Math.max(t, e.isDirectory() ? newest(p) : statSync(p).mtimeMs);
  }
  return t;
}

/** True when out/renderer is missing or older than any source it is built from. */
export function rendererStale() {
  const index = join(outDir, 'index.html');
  if (!existsSync(index)) return true;
  const built = statSync(index).mtimeMs;
  const sources = Math.max(newest(join(root, 'src-renderer')), statSync(join(root, 'src-main/api/contract.ts')).mtimeMs, newest(join(root, 'src-main/core')));
  return sources > built;
}

export async function buildRenderer({ quiet = false } = {}) {
  const { build } = await import('vite');
  const { svelte, vitePreprocess } = await import('@sveltejs/vite-plugin-svelte');
  await build({
    root: join(root, 'src-renderer'),
    base: './',
    logLevel: quiet ? 'warn' : 'info',
    configFile: false,
    plugins: [svelte({ configFile: false, preprocess: vitePreprocess({ script: true }) })],
    build: { outDir, emptyOutDir: true, rollupOptions: { input: { index: join(root, 'src-renderer/index.html') } } },
  });
}

if (process.argv[1] && resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  if (process.argv.includes('--if-stale') && !rendererStale()) {
    console.log('renderer: out/renderer is up to date');
  } else {
    await buildRenderer();
  }
}
