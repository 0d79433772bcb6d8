// Bootstrap for running a TypeScript worker entry under plain Node/tsx/vitest (not in the Electron bundle):
// workerData.entry is the file URL of the .ts entry, loaded through tsx's loader.
import { workerData } from 'node:worker_threads';
import { tsImport } from 'tsx/esm/api';

await tsImport(workerData.entry, import.meta.url);
