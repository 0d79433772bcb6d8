// A WorkerFactory for runs outside Electron (the CLI, tsx, vitest). From the pre-built bundles (out/cli/, made by
// scripts/build-cli.mjs, which set globalThis.__polarweaveBundle to their folder) a worker starts from the bundled
// entry of the same name (predict-worker.ts → predict-worker.mjs): plain JavaScript, nothing transpiled. From the
// sources, each worker loads the given .ts entry through ts-worker.mjs (tsx).
// The Electron bundle uses electron-vite's `?nodeWorker` import instead (see shell/index.ts).
import { existsSync } from 'node:fs';
import { Worker } from 'node:worker_threads';
import type { WorkerFactory } from './runner.ts';

/** The bundled entry for a .ts worker entry, when running from the bundles and it was built; else null. */
export function bundledWorkerEntry(entry: URL): URL | null {
  const dir = (globalThis as { __polarweaveBundle?: unknown }).__polarweaveBundle;
  if (typeof dir !== 'string') return null;
  const name = entry.pathname.slice(entry.pathname.lastIndexOf('/') + 1).replace(/\.ts$/, '.mjs');
  const bundled = new URL(name, dir);
  return existsSync(bundled) ? bundled : null;
}

export function tsWorkerFactory(entry: URL): WorkerFactory {
  const bundled = bundledWorkerEntry(entry);
  if (bundled) return () => new Worker(bundled);
  const bootstrap = new URL('./ts-worker.mjs', import.meta.url);
  return () => new Worker(bootstrap, { workerData: { entry: entry.href } });
}
