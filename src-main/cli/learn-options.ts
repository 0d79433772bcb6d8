// Options shared by `train` and `validate`: what to learn and the model settings, parsed into a TrainRequest.
import { numberOption, UsageError, type OptionSpec, type ParsedArgs } from './args.ts';
import { DEFAULT_SETTINGS } from '../core/learning/model.ts';
import type { ModelSettings, Route, TensorKind, TrainRequest, TuneGrid } from '../core/learning/model-types.ts';
import type { CommandIO } from './command.ts';
import { readValues, shapeOfValues, whereOf, type TargetShape } from '../core/learning/targets.ts';
import type { Progress } from '../core/learning/model-types.ts';

export const targetOptions: OptionSpec[] = [
  { name: 'tensor', value: 'KEY', help: 'per-frame property holding the reference tensor (9 or 6 numbers; 3 for a dipole, 1 for a scalar)' },
  { name: 'as', value: 'eps|alpha-c|alpha-cm', help: 'what the tensor is: optical dielectric tensor, conducting-boundary or Clausius–Mossotti cell polarisability (Å³)' },
];

export const settingOptions: OptionSpec[] = [
  { name: 'cutoff', value: 'Å', help: 'neighbour cutoff', default: String(DEFAULT_SETTINGS.cutoff) },
  { name: 'cutoff-width', value: 'Å', help: 'width of the smooth switch below the cutoff', default: String(DEFAULT_SETTINGS.cutoffWidth) },
  { name: 'sigma', value: 'Å', help: 'Gaussian width of the neighbour density', default: String(DEFAULT_SETTINGS.sigma) },
  { name: 'nmax', value: 'N', help: 'radial basis size', default: String(DEFAULT_SETTINGS.nmax) },
  { name: 'lmax', value: 'L', help: 'angular limit', default: String(DEFAULT_SETTINGS.lmax) },
  { name: 'zeta', value: 'Z', help: 'kernel exponent (1 = linear, fastest)', default: String(DEFAULT_SETTINGS.zeta) },
  { name: 'regularisation', value: 'R', help: 'ridge regulariser relative to the kernel scale (default: chosen by cross-validation)' },
  { name: 'sparse', value: 'M', help: 'representative environments per species for ζ > 1 (0 = exact kernel ridge)', default: String(DEFAULT_SETTINGS.sparsePoints) },
  { name: 'centres', value: 'LIST', help: 'species that carry local contributions, comma-separated (default: all)' },
  { name: 'max-features', value: 'N', help: 'keep at most N feature columns per order, chosen from the data (0 = all)', default: '0' },
  { name: 'seed', value: 'N', help: 'random seed', default: String(DEFAULT_SETTINGS.seed) },
];

const KINDS: TensorKind[] = ['eps', 'alpha-c', 'alpha-cm'];

export function parseKind(args: ParsedArgs): TensorKind {
  const kind = args.options.as;
  if (kind === undefined) throw new UsageError('say what the tensor is with --as eps|alpha-c|alpha-cm');
  if (!KINDS.includes(kind as TensorKind)) throw new UsageError(`--as must be one of ${KINDS.join(', ')}, got "${kind}"`);
  return kind as TensorKind;
}

export function parseRoute(value: string | undefined, allowBoth: boolean): Route | 'both' {
  const v = value ?? 'cm';
  if (v === 'cm' || v === 'direct' || (allowBoth && v === 'both')) return v;
  throw new UsageError(`--route must be cm${allowBoth ? ', direct or both' : ' or direct'}, got "${v}"`);
}

export function parseSettings(args: ParsedArgs): Partial<ModelSettings> {
  const s: Partial<ModelSettings> = {};
  const num = (name: string, opts: Parameters<typeof numberOption>[2] = {}) => numberOption(args, name, opts);
  s.cutoff = num('cutoff', { min: 0.5, max: 20 });
  s.cutoffWidth = num('cutoff-width', { min: 0, max: 20 });
  s.sigma = num('sigma', { min: 0.01, max: 5 });
  s.nmax = num('nmax', { integer: true, min: 1, max: 16 });
  s.lmax = num('lmax', { integer: true, min: 0, max: 10 });
  s.zeta = num('zeta', { integer: true, min: 1, max: 8 });
  const reg = num('regularisation', { min: 1e-14, max: 1e6 });
  s.regularisation = reg ?? null;
  s.sparsePoints = num('sparse', { integer: true, min: 0, max: 20000 });
  s.seed = num('seed', { integer: true });
  s.maxFeatures = num('max-features', { integer: true, min: 0, max: 100000 });
  if (args.options.centres) s.centres = args.options.centres.split(',').map((x) => x.trim()).filter(Boolean);
  return s;
}

export const tuneOptions: OptionSpec[] = [
  { name: 'tune-cutoff', value: 'LIST', help: 'cutoffs (Å) to choose from by cross-validation, e.g. 4,4.5,5' },
  { name: 'tune-sigma', value: 'LIST', help: 'Gaussian widths (Å) to choose from by cross-validation' },
  { name: 'tune-zeta', value: 'LIST', help: 'kernel exponents to choose from by cross-validation, e.g. 1,2' },
];

function numberList(args: ParsedArgs, name: string, integer = false): number[] | undefined {
  const raw = args.options[name];
  if (raw === undefined) return undefined;
  const values = raw.split(',').map((x) => Number(x.trim()));
  if (values.length === 0 || values.some((v) => !Number.isFinite(v) || v <= 0 || (integer && !Number.isInteger(v)))) {
    throw new UsageError(`--${name} takes a comma-separated list of positive ${integer ? 'whole ' : ''}numbers, got "${raw}"`);
  }
  return values;
}

export function parseTune(args: ParsedArgs): TuneGrid | undefined {
  const grid: TuneGrid = { cutoff: numberList(args, 'tune-cutoff'), sigma: numberList(args, 'tune-sigma'), zeta: numberList(args, 'tune-zeta', true) };
  return grid.cutoff || grid.sigma || grid.zeta ? grid : undefined;
}

/**
 * The training request of the command line. `shape` is the shape of the reference property in the data: --as
 * is required for a tensor only (a dipole or scalar is learnt as it is, so its kind does not matter).
 */
export function parseRequest(args: ParsedArgs, route: Route, shape: TargetShape = 'tensor'): TrainRequest {
  const key = args.options.tensor;
  if (!key) throw new UsageError('name the reference property with --tensor KEY');
  const kind: TensorKind = shape === 'tensor' || args.options.as !== undefined ? parseKind(args) : 'alpha-cm';
  return { tensorKey: key, kind, route, settings: parseSettings(args) };
}

/**
 * The option errors of `train` and `validate` that need no data, checked before the (possibly long) read: the
 * property key, the settings and a given --as. Whether --as is needed depends on the data (targetShapeOf).
 */
export function checkTargetOptions(args: ParsedArgs): void {
  if (!args.options.tensor) throw new UsageError('name the reference property with --tensor KEY');
  parseSettings(args);
  if (args.options.as !== undefined) parseKind(args);
}

/** The shape of the reference property --tensor KEY in the first frame (an InputError naming the frame if absent). */
export function targetShapeOf(args: ParsedArgs, frames: Frame[]): TargetShape {
  const key = args.options.tensor;
  if (!key) throw new UsageError('name the reference property with --tensor KEY');
  if (frames.length === 0) throw new UsageError('the input holds no frames');
  return shapeOfValues(readValues(frames[0], key, 0), key, whereOf(frames[0], 0));
}

/** Progress lines on stderr, at most a few per second, always the last of each stage. */
export function progressReporter(io: CommandIO, prefix: string): (p: Progress) => void {
  let last = 0;
  let lastStage = '';
  return (p) => {
    const now = Date.now();
    if (p.stage === lastStage && now - last < 500 && p.done < p.total) return;
    last = now;
    lastStage = p.stage;
    io.err(`${prefix}: ${p.stage} ${p.done}/${p.total}\n`);
  };
}

import type { FrameRange } from '../io/extxyz.ts';
import { readStructures } from '../io/read-structures.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { CancelledError } from '../core/errors.ts';

/** Every frame of a structure file (extended XYZ or CIF; optionally a range), stopping on Ctrl-C. */
export async function readFrames(path: string, io: CommandIO, range?: FrameRange): Promise<Frame[]> {
  const frames: Frame[] = [];
  for await (const f of readStructures(path, { signal: io.signal, range })) {
    frames.push(f);
    if (io.signal.aborted) throw new CancelledError();
  }
  return frames;
}
