// A WorkerFactory for source (tsx/vitest) runs: each worker loads the given .ts entry through ts-worker.mjs.
// The Electron bundle uses electron-vite's `?nodeWorker` import instead (see shell/index.ts).
import { Worker } from 'node:worker_threads';
import type { WorkerFactory } from './runner.ts';

export function tsWorkerFactory(entry: URL): WorkerFactory {
  const bootstrap = new URL('./ts-worker.mjs', import.meta.url);
  return () => new Worker(bootstrap, { workerData: { entry: entry.href } });
}
