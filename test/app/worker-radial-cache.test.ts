// The worker threads read and keep their radial tables in the command's cache folder (io/radial-table-store.ts,
// useRadialTableCache): the window's worker (app/worker.ts) for its jobs and the streamed predictor's workers
// (app/predict/predict-worker.ts). Each thread has its own module state, so each entry must set it; the folder is
// the one cacheFolder() names ($POLARWEAVE_CACHE_DIR here, which a worker inherits at its start).
import { readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { streamPredict } from '../../src-main/app/predict/stream-predict.ts';
import { saveModel } from '../../src-main/io/model-file.ts';
import { JobRunner } from '../../src-main/jobs/runner.ts';
import { tsWorkerFactory } from '../../src-main/jobs/spawn-ts.ts';
import { smallModel, trajectoryText, waterFrames } from '../helpers/trajectory.ts';
import { scratchFolders } from '../helpers/scratch.ts';

const tmp = scratchFolders('pw-worker-cache-');
const before = process.env.POLARWEAVE_CACHE_DIR;
afterEach(() => {
  process.env.POLARWEAVE_CACHE_DIR = before;
});

const tables = (folder: string) => {
  try {
    return readdirSync(folder).filter((f) => /^radial-[0-9a-f]{24}\.f64$/.test(f));
  } catch {
    return [];
  }
};

describe('radial tables of the worker threads', () => {
  it('the window worker keeps the tables of its jobs in the cache folder', async () => {
    const cache = join(tmp(), 'cache');
    process.env.POLARWEAVE_CACHE_DIR = cache;
    const model = await smallModel();
    const frames = waterFrames().slice(0, 1);
    const runner = new JobRunner({ spawn: tsWorkerFactory(new URL('../../src-main/app/worker.ts', import.meta.url)), concurrency: 1 });
    try {
      const out = await runner.run<{ predictions: unknown[] }>('predict', { model, frames, frameIndices: [0], reference: { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c' } });
      expect(out.predictions).toHaveLength(1);
    } finally {
      await runner.close();
    }
    expect(tables(cache).length).toBeGreaterThan(0);
  }, 60_000);

  it("the streamed predictor's workers keep theirs there too", async () => {
    const dir = tmp();
    const cache = join(dir, 'cache');
    process.env.POLARWEAVE_CACHE_DIR = cache;
    const modelPath = join(dir, 'model.json');
    await saveModel(modelPath, await smallModel());
    const input = join(dir, 'in.extxyz');
    writeFileSync(input, trajectoryText(waterFrames().slice(0, 2)));
    const spawn = tsWorkerFactory(new URL('../../src-main/app/predict/predict-worker.ts', import.meta.url));
    // inProcessBytes 0: in a worker even though the selection is small
    const r = await streamPredict({ modelPath, input, output: join(dir, 'out.csv'), threads: 1, inProcessBytes: 0, spawn });
    expect(r.frames).toBe(2);
    expect(tables(cache).length).toBeGreaterThan(0);
  }, 60_000);
});
