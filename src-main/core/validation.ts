// k-fold cross-validation of a training request over whole frames, learning curves, and the error figures of
// the irreducible parts (definitions in docs/learning-engine.md, "Validation"):
//   RMSE λ=0  = sqrt( mean over frames of (ΔT⁰)² )
//   RMSE λ=2  = sqrt( mean over frames of Σ_μ (ΔT²_μ)² )          (the per-frame norm of the 5-component error)
//   %RMSE     = 100 · RMSE / SD, SD λ=0 = population standard deviation of the reference T⁰ over frames,
//               SD λ=2 = sqrt( mean over frames of Σ_μ (T²_μ − mean_μ)² )
//   R²        = 1 − Σ Δ² / Σ (T − mean)²   (over the same components)
// Tensor targets are compared on ε and on α_CM, whichever route was learnt.
import { convertTensor } from './clausius-mossotti.ts';
import { CancelledError, InputError } from './errors.ts';
import type { EnvironmentFeatures } from './feature-types.ts';
import type { Frame } from './frame.ts';
import {
  framePredictionFrom,
  modelFeaturiser,
  predictWithFeatures,
  resolveSettings,
  speciesOf,
  trainWithFeaturiser,
  type Featuriser,
} from './model.ts';
import type { ErrorFigures, ParityPoint, TrainRequest, ValidationReport, WorkHooks } from './model-types.ts';
import { makeRng } from './random.ts';
import { foldsOf } from './regression.ts';
import { frameVolume, readTensor } from './targets.ts';
import { toIrreducible } from './tensor.ts';

/** Error figures of paired 6-component irreducible vectors [T⁰, T²₋₂…T²₂]. */
export function errorFigures(reference: ArrayLike<number>[], predicted: ArrayLike<number>[]): ErrorFigures {
  const n = reference.length;
  if (n === 0 || predicted.length !== n) throw new RangeError('errorFigures: need equal, non-empty lists');
  const mean = new Float64Array(6);
  for (const r of reference) for (let k = 0; k < 6; k++) mean[k] += r[k] / n;
  let sseIso = 0;
  let sstIso = 0;
  let sseAniso = 0;
  let sstAniso = 0;
  for (let i = 0; i < n; i++) {
    const r = reference[i];
    const p = predicted[i];
    sseIso += (p[0] - r[0]) ** 2;
    sstIso += (r[0] - mean[0]) ** 2;
    for (let k = 1; k < 6; k++) {
      sseAniso += (p[k] - r[k]) ** 2;
      sstAniso += (r[k] - mean[k]) ** 2;
    }
  }
  const rmseIso = Math.sqrt(sseIso / n);
  const rmseAniso = Math.sqrt(sseAniso / n);
  const sdIso = Math.sqrt(sstIso / n);
  const sdAniso = Math.sqrt(sstAniso / n);
  // With a constant reference the relative figures are undefined; report them as infinite error / R² 0
  // rather than NaN so that nothing downstream mistakes them for numbers.
  const pct = (rmse: number, sd: number) => (sd > 0 ? (100 * rmse) / sd : rmse > 0 ? Infinity : 0);
  const r2 = (sse: number, sst: number) => (sst > 0 ? 1 - sse / sst : sse > 0 ? -Infinity : 1);
  return {
    rmseIso,
    rmseAniso,
    percentIso: pct(rmseIso, sdIso),
    percentAniso: pct(rmseAniso, sdAniso),
    r2Iso: r2(sseIso, sstIso),
    r2Aniso: r2(sseAniso, sstAniso),
    count: n,
  };
}

/** A second comparison reported beside the main one (e.g. α_CM when the main one is ε). */
export interface SecondaryComparison {
  target: string;
  errors: ErrorFigures;
  points: ParityPoint[];
}

export interface ValidationOptions {
  folds: number;
  learningCurve?: number[];
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

/** k-fold cross-validation (and optional learning curve) of one training request (model-types.ts contract). */
export async function validate(
  frames: Frame[],
  request: TrainRequest,
  options: ValidationOptions,
  hooks: WorkHooks = {},
): Promise<ValidationReport & { alsoOn: SecondaryComparison[]; skippedSizes: number[] }> {
  const n = frames.length;
  const k = options.folds;
  if (!Number.isInteger(k) || k < 2) throw new InputError(`${k} folds`, {}, 'cross-validation needs at least 2 folds');
  if (n < k) throw new InputError(`${n} frames for ${k} folds`, {}, `give at least ${k} frames, or fewer folds`);
  const settings = resolveSettings(request.settings);
  const { species, centres } = speciesOf(frames, settings);
  const firstValues = frames[0].info[request.tensorKey];
  if (!Array.isArray(firstValues) || (firstValues.length !== 9 && firstValues.length !== 6)) {
    throw new InputError(`validation compares cell tensors; "${request.tensorKey}" is not a 3×3 tensor`, { frame: 0 }, 'use `train` and `predict` for vector or scalar targets');
  }
  const base = modelFeaturiser({ settings, species, centres, target: { key: request.tensorKey, shape: 'tensor', kind: request.kind, route: request.route, learnt: 'alpha-cm', units: 'Å³' } });
  const featurise = cachedFeaturiser(base, frames);

  // reference tensors, on ε and on α_CM
  const refEps: Float64Array[] = [];
  const refCM: Float64Array[] = [];
  frames.forEach((f, i) => {
    const t = readTensor(f, request.tensorKey, i);
    const v = frameVolume(f, i);
    refEps.push(toIrreducible(convertTensor(t, request.kind, 'eps', v)));
    refCM.push(toIrreducible(convertTensor(t, request.kind, 'alpha-cm', v)));
  });

  const rng = makeRng(settings.seed + 7919);
  const perm = Int32Array.from({ length: n }, (_, i) => i);
  for (let i = n - 1; i > 0; i--) {
    const j = rng.int(i + 1);
    [perm[i], perm[j]] = [perm[j], perm[i]];
  }
  const fold = foldsOf(perm, k);
  const trainIndices = (f: number) => [...perm].filter((i) => fold[i] !== f);
  const testIndices = (f: number) => [...perm].filter((i) => fold[i] === f).sort((a, b) => a - b);

  const sizes = [...(options.learningCurve ?? [])].sort((a, b) => a - b);
  const minTrain = Math.min(...Array.from({ length: k }, (_, f) => trainIndices(f).length));
  const usable = sizes.filter((s) => Number.isInteger(s) && s >= 1 && s <= minTrain);
  const skippedSizes = sizes.filter((s) => !usable.includes(s));
  const steps = k * (1 + usable.length);
  let step = 0;

  const runFolds = async (size: number | null) => {
    const pe: Float64Array[] = new Array(n);
    const pc: Float64Array[] = new Array(n);
    const tested: number[] = [];
    for (let f = 0; f < k; f++) {
      if (hooks.signal?.aborted) throw new CancelledError();
      let train = trainIndices(f);
      if (size !== null) train = train.slice(0, size);
      const trainFrames = train.map((i) => frames[i]);
      const local: Featuriser = (frame, idx) => featurise(frame, train[idx]);
      const model = await trainWithFeaturiser(trainFrames, request, local, { signal: hooks.signal }, { applicability: false, species, createdAt: 'validation' });
      for (const i of testIndices(f)) {
        const pred = predictWithFeatures(model, frames[i], featurise(frames[i], i), i);
        const fp = framePredictionFrom(model, frames[i], pred, i);
        pe[i] = toIrreducible(fp.eps);
        pc[i] = toIrreducible(fp.alphaCM);
        tested.push(i);
      }
      step++;
      hooks.onProgress?.({ stage: size === null ? `fold ${f + 1}/${k}` : `learning curve, ${size} frames`, done: step, total: steps });
    }
    tested.sort((a, b) => a - b);
    return { tested, pe, pc };
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

  const learningCurve: ValidationReport['learningCurve'] = [];
  for (const size of usable) {
    const r = await runFolds(size);
    learningCurve.push({ trainSize: size, errors: errorsOf(refEps, r.pe, r.tested) });
  }
  return {
    route: request.route,
    target: 'eps',
    folds: k,
    errors: errorsOf(refEps, main.pe, main.tested),
    points: pointsOf(refEps, main.pe),
    learningCurve,
    alsoOn: [{ target: 'alpha-cm (Å³)', errors: errorsOf(refCM, main.pc, main.tested), points: pointsOf(refCM, main.pc) }],
    skippedSizes,
  };
}
