// `polarweave predict`: apply a trained model to the frames of a file; CSV (one row per frame) or extended
// XYZ (frames with the predicted tensors as info keys and per-atom local tensors). The command parses its
// arguments, reads the model once and calls the predict use case (app/predict/): kinds the file registry marks
// as streamed (extended XYZ) go through the streamed, parallel, resumable path (OUT.checkpoint.json after
// Ctrl-C or a crash, frame-range shards for clusters); other kinds (CIF) are predicted in one pass. Both
// write the same layout, identity line and frame stamps, atomically.
import { commandArgs, parseThreads, threadsOption, UsageError, type ParsedArgs } from '../args.ts';
import type { Command, CommandIO } from '../command.ts';
import { CancelledError, InputError } from '../../core/errors.ts';
import type { FrameRange } from '../../io/extxyz.ts';
import { structureEntry } from '../../io/read-structures.ts';
import { checkpointPaths, progressLine, streamPredict, type StreamPredictOptions } from '../../app/predict/stream-predict.ts';
import { loadModelFile, predictOutputFormat, predictToFile, setSummaryLines, type LoadedModel } from '../../app/predict/prediction.ts';
import type { SetSummary } from '../../core/learning/set-summary.ts';
import { availableParallelism } from 'node:os';

const options = [
  { name: 'frames', value: 'A:B', help: 'frames A … B−1 (0-based; either end may be left out)' },
  { name: 'stride', value: 'K', help: 'every K-th frame of the range', default: '1' },
  { name: 'output', short: 'o', value: 'OUT.csv|OUT.extxyz', help: 'output file; the extension chooses the format' },
  threadsOption,
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

/** The summary lines every predict run ends with. */
function reportDone(io: CommandIO, frames: number, output: string, outside: number, summary: SetSummary | null): void {
  io.out(`${frames} frames predicted, written to ${output}\n`);
  if (summary) io.out(setSummaryLines(summary).join('\n') + '\n');
  if (outside > 0) io.out(`warning: ${outside} of ${frames} frames have atoms outside the training data (column "outside"); treat those predictions with care\n`);
  io.out('Predictions are model estimates.\n');
}

/** The streaming run behind the command: progress on stderr, a clear note on Ctrl-C. */
export async function runStreamPredict(model: LoadedModel, opts: Omit<StreamPredictOptions, 'onProgress' | 'signal' | 'csvOptions' | 'model'>, io: CommandIO): Promise<number> {
  let last = 0;
  const threads = opts.threads ?? availableParallelism();
  io.err(`predict: ${threads} worker thread${threads === 1 ? '' : 's'}\n`);
  try {
    const r = await streamPredict({
      ...opts,
      model,
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
    reportDone(io, r.frames, r.output, r.outside, r.summary);
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

/** The one-pass run (CIF and other kinds that are not streamed): progress on stderr, nothing left on Ctrl-C. */
export async function runPredict(model: LoadedModel, input: string, output: string, range: FrameRange, io: CommandIO): Promise<number> {
  const started = Date.now();
  let lastReport = started;
  const r = await predictToFile(model, {
    input,
    output,
    range,
    signal: io.signal,
    onFrame: (count) => {
      const now = Date.now();
      if (now - lastReport > 1000) {
        lastReport = now;
        io.err(`predict: ${count} frames\n`);
      }
    },
  });
  io.err(`predict: ${r.frames} frames in ${((Date.now() - started) / 1000).toFixed(1)} s\n`);
  reportDone(io, r.frames, output, r.outside, r.summary);
  return 0;
}

export const predictCommand: Command = {
  name: 'predict',
  summary: 'predict with a trained model, frame by frame: ε and α of cells, α of clusters, with error bars',
  usage: 'MODEL IN [--frames A:B] [--stride K] [--shard K/N] [--threads N] [--resume|--restart] -o OUT.csv|OUT.extxyz',
  description:
    'CSV: one row per frame with ε, the learnt cell polarisability (α_CM for route cm, α_c for direct), principal\n' +
    'values, refractive indices and applicability figures. Extended XYZ: the frames with pred_* info keys, per-atom\n' +
    'local tensors (9 numbers per atom), the feature-space distance per atom and the molecule index per atom.\n' +
    'Extended XYZ input is streamed on all cores; OUT.partial and OUT.checkpoint.json hold the work done so far, so an\n' +
    'interrupted run continues where it stopped when started again with the same arguments.',
  options,
  async run(argv, io) {
    const { args, output } = commandArgs(argv, options, { inputs: 2, missing: 'give the model file and one input file', output: 'give the output file with -o OUT.csv or -o OUT.extxyz' });
    if (args.flags.resume && args.flags.restart) throw new UsageError('give --resume or --restart, not both');
    const threads = parseThreads(args);
    const shard = parseShard(args.options.shard);
    const range = parseFrameRange(args);
    const [modelPath, input] = args.positionals;
    const streamed = structureEntry(input).streamed;
    if (!streamed && (shard || args.flags.resume || threads !== undefined)) throw new UsageError('--shard, --threads and --resume are for extended XYZ trajectories');
    try {
      predictOutputFormat(output);
    } catch (e) {
      if (e instanceof InputError) throw new UsageError(`${e.problem}: ${e.hint}`);
      throw e;
    }
    const model = await loadModelFile(modelPath);
    if (model.model.target.shape !== 'tensor' && predictOutputFormat(output) === 'extxyz') throw new UsageError('extended XYZ output is for tensor models; use .csv');
    if (!streamed) return runPredict(model, input, output, range, io);
    return runStreamPredict(
      model,
      {
        modelPath,
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
