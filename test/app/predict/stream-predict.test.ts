import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CancelledError, InputError } from '../../../src-main/core/errors.ts';
import { predictFrame } from '../../../src-main/core/learning/model.ts';
import { tensorToVoigt } from '../../../src-main/core/dielectric/tensor.ts';
import { parseCsv } from '../../../src-main/io/csv.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';
import { saveModel } from '../../../src-main/io/model-file.ts';
import { checkpointPaths, shareOfWhatIsLeft, streamPredict, type StreamPredictOptions } from '../../../src-main/app/predict/stream-predict.ts';
import { predictionCsvOptions } from '../../../src-main/io/prediction/prediction-format.ts';
import { tsWorkerFactory } from '../../../src-main/jobs/spawn-ts.ts';
import { jitteredTrajectory, smallModel, trajectoryText } from '../../helpers/trajectory.ts';
import type { Frame } from '../../../src-main/core/geometry/frame.ts';
import type { Model } from '../../../src-main/core/learning/model.ts';

let dir: string;
let model: Model;
let frames: Frame[];
const modelPath = () => join(dir, 'model.json');
const input = () => join(dir, 'traj.extxyz');

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'pw-stream-'));
  model = await smallModel();
  await saveModel(modelPath(), model);
  frames = jitteredTrajectory(20);
  writeFileSync(input(), trajectoryText(frames));
}, 60_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** The CLI's CSV layout for this model. */
const run = (o: StreamPredictOptions) => streamPredict({ csvOptions: predictionCsvOptions(model, o.modelPath), ...o });

describe('streamPredict', () => {
  it('gives the in-memory predictions, in frame order, for a range with a stride (2 threads)', async () => {
    const out = join(dir, 'a.csv');
    const r = await run({ modelPath: modelPath(), input: input(), output: out, range: { start: 1, stop: 18, step: 2 }, threads: 2, batchFrames: 5 });
    expect(r.frames).toBe(9);
    const t = parseCsv(readFileSync(out, 'utf8'), out);
    const idx = Array.from(t.numbers('frame'));
    expect(idx).toEqual([1, 3, 5, 7, 9, 11, 13, 15, 17]);
    const cols = ['xx', 'yy', 'zz', 'yz', 'xz', 'xy'];
    idx.forEach((k, row) => {
      const p = predictFrame(model, frames[k]);
      const v = tensorToVoigt(p.eps);
      const a = tensorToVoigt(p.alphaCM);
      cols.forEach((c, j) => {
        // written as the shortest decimal that reads back the same double
        expect(t.numbers(`eps_${c}`)[row]).toBe(v[j]);
        expect(t.numbers(`alpha_cm_${c}_A3`)[row]).toBeCloseTo(a[j], 6);
      });
    });
    expect(t.comments.some((c) => /^Identity: model .*model\.json; model sha256 [0-9a-f]{64}; input traj\.extxyz, \d+ bytes; frames 1:18 step 2$/.test(c))).toBe(true);
    expect(t.comments.join('\n')).not.toMatch(/Written:/);
    expect(existsSync(checkpointPaths(out).checkpoint)).toBe(false);
    expect(existsSync(checkpointPaths(out).partial)).toBe(false);
  }, 60_000);

  it('resumes after an interruption and ends with the bytes of an uninterrupted run', async () => {
    const clean = join(dir, 'clean.csv');
    const whole = await run({ modelPath: modelPath(), input: input(), output: clean, threads: 2, batchFrames: 10 });
    expect(whole.summary!.frames).toBe(20);
    const out = join(dir, 'resumed.csv');
    const stop = new AbortController();
    let seen = 0;
    const first = run({
      modelPath: modelPath(), input: input(), output: out, threads: 2, batchFrames: 4, signal: stop.signal,
      onProgress: (p) => {
        seen = p.done;
        if (p.done >= 8) stop.abort();
      },
    });
    await expect(first).rejects.toBeInstanceOf(CancelledError);
    expect(seen).toBeGreaterThanOrEqual(8);
    expect(seen).toBeLessThan(20);
    const { partial, checkpoint } = checkpointPaths(out);
    expect(existsSync(out)).toBe(false);
    expect(existsSync(partial)).toBe(true);
    const ck = JSON.parse(readFileSync(checkpoint, 'utf8'));
    expect(ck.framesDone).toBe(seen);
    // a crash may leave bytes past the checkpoint: they must be dropped on resume
    writeFileSync(partial, readFileSync(partial, 'utf8') + '999,garbage\n');
    let resumedFrom = -1;
    const r = await run({ modelPath: modelPath(), input: input(), output: out, threads: 1, batchFrames: 20, onProgress: (p) => (resumedFrom = p.resumedFrom) });
    expect(resumedFrom).toBe(seen);
    expect(r.resumedFrom).toBe(seen);
    expect(r.framesThisRun).toBe(20 - seen);
    expect(readFileSync(out, 'utf8')).toBe(readFileSync(clean, 'utf8'));
    expect(existsSync(checkpoint)).toBe(false);
    // the set summary covers the frames of both runs, equal to the bit to the uninterrupted run's
    expect(r.summary).toEqual(whole.summary);
  }, 90_000);

  it('writes the same bytes with workers reused over one-frame batches as with a fresh worker per batch', async () => {
    const fresh = join(dir, 'fresh.csv');
    const reused = join(dir, 'reused.csv');
    await run({ modelPath: modelPath(), input: input(), output: fresh, range: { stop: 9 }, threads: 2, batchFrames: 4, reuseWorkers: false });
    const r = await run({ modelPath: modelPath(), input: input(), output: reused, range: { stop: 9 }, threads: 2, batchFrames: 1 });
    expect(r.frames).toBe(9);
    expect(readFileSync(reused, 'utf8')).toBe(readFileSync(fresh, 'utf8'));
  }, 60_000);

  it('writes the same bytes with batches sized by time and shrinking near the end as with fixed batches', async () => {
    const fixed = join(dir, 'fixed.csv');
    const sized = join(dir, 'sized.csv');
    await run({ modelPath: modelPath(), input: input(), output: fixed, threads: 2, batchFrames: 20 });
    // 4 frames, 4 frames, then each batch half of what is left (until a batch would take under 100 ms)
    const r = await run({ modelPath: modelPath(), input: input(), output: sized, threads: 1, batchSeconds: 10, inProcessBytes: 0 });
    expect(r.frames).toBe(20);
    expect(readFileSync(sized, 'utf8')).toBe(readFileSync(fixed, 'utf8'));
  }, 60_000);

  it('sizes a batch near the end as its share of the frames left', () => {
    // far from the end: the time-based size
    expect(shareOfWhatIsLeft(250, 0, 10_000, 2, 20)).toBe(250);
    // near it: (in the batch + left) / (2 · threads)
    expect(shareOfWhatIsLeft(250, 10, 390, 2, 20)).toBe(100);
    expect(shareOfWhatIsLeft(250, 0, 41, 2, 20)).toBe(11);
    // never below about 100 ms of compute (5 frames at 20 ms), nor below one frame
    expect(shareOfWhatIsLeft(250, 0, 8, 2, 20)).toBe(5);
    expect(shareOfWhatIsLeft(250, 0, 0, 4, 500)).toBe(1);
    // nothing known about what is left (a compressed file without a count): the time-based size
    expect(shareOfWhatIsLeft(250, 0, null, 2, 20)).toBe(250);
    // never above the time-based size
    expect(shareOfWhatIsLeft(3, 0, 10, 1, 200)).toBe(3);
  });

  it('predicts a selection of one small batch in this thread, with the bytes workers give', async () => {
    let started = 0;
    const factory = tsWorkerFactory(new URL('../../../src-main/app/predict/predict-worker.ts', import.meta.url));
    const spawn = () => (started++, factory());
    for (const [name, range] of [['one.csv', { start: 3, stop: 4 }], ['three.extxyz', { start: 5, stop: 8 }]] as const) {
      const here = join(dir, `here-${name}`);
      const there = join(dir, `there-${name}`);
      const r = await run({ modelPath: modelPath(), input: input(), output: here, range, threads: 2, spawn });
      expect(started).toBe(0);
      await run({ modelPath: modelPath(), input: input(), output: there, range, threads: 2, spawn, inProcessBytes: 0 });
      expect(started).toBeGreaterThan(0);
      started = 0;
      expect(r.frames).toBe(range.stop - range.start);
      expect(readFileSync(here, 'utf8')).toBe(readFileSync(there, 'utf8'));
      // written at once: no partial file or checkpoint left, also none that a restarted earlier run had left
      const { partial, checkpoint } = checkpointPaths(here);
      writeFileSync(partial, 'left by an interrupted run');
      writeFileSync(checkpoint, '{}');
      const again = await run({ modelPath: modelPath(), input: input(), output: here, range, threads: 2, spawn, mode: 'restart' });
      expect(started).toBe(0);
      expect(again.summary).toEqual(r.summary);
      expect(readFileSync(here, 'utf8')).toBe(readFileSync(there, 'utf8'));
      expect(existsSync(partial) || existsSync(checkpoint)).toBe(false);
    }
  }, 60_000);

  it('writes extended XYZ frames stamped with frame index and model checksum', async () => {
    const out = join(dir, 'a.extxyz');
    await run({ modelPath: modelPath(), input: input(), output: out, range: { stop: 4 }, threads: 2, batchFrames: 2 });
    const back = parseExtxyz(readFileSync(out, 'utf8'), out);
    expect(back.map((f) => f.info.pred_frame)).toEqual([0, 1, 2, 3]);
    expect(back[2].info.pred_model_sha256).toMatch(/^[0-9a-f]{64}$/);
    const p = predictFrame(model, frames[2]);
    expect((back[2].info.pred_eps as number[])[0]).toBeCloseTo(p.eps[0], 12);
  }, 60_000);

  it('refuses a checkpoint of another selection, and --resume without one', async () => {
    const out = join(dir, 'b.csv');
    const { checkpoint, partial } = checkpointPaths(out);
    writeFileSync(partial, '');
    const good = JSON.parse(JSON.stringify({ format: 'polarweave-predict-checkpoint', version: 1 }));
    writeFileSync(checkpoint, JSON.stringify({ ...good, modelSha256: 'x', input: { path: input(), size: 1, mtimeMs: 1 }, outputFormat: 'csv', selection: { start: 0, stop: null, step: 1 }, shard: null, framesDone: 1, outside: 0, partialBytes: 0, next: { offset: 0, index: 0, line: 1 } }));
    await expect(run({ modelPath: modelPath(), input: input(), output: out, threads: 1 })).rejects.toThrow(/another model file.*--restart/);
    await expect(run({ modelPath: modelPath(), input: input(), output: join(dir, 'c.csv'), threads: 1, mode: 'resume' })).rejects.toBeInstanceOf(InputError);
    const r = await run({ modelPath: modelPath(), input: input(), output: out, range: { stop: 2 }, threads: 1, mode: 'restart' });
    expect(r.frames).toBe(2);
  }, 60_000);

  it('names the file, line and frame of a truncated trajectory', async () => {
    const bad = join(dir, 'bad.extxyz');
    const text = trajectoryText(frames.slice(0, 3));
    writeFileSync(bad, text.slice(0, text.length - 200));
    await expect(run({ modelPath: modelPath(), input: bad, output: join(dir, 'bad.csv'), threads: 1 })).rejects.toThrow(/bad\.extxyz.*frame 2.*truncated/);
  }, 60_000);
});
