// k-fold cross-validation of a training request over whole frames and learning curves. The error figures are
// core/learning/error-figures.ts's, in the tensor's own units (definitions in docs/learning-engine.md, "Validation").
// Tensor targets are compared on ε and on α_CM, whichever route was learnt.
import { convertTensor } from '../dielectric/clausius-mossotti.ts';
import { CancelledError, InputError } from '../errors.ts';
import type { EnvironmentFeatures } from '../descriptors/feature-types.ts';
import type { Frame } from '../geometry/frame.ts';
import {
  isolatedFramesNote,
  modelFeaturiser,
  predictWithFeatures,
  predictedVector,
  resolveSettings,
  speciesOf,
  trainWithFeaturiser,
  tensorPredictionFrom,
  type Featuriser,
  type Model,
} from './model.ts';
import type { CellTensorKind, ErrorFigures, ParityPoint, TrainRequest, ValidationReport, WorkHooks } from './model-types.ts';
import { makeRng, shuffleInPlace } from '../numerics/random.ts';
import { foldsOf } from './regression.ts';
import { frameTarget, frameVolume, learntTensor, readTensor, readValues, shapeOfValues, vectorToSpherical, whereOf } from './targets.ts';
import { ZCollector, type ErrorBarCheck } from './calibration.ts';
import { toIrreducible } from '../dielectric/tensor.ts';

export { errorFigures } from './error-figures.ts';
import { comparedOn, errorFigures } from './error-figures.ts';
import { checkTensorKind } from './kind-check.ts';
import { statePointErrors, statePointsOf } from './state-points.ts';
import { CURVE_REPEATS, curveTrend, meanOfRepeats } from './curve-splits.ts';

/** A second comparison reported beside the main one (e.g. α_CM when the main one is ε). */
export interface SecondaryComparison {
  target: string;
  errors: ErrorFigures;
  points: ParityPoint[];
}

export interface ValidationOptions {
  folds: number;
  learningCurve?: number[];
  /** Random subsets drawn at each learning-curve size (tensor targets; default CURVE_REPEATS). */
  curveRepeats?: number;
  /** Features of the frames (tensorFeaturiser), to share with the final training; made here when not given. */
  featurise?: Featuriser;
}

/**
 * The cached features of a tensor request's frames, as validate() and the final training compute them: pass the
 * same featuriser to validate (options.featurise) and trainModel, and each frame's features are computed once.
 */
export function tensorFeaturiser(frames: Frame[], request: TrainRequest): Featuriser {
  const settings = resolveSettings(request.settings);
  const { species, centres } = speciesOf(frames, settings);
  return cachedFeaturiser(modelFeaturiser({ settings, species, centres, target: { key: request.tensorKey, shape: 'tensor', kind: request.kind, route: request.route, learnt: 'alpha-cm', units: 'Å³' } }), frames);
}

/** Compute (and cache) every frame's features first, with progress: the longest silent stage otherwise. */
async function precomputeFeatures(frames: Frame[], featurise: Featuriser, hooks: WorkHooks): Promise<void> {
  for (let i = 0; i < frames.length; i++) {
    if (hooks.signal?.aborted) throw new CancelledError();
    featurise(frames[i], i);
    hooks.onProgress?.({ stage: 'features of the frames', done: i + 1, total: frames.length });
    await new Promise((r) => setTimeout(r, 0));
  }
}

/** Cache features of all frames when they fit comfortably in memory; else compute them on every use. */
const CACHE_LIMIT_BYTES = 1.5e9;

function cachedFeaturiser(base: Featuriser, frames: Frame[]): Featuriser {
  const cache = new Map<number, EnvironmentFeatures>();
  let bytes = 0;
  let full = false;
  return (frame, index) => {
    const hit = cache.get(index);
    if (hit) return hit;
    const fe = base(frame, index);
    if (!full) {
      let b = fe.scalar.byteLength;
      for (const t of Object.values(fe.tensor)) if (t) b += t.data.byteLength;
      if (bytes + b * 1 <= CACHE_LIMIT_BYTES && frames.length > 0) {
        cache.set(index, fe);
        bytes += b;
      } else full = true;
    }
    return fe;
  };
}

/** InputError unless k is a usable number of folds for n frames. */
function checkFolds(n: number, k: number): void {
  if (!Number.isInteger(k) || k < 2) throw new InputError(`${k} folds`, {}, 'cross-validation needs at least 2 folds');
  if (n < k) throw new InputError(`${n} frames for ${k} folds`, {}, `give at least ${k} frames, or fewer folds`);
}

/** The folds of a cross-validation: a seeded shuffle of the frames, k folds, and the usable curve sizes. */
interface FoldPlan {
  k: number;
  trainIndices: (f: number) => number[];
  testIndices: (f: number) => number[];
  usable: number[];
  skippedSizes: number[];
  repeats: number;
  steps: number;
  /** The training frames of fold f for a learning-curve point: `size` of them, a different random subset per repeat. */
  subset: (train: number[], size: number, repeat: number) => number[];
}

function planFolds(n: number, k: number, seed: number, learningCurve: number[] | undefined, repeats = 1): FoldPlan {
  const rng = makeRng(seed + 7919);
  const perm = shuffleInPlace(rng, Int32Array.from({ length: n }, (_, i) => i));
  const fold = foldsOf(perm, k);
  const trainIndices = (f: number) => [...perm].filter((i) => fold[i] !== f);
  const testIndices = (f: number) => [...perm].filter((i) => fold[i] === f).sort((a, b) => a - b);
  const sizes = [...(learningCurve ?? [])].sort((a, b) => a - b);
  const minTrain = Math.min(...Array.from({ length: k }, (_, f) => trainIndices(f).length));
  const usable = sizes.filter((s) => Number.isInteger(s) && s >= 1 && s <= minTrain);
  const skippedSizes = sizes.filter((s) => !usable.includes(s));
  const subset = (train: number[], size: number, repeat: number) => {
    if (repeat === 0) return train.slice(0, size);
    return shuffleInPlace(makeRng(seed + 104729 * repeat + size), [...train]).slice(0, size);
  };
  return { k, trainIndices, testIndices, usable, skippedSizes, repeats, steps: k * (1 + usable.length * repeats), subset };
}

/**
 * Trains on every fold's training frames (the first `size` of them for a learning curve) and calls `predict`
 * for each held-out frame. Returns the held-out frame indices, ascending.
 */
async function runFoldsOf(
  frames: Frame[],
  request: TrainRequest,
  plan: FoldPlan,
  size: number | null,
  featurise: Featuriser,
  species: string[],
  hooks: WorkHooks,
  predict: (model: Model, frame: number) => void,
  repeat = 0,
): Promise<number[]> {
  const tested: number[] = [];
  const done = size === null ? 0 : (1 + plan.usable.indexOf(size) * plan.repeats + repeat) * plan.k;
  for (let f = 0; f < plan.k; f++) {
    if (hooks.signal?.aborted) throw new CancelledError();
    let train = plan.trainIndices(f);
    if (size !== null) train = plan.subset(train, size, repeat);
    const trainFrames = train.map((i) => frames[i]);
    const local: Featuriser = (frame, idx) => featurise(frame, train[idx]);
    const model = await trainWithFeaturiser(trainFrames, request, local, { signal: hooks.signal }, { applicability: false, species, createdAt: 'validation' });
    for (const i of plan.testIndices(f)) {
      predict(model, i);
      tested.push(i);
    }
    hooks.onProgress?.({ stage: size === null ? `fold ${f + 1}/${plan.k}` : `learning curve, ${size} frames${plan.repeats > 1 ? `, split ${repeat + 1}/${plan.repeats}` : ''}`, done: done + f + 1, total: plan.steps });
  }
  return tested.sort((a, b) => a - b);
}

/** k-fold cross-validation (and optional learning curve) of one training request (model-types.ts contract). */
export async function validate(
  frames: Frame[],
  request: TrainRequest,
  options: ValidationOptions,
  hooks: WorkHooks = {},
): Promise<ValidationReport & { alsoOn: SecondaryComparison[]; skippedSizes: number[]; errorBars: ErrorBarCheck | null; notes: string[] }> {
  const n = frames.length;
  const k = options.folds;
  checkFolds(n, k);
  const settings = resolveSettings(request.settings);
  const { species, centres } = speciesOf(frames, settings);
  const firstKey = frameTarget(frames[0], request, 0).key;
  const firstValues = frames[0].info[firstKey];
  if (!Array.isArray(firstValues) || (firstValues.length !== 9 && firstValues.length !== 6)) {
    throw new InputError(`validation compares cell tensors; "${firstKey}" is not a 3×3 tensor`, { frame: 0 }, 'the window validates tensors only; for a dipole or a scalar run `polarweave validate` on the command line');
  }
  const featurise = options.featurise ?? tensorFeaturiser(frames, request);

  // reference tensors: periodic frames on ε and on α_CM; isolated frames (molecules, clusters) on their α
  const refEps: Float64Array[] = [];
  const refCM: Float64Array[] = [];
  const refLearnt: Float64Array[] = [];
  const isolated: boolean[] = [];
  frames.forEach((f, i) => {
    const target = frameTarget(f, request, i);
    const t = readTensor(f, target.key, i);
    if (!request.trustKind) checkTensorKind(t, target.kind, f.species.length, target.key, whereOf(f, i));
    isolated.push(target.isolated);
    if (target.isolated) {
      const a = toIrreducible(learntTensor(t, 'alpha-mol', request.route, null));
      refLearnt.push(a);
      refCM.push(a);
      refEps.push(new Float64Array(0));
      return;
    }
    const v = frameVolume(f, i);
    refLearnt.push(toIrreducible(learntTensor(t, target.kind, request.route, v)));
    refEps.push(toIrreducible(convertTensor(t, target.kind as CellTensorKind, 'eps', v)));
    refCM.push(toIrreducible(convertTensor(t, target.kind as CellTensorKind, 'alpha-cm', v)));
  });
  const periodicFrames = frames.map((_, i) => i).filter((i) => !isolated[i]);
  const isolatedFrames = frames.map((_, i) => i).filter((i) => isolated[i]);

  await precomputeFeatures(frames, featurise, hooks);
  const plan = planFolds(n, k, settings.seed, options.learningCurve, Math.max(1, Math.round(options.curveRepeats ?? CURVE_REPEATS)));
  const { usable, skippedSizes } = plan;
  const runFolds = async (size: number | null, repeat = 0) => {
    const pe: Float64Array[] = new Array(n);
    const pc: Float64Array[] = new Array(n);
    const z = new ZCollector([{ order: 0, offset: 0 }, { order: 2, offset: 1 }]);
    const tested = await runFoldsOf(frames, request, plan, size, featurise, species, hooks, (model, i) => {
      const pred = predictWithFeatures(model, frames[i], featurise(frames[i], i), i);
      const fp = tensorPredictionFrom(model, frames[i], pred, i);
      if (fp.isolated) {
        pe[i] = new Float64Array(0);
        pc[i] = toIrreducible(fp.alphaMol);
        z.add(refLearnt[i], pred.irreducible, pred.uncertainty?.sd ?? null);
        return;
      }
      pe[i] = toIrreducible(fp.eps);
      pc[i] = toIrreducible(fp.alphaCM);
      const S3 = Math.sqrt(3);
      z.add(refLearnt[i], pred.irreducible, pred.uncertainty?.sd ?? null, fp.errorBars ? { reference: refEps[i][0] / S3, predicted: pe[i][0] / S3, sd: fp.errorBars.epsIso } : undefined);
    }, repeat);
    return { tested, pe, pc, errorBars: z.result() };
  };

  const main = await runFolds(null);
  const label = (i: number) => {
    const tag = frames[i].info.tag;
    return typeof tag === 'string' ? tag : frames[i].source ? `${frames[i].source!.file}#${frames[i].source!.index}` : undefined;
  };
  const pointsOf = (ref: Float64Array[], pred: Float64Array[]): ParityPoint[] =>
    main.tested.map((i) => ({ frame: i, label: label(i), reference: [...ref[i]], predicted: [...pred[i]] }));
  const errorsOf = (ref: Float64Array[], pred: Float64Array[], idx: number[]) =>
    errorFigures(idx.map((i) => ref[i]), idx.map((i) => pred[i]));
  const only = (idx: number[], keep: number[]) => idx.filter((i) => keep.includes(i));

  // The main comparison: ε over the periodic frames; a set of isolated frames only has none, and is compared
  // on its polarisability. A mixed set reports each kind separately (errorsByKind).
  const onEps = periodicFrames.length > 0;
  const mainOf = (r: { pe: Float64Array[]; pc: Float64Array[]; tested: number[] }) =>
    onEps ? errorsOf(refEps, r.pe, only(r.tested, periodicFrames)) : errorsOf(refCM, r.pc, r.tested);
  // state points (a state_point property, or density clusters) of the frames of the main comparison
  const spIdx = onEps ? only(main.tested, periodicFrames) : main.tested;
  const groups = statePointsOf(spIdx.map((i) => frames[i]), spIdx.map((i) => (isolated[i] ? 0 : frameVolume(frames[i], i))));
  const [spRef, spPred] = onEps ? [refEps, main.pe] : [refCM, main.pc];
  const statePoints = groups ? statePointErrors(spIdx.map((i) => spRef[i]), spIdx.map((i) => spPred[i]), groups, groups.labels) : null;

  const learningCurve: ValidationReport['learningCurve'] = [];
  for (const size of usable) {
    const repeats: ErrorFigures[] = [];
    for (let r = 0; r < plan.repeats; r++) repeats.push(mainOf(await runFolds(size, r)));
    learningCurve.push(meanOfRepeats(size, repeats));
  }
  const alsoOn: SecondaryComparison[] = [];
  const mainPoints = onEps ? pointsOf(refEps, main.pe).filter((p) => !isolated[p.frame]) : pointsOf(refCM, main.pc);
  if (onEps) {
    const tested = only(main.tested, periodicFrames);
    alsoOn.push({ target: comparedOn('alpha-cm', isolatedFrames.length > 0), errors: errorsOf(refCM, main.pc, tested), points: pointsOf(refCM, main.pc).filter((p) => !isolated[p.frame]) });
  }
  if (onEps && isolatedFrames.length) {
    alsoOn.push({ target: comparedOn('alpha-mol', true), errors: errorsOf(refCM, main.pc, only(main.tested, isolatedFrames)), points: pointsOf(refCM, main.pc).filter((p) => isolated[p.frame]) });
  }
  const full = { trainSize: Math.min(...Array.from({ length: k }, (_, f) => plan.trainIndices(f).length)), errors: mainOf(main) };
  return {
    route: request.route,
    target: onEps ? comparedOn('eps', isolatedFrames.length > 0) : comparedOn('alpha-mol', false),
    folds: k,
    errors: mainOf(main),
    statePoints,
    points: mainPoints,
    learningCurve,
    curveTrend: learningCurve.length ? curveTrend(learningCurve, full).text : null,
    alsoOn,
    skippedSizes,
    errorBars: main.errorBars,
    notes: isolatedFramesNote(Uint8Array.from(isolated, Number), request.kind),
  };
}

/** Error figures of a vector (3 Cartesian components, compared as a whole) or scalar target. */
export interface ValueErrorFigures {
  /** sqrt(mean over frames of |Δv|²); for a vector the per-frame norm of the 3-component error. */
  rmse: number;
  /** 100 · RMSE / SD, SD = sqrt(mean over frames of |v − mean v|²). */
  percent: number;
  /** 1 − Σ|Δv|² / Σ|v − mean v|². */
  r2: number;
  /** Largest |Δv| of one frame. */
  maxError: number;
  count: number;
}

export function valueErrorFigures(reference: ArrayLike<number>[], predicted: ArrayLike<number>[]): ValueErrorFigures {
  const n = reference.length;
  if (n === 0 || predicted.length !== n) throw new RangeError('valueErrorFigures: need equal, non-empty lists');
  const c = reference[0].length;
  const mean = new Float64Array(c);
  for (const r of reference) for (let k = 0; k < c; k++) mean[k] += r[k] / n;
  let sse = 0;
  let sst = 0;
  let maxError = 0;
  for (let i = 0; i < n; i++) {
    let e2 = 0;
    for (let k = 0; k < c; k++) {
      e2 += (predicted[i][k] - reference[i][k]) ** 2;
      sst += (reference[i][k] - mean[k]) ** 2;
    }
    sse += e2;
    maxError = Math.max(maxError, Math.sqrt(e2));
  }
  const rmse = Math.sqrt(sse / n);
  const sd = Math.sqrt(sst / n);
  return {
    rmse,
    percent: sd > 0 ? (100 * rmse) / sd : rmse > 0 ? Infinity : 0,
    r2: sst > 0 ? 1 - sse / sst : sse > 0 ? -Infinity : 1,
    maxError,
    count: n,
  };
}

export interface ValueValidationReport {
  shape: 'vector' | 'scalar';
  key: string;
  folds: number;
  errors: ValueErrorFigures;
  /** Held-out frames: reference and predicted value (Cartesian x, y, z for a vector). */
  points: { frame: number; reference: number[]; predicted: number[] }[];
  learningCurve: { trainSize: number; errors: ValueErrorFigures }[];
  skippedSizes: number[];
  /** Held-out z-scores of the models' calibrated error bars (null when no fold model was calibrated). */
  errorBars: ErrorBarCheck | null;
}

/**
 * k-fold cross-validation (and optional learning curve) of a vector (λ = 1, e.g. a cell dipole) or scalar
 * (λ = 0) target, with the same folds as `validate`: the value is learnt as a sum of local contributions and
 * compared as it is (no Clausius–Mossotti conversion).
 */
export async function validateValues(
  frames: Frame[],
  request: TrainRequest,
  options: ValidationOptions,
  hooks: WorkHooks = {},
): Promise<ValueValidationReport> {
  const n = frames.length;
  const k = options.folds;
  checkFolds(n, k);
  const reference = frames.map((f, i) => readValues(f, request.tensorKey, i));
  const shape = shapeOfValues(reference[0], request.tensorKey, whereOf(frames[0], 0));
  if (shape === 'tensor') throw new InputError(`"${request.tensorKey}" is a 3×3 tensor`, whereOf(frames[0], 0), 'tensors are validated by `validate` (on ε and α_CM)');
  reference.forEach((v, i) => {
    if (v.length !== reference[0].length) {
      throw new InputError(`property "${request.tensorKey}" has ${v.length} numbers here but ${reference[0].length} in the first frame`, whereOf(frames[i], i), 'every frame needs the same kind of value');
    }
  });
  const settings = resolveSettings(request.settings);
  const { species, centres } = speciesOf(frames, settings);
  const base = modelFeaturiser({ settings, species, centres, target: { key: request.tensorKey, shape, kind: null, route: request.route, learnt: shape, units: '' } });
  const featurise = cachedFeaturiser(base, frames);
  const plan = planFolds(n, k, settings.seed, options.learningCurve);
  const runFolds = async (size: number | null) => {
    const predicted: number[][] = new Array(n);
    const z = new ZCollector([{ order: shape === 'vector' ? 1 : 0, offset: 0 }]);
    const tested = await runFoldsOf(frames, request, plan, size, featurise, species, hooks, (model, i) => {
      const pred = predictWithFeatures(model, frames[i], featurise(frames[i], i), i);
      predicted[i] = shape === 'vector' ? [...predictedVector(pred)] : [pred.irreducible[0]];
      z.add(shape === 'vector' ? vectorToSpherical(reference[i]) : reference[i], pred.irreducible, pred.uncertainty?.sd ?? null);
    });
    return { tested, predicted, errorBars: z.result() };
  };
  const errorsOf = (r: { tested: number[]; predicted: number[][] }) => valueErrorFigures(r.tested.map((i) => reference[i]), r.tested.map((i) => r.predicted[i]));
  const main = await runFolds(null);
  const learningCurve: ValueValidationReport['learningCurve'] = [];
  for (const size of plan.usable) learningCurve.push({ trainSize: size, errors: errorsOf(await runFolds(size)) });
  return {
    shape,
    key: request.tensorKey,
    folds: k,
    errors: errorsOf(main),
    points: main.tested.map((i) => ({ frame: i, reference: [...reference[i]], predicted: main.predicted[i] })),
    learningCurve,
    skippedSizes: plan.skippedSizes,
    errorBars: main.errorBars,
  };
}
