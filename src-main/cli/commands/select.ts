// `polarweave select`: choose which frames of a long run to compute with DFT next — the most diverse ones, or,
// with a model, those with the largest error bars or domain scores — and write them as extended XYZ (and,
// optionally, as filled DFT inputs). The work is app/select-frames.ts; this parses options and prints its report.
import { commandArgs, numberOption, UsageError } from '../args.ts';
import path from 'node:path';
import type { Command } from '../command.ts';
import { DEFAULT_DUPLICATE, selectionSummary, selectToFile, type SelectToFileRequest } from '../../app/select-frames.ts';
import { loadModelFile } from '../../app/predict/prediction.ts';

const options = [
  { name: 'count', short: 'n', value: 'K', help: 'how many frames to choose' },
  { name: 'output', short: 'o', value: 'CHOSEN.extxyz', help: 'the chosen frames (extended XYZ; .gz compresses)' },
  { name: 'stride', value: 'S', help: 'consider every S-th frame only', default: '1' },
  { name: 'min-gap', value: 'FS', help: 'no two chosen frames closer in time than this (fs; needs time_fs in the frames or --time-step)' },
  { name: 'time-step', value: 'FS', help: 'time between successive frames (fs), for frames without a time_fs property' },
  { name: 'model', value: 'MODEL.json', help: 'rank frames by this model (largest error bar or domain score first) instead of by diversity' },
  { name: 'by', value: 'error|domain', help: 'with --model: rank by the calibrated error bar of ε_iso, or by the domain score', default: 'error' },
  { name: 'known', value: 'FRAMES', help: 'frames already computed (e.g. the training set): chosen frames are not near duplicates of them' },
  { name: 'duplicate', value: 'F', help: 'near-duplicate distance, as a fraction of the spread of the frames\' features', default: String(DEFAULT_DUPLICATE) },
  { name: 'template', value: 'INPUT', help: 'your DFT input with placeholders: one filled copy per chosen frame (see docs/file-formats.md)' },
  { name: 'inputs', value: 'FOLDER', help: 'where the filled inputs go (default: beside the output)' },
];

export const selectCommand: Command = {
  name: 'select',
  summary: 'choose the frames of a trajectory that deserve a DFT reference next (most diverse, or largest error bars)',
  usage: 'TRAJECTORY -n K -o CHOSEN.extxyz [--model MODEL.json] [--template INPUT]',
  description: [
    'Without --model: the K most diverse frames, by farthest-point sampling on frame features (per species, the mean',
    'power spectrum of its atoms). With --model: the K frames with the largest calibrated error bar of ε_iso (or, with',
    '--by domain, the largest domain score), skipping near duplicates of each other and of the --known frames.',
    'Frames closer in time than --min-gap to a chosen one are skipped. The trajectory is streamed; at most a bounded',
    'number of candidates is held (a long run is thinned evenly, and the effective stride is reported).',
    'Each chosen frame keeps its properties and gains source_file, source_frame (0-based), source_time_fs (when',
    'known), selection, selection_order, and selection_score / selection_distance.',
    'With --template: {{cell_a}} {{cell_b}} {{cell_c}} {{atoms}} {{atom_count}} {{frame}} are filled (Å) and the rest',
    'of the input is copied as written; one file per frame, named after the template with -frameN.',
  ].join('\n'),
  options,
  async run(argv, io) {
    const { args, inputs, output } = commandArgs(argv, options, { inputs: 1, missing: 'give one trajectory file', output: 'give the output file with -o CHOSEN.extxyz' });
    if (!/\.(ext)?xyz(\.gz)?$/i.test(output)) throw new UsageError(`the output must be extended XYZ (.extxyz or .xyz, optionally .gz), got "${output}"`);
    const count = numberOption(args, 'count', { integer: true, min: 1 });
    if (count === undefined) throw new UsageError('give the number of frames to choose with -n K');
    const by = args.options.by;
    if (by !== 'error' && by !== 'domain') throw new UsageError(`--by must be error or domain, got "${by}"`);
    if (args.options.inputs && !args.options.template) throw new UsageError('--inputs needs --template INPUT');
    const req: SelectToFileRequest = {
      input: inputs[0],
      output,
      count,
      stride: numberOption(args, 'stride', { integer: true, min: 1 }),
      minGapFs: numberOption(args, 'min-gap', { min: 0 }),
      timeStepFs: numberOption(args, 'time-step', { min: 0 }),
      by,
      duplicate: numberOption(args, 'duplicate', { min: 0 }),
      knownFile: args.options.known,
      model: args.options.model ? await loadModelFile(args.options.model) : undefined,
      template: args.options.template ? { file: args.options.template, folder: args.options.inputs ?? path.dirname(output) } : undefined,
    };
    const r = await selectToFile(req, { signal: io.signal });
    io.out(selectionSummary(r, inputs[0]).join('\n') + '\n');
    io.out(`wrote ${r.chosen.length} frame${r.chosen.length === 1 ? '' : 's'} to ${output}\n`);
    if (r.written.length) io.out(`wrote ${r.written.length} DFT input${r.written.length === 1 ? '' : 's'}: ${r.written.length > 3 ? `${r.written.slice(0, 3).join(', ')}, …` : r.written.join(', ')}\n`);
    return 0;
  },
};

