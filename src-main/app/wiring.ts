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

export function createAppService(options: { spawn: WorkerFactory; demoDir: string; concurrency?: number; paths?: PathAccess }): AppService {
  return new AppService({
    paths: options.paths,
    runner: new JobRunner({ spawn: options.spawn, concurrency: options.concurrency ?? 2 }),
    codec: modelCodec,
    readers: structureReaders,
    demoDir: options.demoDir,
  });
}
