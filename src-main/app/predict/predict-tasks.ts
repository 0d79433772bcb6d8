// The 'predict-chunk' job task: parse a batch of raw extended XYZ frames (bytes cut out by the main thread),
// predict each with the model (loaded once per worker, its file checksum checked), and return the formatted
// output text of the batch in frame order, with the applicability figures the caller summarises.
import { createHash } from 'node:crypto';
import { CancelledError, InputError, ModelError } from '../../core/errors.ts';
import type { Frame } from '../../core/geometry/frame.ts';
import { modelPredictor, type Model, type Predictor } from '../../core/learning/model.ts';
import { frameFromBytes } from '../../io/extxyz.ts';
import { parseModel, readModelBytes } from '../../io/model-file.ts';
import type { FrameStamp, TensorCsvOptions } from '../../io/prediction/prediction-format.ts';
import { predictFrameText, type PredictFormat } from './predict-frame.ts';
import type { TaskContext, TaskRegistry } from '../../jobs/task.ts';

export interface PredictChunkInput {
  modelPath: string;
  modelSha256: string;
  /** The input file (for error messages). */
  file: string;
  format: PredictFormat;
  stamp: FrameStamp;
  /** CSV layout of a tensor model's rows (io/csv.ts options). */
  csvOptions?: TensorCsvOptions;
  /** Frames in output order: index in the file, 1-based line of the count line, the frame's bytes. */
  frames: { index: number; line: number; bytes: Uint8Array }[];
}

export interface PredictChunkOutput {
  text: string;
  /** Per frame, in order. */
  index: number[];
  outside: boolean[];
  atomsOutside: number[];
  maxDistance: number[];
  /** Time spent parsing and predicting in the worker (ms), without its start-up: sizes the next batches. */
  computeMs: number;
}

export function sha256Hex(data: Uint8Array | string): string {
  return createHash('sha256').update(data).digest('hex');
}

// One model per worker. A reused worker (stream-predict's runner keeps its workers) serves every later batch
// from here: the model in memory is the one whose bytes matched `sha`, so its predictions stay those of the
// checksum written in the output even if the file is replaced meanwhile (only a new worker would notice that).
let cached: { path: string; sha: string; model: Model; predict: Predictor } | null = null;

async function modelFor(path: string, sha: string): Promise<NonNullable<typeof cached>> {
  if (cached && cached.path === path && cached.sha === sha) return cached;
  const bytes = await readModelBytes(path);
  const actual = sha256Hex(bytes);
  if (actual !== sha) throw new ModelError(`${path}: the model file changed while predicting (sha256 ${actual}, expected ${sha}); start again with --restart`);
  const model = parseModel(bytes.toString('utf8'), path);
  cached = { path, sha, model, predict: modelPredictor(model) };
  return cached;
}

/** Parse one frame's bytes (an InputError names the file, line and frame). */
export function parseFrameBytes(file: string, index: number, line: number, bytes: Uint8Array): Frame {
  const f = frameFromBytes(file, bytes, line, index);
  if (!f) throw new InputError('the frame is incomplete', { file, line, frame: index }, 'the file may have been changed while it was read');
  return f;
}

export async function predictChunk(input: PredictChunkInput, ctx: TaskContext): Promise<PredictChunkOutput> {
  const m = await modelFor(input.modelPath, input.modelSha256);
  const t0 = performance.now();
  const out: PredictChunkOutput = { text: '', index: [], outside: [], atomsOutside: [], maxDistance: [], computeMs: 0 };
  const parts: string[] = [];
  const total = input.frames.length;
  for (let j = 0; j < total; j++) {
    if (ctx.signal.aborted) throw new CancelledError();
    const f = input.frames[j];
    const frame = parseFrameBytes(input.file, f.index, f.line, f.bytes);
    const r = predictFrameText(m.model, m.predict, frame, f.index, input.format, input.stamp, input.csvOptions);
    parts.push(r.text);
    out.index.push(f.index);
    out.outside.push(r.outside);
    out.atomsOutside.push(r.atomsOutside);
    out.maxDistance.push(r.maxDistance);
    ctx.progress({ stage: 'predict', done: j + 1, total });
  }
  out.text = parts.join('');
  out.computeMs = performance.now() - t0;
  return out;
}

export const predictTasks: TaskRegistry = { 'predict-chunk': predictChunk };
