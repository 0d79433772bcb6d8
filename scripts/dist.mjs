// `npm run dist`: builds the three bundles (electron-vite build) and packages them with electron-builder —
// Linux AppImage and deb here; Windows (nsis) and macOS (dmg) are configured for runs on those systems.
//   npm run dist                       Linux targets
//   npm run dist -- --win | --mac      other targets (run on that system, or with its tools installed)
//   npm run dist -- --electron-dist D  use an unpacked Electron in folder D instead of downloading its zip
// electron-builder needs Electron's zip for the target platform (from its download host or the cache);
// when it cannot be fetched this script says so and exits with status 1.
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync } from 'node:fs';
import { homedir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(fileURLToPath(new URL('..', import.meta.url)));
const args = process.argv.slice(2);
const pkg = JSON.parse(await (await import('node:fs/promises')).readFile(join(root, 'package.json'), 'utf8'));
const electronVersion = JSON.parse(await (await import('node:fs/promises')).readFile(join(root, 'node_modules/electron/package.json'), 'utf8')).version;
const electronDistIndex = args.indexOf('--electron-dist');
const electronDist = electronDistIndex >= 0 ? resolve(args[electronDistIndex + 1]) : undefined;
const platform = args.includes('--win') ? 'win' : args.includes('--mac') ? 'mac' : 'linux';

export const builderConfig = {
  appId: 'org.polarweave.app',
  productName: 'Polarweave',
  copyright: 'MIT licence',
  directories: { output: 'dist', buildResources: 'resources' },
  files: ['out/**/*', 'package.json', '!**/*.map'],
  extraResources: [{ from: 'resources/demo', to: 'demo', filter: ['*.extxyz.gz', '*.xyz.gz', '*.md'] }],
  asar: true,
  icon: 'resources/icon.png',
  electronVersion,
  ...(electronDist ? { electronDist } : {}),
  linux: { target: ['AppImage', 'deb'], category: 'Science', synopsis: pkg.description, maintainer: 'Polarweave contributors <polarweave@users.noreply.example>' },
  deb: { depends: ['libnss3', 'libgtk-3-0', 'libxss1', 'libasound2'] },
  win: { target: ['nsis'] },
  mac: { target: ['dmg'], category: 'public.app-category.education' },
  fileAssociations: [{ ext: 'pwproj', name: 'Polarweave project', role: 'Editor' }],
  publish: null,
};

function cachedElectronZip() {
  const dirs = [process.env.ELECTRON_CACHE, process.env.electron_config_cache, join(homedir(), '.cache/electron'), join(homedir(), 'Library/Caches/electron'), join(homedir(), 'AppData/Local/electron/Cache')].filter(Boolean);
  for (const d of dirs) {
    if (!existsSync(d)) continue;
    const stack = [d];
    while (stack.length) {
      const cur = stack.pop();
      for (const e of readdirSync(cur, { withFileTypes: true })) {
        if (e.isDirectory()) stack.push(join(cur, e.name));
        else if (e.name.startsWith(`electron-v${electronVersion}-`) && e.name.endsWith('.zip')) return join(cur, e.name);
      }
    }
  }
  return null;
}

async function downloadHostReachable() {
  const mirror = process.env.ELECTRON_MIRROR ?? 'https://github.com/electron/electron/releases/download/';
  try {
    const res = await fetch(`${mirror}v${electronVersion}/SHASUMS256.txt`, { method: 'HEAD', signal: AbortSignal.timeout(8000), redirect: 'follow' });
    return res.ok;
  } catch {
    return false;
  }
}

function fail(message) {
  console.error(`\nnpm run dist: ${message}\n`);
  process.exit(1);
}

console.log('Building the bundles (electron-vite build)…');
const b = spawnSync(process.execPath, [join(root, 'node_modules/electron-vite/bin/electron-vite.js'), 'build'], { cwd: root, stdio: 'inherit' });
if (b.status !== 0) fail('electron-vite build failed (see above); nothing was packaged.');

if (!electronDist && !cachedElectronZip() && !(await downloadHostReachable())) {
  fail(
    `cannot package: electron-builder needs the Electron ${electronVersion} zip for this platform, it is not in the ` +
      `local cache, and its download host cannot be reached from this machine (offline?).\n` +
      `  Fix: run this on a machine with internet access, or put the zip in ~/.cache/electron, or pass an unpacked ` +
      `Electron with  npm run dist -- --electron-dist /path/to/electron-folder\n` +
      `  The bundles in out/ were built and are fine; only the packaging step was skipped.`,
  );
}

const builder = await import('electron-builder');
const targets = platform === 'win' ? builder.Platform.WINDOWS.createTarget() : platform === 'mac' ? builder.Platform.MAC.createTarget() : builder.Platform.LINUX.createTarget();
try {
  const files = await builder.build({ targets, config: builderConfig, projectDir: root });
  console.log(`\nPackaged:\n${files.map((f) => `  ${f}`).join('\n')}`);
} catch (e) {
  fail(`electron-builder failed: ${e?.message ?? e}\n  (If it failed while fetching Electron, see the fix above: --electron-dist or a cached zip.)`);
}
