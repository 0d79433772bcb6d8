// `polarweave analyse`: parses its options and runs the analyse use case (app/trajectory-analysis.ts): mean
// tensors with error bars, refractive indices, species, applicability and spectra of a predicted trajectory.
import { commandArgs, numberOption, UsageError, type ParsedArgs } from '../args.ts';
import type { Command, CommandIO } from '../command.ts';
import type { QuantumCorrection, WindowKind } from '../../core/trajectory/spectra.ts';
import { DEFAULT_MIN_BLOCKS } from '../../core/trajectory/trajectory-summary.ts';
import { analyseTrajectory, type SpectraRequest } from '../../app/trajectory-analysis.ts';

const options = [
  { name: 'output', short: 'o', value: 'SUMMARY.csv', help: 'write the summary table (means, errors, block levels, optics, species, applicability)' },
  { name: 'per-frame', value: 'FRAMES.csv', help: 'write a per-frame table (ε, principal values, indices, α_CM, running mean of ε_iso)' },
  { name: 'block-min', value: 'N', help: 'fewest blocks a block size may leave in block averaging', default: String(DEFAULT_MIN_BLOCKS) },
  { name: 'time-step', value: 'FS', help: 'time between consecutive frames of the trajectory file (fs); turns on the spectra' },
  { name: 'spectra', value: 'SPECTRA.csv', help: 'write the Raman (and IR) line shapes here (needs --time-step)' },
  { name: 'raman-from', value: 'alpha-c|alpha-cm|alpha-mol|eps', help: 'which tensor series the Raman line shapes use (default: alpha-c if the file has it, else alpha-cm, else alpha-mol, else eps)' },
  { name: 'window', value: 'none|hann|gaussian', help: 'window on the correlation functions', default: 'hann' },
  { name: 'padding', value: 'P', help: 'zero padding factor before the Fourier transform', default: '4' },
  { name: 'max-correlation', value: 'FS', help: 'longest correlation time used (default: a quarter of the run)' },
  { name: 'quantum-correction', value: 'none|harmonic|schofield', help: 'classical-to-quantum correction factor of the line shapes', default: 'harmonic' },
  { name: 'temperature', value: 'K', help: 'temperature for the quantum correction', default: '300' },
];

function spectraRequest(args: ParsedArgs): SpectraRequest | undefined {
  if (!args.options['time-step'] || !args.options.spectra) return undefined;
  const dt = numberOption(args, 'time-step', { min: 0 }) as number;
  if (!(dt > 0)) throw new UsageError('--time-step must be positive (fs)');
  const window = args.options.window as WindowKind;
  if (!['none', 'hann', 'gaussian'].includes(window)) throw new UsageError(`--window must be none, hann or gaussian, got "${window}"`);
  const correction = args.options['quantum-correction'] as QuantumCorrection;
  if (!['none', 'harmonic', 'schofield'].includes(correction)) throw new UsageError(`--quantum-correction must be none, harmonic or schofield, got "${correction}"`);
  const from = args.options['raman-from'];
  if (from !== undefined && !['alpha-c', 'alpha-cm', 'alpha-mol', 'eps'].includes(from)) throw new UsageError(`--raman-from must be alpha-c, alpha-cm, alpha-mol or eps, got "${from}"`);
  return {
    path: args.options.spectra,
    timeStepFs: dt,
    ramanFrom: from as SpectraRequest['ramanFrom'],
    options: {
      window,
      padding: numberOption(args, 'padding', { min: 1, max: 64 }),
      maxCorrelationFs: numberOption(args, 'max-correlation', { min: 0 }),
      correction,
      temperatureK: numberOption(args, 'temperature', { min: 1e-6 }),
    },
  };
}

export async function runAnalyse(file: string, args: ParsedArgs, io: CommandIO): Promise<number> {
  const minBlocks = numberOption(args, 'block-min', { integer: true, min: 2 }) ?? DEFAULT_MIN_BLOCKS;
  if (args.options.spectra && !args.options['time-step']) throw new UsageError('--spectra needs --time-step FS (the time between frames)');
  const lines = await analyseTrajectory({
    file,
    minBlocks,
    output: args.options.output,
    perFrame: args.options['per-frame'],
    spectra: spectraRequest(args),
    timeStepOnly: !!args.options['time-step'] && !args.options.spectra,
    signal: io.signal,
  });
  io.out(lines.join('\n') + '\n');
  return 0;
}

export const analyseCommand: Command = {
  name: 'analyse',
  summary: 'mean tensors with error bars, refractive indices, species, applicability and spectra of a predicted trajectory',
  usage: 'PREDICTIONS.csv|PREDICTIONS.extxyz [-o SUMMARY.csv] [--per-frame FRAMES.csv] [--time-step FS --spectra SPECTRA.csv]',
  description:
    'Reads what `predict` wrote. Errors from block averaging with the plateau over block sizes (a warning when there is\nnone); indices and birefringence of the mean ε with delta-method errors; per-species contributions from the per-atom\nlocal tensors of an extended XYZ input; with --time-step, Raman isotropic/anisotropic/VV/VH line shapes (and infrared\nwhen the file has a dipole series).',
  options,
  async run(argv, io) {
    const { args } = commandArgs(argv, options, { inputs: 1, missing: 'give one prediction file (.csv or .extxyz)' });
    return runAnalyse(args.positionals[0], args, io);
  },
};
