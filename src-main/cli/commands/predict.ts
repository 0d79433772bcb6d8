// `polarweave predict`: apply a trained model to the frames of a file; CSV (one row per frame) or extended
// XYZ (frames with the predicted tensors as info keys and per-atom local tensors). Extended XYZ input is
// streamed and parallel (app/predict/stream-predict.ts): constant memory, worker threads, resumable from
// OUT.checkpoint.json after Ctrl-C or a crash, frame-range shards for clusters. Other inputs (CIF) go through
// runPredict (one pass, atomic, Ctrl-C leaves no partial file). The output appears when every frame is done.
import { parseArgs, UsageError, type ParsedArgs } from '../args.ts';
import type { Command, CommandIO } from '../command.ts';
import { CancelledError } from '../../core/errors.ts';
import type { Frame } from '../../core/geometry/frame.ts';
import { framePredictionFrom, modelPredictor, type Model, type Predictor } from '../../core/learning/model.ts';
import { findMolecules } from '../../core/geometry/molecules.ts';
import { annotateFrame, predictionCsvOptions, tensorCsvWriter, tensorPredictionRow, valuePredictionRow, valueRowColumns, type PredictionRow, type TensorRow } from '../../io/prediction/prediction-format.ts';
import { csvRecord } from '../../io/csv.ts';
import { formatExtxyzFrame, type FrameRange } from '../../io/extxyz.ts';
import { readStructures } from '../../io/read-structures.ts';
import { atomicWriteStream, type AtomicWriteStream } from '../../io/atomic.ts';
import { loadModel } from '../../io/model-file.ts';
import { checkpointPaths, progressLine, streamPredict, type StreamPredictOptions } from '../../app/predict/stream-predict.ts';
import { availableParallelism } from 'node:os';

const options = [
  { name: 'frames', value: 'A:B', help: 'frames A … B−1 (0-based; either end may be left out)' },
  { name: 'stride', value: 'K', help: 'every K-th frame of the range', default: '1' },
  { name: 'output', short: 'o', value: 'OUT.csv|OUT.extxyz', help: 'output file; the extension chooses the format' },
  { name: 'threads', value: 'N', help: 'worker threads (default: the number of cores)' },
  { name: 'shard', value: 'K/N', help: 'predict only part K of N equal parts of the selected frames (cluster job arrays; join with `merge`)' },
  { name: 'resume', flag: true, help: 'continue from OUT.checkpoint.json, and fail if there is none (by default a matching checkpoint is continued)' },
  { name: 'restart', flag: true, help: 'ignore an earlier checkpoint and start again' },
];

/** --shard K/N → {k, n}, 1 ≤ K ≤ N. */
export function parseShard(spec: string | undefined): { k: number; n: number } | undefined {
  if (spec === undefined) return undefined;
  const m = /^(\d+)\/(\d+)$/.exec(spec.trim());
  const k = m ? Number(m[1]) : NaN;
  const n = m ? Number(m[2]) : NaN;
  if (!m || n < 1 || k < 1 || k > n) throw new UsageError(`--shard must look like K/N with 1 ≤ K ≤ N (e.g. 3/8), got "${spec}"`);
  return { k, n };
}

/** The streaming run behind the command: progress on stderr, a clear note on Ctrl-C. */
export async function runStreamPredict(opts: Omit<StreamPredictOptions, 'onProgress' | 'signal' | 'csvOptions'>, io: CommandIO): Promise<number> {
  let last = 0;
  const threads = opts.threads ?? availableParallelism();
  io.err(`predict: ${threads} worker thread${threads === 1 ? '' : 's'}\n`);
  try {
    const model = await loadModel(opts.modelPath);
    if (/\.(ext)?xyz$/i.test(opts.output) && model.target.shape !== 'tensor') throw new UsageError('extended XYZ output is for tensor models; use .csv');
    const r = await streamPredict({
      ...opts,
      threads,
      csvOptions: model.target.shape === 'tensor' ? predictionCsvOptions(model, opts.modelPath) : undefined,
      signal: io.signal,
      onProgress: (p) => {
        const now = Date.now();
        if (now - last < 1000 && p.fraction !== 1) return;
        last = now;
        io.err(`predict: ${progressLine(p)}\n`);
      },
    });
    if (r.resumedFrom > 0) io.err(`predict: continued from frame ${r.resumedFrom} of an interrupted run\n`);
    io.err(`predict: ${r.framesThisRun} frames in ${r.seconds.toFixed(1)} s (${(r.framesThisRun / Math.max(r.seconds, 1e-9)).toFixed(2)} frames/s, ${r.threads} thread${r.threads === 1 ? '' : 's'})\n`);
    io.out(`${r.frames} frames predicted, written to ${r.output}\n`);
    if (r.outside > 0) io.out(`warning: ${r.outside} of ${r.frames} frames have atoms outside the training data (column "outside"); treat those predictions with care\n`);
    io.out('Predictions are model estimates.\n');
    return 0;
  } catch (e) {
    if (e instanceof CancelledError) {
      const { checkpoint } = checkpointPaths(opts.output);
      io.err(`polarweave predict: stopped on request. The frames done so far are kept (${checkpoint}); run the same command again to continue, or add --restart to start over.\n`);
      return 130;
    }
    throw e;
  }
}

export function parseFrameRange(args: ParsedArgs): FrameRange {
  const range: FrameRange = {};
  const spec = args.options.frames;
  if (spec !== undefined) {
    const m = /^(\d*):(\d*)$/.exec(spec.trim());
    if (!m) throw new UsageError(`--frames must look like A:B (e.g. 0:100, 50:, :10), got "${spec}"`);
    if (m[1]) range.start = Number(m[1]);
    if (m[2]) range.stop = Number(m[2]);
    if (range.start !== undefined && range.stop !== undefined && range.stop <= range.start) throw new UsageError(`--frames ${spec} selects no frame`);
  }
  const stride = Number(args.options.stride ?? '1');
  if (!Number.isInteger(stride) || stride < 1) throw new UsageError(`--stride must be a whole number ≥ 1, got "${args.options.stride}"`);
  range.step = stride;
  return range;
}

/** One frame's prediction as a table row and an annotated frame: the per-frame work, reusable by other callers. */
export function predictOne(model: Model, frame: Frame, index: number, predict: Predictor = modelPredictor(model)): { tensorRow?: TensorRow; valueRow?: PredictionRow; annotated?: Frame; outside: boolean } {
  const pred = predict(frame, index);
  if (model.target.shape !== 'tensor') return { valueRow: valuePredictionRow(model, index, frame, pred), outside: pred.applicability.outside };
  const fp = framePredictionFrom(model, frame, pred, index);
  return { tensorRow: tensorPredictionRow(index, frame, fp, model), annotated: annotateFrame(frame, fp, model), outside: fp.applicability.outside };
}

/** The CSV layout of a tensor model's predictions (io/csv.ts columns plus the applicability figures). */

/** One CSV record as `predict` writes it (shared with the streaming writer). */
export const csvLine = csvRecord;

export async function runPredict(modelPath: string, input: string, output: string, range: FrameRange, io: CommandIO): Promise<number> {
  const format = /\.csv$/i.test(output) ? 'csv' : /\.(ext)?xyz(\.gz)?$/i.test(output) ? 'extxyz' : null;
  if (!format) throw new UsageError(`cannot tell the output format from "${output}": use .csv or .extxyz`);
  const model = await loadModel(modelPath);
  if (format === 'extxyz' && model.target.shape !== 'tensor') throw new UsageError('extended XYZ output is for tensor models; use .csv');
  const predict = modelPredictor(model);
  // one writer, chosen by format; each is atomic: nothing appears at `output` unless every frame was written
  const tensorCsv = format === 'csv' && model.target.shape === 'tensor' ? tensorCsvWriter(output, predictionCsvOptions(model, modelPath)) : null;
  const stream = tensorCsv ? null : atomicWriteStream(output);
  let count = 0;
  let outside = 0;
  const started = Date.now();
  let lastReport = started;
  try {
    if (stream && format === 'csv') {
      await stream.write(`# Polarweave predictions (model estimates) from ${modelPath.replace(/\n/g, ' ')}\n`);
      await stream.write(csvLine(valueRowColumns(model)));
    }
    const start = range.start ?? 0;
    const step = range.step ?? 1;
    let k = 0;
    for await (const frame of readStructures(input, { signal: io.signal, range })) {
      if (io.signal.aborted) throw new CancelledError();
      const index = frame.source?.index ?? start + k * step;
      k++;
      const one = predictOne(model, frame, index, predict);
      if (one.outside) outside++;
      if (tensorCsv) await tensorCsv.writeRow(one.tensorRow as TensorRow);
      else if (format === 'csv') await (stream as AtomicWriteStream).write(csvLine(valueRowColumns(model).map((c) => (one.valueRow as PredictionRow)[c] ?? '')));
      else {
        const annotated = one.annotated as Frame;
        annotated.arrays.molecule = { kind: 'int', width: 1, data: findMolecules(frame).molecule };
        await (stream as AtomicWriteStream).write(formatExtxyzFrame(annotated));
      }
      count++;
      const now = Date.now();
      if (now - lastReport > 1000) {
        lastReport = now;
        io.err(`predict: ${count} frames\n`);
      }
      await new Promise((r) => setTimeout(r, 0)); // let Ctrl-C through
    }
    if (io.signal.aborted) throw new CancelledError();
    await (tensorCsv ?? (stream as AtomicWriteStream)).commit();
  } catch (e) {
    await (tensorCsv ?? (stream as AtomicWriteStream)).abort();
    throw e;
  }
  const secs = (Date.now() - started) / 1000;
  io.err(`predict: ${count} frames in ${secs.toFixed(1)} s\n`);
  io.out(`${count} frames predicted, written to ${output}\n`);
  if (outside > 0) io.out(`warning: ${outside} of ${count} frames have atoms outside the training data (column "outside"); treat those predictions with care\n`);
  io.out('Predictions are model estimates.\n');
  return 0;
}

export const predictCommand: Command = {
  name: 'predict',
  summary: 'predict cell tensors of frames with a trained model',
  usage: 'MODEL IN [--frames A:B] [--stride K] [--shard K/N] [--threads N] [--resume|--restart] -o OUT.csv|OUT.extxyz',
  description:
    'CSV: one row per frame with ε, the learnt cell polarisability (α_CM for route cm, α_c for direct), principal\n' +
    'values, refractive indices and applicability figures. Extended XYZ: the frames with pred_* info keys, per-atom\n' +
    'local tensors (9 numbers per atom), the feature-space distance per atom and the molecule index per atom.\n' +
    'Extended XYZ input is streamed on all cores; OUT.partial and OUT.checkpoint.json hold the work done so far, so an\n' +
    'interrupted run continues where it stopped when started again with the same arguments.',
  options,
  async run(argv, io) {
    const args = parseArgs(argv, options);
    if (args.positionals.length !== 2) throw new UsageError('give the model file and one input file');
    const output = args.options.output;
    if (!output) throw new UsageError('give the output file with -o OUT.csv or -o OUT.extxyz');
    if (args.flags.resume && args.flags.restart) throw new UsageError('give --resume or --restart, not both');
    const threads = args.options.threads === undefined ? undefined : Number(args.options.threads);
    if (threads !== undefined && (!Number.isInteger(threads) || threads < 1)) throw new UsageError(`--threads must be a whole number ≥ 1, got "${args.options.threads}"`);
    const shard = parseShard(args.options.shard);
    const range = parseFrameRange(args);
    const input = args.positionals[1];
    if (!/\.(ext)?xyz(\.gz)?$/i.test(input)) {
      if (shard || args.flags.resume || threads !== undefined) throw new UsageError('--shard, --threads and --resume are for extended XYZ trajectories');
      return runPredict(args.positionals[0], input, output, range, io);
    }
    if (!/\.(csv|extxyz|xyz)$/i.test(output)) throw new UsageError(`cannot tell the output format from "${output}": use .csv or .extxyz (compress it afterwards if needed)`);
    return runStreamPredict(
      {
        modelPath: args.positionals[0],
        input,
        output,
        range: { start: range.start, stop: range.stop, step: range.step },
        shard,
        threads,
        mode: args.flags.resume ? 'resume' : args.flags.restart ? 'restart' : 'auto',
      },
      io,
    );
  },
};
