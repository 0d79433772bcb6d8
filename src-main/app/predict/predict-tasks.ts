// The 'predict-chunk' job task: parse a batch of raw extended XYZ frames (bytes cut out by the main thread),
// predict each with the model (loaded once per worker, its file checksum checked), and return the formatted
// output text of the batch in frame order, with the applicability figures the caller summarises.
import { CancelledError, InputError, ModelError } from '../../core/errors.ts';
import type { Frame } from '../../core/geometry/frame.ts';
import { modelPredictor, type Model, type Predictor } from '../../core/learning/model.ts';
import { frameFromBytes } from '../../io/extxyz.ts';
import type { FrameStamp, TensorCsvOptions } from '../../io/prediction/prediction-format.ts';
import { predictFrameText, type PredictFormat } from './predict-frame.ts';
import { loadModelFile, type LoadedModel } from './prediction.ts';
import type { TaskContext, TaskRegistry } from '../../jobs/task.ts';
import type { SetFrame } from '../../core/learning/set-summary.ts';

export interface PredictChunkInput {
  modelPath: string;
  modelSha256: string;
  /**
   * The model the main thread read (sha256 `modelSha256`), its typed arrays in shared memory (shared-model.ts):
   * the worker predicts with it instead of reading and parsing the file again. Without it, the worker reads the
   * file and checks its checksum.
   */
  model?: Model;
  /** The input file (for error messages). */
  file: string;
  format: PredictFormat;
  stamp: FrameStamp;
  /** CSV layout of a tensor model's rows (io/csv.ts options). */
  csvOptions?: TensorCsvOptions;
  /**
   * Frames in output order: index in the file, 1-based line of the count line, the frame's bytes; in the calling
   * thread (predictFrames), a frame already parsed from those bytes may come with them (never sent to a worker).
   */
  frames: { index: number; line: number; bytes: Uint8Array; parsed?: Frame }[];
}

export interface PredictChunkOutput {
  text: string;
  /** Per frame, in order. */
  index: number[];
  outside: boolean[];
  atomsOutside: number[];
  maxDistance: number[];
  /** Per frame, what the set summary takes (tensor models; null otherwise); the caller adds them in frame order. */
  set: (SetFrame | null)[];
  /** Time spent parsing and predicting in the worker (ms), without its start-up: sizes the next batches. */
  computeMs: number;
}

// One model per worker. A reused worker (stream-predict's runner keeps its workers) serves every later batch
// from here: the model in memory is the one whose bytes matched `sha`, so its predictions stay those of the
// checksum written in the output even if the file is replaced meanwhile. A worker thread is its own JavaScript
// realm: it builds its predictor once, here, and keeps it; the model's arrays are the main thread's, shared.
let cached: LoadedModel | null = null;

async function modelFor(path: string, sha: string, given?: Model): Promise<LoadedModel> {
  if (cached && cached.path === path && cached.sha256 === sha) return cached;
  if (given) {
    cached = { path, label: path, sha256: sha, model: given, predict: modelPredictor(given) };
    return cached;
  }
  const loaded = await loadModelFile(path);
  if (loaded.sha256 !== sha) throw new ModelError(`${path}: the model file changed while predicting (sha256 ${loaded.sha256}, expected ${sha}); start again with --restart`);
  cached = loaded;
  return cached;
}

/** Parse one frame's bytes (an InputError names the file, line and frame). */
export function parseFrameBytes(file: string, index: number, line: number, bytes: Uint8Array): Frame {
  const f = frameFromBytes(file, bytes, line, index);
  if (!f) throw new InputError('the frame is incomplete', { file, line, frame: index }, 'the file may have been changed while it was read');
  return f;
}

export async function predictChunk(input: PredictChunkInput, ctx: TaskContext): Promise<PredictChunkOutput> {
  const m = await modelFor(input.modelPath, input.modelSha256, input.model);
  return predictFrames(m.model, m.predict, input, ctx);
}

/**
 * Milliseconds on a monotonic clock. process.hrtime, not the global `performance`: its first use loads node:perf_hooks,
 * 2–5 ms (more on a busy machine) of a run that predicts one frame.
 */
function nowMs(): number {
  return Number(process.hrtime.bigint()) / 1e6;
}

/**
 * The work of one 'predict-chunk' batch with a model at hand: in a worker (predictChunk), or in the calling
 * thread for a selection too small to be worth starting a worker (stream-predict.ts), with the same code.
 */
export function predictFrames(model: Model, predict: Predictor, input: Omit<PredictChunkInput, 'model' | 'modelPath' | 'modelSha256'>, ctx: Pick<TaskContext, 'signal' | 'progress'>): PredictChunkOutput {
  const t0 = nowMs();
  const out: PredictChunkOutput = { text: '', index: [], outside: [], atomsOutside: [], maxDistance: [], set: [], computeMs: 0 };
  const parts: string[] = [];
  const total = input.frames.length;
  for (let j = 0; j < total; j++) {
    if (ctx.signal.aborted) throw new CancelledError();
    const f = input.frames[j];
    const frame = f.parsed ?? parseFrameBytes(input.file, f.index, f.line, f.bytes);
    const r = predictFrameText(model, predict, frame, f.index, input.format, input.stamp, input.csvOptions);
    parts.push(r.text);
    out.index.push(f.index);
    out.outside.push(r.outside);
    out.atomsOutside.push(r.atomsOutside);
    out.maxDistance.push(r.maxDistance);
    out.set.push(r.set);
    ctx.progress({ stage: 'predict', done: j + 1, total });
  }
  out.text = parts.join('');
  out.computeMs = nowMs() - t0;
  return out;
}

export const predictTasks: TaskRegistry = { 'predict-chunk': predictChunk };
