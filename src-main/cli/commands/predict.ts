// `polarweave predict`: apply a trained model to the frames of a file; CSV (one row per frame) or extended
// XYZ (frames with the predicted tensors as info keys and per-atom local tensors). Output is written
// atomically and streamed frame by frame; Ctrl-C leaves no partial file.
import { parseArgs, UsageError, type ParsedArgs } from '../args.ts';
import type { Command, CommandIO } from '../command.ts';
import { CancelledError } from '../../core/errors.ts';
import type { Frame } from '../../core/frame.ts';
import { framePredictionFrom, modelFeaturiser, predictWithFeatures, type Model } from '../../core/model.ts';
import { findMolecules } from '../../core/molecules.ts';
import { annotateFrame, APPLICABILITY_COLUMNS, tensorPredictionRow, valuePredictionRow, valueRowColumns, type PredictionRow } from '../../core/predict-rows.ts';
import { tensorCsvWriter, csvField, type TensorCsvOptions, type TensorRow } from '../../io/csv.ts';
import { formatExtxyzFrame, type FrameRange } from '../../io/extxyz.ts';
import { readStructures } from '../../io/read-structures.ts';
import { atomicWriteStream, type AtomicWriteStream } from '../../io/atomic.ts';
import { loadModel } from '../../io/model-file.ts';

const options = [
  { name: 'frames', value: 'A:B', help: 'frames A … B−1 (0-based; either end may be left out)' },
  { name: 'stride', value: 'K', help: 'every K-th frame of the range', default: '1' },
  { name: 'output', short: 'o', value: 'OUT.csv|OUT.extxyz', help: 'output file; the extension chooses the format' },
];

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
export function predictOne(model: Model, frame: Frame, index: number, featurise = modelFeaturiser(model)): { tensorRow?: TensorRow; valueRow?: PredictionRow; annotated?: Frame; outside: boolean } {
  const pred = predictWithFeatures(model, frame, featurise(frame, index), index);
  if (model.target.shape !== 'tensor') return { valueRow: valuePredictionRow(model, index, frame, pred), outside: pred.applicability.outside };
  const fp = framePredictionFrom(model, frame, pred, index);
  return { tensorRow: tensorPredictionRow(index, frame, fp, model), annotated: annotateFrame(frame, fp, model), outside: fp.applicability.outside };
}

/** The CSV layout of a tensor model's predictions (io/csv.ts columns plus the applicability figures). */
export function predictionCsvOptions(model: Model, modelPath: string): TensorCsvOptions {
  return {
    title: 'Polarweave predicted dielectric tensors',
    tagColumns: ['tag'],
    alpha: { kind: model.target.route === 'cm' ? 'alpha-cm' : 'alpha-c', unit: 'A3' },
    extraColumns: Object.keys(APPLICABILITY_COLUMNS),
    extraDescriptions: APPLICABILITY_COLUMNS,
    source: `model ${modelPath} (route ${model.target.route}, trained on ${model.training.frames} frames)`,
    predicted: true,
  };
}

export function csvLine(values: (number | string | boolean)[]): string {
  return values.map((v) => (typeof v === 'number' ? String(v) : typeof v === 'boolean' ? (v ? '1' : '0') : csvField(v))).join(',') + '\n';
}

export async function runPredict(modelPath: string, input: string, output: string, range: FrameRange, io: CommandIO): Promise<number> {
  const format = /\.csv$/i.test(output) ? 'csv' : /\.(ext)?xyz(\.gz)?$/i.test(output) ? 'extxyz' : null;
  if (!format) throw new UsageError(`cannot tell the output format from "${output}": use .csv or .extxyz`);
  const model = await loadModel(modelPath);
  if (format === 'extxyz' && model.target.shape !== 'tensor') throw new UsageError('extended XYZ output is for tensor models; use .csv');
  const featurise = modelFeaturiser(model);
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
      const one = predictOne(model, frame, index, featurise);
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
  usage: 'MODEL IN [--frames A:B] [--stride K] -o OUT.csv|OUT.extxyz',
  description:
    'CSV: one row per frame with ε, the learnt cell polarisability (α_CM for route cm, α_c for direct), principal\n' +
    'values, refractive indices and applicability figures. Extended XYZ: the frames with pred_* info keys, per-atom\n' +
    'local tensors (9 numbers per atom), the feature-space distance per atom and the molecule index per atom.',
  options,
  async run(argv, io) {
    const args = parseArgs(argv, options);
    if (args.positionals.length !== 2) throw new UsageError('give the model file and one input file');
    const output = args.options.output;
    if (!output) throw new UsageError('give the output file with -o OUT.csv or -o OUT.extxyz');
    return runPredict(args.positionals[0], args.positionals[1], output, parseFrameRange(args), io);
  },
};
