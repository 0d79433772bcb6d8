// A WorkerFactory for runs outside Electron (the CLI, tsx, vitest). From the pre-built bundles (out/cli/, made by
// scripts/build-cli.mjs, which set globalThis.__polarweaveBundle to their folder) a worker starts from the bundled
// entry of the same name (predict-worker.ts → predict-worker.mjs): plain JavaScript, nothing transpiled. From the
// sources, each worker loads the given .ts entry through ts-worker.mjs (tsx).
// The Electron bundle uses electron-vite's `?nodeWorker` import instead (see shell/index.ts).
import { existsSync } from 'node:fs';
import { createRequire } from 'node:module';
import type { WorkerFactory } from './runner.ts';

/** The bundled entry for a .ts worker entry, when running from the bundles and it was built; else null. */
export function bundledWorkerEntry(entry: URL): URL | null {
  const dir = (globalThis as { __polarweaveBundle?: unknown }).__polarweaveBundle;
  if (typeof dir !== 'string') return null;
  const name = entry.pathname.slice(entry.pathname.lastIndexOf('/') + 1).replace(/\.ts$/, '.mjs');
  const bundled = new URL(name, dir);
  return existsSync(bundled) ? bundled : null;
}

/**
 * node:worker_threads, loaded when the first worker starts (process.getBuiltinModule from Node 20.16): a run that
 * predicts its few frames in its own thread never pays for loading it (io/builtin.ts does the same for io/ and app/).
 */
function workerClass(): typeof import('node:worker_threads').Worker {
  return (process.getBuiltinModule?.('node:worker_threads') ?? (createRequire(import.meta.url)('node:worker_threads') as typeof import('node:worker_threads'))).Worker;
}

export function tsWorkerFactory(entry: URL): WorkerFactory {
  const bundled = bundledWorkerEntry(entry);
  if (bundled) return () => new (workerClass())(bundled);
  const bootstrap = new URL('./ts-worker.mjs', import.meta.url);
  return () => new (workerClass())(bootstrap, { workerData: { entry: entry.href } });
}
