// Options shared by `train` and `validate`: what to learn and the model settings, parsed into a TrainRequest.
import { numberOption, UsageError, type OptionSpec, type ParsedArgs } from './args.ts';
import {
  DEFAULT_SETTINGS,
  limitsText,
  NUMERIC_SETTINGS,
  settingSpec,
  settingsProblems,
  SPECIES_SETTING,
  SPLIT_SETTING,
  parseSpeciesSplit,
  TUNABLE_SETTINGS,
  valueProblem,
  type TunableSetting,
} from '../core/settings-table.ts';
import type { ModelSettings, Route, TensorKind, TrainRequest, TuneGrid } from '../core/learning/model-types.ts';
import type { CommandIO } from './command.ts';
import { frameTarget, isIsolated, readValues, shapeOfValues, whereOf, type TargetShape } from '../core/learning/targets.ts';
import { TENSOR_KINDS } from '../core/dielectric/clausius-mossotti.ts';
import type { Progress } from '../core/learning/model-types.ts';

const KINDS_TEXT = TENSOR_KINDS.join('|');

export const targetOptions: OptionSpec[] = [
  { name: 'tensor', value: 'KEY', help: 'per-frame property holding the reference tensor (9 or 6 numbers; 3 for a dipole, 1 for a scalar)' },
  {
    name: 'as',
    value: KINDS_TEXT,
    help: 'what the tensor is: optical dielectric tensor, conducting-boundary or Clausius–Mossotti cell polarisability (Å³), or the polarisability of an isolated molecule or cluster (Å³; frames without a cell)',
  },
  {
    name: 'isolated-tensor',
    value: 'KEY',
    help: 'a set mixing periodic frames with isolated molecules or clusters (no cell): the property holding the clusters\' polarisability in vacuum (Å³)',
  },
  { name: 'trust-kind', flag: true, help: 'go on even when the values look unlike --as (ε∞ outside 1–20, α outside 0.1–100 Å³ per atom)' },
];

/** The model-setting options, one per row of the settings table (core/settings-table.ts). */
export const settingOptions: OptionSpec[] = [
  ...NUMERIC_SETTINGS.map((spec): OptionSpec => {
    const d = DEFAULT_SETTINGS[spec.key];
    const value = spec.unit || (spec.integer ? 'N' : 'X');
    return { name: spec.option, value, help: `${spec.help}; ${limitsText(spec)}`, ...(d === null ? {} : { default: String(d) }) };
  }),
  { name: SPECIES_SETTING.option, value: 'LIST', help: SPECIES_SETTING.help },
  { name: SPLIT_SETTING.option, value: 'SPLIT', help: SPLIT_SETTING.help },
];

export function parseKind(args: ParsedArgs): TensorKind {
  const kind = args.options.as;
  if (kind === undefined) throw new UsageError(`say what the tensor is with --as ${KINDS_TEXT}`);
  if (!TENSOR_KINDS.includes(kind as TensorKind)) throw new UsageError(`--as must be one of ${TENSOR_KINDS.join(', ')}, got "${kind}"`);
  if (kind === 'alpha-mol' && args.options['isolated-tensor'] !== undefined) {
    throw new UsageError('--isolated-tensor names the clusters\' key in a set mixed with periodic frames; with --as alpha-mol every frame is isolated and --tensor names it');
  }
  return kind as TensorKind;
}

export function parseRoute(value: string | undefined, allowBoth: boolean): Route | 'both' {
  const v = value ?? 'cm';
  if (v === 'cm' || v === 'direct' || (allowBoth && v === 'both')) return v;
  throw new UsageError(`--route must be cm${allowBoth ? ', direct or both' : ' or direct'}, got "${v}"`);
}

export function parseSettings(args: ParsedArgs): Partial<ModelSettings> {
  const s: Partial<ModelSettings> = {};
  for (const spec of NUMERIC_SETTINGS) {
    const v = numberOption(args, spec.option, { integer: spec.integer, min: spec.min, max: spec.max });
    if (v !== undefined) (s as Record<string, number>)[spec.key] = v;
  }
  const list = args.options[SPECIES_SETTING.option];
  if (list !== undefined) s.contributingSpecies = list.split(',').map((x) => x.trim()).filter(Boolean);
  const split = args.options[SPLIT_SETTING.option];
  if (split !== undefined) {
    const parsed = parseSpeciesSplit(split);
    if ('problem' in parsed) throw new UsageError(`--${SPLIT_SETTING.option}: ${parsed.problem}`);
    s.speciesSplit = parsed.split;
  }
  // The rules between settings (and the species labels) as the engine checks them, before any data is read.
  const problems = settingsProblems({ ...DEFAULT_SETTINGS, ...s });
  if (problems.length) throw new UsageError(problems[0]);
  return s;
}

/** `--tune-…` options: candidate values of the tunable settings, chosen from by cross-validation. */
export const tuneOptions: OptionSpec[] = TUNABLE_SETTINGS.map((key) => {
  const spec = settingSpec(key);
  return { name: `tune-${spec.option}`, value: 'LIST', help: `${spec.label.toLowerCase()}${spec.unit ? ` values (${spec.unit})` : ' values'} to choose from by cross-validation, comma-separated` };
});

function numberList(args: ParsedArgs, key: TunableSetting): number[] | undefined {
  const spec = settingSpec(key);
  const name = `tune-${spec.option}`;
  const raw = args.options[name];
  if (raw === undefined) return undefined;
  const values = raw.split(',').map((x) => Number(x.trim()));
  for (const v of values) {
    const problem = valueProblem(spec, v);
    if (problem) throw new UsageError(`--${name}: ${problem} (got "${raw}")`);
  }
  return values;
}

export function parseTune(args: ParsedArgs): TuneGrid | undefined {
  const grid: TuneGrid = {};
  for (const key of TUNABLE_SETTINGS) {
    const values = numberList(args, key);
    if (values) grid[key] = values;
  }
  return Object.keys(grid).length ? grid : undefined;
}

/**
 * The training request of the command line. `shape` is the shape of the reference property in the data: --as
 * is required for a tensor only (a dipole or scalar is learnt as it is, so its kind does not matter).
 */
export function parseRequest(args: ParsedArgs, route: Route, shape: TargetShape = 'tensor'): TrainRequest {
  const key = args.options.tensor;
  if (!key) throw new UsageError('name the reference property with --tensor KEY');
  const kind: TensorKind = shape === 'tensor' || args.options.as !== undefined ? parseKind(args) : 'alpha-cm';
  const isolatedKey = args.options['isolated-tensor'];
  return { tensorKey: key, kind, route, ...(isolatedKey ? { isolatedKey } : {}), settings: parseSettings(args), ...(args.flags['trust-kind'] ? { trustKind: true } : {}) };
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
  const tensorKey = args.options.tensor;
  if (!tensorKey) throw new UsageError('name the reference property with --tensor KEY');
  if (frames.length === 0) throw new UsageError('the input holds no frames');
  // a first frame without a cell holds the clusters' key, or says that a mixed set must name it (frameTarget)
  const isolatedKey = args.options['isolated-tensor'];
  const key = args.options.as !== undefined && isIsolated(frames[0]) ? frameTarget(frames[0], { tensorKey, kind: parseKind(args), isolatedKey, route: 'cm' }, 0).key : tensorKey;
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
