// Builds the app service with its real parts: the job runner (worker threads), the structure readers and
// the model-file codec. The Electron shell and the browser host each call this once.
import { AppService, type ModelCodec } from './service.ts';
import { parseModel, serialiseModel } from '../io/model-file.ts';
import { JobRunner, type WorkerFactory } from '../jobs/runner.ts';
import { structureReaders } from './structure-readers.ts';
import type { PathAccess } from './path-access.ts';
import type { Model } from '../core/learning/model.ts';

export const modelCodec: ModelCodec = {
  serialise: (model) => serialiseModel(model as Model),
  parse: (text, fileName) => parseModel(text, fileName),
};

/** The job runner of the app: at most `concurrency` jobs at once (default 2), shared by every session of a host. */
export function createRunner(options: { spawn: WorkerFactory; concurrency?: number }): JobRunner {
  return new JobRunner({ spawn: options.spawn, concurrency: options.concurrency ?? 2 });
}

/** One session's service; give `runner` to share one between sessions (the browser host's tabs). */
export function createAppService(options: { spawn: WorkerFactory; demoDir: string; concurrency?: number; paths?: PathAccess; runner?: JobRunner }): AppService {
  return new AppService({
    paths: options.paths,
    runner: options.runner ?? createRunner(options),
    codec: modelCodec,
    readers: structureReaders,
    demoDir: options.demoDir,
  });
}
