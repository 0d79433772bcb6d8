// The predict use case: one model, loaded once (bytes read, checksum taken, parsed), applied frame by frame
// (predict-frame.ts) and handed to a sink. The sinks: a prediction file written in one pass (any structure
// kind: CIF and other small inputs; `predictToFile`), the streamed, parallel, resumable file path for long
// extended XYZ trajectories (stream-predict.ts, whose workers run the same per-frame step), the window's
// in-memory predictions (app/tasks.ts) with its CSV export (app/export-csv.ts), and the demo. Whatever the
// sink, a frame gets the same numbers and the same layout (io/prediction/prediction-format.ts).
import { addToSums, emptySums, summaryOfSums, type SetSummary } from '../../core/learning/set-summary.ts';
import { atPlacesOf, withError } from '../../core/numerics/uncertain.ts';
import { createHash } from 'node:crypto';
import { promises as fsp } from 'node:fs';
import { basename } from 'node:path';
import { CancelledError, InputError, ModelError } from '../../core/errors.ts';
import type { Frame } from '../../core/geometry/frame.ts';
import { modelPredictor, type Model, type Predictor } from '../../core/learning/model.ts';
import { compilePredictionKernelsAhead } from '../../core/wasm/ahead.ts';
import { atomicWriteStream } from '../../io/atomic.ts';
import type { FrameRange } from '../../io/extxyz.ts';
import { cachedModel, keepModel } from '../../io/model-cache.ts';
import { parseModel, readModelBytes } from '../../io/model-file.ts';
import { predictionCsvHeader, predictionCsvOptions, type FrameStamp, type Identity, type SelectionText, type TensorCsvOptions } from '../../io/prediction/prediction-format.ts';
import { outputKind, readStructures } from '../../io/read-structures.ts';
import { modelReferenceEps, predictedText, predictOne, setFrameOf, type PredictedFrame, type PredictFormat } from './predict-frame.ts';

export function sha256Hex(data: Uint8Array | string): string {
  return createHash('sha256').update(data).digest('hex');
}

/** A model file read once: its checksum (which names it in every output) and the parsed model. */
export interface LoadedModel {
  /** The path it was read from. */
  path: string;
  /** How outputs name it (default: the path as given). */
  label: string;
  sha256: string;
  model: Model;
  /** The model's prediction route, built once. */
  predict: Predictor;
}

/** Wrap a model already in memory (the window's, the demo's) as a LoadedModel; its checksum is of its file text. */
export function loadedModel(model: Model, label: string, sha256 = ''): LoadedModel {
  return { path: '', label, sha256, model, predict: modelPredictor(model) };
}

/**
 * The model's predictor, built at its first use: a process that only hands the model to its workers (the streamed
 * path) never pays for the tables. A model whose parts do not fit its settings fails on that first use.
 */
function predictorOnDemand(model: Model): Predictor {
  let predict: Predictor | null = null;
  return (frame, index) => (predict ??= modelPredictor(model))(frame, index);
}

/**
 * Read, checksum and parse a model file (once per process: pass the result on rather than the path). The pre-built
 * command takes the model it decoded from these very bytes before, when its cache folder holds it (io/model-cache.ts).
 */
export async function loadModelFile(path: string, label = path): Promise<LoadedModel> {
  // a model is loaded to predict: its kernels compile in the background meanwhile
  compilePredictionKernelsAhead();
  const bytes = await readModelBytes(path);
  const sha256 = sha256Hex(bytes);
  let model = cachedModel(sha256);
  if (model === null) {
    model = parseModel(bytes, path);
    keepModel(sha256, model);
  }
  return { path, label, sha256, model, predict: predictorOnDemand(model) };
}

/** The output format of a prediction file from its name (the registry of file kinds), or an InputError. */
export function predictOutputFormat(output: string, model?: Model): PredictFormat {
  const k = outputKind(output);
  if (!k || k.gzip || (k.kind !== 'csv' && k.kind !== 'extxyz')) {
    throw new InputError(`cannot tell the output format from "${output}"`, { file: output }, 'use .csv or .extxyz (compress it afterwards if needed)');
  }
  if (k.kind === 'extxyz' && model && model.target.shape !== 'tensor') throw new InputError('extended XYZ output is for tensor models', { file: output }, 'write .csv');
  return k.kind;
}

/**
 * The CSV layout of a loaded tensor model's predictions (undefined for vector and scalar models), with the
 * reference columns when `first` (the input's first selected frame) carries the model's reference tensor.
 */
export function csvLayoutOf(m: LoadedModel, first: Frame | null = null): TensorCsvOptions | undefined {
  if (m.model.target.shape !== 'tensor') return undefined;
  return predictionCsvOptions(m.model, m.label, { reference: first !== null && modelReferenceEps(m.model, first, 0) !== null });
}

/** The first frame of a selection of a structure file, or null when it cannot be read (the run itself then says why). */
export async function firstFrameOf(input: string, range: FrameRange = {}, signal?: AbortSignal): Promise<Frame | null> {
  const start = range.start ?? 0;
  try {
    for await (const f of readStructures(input, { signal, range: { start, stop: start + 1 } })) return f;
  } catch {
    return null;
  }
  return null;
}

/** The frames a range selects, as the identity line writes them; undefined when it is the whole file. */
export function rangeSelection(range: FrameRange | undefined): SelectionText | undefined {
  const r = range ?? {};
  const whole = r.start === undefined && r.stop === undefined && (r.step ?? 1) === 1;
  return whole ? undefined : { start: r.start ?? 0, stop: r.stop ?? null, step: r.step ?? 1 };
}

/**
 * The set summary in words, as `predict` prints it: the mean ε over the frames, the principal refractive indices
 * of that mean and its birefringence, with model error bars, and the file's reference beside them. The window's
 * Transfer view shows the same figures (the same SetSummary, rounded by the same rule).
 */
export function setSummaryLines(s: SetSummary): string[] {
  const e = s.errorBars;
  const three = (n: number[], sd?: number[]) => n.map((x, k) => withError(x, sd?.[k])).join(', ');
  const lines = [
    `Mean of the ${s.frames} predicted frame${s.frames === 1 ? '' : 's'} (± model error bar, one standard deviation):`,
    `  ε iso ${withError(s.predicted.epsIso, e?.epsIso)};  n₁, n₂, n₃ of the mean ε ${three(s.predicted.n, e?.n)};  Δn = n₃ − n₁ ${withError(s.predicted.dn, e?.dn)}`,
  ];
  if (s.reference) {
    // the reference to the places of the prediction's error bars, so the two read side by side
    const at = atPlacesOf;
    lines.push(
      `  reference in the file (${s.reference.frames} frame${s.reference.frames === 1 ? '' : 's'}): ε iso ${at(s.reference.epsIso, e?.epsIso)};  n ${s.reference.n.map((x, k) => at(x, e?.n[k])).join(', ')};  Δn ${at(s.reference.dn, e?.dn)}`,
    );
  }
  lines.push(
    e
      ? '  The error bar is the model’s (calibrated on held-out folds in training); it does not shrink with more frames. For the statistical error of a trajectory mean, use `polarweave analyse`.'
      : '  No error bars: this model carries no calibration (saved before error bars existed, or trained on fewer than 3 frames).',
  );
  return lines;
}

/** Where a sink puts each predicted frame. */
export interface PredictSink {
  frame(frame: Frame, one: PredictedFrame): void | Promise<void>;
}

export interface PredictRun {
  frames: number;
  outside: number;
  /** Mean ε, n and Δn of the frames with error bars and the references (core/learning/set-summary.ts); null for vector and scalar models. */
  summary: SetSummary | null;
}

/**
 * Predict frames in order and hand each to the sink. `indexOf` gives a frame's index in its file (default:
 * the reader's source index, else its position). Checks the signal between frames and yields now and then so
 * that a Ctrl-C or a cancel is seen.
 */
export async function predictFrames(
  m: LoadedModel,
  frames: Iterable<Frame> | AsyncIterable<Frame>,
  sink: PredictSink,
  hooks: { signal?: AbortSignal; indexOf?: (frame: Frame, k: number) => number; onFrame?: (done: number) => void } = {},
): Promise<PredictRun> {
  let k = 0;
  let outside = 0;
  const sums = emptySums();
  for await (const frame of frames) {
    if (hooks.signal?.aborted) throw new CancelledError();
    const index = hooks.indexOf ? hooks.indexOf(frame, k) : (frame.source?.index ?? k);
    const one = predictOne(m.model, m.predict, frame, index);
    if (one.outside) outside++;
    const set = setFrameOf(m.model, frame, one);
    if (set) addToSums(sums, set);
    await sink.frame(frame, one);
    k++;
    hooks.onFrame?.(k);
    if (k % 4 === 0) await new Promise((r) => setImmediate(r));
  }
  if (hooks.signal?.aborted) throw new CancelledError();
  return { frames: k, outside, summary: m.model.target.shape === 'tensor' ? summaryOfSums(sums) : null };
}

export interface PredictToFileOptions {
  input: string;
  output: string;
  range?: FrameRange;
  signal?: AbortSignal;
  onFrame?: (done: number) => void;
}

/**
 * The one-pass file sink: every frame of `input` (any structure kind) predicted and written to `output`
 * (CSV or extended XYZ) with the identity line and frame stamps of the streamed path, atomically: nothing
 * appears unless every frame was written.
 */
export async function predictToFile(m: LoadedModel, opts: PredictToFileOptions): Promise<PredictRun & { output: string; format: PredictFormat }> {
  const format = predictOutputFormat(opts.output, m.model);
  const stat = await fsp.stat(opts.input).catch(() => {
    throw new InputError('file not found', { file: opts.input }, 'check the path');
  });
  const identity: Identity = { modelPath: m.label, modelSha256: m.sha256, inputName: basename(opts.input), inputBytes: stat.size, frames: rangeSelection(opts.range) };
  const stamp: FrameStamp = { modelSha256: m.sha256, input: `${identity.inputName}:${stat.size}` };
  const csvOptions = format === 'csv' ? csvLayoutOf(m, await firstFrameOf(opts.input, opts.range, opts.signal)) : undefined;
  const frames = readStructures(opts.input, { signal: opts.signal, range: opts.range });
  const start = opts.range?.start ?? 0;
  const step = opts.range?.step ?? 1;
  const stream = atomicWriteStream(opts.output);
  try {
    if (format === 'csv') await stream.write(predictionCsvHeader(m.model, identity, csvOptions));
    const run = await predictFrames(m, frames, { frame: (frame, one) => stream.write(predictedText(m.model, frame, one, format, stamp, csvOptions)) }, {
      signal: opts.signal,
      indexOf: (frame, k) => frame.source?.index ?? start + k * step,
      onFrame: opts.onFrame,
    });
    await stream.commit();
    return { ...run, output: opts.output, format };
  } catch (e) {
    await stream.abort();
    throw e;
  }
}
