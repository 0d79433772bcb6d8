// Training on worker threads (app/training-threads.ts, core/learning/model.ts TrainingThreads: the first pass, and a
// linear model's applicability beside the fit) gives the model of one thread bit for bit (a hash of every number but the creation date), for a linear model, a sparse
// kernel model (environments sampled with their λ=2 blocks) and a model with a feature selection; batches that
// come back out of order are merged in frame order, at most two per thread are out at once, a bad frame gives the
// error one thread gives, and a cancel stops the pass.
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { serialize } from 'node:v8';
import { afterAll, describe, expect, it } from 'vitest';
import { CancelledError, InputError } from '../../src-main/core/errors.ts';
import type { Frame } from '../../src-main/core/geometry/frame.ts';
import { frameSummaries, sampledApplicability, trainModel, type Model, type TrainingThreads } from '../../src-main/core/learning/model.ts';
import type { ModelSettings, TrainRequest } from '../../src-main/core/learning/model-types.ts';
import { parseExtxyz } from '../../src-main/io/extxyz.ts';
import { trainingThreads } from '../../src-main/app/training-threads.ts';

// real DFT water frames: 8 frames of 48 atoms (test/fixtures/water-dft-sample.extxyz, see its README)
const frames: Frame[] = parseExtxyz(readFileSync(new URL('../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water-dft-sample.extxyz');
const request = (settings: Partial<ModelSettings> = {}): TrainRequest => ({ tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm', settings });
const CREATED = '2026-01-01T00:00:00.000Z';

function modelHash(model: Model): string {
  const { createdAt: _, ...numbers } = model;
  return createHash('sha256').update(serialize(numbers)).digest('hex');
}

/**
 * In this thread, like the workers, but each batch answers after a delay that makes later batches overtake earlier
 * ones, and the applicability after the fit has long finished.
 */
function shuffledRunner(threads: number): TrainingThreads & { most: number; batches: number; asides: number } {
  let out = 0;
  const r = {
    threads,
    minAtoms: 0,
    most: 0,
    batches: 0,
    asides: 0,
    async frames(batch: Parameters<TrainingThreads['frames']>[0], signal?: AbortSignal) {
      out++;
      r.most = Math.max(r.most, out);
      r.batches++;
      const wait = 30 - 10 * (batch.indices[0] % 3);
      await new Promise((res) => setTimeout(res, wait));
      try {
        return frameSummaries(structuredClone(batch), signal);
      } finally {
        out--;
      }
    },
    async applicability(input: Parameters<NonNullable<TrainingThreads['applicability']>>[0]) {
      r.asides++;
      await new Promise((res) => setTimeout(res, 200));
      return sampledApplicability(structuredClone(input));
    },
  };
  return r;
}

const threads = trainingThreads(2, { minAtoms: 0 });
afterAll(() => threads.close());

describe('the first pass of training on several threads', () => {
  const cases: [string, Partial<ModelSettings>][] = [
    ['linear (defaults)', {}],
    ['sparse kernel', { kernelExponent: 2, anchorEnvironments: 40 }],
    ['feature selection', { maxFeatures: 40 }],
  ];
  for (const [name, settings] of cases) {
    it(`gives the one-thread model bit for bit on 2 worker threads: ${name}`, async () => {
      const one = await trainModel(frames, request(settings), {}, null);
      const stages: string[] = [];
      const two = await trainModel(frames, request(settings), { threads, onProgress: (p) => stages.push(`${p.stage} ${p.done}/${p.total}`) }, null);
      expect(modelHash({ ...two, createdAt: CREATED })).toBe(modelHash({ ...one, createdAt: CREATED }));
      // progress after every frame, in order
      expect(stages.filter((s) => s.startsWith('features '))).toEqual(frames.map((_, f) => `features ${f + 1}/${frames.length}`));
    }, 120_000);
  }

  it('merges batches that come back out of order in frame order, with at most two per thread out at once', async () => {
    const one = await trainModel(frames, request(), {}, null);
    const runner = shuffledRunner(3);
    const many = await trainModel(frames, request(), { threads: runner }, null);
    expect(modelHash({ ...many, createdAt: CREATED })).toBe(modelHash({ ...one, createdAt: CREATED }));
    expect(runner.batches).toBe(frames.length);
    expect(runner.asides).toBe(1);
    expect(runner.most).toBeGreaterThan(1);
    expect(runner.most).toBeLessThanOrEqual(6);
  }, 60_000);

  it('keeps the pass in the calling thread below the runner’s atom count', async () => {
    const runner = shuffledRunner(2);
    runner.minAtoms = 10_000;
    await trainModel(frames, request(), { threads: runner }, null);
    expect(runner.batches).toBe(0);
  }, 60_000);

  it('fails on a bad frame with the error one thread gives', async () => {
    const bad = frames.map((f) => ({ ...f, positions: Float64Array.from(f.positions) }));
    // atom 2 of frame 5 onto atom 1
    bad[5].positions.set(bad[5].positions.subarray(0, 3), 3);
    const errorOf = async (hooks: Parameters<typeof trainModel>[2]) => {
      try {
        await trainModel(bad, request(), hooks, null);
      } catch (e) {
        return e;
      }
      return null;
    };
    const one = await errorOf({});
    const many = await errorOf({ threads: shuffledRunner(3) });
    const workers = await errorOf({ threads });
    expect(one).toBeInstanceOf(InputError);
    for (const e of [many, workers]) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).message).toBe((one as InputError).message);
      expect((e as InputError).where).toEqual((one as InputError).where);
    }
  }, 120_000);

  it('stops with CancelledError when cancelled during the pass', async () => {
    const controller = new AbortController();
    const pool = trainingThreads(2, { minAtoms: 0 });
    let features = 0;
    const run = trainModel(frames, request(), {
      threads: pool,
      signal: controller.signal,
      onProgress: (p) => {
        if (p.stage === 'features' && ++features === 1) controller.abort();
      },
    }, null);
    await expect(run).rejects.toBeInstanceOf(CancelledError);
    expect(features).toBe(1);
    await pool.close();
  }, 120_000);
});
