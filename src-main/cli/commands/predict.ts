// `polarweave predict`: apply a trained model to the frames of a file; CSV (one row per frame) or extended
// XYZ (frames with the predicted tensors as info keys and per-atom local tensors). The work is streamed and
// parallel (jobs/stream-predict.ts): constant memory, worker threads, resumable from OUT.checkpoint.json after
// Ctrl-C or a crash, frame-range shards for clusters. The output appears atomically when every frame is done.
import { parseArgs, UsageError, type ParsedArgs } from '../args.ts';
import type { Command, CommandIO } from '../command.ts';
import { CancelledError } from '../../core/errors.ts';
import type { Frame } from '../../core/frame.ts';
import { framePredictionFrom, modelFeaturiser, predictWithFeatures, type Model } from '../../core/model.ts';
import { annotateFrame, tensorPredictionRow, tensorRowColumns, valuePredictionRow, valueRowColumns, type PredictionRow } from '../../core/predict-rows.ts';
import { readExtxyz, formatExtxyzFrame, type FrameRange } from '../../io/extxyz.ts';
import { atomicWriteStream } from '../../io/atomic.ts';
import { loadModel } from '../../io/model-file.ts';
import { csvRecord } from '../../jobs/prediction-text.ts';
import { checkpointPaths, progressLine, streamPredict, type StreamPredictOptions } from '../../jobs/stream-predict.ts';
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
export async function runStreamPredict(opts: Omit<StreamPredictOptions, 'onProgress' | 'signal'>, io: CommandIO): Promise<number> {
  let last = 0;
  const threads = opts.threads ?? availableParallelism();
  io.err(`predict: ${threads} worker thread${threads === 1 ? '' : 's'}\n`);
  try {
    const r = await streamPredict({
      ...opts,
      threads,
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

/** One frame's prediction as a CSV row or an annotated frame: the per-frame work, reusable by other callers. */
export function predictOne(model: Model, frame: Frame, index: number, featurise = modelFeaturiser(model)): { row: PredictionRow; annotated?: Frame } {
  const pred = predictWithFeatures(model, frame, featurise(frame, index), index);
  if (model.target.shape !== 'tensor') return { row: valuePredictionRow(model, index, frame, pred) };
  const fp = framePredictionFrom(model, frame, pred, index);
  return { row: tensorPredictionRow(index, frame, fp), annotated: annotateFrame(frame, fp, model) };
}

/** One CSV record as `predict` writes it (shared with the streaming writer). */
export const csvLine = csvRecord;

export async function runPredict(modelPath: string, input: string, output: string, range: FrameRange, io: CommandIO): Promise<number> {
  const format = /\.csv$/i.test(output) ? 'csv' : /\.(ext)?xyz(\.gz)?$/i.test(output) ? 'extxyz' : null;
  if (!format) throw new UsageError(`cannot tell the output format from "${output}": use .csv or .extxyz`);
  const model = await loadModel(modelPath);
  if (format === 'extxyz' && model.target.shape !== 'tensor') throw new UsageError('extended XYZ output is for tensor models; use .csv');
  const featurise = modelFeaturiser(model);
  const out = atomicWriteStream(output);
  const columns = model.target.shape === 'tensor' ? tensorRowColumns() : valueRowColumns(model);
  let count = 0;
  let outside = 0;
  const started = Date.now();
  let lastReport = started;
  try {
    if (format === 'csv') {
      await out.write('# Polarweave predictions (model estimates) from ' + modelPath.replace(/\n/g, ' ') + '\n');
      await out.write(csvLine(columns));
    }
    const start = range.start ?? 0;
    const step = range.step ?? 1;
    let k = 0;
    for await (const frame of readExtxyz(input, { signal: io.signal, range })) {
      if (io.signal.aborted) throw new CancelledError();
      const index = frame.source?.index ?? start + k * step;
      k++;
      const { row, annotated } = predictOne(model, frame, index, featurise);
      if (row.outside === true) outside++;
      if (format === 'csv') await out.write(csvLine(columns.map((c) => row[c] ?? '')));
      else await out.write(formatExtxyzFrame(annotated as Frame));
      count++;
      const now = Date.now();
      if (now - lastReport > 1000) {
        lastReport = now;
        io.err(`predict: ${count} frames\n`);
      }
      await new Promise((r) => setTimeout(r, 0)); // let Ctrl-C through
    }
    if (io.signal.aborted) throw new CancelledError();
    await out.commit();
  } catch (e) {
    await out.abort();
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
  description: 'CSV: one row per frame with ε, α_CM, α_c (Voigt order xx yy zz yz xz xy), principal refractive\nindices and applicability figures. Extended XYZ: the frames with pred_* info keys and per-atom local tensors.\nStreams files of any length on all cores; OUT.partial and OUT.checkpoint.json hold the work done so far, so an\ninterrupted run continues where it stopped when started again with the same arguments.',
  options,
  async run(argv, io) {
    const args = parseArgs(argv, options);
    if (args.positionals.length !== 2) throw new UsageError('give the model file and one input file');
    const output = args.options.output;
    if (!output) throw new UsageError('give the output file with -o OUT.csv or -o OUT.extxyz');
    if (!/\.(csv|extxyz|xyz)$/i.test(output)) throw new UsageError(`cannot tell the output format from "${output}": use .csv or .extxyz (compress it afterwards if needed)`);
    if (args.flags.resume && args.flags.restart) throw new UsageError('give --resume or --restart, not both');
    const threads = args.options.threads === undefined ? undefined : Number(args.options.threads);
    if (threads !== undefined && (!Number.isInteger(threads) || threads < 1)) throw new UsageError(`--threads must be a whole number ≥ 1, got "${args.options.threads}"`);
    const range = parseFrameRange(args);
    return runStreamPredict(
      {
        modelPath: args.positionals[0],
        input: args.positionals[1],
        output,
        range: { start: range.start, stop: range.stop, step: range.step },
        shard: parseShard(args.options.shard),
        threads,
        mode: args.flags.resume ? 'resume' : args.flags.restart ? 'restart' : 'auto',
      },
      io,
    );
  },
};
