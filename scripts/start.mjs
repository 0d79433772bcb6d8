// `npm start`: the desktop window when the Electron binary is installed; otherwise the same app in your
// browser, served on 127.0.0.1 with a per-run access token.
//   npm start                      window (electron-vite dev), or browser host
//   npm start -- --preview         window from the built bundles (electron-vite preview)
//   npm start -- --browser         browser host even when Electron is present
//   npm start -- --port 8123       fixed port for the browser host (default: a random free one)
//   npm start -- --folder DIR      the browser host may open files of DIR by path (no other path is readable)
import { spawn } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(fileURLToPath(new URL('..', import.meta.url)));
const args = process.argv.slice(2);
const require = createRequire(import.meta.url);

/**
 * The Electron executable if it is installed, else null. We do not `require('electron')` itself: for a
 * missing binary, that starts a download (and fails offline); reading its path.txt is the same check
 * without side effects.
 */
function electronBinary() {
  try {
    const dir = dirname(require.resolve('electron/package.json'));
    const pathFile = join(dir, 'path.txt');
    const override = process.env.ELECTRON_OVERRIDE_DIST_PATH;
    const rel = existsSync(pathFile) ? readFileSync(pathFile, 'utf8').trim() : null;
    const exe = override ? join(override, rel ?? 'electron') : rel ? join(dir, 'dist', rel) : null;
    return exe && existsSync(exe) ? exe : null;
  } catch {
    return null;
  }
}

function option(name) {
  const i = args.indexOf(`--${name}`);
  return i >= 0 ? args[i + 1] : undefined;
}

const exe = args.includes('--browser') ? null : electronBinary();
if (exe) {
  const mode = args.includes('--preview') ? 'preview' : 'dev';
  console.log(`Starting the Polarweave window (electron-vite ${mode})…`);
  const child = spawn(process.execPath, [join(root, 'node_modules/electron-vite/bin/electron-vite.js'), mode], { cwd: root, stdio: 'inherit' });
  child.on('exit', (code) => process.exit(code ?? 0));
} else {
  if (!args.includes('--browser')) console.log('No Electron binary is installed here, so Polarweave runs in your browser instead.');
  const { buildRenderer, rendererStale } = await import('./build-renderer.mjs');
  if (rendererStale()) {
    console.log('Building the window (out/renderer)…');
    await buildRenderer({ quiet: true });
  }
  const { tsImport } = await import('tsx/esm/api');
  const { startBrowserHost } = await tsImport('../src-main/host/browser-host.ts', import.meta.url);
  const port = option('port') ? Number(option('port')) : 0;
  const folder = option('folder');
  const host = await startBrowserHost({ port, folder: folder ? resolve(folder) : undefined });
  console.log('');
  console.log('Polarweave is running. Open this address in a browser on this computer:');
  console.log('');
  console.log(`    ${host.url}`);
  console.log('');
  console.log('(Only this computer can connect; the address carries a one-time access token.) Press Ctrl-C to stop.');
  const stop = async () => {
    await host.stop();
    process.exit(0);
  };
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
}
