// `polarweave train`: learn a model of a cell tensor (or dipole, or scalar) from frames with reference values.
import { commandArgs, parseThreads, threadsOption } from '../args.ts';
import { availableParallelism } from 'node:os';
import type { Command } from '../command.ts';
import type { Model } from '../../core/learning/model.ts';
import { trainToFile } from '../../app/learning.ts';
import { checkTargetOptions, parseRequest, parseRoute, parseTune, progressReporter, readFrames, settingOptions, targetOptions, targetShapeOf, tuneOptions } from '../learn-options.ts';
import { describeSettings } from '../../core/settings-table.ts';

const options = [
  ...targetOptions,
  { name: 'route', value: 'cm|direct', help: 'cm: learn α_CM and convert back; direct: learn α_c = (ε − I)V/4π', default: 'cm' },
  ...settingOptions,
  ...tuneOptions,
  { name: 'output', short: 'o', value: 'MODEL', help: 'model file to write (JSON)' },
  threadsOption,
];

export function describeModel(model: Model): string {
  const lines: string[] = [];
  const t = model.target;
  lines.push(`model of "${t.key}"${t.kind ? ` (${t.kind})` : ''}: learns ${t.learnt}${t.shape === 'tensor' ? ` through route ${t.route}` : ''}, units ${t.units}`);
  lines.push(`trained on ${model.training.frames} frames, ${model.training.atoms} atoms (${Object.entries(model.training.atomsPerSpecies).map(([s, n]) => `${s} ${n}`).join(', ')})`);
  const s = model.settings;
  lines.push(`settings: ${describeSettings(s)}`);
  for (const p of model.parts) {
    const r = p.regularisation;
    const cv = r.cvError > 0 ? `, cross-validated RMSE per component ${Math.sqrt(r.cvError).toPrecision(3)} ${t.units}` : '';
    lines.push(`  λ=${p.order}: ${p.form} (${p.method}), ${p.n} features, regulariser ${r.relative.toExponential(0)} (${r.chosenBy})${cv}`);
  }
  if (model.applicability.species.length) lines.push(`applicability threshold ${model.applicability.threshold.toFixed(4)} (feature-space distance; ${model.applicability.rule})`);
  if (model.calibration) {
    const c = model.calibration;
    const parts = c.parts.map((p) => `λ=${p.order} ${p.rmsZRaw !== null ? `raw posterior RMS z ${p.rmsZRaw.toPrecision(3)} → 1, ` : ''}|z| ≤ 1 for ${(100 * p.within1).toFixed(0)} % of ${p.values}`);
    lines.push(`error bars: calibrated on the ${c.folds} held-out folds (${parts.join('; ')})`);
  } else lines.push('error bars: none (no calibration: fewer than 3 frames)');
  for (const n of model.notes) lines.push(`note: ${n}`);
  return lines.join('\n');
}

export const trainCommand: Command = {
  name: 'train',
  summary: 'learn a model from frames with reference values (ε or α of cells or clusters; dipoles, scalars)',
  usage: 'IN --tensor KEY --as eps|alpha-c|alpha-cm|alpha-mol [--isolated-tensor KEY] -o MODEL [options]   (--as only for a tensor)',
  description:
    'Reads every frame of IN (extended XYZ), learns the tensor as a sum of per-atom contributions and writes the\n' +
    'model file. The regulariser is chosen by cross-validation on the training frames unless given.\n' +
    'Frames without a periodic cell (pbc="F F F" or no Lattice) are isolated molecules or clusters: --as alpha-mol\n' +
    'when every frame is one; mixed with periodic frames, name their polarisability (Å³) with --isolated-tensor KEY.',
  options,
  async run(argv, io) {
    const { args, output: out } = commandArgs(argv, options, { inputs: 1, missing: 'give exactly one input file', output: 'give the model file to write with -o MODEL' });
    const route = parseRoute(args.options.route, false) as 'cm' | 'direct';
    checkTargetOptions(args);
    const threads = parseThreads(args) ?? availableParallelism();
    const frames = await readFrames(args.positionals[0], io);
    io.err(`train: ${frames.length} frames read from ${args.positionals[0]}\n`);
    const request = { ...parseRequest(args, route, targetShapeOf(args, frames)), tune: parseTune(args) };
    const model = await trainToFile(frames, request, out, { signal: io.signal, onProgress: progressReporter(io, 'train') }, threads);
    io.out(describeModel(model) + '\n');
    io.out(`model written to ${out}\n`);
    return 0;
  },
};
