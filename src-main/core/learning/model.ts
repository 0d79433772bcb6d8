// The trained model: training (trainModel) and prediction (predictFrame) of frame targets as sums of local,
// per-atom contributions. A symmetric tensor target is split into λ=0 and λ=2 parts learnt as separate
// models; a vector target is λ=1; a scalar λ=0. Each part is either linear in the features (ζ = 1: one weight
// vector per centre species, solved in primal or dual form) or a kernel expansion over representative
// environments (ζ ≠ 1: sparse projected-process form, or exact kernel ridge when anchorEnvironments = 0).
// A per-species baseline (λ=0) is fitted by least squares first and stored with the model.
// See docs/learning-engine.md for the choices and their reasons.
import { CancelledError, InputError, ModelError } from '../errors.ts';
import type { EnvironmentFeatures, FeatureSettings } from '../descriptors/feature-types.ts';
import { computeFeatures, concatenateFeatures, featureCount, tensorLimits } from '../descriptors/features.ts';
import { applyFeatureSelection, selectFeatures, type FeatureSelection } from '../descriptors/feature-selection.ts';
import type { Frame, Mat3 } from '../geometry/frame.ts';
import {
  blockView,
  kernelPower,
  kernelWeights,
  linearDesignRows,
  linearScalarPass,
  localContributions,
  scalarDot,
  structureKernel,
  type KernelExpansion,
  type Order,
} from './kernels.ts';
import type { Applicability, FramePrediction, IsolatedPrediction, ModelSettings, Route, TensorKind, TensorPrediction, TrainRequest, TuneGrid, WorkHooks } from './model-types.ts';
import { makeRng, shuffleInPlace } from '../numerics/random.ts';
import { nearestAllOf } from './nearest-search.ts';
import { tuneCombinations, tuneSettingsWith, type TuneResult } from './tuning.ts';
import { DEFAULT_REGULARISATION_GRID, fitRidge, foldsOf, heldOutRows, posteriorVariance, primalWeights, type Design, type Posterior } from './regression.ts';
import { calibratePart, type Calibration, type PartCalibration } from './calibration.ts';
import { farthestSample, nearestOthers, type Sample } from './sampling.ts';
import {
  foldCoefficients,
  foldSparseWeights,
  anchorsOf,
  projectRows,
  representativeFactor,
  representativeKernel,
  representativesFrom,
  structureToRepresentatives,
  type EnvironmentPool,
  type Representatives,
} from './sparse.ts';
import {
  frameTarget,
  frameVolume,
  isIsolated,
  learntQuantity,
  learntTensor,
  readValues,
  shapeOfValues,
  sphericalToVector,
  tensorsFromLearnt,
  vectorToSpherical,
  whereOf,
  type LearntQuantity,
  type TargetShape,
} from './targets.ts';
import { fromIrreducible, fromIrreducibleAt, tensorFromValues, toIrreducible } from '../dielectric/tensor.ts';
import { checkTensorKind } from './kind-check.ts';
import { compositionNote } from './contributions.ts';
import { FREE_ATOM_POLARISABILITY_A3, splitShift, splitValues } from './species-split.ts';
import { computeReadout, makeWeightMatrices, weightMatricesLength, type ReadoutResult, type TensorReadout } from './tensor-readout.ts';
import { cellVolume } from '../geometry/cell.ts';
import { propagateErrorBars } from '../dielectric/clausius-mossotti.ts';
import { checkDomain, domainFrame, DomainStatsBuilder, type DomainFrame, type DomainStats } from './domain.ts';
import { neighbourList, type NeighbourList } from '../geometry/neighbours.ts';

import { DEFAULT_SETTINGS, settingSpec, settingsProblems, speciesSplitText, type NumericSettingKey, type SpeciesSplit } from '../settings-table.ts';
export { DEFAULT_SETTINGS };

/** Environments kept per centre species for sampling representatives (linear / kernel models). */
const POOL_LINEAR = 6000;
const POOL_KERNEL = 2000;
/** Representatives per species for the applicability distance of a linear model. */
const APPLICABILITY_POINTS = 256;
/** Applicability threshold = quantile of the training environments' distances to representatives of other frames. */
const APPLICABILITY_QUANTILE = 0.999;
/** Exact kernel ridge keeps every environment; beyond this many it is too slow, use the sparse form. */
const EXACT_LIMIT = 6000;

export interface PartPosterior {
  /** primal: factor of ΦᵀΦ + λI; dual: factor of K + λI (exact form); design: Φ and the factor of ΦΦᵀ + λI (regression.ts Posterior). */
  form: 'primal' | 'dual' | 'design';
  size: number;
  /** Cholesky factor, row-major lower triangle: size × size, or rows × rows in the design form. */
  factor: Float64Array;
  /** Design form: the training design Φ (rows × size) and its row count. */
  design?: Float64Array;
  rows?: number;
  noise: number;
  lambda: number;
  /** Sparse form: Cholesky factor of K_MM, for φ' = L⁻¹ k. */
  nystrom?: Float64Array;
  /** Exact form: training frame of each representative (frames = posterior size). */
  repFrame?: Int32Array;
  /** Exact form: per-species centre counts of the training frames (frames × species), for the count kernel. */
  counts?: Float64Array;
}

export interface ModelPart {
  order: Order;
  /** Index of the part's first component in the target's irreducible vector. */
  offset: number;
  form: 'linear' | 'kernel';
  method: 'primal' | 'dual' | 'sparse' | 'exact';
  /** Features per row of this order. */
  n: number;
  /** Linear form: species × n weights. */
  weights?: Float64Array;
  kernel?: KernelExpansion;
  regularisation: { relative: number; lambda: number; cvError: number; chosenBy: 'cross-validation' | 'given' | 'default'; grid: { relative: number; error: number }[] };
  posterior?: PartPosterior;
}

export interface TrainingSummary {
  frames: number;
  atoms: number;
  atomsPerSpecies: Record<string, number>;
  /** Range of the periodic frames' cell volumes (0 and 0 when every frame is isolated). */
  volumeA3: { min: number; max: number };
  /** Frames without a periodic cell (molecules, clusters); absent when there were none. */
  isolatedFrames?: number;
  /** Irreducible components of the learnt target per frame: mean, std dev, min, max. */
  target: { mean: number[]; std: number[]; min: number[]; max: number[] };
}

export interface Model {
  createdAt: string;
  target: {
    key: string;
    shape: TargetShape;
    /** Kind of the reference tensor in the training file (tensors only). */
    kind: TensorKind | null;
    route: Route;
    learnt: LearntQuantity;
    /** Units of the learnt quantity and of `local`. */
    units: string;
  };
  settings: ModelSettings;
  /** Neighbour species (density channels) and centre species, in feature order. */
  species: string[];
  centres: string[];
  /** Feature sizes the model was trained with (checked at prediction). */
  featureSizes: { n0: number; n?: number };
  /** Radial and angular limits of the λ>0 features (resolved at training). */
  tensorLimits: { nmax: number; lmax: number };
  /** Feature columns kept (settings.maxFeatures > 0): applied to computed features before the model sees them. */
  featureSelection?: FeatureSelection;
  /** Per centre species λ=0 baseline contribution per atom (first irreducible component), or zeros. */
  baseline: number[];
  parts: ModelPart[];
  applicability: { n0: number; species: Int32Array; p: Float64Array; threshold: number; perSpecies: number[]; rule: string };
  training: TrainingSummary;
  notes: string[];
  /**
   * Error-bar calibration from the training's own cross-validation (calibration.ts). Absent in models saved
   * before it existed and in models of fewer than 3 frames: their predictions carry no error bars.
   */
  calibration?: Calibration;
  /**
   * Vector targets only: a λ=0 ridge model (of |v|) kept solely for its posterior, the leverage the error bars
   * scale; it adds nothing to the prediction.
   */
  leverage?: ModelPart;
  /** Training ranges of the domain checks (domain.ts); absent in models saved before them (feature distance only). */
  domain?: DomainStats;
}

/** Prediction of any target shape: irreducible components, per-atom contributions, applicability. */
export interface TargetPrediction {
  /** Irreducible components of the learnt target ([T⁰, T²…] / λ=1 μ=−1…1 / [value]). */
  irreducible: Float64Array;
  /** Per atom, `components` values of the learnt target (same layout). */
  localIrreducible: Float64Array;
  components: number;
  applicability: Applicability;
  /**
   * Calibrated error bars: the frame's leverage and the standard deviation of every irreducible component of the
   * learnt target (same layout and units as `irreducible`); null when the model has no calibration.
   */
  uncertainty: { leverage: number; sd: Float64Array } | null;
}

/** Features of one frame; `neighbours`, when given, is the frame's list built with the model's cutoff (reused, not rebuilt). */
export type Featuriser = (frame: Frame, index: number, neighbours?: NeighbourList) => EnvironmentFeatures;

/** The complete settings: the defaults where `partial` leaves a setting out; an InputError when any is not allowed. */
export function resolveSettings(partial?: Partial<ModelSettings>): ModelSettings {
  const s: ModelSettings = { ...DEFAULT_SETTINGS, contributingSpecies: [...DEFAULT_SETTINGS.contributingSpecies] };
  for (const [k, v] of Object.entries(partial ?? {})) if (v !== undefined) (s as unknown as Record<string, unknown>)[k] = v;
  const problems = settingsProblems(s);
  if (problems.length) throw new InputError(`model settings: ${problems[0]}`, {}, problems.length > 1 ? `also: ${problems.slice(1).join('; ')}` : 'see `polarweave train --help` for every setting and its limits');
  return s;
}

/**
 * The feature settings of a model: its own settings with the λ>0 limits resolved once (features.ts's
 * tensorLimits) and stored, so a saved model keeps computing the same features if that default changes.
 */
function featureSettingsOf(s: ModelSettings, species: string[], centres: string[], limits?: { nmax: number; lmax: number }): FeatureSettings {
  const base: FeatureSettings = { cutoff: s.cutoffRadius, cutoffWidth: s.switchWidth, sigma: s.densityWidth, nmax: s.radialFunctions, lmax: s.angularOrder, species, centres };
  const t = limits ?? tensorLimits(base);
  return { ...base, nmaxTensor: t.nmax, lmaxTensor: t.lmax };
}

function tensorOrderOf(shape: TargetShape): 1 | 2 | null {
  return shape === 'tensor' ? 2 : shape === 'vector' ? 1 : null;
}

/** The featuriser the trained model uses (computeFeatures with the model's settings). */
export function modelFeaturiser(model: Pick<Model, 'settings' | 'species' | 'centres' | 'target'> & { tensorLimits?: Model['tensorLimits'] }): Featuriser {
  const fs = featureSettingsOf(model.settings, model.species, model.centres, model.tensorLimits);
  const order = tensorOrderOf(model.target.shape);
  const lambdas = order === null ? [] : [order];
  return (frame) => computeFeatures(frame, fs, lambdas);
}

// setImmediate, not setTimeout(0): Node holds a timer at least 1 ms, and training yields about two hundred times
// (205 yields: 342–357 ms with timers against 1.5–7.6 ms with setImmediate, measured); I/O, due timers and aborts
// run as before. A browser has no setImmediate (this code also runs in the browser host's worker): a timer there.
const immediate = (globalThis as { setImmediate?: (callback: () => void) => unknown }).setImmediate;
const yieldToLoop = (): Promise<void> => new Promise((r) => (immediate ? immediate(r) : setTimeout(r, 0)));

function checkAbort(hooks?: WorkHooks): void {
  if (hooks?.signal?.aborted) throw new CancelledError();
}

/** Irreducible components of a frame's learnt target. */
interface TargetRows {
  shape: TargetShape;
  components: number;
  /** frames × components */
  values: Float64Array;
  /** Cell volume per frame (Å³); 0 for an isolated frame. */
  volumes: Float64Array;
  /** Per frame: 1 for an isolated molecule or cluster (targets.ts isIsolated), else 0. */
  isolated: Uint8Array;
}

export function learntTargets(frames: Frame[], request: TrainRequest): TargetRows {
  if (frames.length === 0) throw new InputError('no frames to learn from', {}, 'give a file with at least one frame carrying the reference tensor');
  const firstKey = request.kind === 'alpha-mol' || !isIsolated(frames[0]) ? request.tensorKey : request.isolatedKey ?? request.tensorKey;
  const first = readValues(frames[0], firstKey, 0);
  const shape = shapeOfValues(first, firstKey, whereOf(frames[0], 0));
  const components = shape === 'tensor' ? 6 : shape === 'vector' ? 3 : 1;
  const values = new Float64Array(frames.length * components);
  const volumes = new Float64Array(frames.length);
  const isolated = new Uint8Array(frames.length);
  frames.forEach((frame, f) => {
    const target = shape === 'tensor' ? frameTarget(frame, request, f) : { key: request.tensorKey, kind: request.kind, isolated: isIsolated(frame) };
    const raw = readValues(frame, target.key, f);
    const s = shapeOfValues(raw, target.key, whereOf(frame, f));
    if (s !== shape) throw new InputError(`property "${target.key}" has ${raw.length} numbers here but ${first.length} in the first frame`, whereOf(frame, f));
    isolated[f] = target.isolated ? 1 : 0;
    volumes[f] = target.isolated ? 0 : cellVolume(frame.cell as Mat3, whereOf(frame, f));
    if (shape === 'tensor') {
      const given = readTensorValues(raw, frame, f);
      if (!request.trustKind) checkTensorKind(given, target.kind, frame.species.length, target.key, whereOf(frame, f));
      const t = learntTensor(given, target.kind, request.route, target.isolated ? null : volumes[f]);
      values.set(toIrreducible(t), f * 6);
    } else if (shape === 'vector') values.set(vectorToSpherical(raw), f * 3);
    else values[f] = raw[0];
  });
  return { shape, components, values, volumes, isolated };
}

/**
 * What a set that holds isolated frames tells the user about it: how many of each kind, what each is learnt
 * as, and the weight each kind gets in the fit (every frame the same). Empty for an all-periodic set.
 */
export function isolatedFramesNote(isolated: ArrayLike<number>, kind: TensorKind): string[] {
  let n = 0;
  for (let f = 0; f < isolated.length; f++) n += isolated[f];
  if (n === 0) return [];
  const periodic = isolated.length - n;
  const what = `${n} isolated frame${n === 1 ? '' : 's'} (molecules or clusters, no cell): their polarisability in vacuum is learnt as the same additive quantity as α_CM (Å³)`;
  if (periodic === 0) return [`${what}; ε, n and Δn are defined only for periodic frames predicted through the forward Clausius–Mossotti relation`];
  return [
    `${what}; ${periodic} periodic frame${periodic === 1 ? '' : 's'} (${kind}) enter through α_CM (Å³). ` +
      'Weights: every frame weighs 1 in the least-squares fit, clusters and cells alike, on its α in Å³ — a frame with more atoms has a larger α, so the same relative error weighs more there',
  ];
}

function readTensorValues(raw: number[], frame: Frame, f: number): Mat3 {
  return tensorFromValues(raw, whereOf(frame, f));
}

export function speciesOf(frames: Frame[], settings: ModelSettings, given?: string[]): { species: string[]; centres: string[] } {
  const all = new Set<string>(given ?? []);
  for (const f of frames) for (const s of f.species) all.add(s);
  const species = [...all].sort();
  const centres = settings.contributingSpecies.length ? [...settings.contributingSpecies] : species;
  for (const c of centres) {
    if (!all.has(c)) throw new InputError(`centre species "${c}" does not occur in the training frames`, {}, `species present: ${species.join(', ')}`);
  }
  return { species, centres };
}

/**
 * Reservoir sample of environments per centre species (seeded), with the order-λ blocks when needed. The draws
 * depend only on each frame's centre species, in frame order (plan), so the rows may be cut out where the
 * features are (summariseFrame, in this thread or a worker) and put in afterwards, frame by frame (put).
 */
class PoolBuilder {
  private seen: number[];
  /**
   * Per species, the sample's rows slot after slot in flat arrays (grown as slots fill, up to the cap): λ=0 rows,
   * order-λ blocks, frames; `count` slots in use. Rows are copied in, never held as small arrays of their own.
   */
  private held: { p: Float64Array; blocks: Float64Array; frame: Int32Array; count: number }[];
  private blockSize = -1;
  constructor(
    private readonly nSpecies: number,
    private readonly cap: number,
    readonly order: Order | null,
    private readonly rng: ReturnType<typeof makeRng>,
  ) {
    this.seen = new Array(nSpecies).fill(0);
    this.held = Array.from({ length: nSpecies }, () => ({ p: new Float64Array(0), blocks: new Float64Array(0), frame: new Int32Array(0), count: 0 }));
  }
  /** The environments of the next frame that enter the sample, in order, and the slot each takes (a later one may take an earlier one's). */
  plan(centreSpecies: Int32Array): { keep: Int32Array; slot: Int32Array } {
    const keep: number[] = [];
    const slots: number[] = [];
    for (let e = 0; e < centreSpecies.length; e++) {
      const s = centreSpecies[e];
      const k = this.seen[s]++;
      let slot = -1;
      if (k < this.cap) slot = k;
      else {
        const j = this.rng.int(k + 1);
        if (j < this.cap) slot = j;
      }
      if (slot < 0) continue;
      keep.push(e);
      slots.push(slot);
    }
    return { keep: Int32Array.from(keep), slot: Int32Array.from(slots) };
  }
  /** The rows of a frame's planned environments (summariseFrame's pool), into their slots. */
  put(plan: { keep: Int32Array; slot: Int32Array }, pool: FrameSummary['pool'], centreSpecies: Int32Array, frame: number): void {
    const n0 = pool.n0;
    const size = pool.blocks ? pool.blockSize : 0;
    if (plan.keep.length > 0 && this.blockSize < 0) this.blockSize = size;
    for (let k = 0; k < plan.keep.length; k++) {
      const s = centreSpecies[plan.keep[k]];
      const slot = plan.slot[k];
      const h = this.room(s, slot + 1, n0, size);
      h.p.set(pool.p.subarray(k * n0, (k + 1) * n0), slot * n0);
      if (size > 0) h.blocks.set((pool.blocks as Float64Array).subarray(k * size, (k + 1) * size), slot * size);
      h.frame[slot] = frame;
      if (slot >= h.count) h.count = slot + 1;
    }
  }
  /** Species s's arrays with room for `slots` slots (doubling, at most the cap). */
  private room(s: number, slots: number, n0: number, size: number): PoolBuilder['held'][number] {
    const h = this.held[s];
    const have = h.frame.length;
    if (slots <= have) return h;
    const grown = Math.min(this.cap, Math.max(slots, 2 * have, 64));
    const p = new Float64Array(grown * n0);
    p.set(h.p);
    const blocks = new Float64Array(grown * size);
    blocks.set(h.blocks);
    const frame = new Int32Array(grown);
    frame.set(h.frame);
    this.held[s] = { p, blocks, frame, count: h.count };
    return this.held[s];
  }
  build(n0: number): EnvironmentPool & { perSpecies: Int32Array[]; frame: Int32Array } {
    let count = 0;
    for (const h of this.held) count += h.count;
    const p = new Float64Array(count * n0);
    const species = new Int32Array(count);
    const frame = new Int32Array(count);
    const size = Math.max(0, this.blockSize);
    const withBlocks = this.order !== null && this.order !== 0 && count > 0 && size > 0;
    const data = new Float64Array(withBlocks ? count * size : 0);
    const perSpecies: Int32Array[] = [];
    let at = 0;
    this.held.forEach((h, s) => {
      p.set(h.p.subarray(0, h.count * n0), at * n0);
      if (withBlocks) data.set(h.blocks.subarray(0, h.count * size), at * size);
      frame.set(h.frame.subarray(0, h.count), at);
      species.fill(s, at, at + h.count);
      perSpecies.push(Int32Array.from({ length: h.count }, (_, k) => at + k));
      at += h.count;
    });
    const blocks: EnvironmentPool['blocks'] = withBlocks ? { order: this.order as Order, n: size / (2 * (this.order as number) + 1), data } : undefined;
    return { n0, count, species, p, blocks, perSpecies, frame };
  }
}

/**
 * What the first training pass computes of every frame, and with which settings (plain data: it may go to a
 * worker thread, TrainingThreads).
 */
export interface FramePassSpec {
  features: FeatureSettings;
  lambdas: (1 | 2)[];
  /** The target's λ>0 order, whose feature count the model records, or null. */
  order: Order | null;
  /** Number of centre species. */
  centres: number;
  /** A linear model's design rows (linearDesignRows) of these orders, in part order; none for a kernel model. */
  designOrders: Order[];
  /** Order of the blocks kept with the sampled environments (kernel models of a λ>0 target), or null. */
  poolOrder: Order | null;
  /** Species and cutoff of the domain statistics (domain.ts), or null when the model gets no applicability. */
  domain: { species: string[]; cutoff: number } | null;
  /** Feature columns kept (settings.maxFeatures > 0), applied to the computed features. */
  selection?: FeatureSelection;
}

/** What the first training pass keeps of one frame (summariseFrame). */
export interface FrameSummary {
  count: number;
  n0: number;
  /** Features per row of the target's λ>0 order, when it has one. */
  nOrder?: number;
  centreSpecies: Int32Array;
  /** linearDesignRows of each of spec.designOrders. */
  design: Float64Array[];
  /** The λ=0 rows (and blocks) of the environments the sample keeps (PoolBuilder.plan's keep, in order), with their centre atoms. */
  pool: { n0: number; p: Float64Array; blockSize: number; blocks?: Float64Array; centre: Int32Array };
  domain: DomainFrame | null;
}

/** Frames for a TrainingThreads: their index in the training set and the environments the sample keeps of each. */
export interface FramePassBatch {
  spec: FramePassSpec;
  frames: Frame[];
  indices: number[];
  keep: Int32Array[];
}

/**
 * Worker threads for a training (app/training-threads.ts): batches of the first pass, each through
 * frameSummaries, and a linear model's applicability (sampledApplicability) beside the fit; the numbers are
 * those of this thread, bit for bit.
 */
export interface TrainingThreads {
  /** Threads that compute, this one included: `threads` − 1 workers (1: everything in this thread). */
  threads: number;
  /** Fewer atoms than this in the training set: everything stays in the calling thread (default PARALLEL_MIN_ATOMS). */
  minAtoms?: number;
  frames(batch: FramePassBatch, signal?: AbortSignal): Promise<FrameSummary[]>;
  /** false: this thread only hands out and merges the first pass's batches (tests, to give every batch to the workers). */
  callerComputes?: boolean;
  /** When present, a linear model's applicability is computed there while this thread fits. */
  applicability?(input: ApplicabilityInput, signal?: AbortSignal): Promise<Model['applicability']>;
}

/** Training hooks: progress and cancel (WorkHooks), and worker threads (TrainingThreads). */
export interface TrainHooks extends WorkHooks {
  threads?: TrainingThreads;
}

/** The centre species index of each environment of a frame, as computeFeatures numbers them (centres in atom order). */
export function centreSpeciesOf(frame: Frame, centres: string[]): Int32Array {
  const index = new Map(centres.map((c, k) => [c, k]));
  const out: number[] = [];
  for (const s of frame.species) {
    const k = index.get(s);
    if (k !== undefined) out.push(k);
  }
  return Int32Array.from(out);
}

/**
 * Whether the first pass needs a frame's λ > 0 features only as the per-species sums of a linear model's design rows
 * (no pool of λ > 0 blocks, no feature selection): computeFeatures then gives just those sums (sumsOnly), the same
 * numbers linearDesignRows makes from the blocks.
 */
export function sumsSuffice(spec: FramePassSpec): boolean {
  return spec.order !== null && spec.order !== 0 && spec.designOrders.includes(spec.order) && !spec.selection && (spec.poolOrder === null || spec.poolOrder === 0);
}

/** One frame's part of the first training pass, from its features (and its neighbour list for the domain statistics). */
export function summariseFrame(frame: Frame, fe: EnvironmentFeatures, pairs: NeighbourList | undefined, spec: FramePassSpec, keep: Int32Array): FrameSummary {
  const n0 = fe.n0;
  const view = spec.poolOrder !== null && spec.poolOrder !== 0 ? blockView(fe, spec.poolOrder) : null;
  const blockSize = view ? view.width * view.n : 0;
  const p = new Float64Array(keep.length * n0);
  const blocks = view ? new Float64Array(keep.length * blockSize) : undefined;
  const centre = new Int32Array(keep.length);
  for (let k = 0; k < keep.length; k++) {
    const e = keep[k];
    p.set(fe.scalar.subarray(e * n0, (e + 1) * n0), k * n0);
    if (view && blocks) blocks.set(view.data.subarray(e * blockSize, (e + 1) * blockSize), k * blockSize);
    centre[k] = fe.centre[e];
  }
  return {
    count: fe.count,
    n0,
    nOrder: spec.order !== null ? blockView(fe, spec.order).n : undefined,
    centreSpecies: fe.centreSpecies,
    design: spec.designOrders.map((o) => linearDesignRows(fe, o, spec.centres)),
    pool: { n0, p, blockSize, blocks, centre },
    domain: spec.domain ? domainFrame(frame, pairs as NeighbourList, spec.domain.species, spec.domain.cutoff, fe.centreSpecies, fe.norms) : null,
  };
}

/**
 * The first training pass over a batch of frames with the model's own features (what a TrainingThreads's worker
 * runs): per frame, the neighbour list, the features and summariseFrame, as trainWithFeaturiser does in its own thread.
 */
export function frameSummaries(batch: FramePassBatch, signal?: AbortSignal): FrameSummary[] {
  const { spec } = batch;
  const out: FrameSummary[] = [];
  let pairs: NeighbourList | undefined;
  let spare: EnvironmentFeatures | undefined;
  batch.frames.forEach((frame, k) => {
    if (signal?.aborted) throw new CancelledError();
    pairs = spec.domain ? neighbourList(frame, spec.features.cutoff, { reuse: pairs }) : undefined;
    const raw = computeFeatures(frame, spec.features, spec.lambdas, pairs, undefined, spare, sumsSuffice(spec));
    const fe = spec.selection ? applyFeatureSelection(raw, spec.selection) : raw;
    out.push(summariseFrame(frame, fe, pairs, spec, batch.keep[k]));
    spare = raw;
  });
  return out;
}

/**
 * Below this many atoms a training stays in the calling thread: a worker's start-up (about 0.9 s of CPU to load the
 * code from the sources, measured here) is then a good share of the first pass (about 20 ms of CPU per 384-atom
 * frame at default settings, measured), and on a busy machine it takes that CPU from the calling thread.
 */
const PARALLEL_MIN_ATOMS = 12_000;

function atomsIn(frames: Frame[]): number {
  let n = 0;
  for (const f of frames) n += f.species.length;
  return n;
}

/**
 * The first pass on a TrainingThreads: `threads` − 1 worker threads and this one share the batches of frames.
 * Batches go to the workers that are ready, at most two per worker at once; this thread computes the next batch
 * itself (frameSummaries, the workers' function) whenever the one to merge next is not back yet. At most
 * 2 × threads batches are out or unmerged at any time (bounded memory for any number of frames); they are merged
 * in frame order, with progress after each frame, and a batch's error is raised when its turn comes (the first bad
 * frame's, as in one thread).
 */
async function runFramePass(
  runner: TrainingThreads,
  spec: FramePassSpec,
  frames: Frame[],
  plans: { keep: Int32Array; slot: Int32Array }[],
  hooks: WorkHooks,
  merge: (f: number, sum: FrameSummary, plan: { keep: Int32Array; slot: Int32Array }) => void,
): Promise<void> {
  const n = frames.length;
  const threads = Math.max(2, runner.threads);
  const workers = threads - 1;
  // several batches per thread (progress, balance), up to 8 frames and about 3,000 atoms each (one message per
  // batch; this thread yields between its batches, so a batch of its own holds it for a fraction of a second)
  const size = Math.max(1, Math.min(8, Math.ceil(n / (4 * threads)), Math.floor((3072 * n) / Math.max(1, atomsIn(frames)))));
  const batches = Math.ceil(n / size);
  const window = 2 * threads;
  type Result = { value: FrameSummary[] } | { error: unknown } | { pending: Promise<void> };
  const results = new Map<number, Result>();
  const batchOf = (b: number): FramePassBatch => {
    const indices = Array.from({ length: Math.min(n, (b + 1) * size) - b * size }, (_, j) => b * size + j);
    return { spec, frames: indices.map((f) => frames[f]), indices, keep: indices.map((f) => plans[f].keep) };
  };
  // A worker gets batches only once it has answered a first frame (its code loaded, its tables made): until then
  // this thread works alone, so that it never waits on a worker still starting (seconds on a busy machine).
  const alone = runner.callerComputes === false;
  let ready = alone ? workers : 0;
  for (let w = 0; w < workers && !alone; w++) {
    runner.frames({ spec, frames: [frames[0]], indices: [0], keep: [new Int32Array(0)] }, hooks.signal).then(
      () => void ready++,
      () => undefined, // a worker that cannot start leaves the work to the others
    );
  }
  let next = 0;
  let atWorkers = 0;
  for (let b = 0; b < batches; ) {
    while (next < batches && atWorkers < 2 * ready && next - b < window) {
      const k = next++;
      atWorkers++;
      const pending = runner.frames(batchOf(k), hooks.signal).then(
        (value) => void results.set(k, { value }),
        (error: unknown) => void results.set(k, { error }),
      );
      results.set(k, { pending: pending.finally(() => atWorkers--) });
    }
    // (no entry yet: batch b is the next one, for this thread)
    const r = results.get(b);
    if (r === undefined || 'pending' in r) {
      if (!alone && next < batches && next - b < window) {
        // this thread's own batch while the workers compute
        const k = next++;
        try {
          results.set(k, { value: frameSummaries(batchOf(k), hooks.signal) });
        } catch (error) {
          results.set(k, { error });
        }
        await yieldToLoop();
      } else if (r) await r.pending;
      checkAbort(hooks);
      continue;
    }
    results.delete(b);
    if ('error' in r) throw r.error;
    r.value.forEach((sum, j) => {
      const f = b * size + j;
      const want = centreSpeciesOf(frames[f], spec.features.centres);
      if (sum.count !== want.length || sum.centreSpecies.some((s, e) => s !== want[e])) throw new Error(`training: frame ${f} came back from its thread with other environments than planned`);
      merge(f, sum, plans[f]);
    });
    b++;
  }
}

/** What a model's applicability is made from: the sampled training environments, the number of frames and of centre species. */
export interface ApplicabilityInput {
  pool: EnvironmentPool & { perSpecies: Int32Array[]; frame: Int32Array };
  frames: number;
  centres: number;
}

/** A linear model's applicability: APPLICABILITY_POINTS representatives per species by farthest-point sampling, then applicabilityFrom. */
export function sampledApplicability(input: ApplicabilityInput): Model['applicability'] {
  const { pool } = input;
  return applicabilityFrom(input, pool.perSpecies.map((cand) => farthestSample(pool.p, pool.n0, cand, APPLICABILITY_POINTS)));
}

/**
 * The applicability of a model whose representatives are `samples` (per species): the threshold per species is the
 * APPLICABILITY_QUANTILE quantile of the pool's distances to the nearest representative of another frame (one
 * frame: other than itself; each environment's nearest representative from the sampling as a starting point).
 */
function applicabilityFrom(input: ApplicabilityInput, samples: Sample[]): Model['applicability'] {
  const { pool: envPool, frames: nFrames, centres: nS } = input;
  const n0 = envPool.n0;
  const repIndex = Int32Array.from(samples.flatMap((r) => [...r.chosen]));
  const perSpecies: number[] = new Array(nS).fill(0);
  const dist = nearestOthers(envPool, repIndex, envPool.perSpecies, nFrames >= 2 ? envPool.frame : undefined, anchorsOf(envPool.count, envPool.perSpecies, samples));
  for (let s = 0; s < nS; s++) {
    const ds: number[] = [];
    for (const i of envPool.perSpecies[s]) if (Number.isFinite(dist[i])) ds.push(dist[i]);
    perSpecies[s] = quantile(ds, APPLICABILITY_QUANTILE);
  }
  const p = new Float64Array(repIndex.length * n0);
  repIndex.forEach((i, k) => p.set(envPool.p.subarray(i * n0, (i + 1) * n0), k * n0));
  return {
    n0,
    species: Int32Array.from(repIndex, (i) => envPool.species[i]),
    p,
    threshold: Math.max(...perSpecies),
    perSpecies,
    rule: `the ${APPLICABILITY_QUANTILE} quantile of the training environments' distances to the nearest representative ${nFrames >= 2 ? 'of another frame' : 'other than itself'} (${repIndex.length} representatives)`,
  };
}

function quantile(values: number[], q: number): number {
  if (values.length === 0) return 0;
  const s = [...values].sort((a, b) => a - b);
  const pos = q * (s.length - 1);
  const lo = Math.floor(pos);
  const hi = Math.ceil(pos);
  return s[lo] + (s[hi] - s[lo]) * (pos - lo);
}

/** Per-species baseline b (per atom) minimising |N b − y|² with a tiny ridge (composition is often fixed). */
function fitBaseline(counts: Float64Array, frames: number, species: number, y: Float64Array, stride: number): Float64Array {
  const a = new Float64Array(species * species);
  const rhs = new Float64Array(species);
  for (let f = 0; f < frames; f++) {
    for (let s = 0; s < species; s++) {
      rhs[s] += counts[f * species + s] * y[f * stride];
      for (let t = 0; t < species; t++) a[s * species + t] += counts[f * species + s] * counts[f * species + t];
    }
  }
  let tr = 0;
  for (let s = 0; s < species; s++) tr += a[s * species + s];
  const eps = 1e-8 * (tr / species || 1);
  for (let s = 0; s < species; s++) a[s * species + s] += eps;
  // small S: Gaussian elimination is enough
  const m = Float64Array.from(a);
  const b = Float64Array.from(rhs);
  for (let i = 0; i < species; i++) {
    let piv = i;
    for (let r = i + 1; r < species; r++) if (Math.abs(m[r * species + i]) > Math.abs(m[piv * species + i])) piv = r;
    if (piv !== i) {
      for (let c = 0; c < species; c++) [m[i * species + c], m[piv * species + c]] = [m[piv * species + c], m[i * species + c]];
      [b[i], b[piv]] = [b[piv], b[i]];
    }
    for (let r = i + 1; r < species; r++) {
      const g = m[r * species + i] / m[i * species + i];
      for (let c = i; c < species; c++) m[r * species + c] -= g * m[i * species + c];
      b[r] -= g * b[i];
    }
  }
  for (let i = species - 1; i >= 0; i--) {
    let s = b[i];
    for (let c = i + 1; c < species; c++) s -= m[i * species + c] * b[c];
    b[i] = s / m[i * species + i];
  }
  return b;
}

export interface TrainOptions {
  /** Skip the applicability representatives (validation folds do not need them). */
  applicability?: boolean;
  /** Creation date to record (tests pass a fixed one). */
  createdAt?: string;
  /** Neighbour species to use instead of those of the training frames (validation folds share one set). */
  species?: string[];
}

/** Training on frames with a given featuriser (trainModel uses computeFeatures; tests pass synthetic ones). */
export async function trainWithFeaturiser(frames: Frame[], request: TrainRequest, featurise: Featuriser | null, hooks: TrainHooks = {}, options: TrainOptions = {}): Promise<Model> {
  const settings = resolveSettings(request.settings);
  checkAbort(hooks);
  const targets = learntTargets(frames, request);
  const { species, centres } = speciesOf(frames, settings, options.species);
  const order = tensorOrderOf(targets.shape);
  // `spare`: features of an earlier frame that nothing holds any more, written over by the next (see computeFeatures)
  let spare: EnvironmentFeatures | undefined;
  const baseFeat: Featuriser = featurise ?? ((frame, _index, neighbours) => computeFeatures(frame, featureSettingsOf(settings, species, centres), order === null ? [] : [order], neighbours, undefined, spare));
  const nFrames = frames.length;
  const nS = centres.length;
  const rng = makeRng(settings.seed);
  // Data-driven feature selection (maxFeatures > 0): columns chosen on a sample of up to 8 training frames.
  let featureSelection: FeatureSelection | undefined;
  let feat = baseFeat;
  if (settings.maxFeatures > 0) {
    hooks.onProgress?.({ stage: 'feature selection', done: 0, total: 1 });
    const picks = [...new Set(Array.from({ length: Math.min(8, nFrames) }, (_, k) => Math.floor((k * nFrames) / Math.min(8, nFrames))))];
    const sample = concatenateFeatures(picks.map((f) => baseFeat(frames[f], f)));
    const sel: FeatureSelection = { 0: selectFeatures(sample, settings.maxFeatures, 0) };
    if (order !== null) sel[order] = selectFeatures(sample, settings.maxFeatures, order);
    featureSelection = sel;
    feat = (frame, i, neighbours) => applyFeatureSelection(baseFeat(frame, i, neighbours), sel);
    await yieldToLoop();
  }
  const linear = settings.kernelExponent === 1;
  const exact = !linear && settings.anchorEnvironments === 0;
  // aux: a λ=0 fit of |v| for a vector target, kept only for its posterior (the leverage of the error bars)
  const partsSpec: { order: Order; offset: number; width: number; aux?: boolean }[] = [];
  if (targets.shape === 'tensor') partsSpec.push({ order: 0, offset: 0, width: 1 }, { order: 2, offset: 1, width: 5 });
  else if (targets.shape === 'vector') partsSpec.push({ order: 1, offset: 0, width: 3 }, { order: 0, offset: 0, width: 1, aux: true });
  else partsSpec.push({ order: 0, offset: 0, width: 1 });
  const hasIso = partsSpec[0].order === 0;

  // Pass 1: features of every frame → composition, linear design rows, a sample of environments.
  const counts = new Float64Array(nFrames * nS);
  const pool = new PoolBuilder(nS, linear ? POOL_LINEAR : POOL_KERNEL, linear ? null : order ?? 0, rng);
  const linearRows: Float64Array[][] = partsSpec.map(() => []);
  const kept: EnvironmentFeatures[] = [];
  let n0 = -1;
  let nOrder: number | undefined;
  let totalEnv = 0;
  const atomsPerSpecies: Record<string, number> = {};
  let atoms = 0;
  const wantApplicability = options.applicability !== false;
  const domain = wantApplicability ? new DomainStatsBuilder(species, centres, settings.cutoffRadius) : null;
  const passSpec: FramePassSpec = {
    features: featureSettingsOf(settings, species, centres),
    lambdas: order === null ? [] : [order],
    order,
    centres: nS,
    designOrders: linear ? partsSpec.map((p) => p.order) : [],
    poolOrder: pool.order,
    domain: domain ? { species, cutoff: settings.cutoffRadius } : null,
    selection: featureSelection,
  };
  // one frame's summary into the pass's sums, in frame order
  const merge = (f: number, sum: FrameSummary, plan: { keep: Int32Array; slot: Int32Array }) => {
    if (domain) domain.addFrame(sum.domain as DomainFrame);
    if (n0 < 0) {
      n0 = sum.n0;
      nOrder = sum.nOrder;
    }
    for (let e = 0; e < sum.count; e++) counts[f * nS + sum.centreSpecies[e]]++;
    for (const s of frames[f].species) atomsPerSpecies[s] = (atomsPerSpecies[s] ?? 0) + 1;
    atoms += frames[f].species.length;
    if (linear) sum.design.forEach((rows, k) => linearRows[k].push(rows));
    pool.put(plan, sum.pool, sum.centreSpecies, f);
    hooks.onProgress?.({ stage: 'features', done: f + 1, total: nFrames });
  };
  const runner = hooks.threads && hooks.threads.threads > 1 && atomsIn(frames) >= (hooks.threads.minAtoms ?? PARALLEL_MIN_ATOMS) ? hooks.threads : null;
  if (runner && featurise === null && !exact) {
    // worker threads: the sample's draws depend only on the centre species, so they are made here first, in frame order
    const plans = frames.map((frame) => pool.plan(centreSpeciesOf(frame, centres)));
    await runFramePass(runner, passSpec, frames, plans, hooks, merge);
  } else {
    let pairs: NeighbourList | undefined;
    // the model's own features wanted only as design-row sums beyond λ = 0 (sumsSuffice): computed as such
    const sumsOnly = featurise === null && sumsSuffice(passSpec);
    for (let f = 0; f < nFrames; f++) {
      checkAbort(hooks);
      // one neighbour list per frame for the features and the domain statistics (the same cutoff), written over the
      // previous frame's, which nothing holds
      pairs = domain ? neighbourList(frames[f], settings.cutoffRadius, { reuse: pairs }) : undefined;
      const fe = sumsOnly ? computeFeatures(frames[f], passSpec.features, passSpec.lambdas, pairs, undefined, spare, true) : feat(frames[f], f, pairs);
      totalEnv += fe.count;
      if (exact && totalEnv > EXACT_LIMIT) {
        throw new InputError(`exact kernel ridge would keep more than ${EXACT_LIMIT} environments`, {}, 'give a number of anchor environments above 0, or kernel exponent 1');
      }
      const plan = pool.plan(fe.centreSpecies);
      merge(f, summariseFrame(frames[f], fe, pairs, passSpec, plan.keep), plan);
      if (exact) kept.push(fe);
      else if (feat === baseFeat && featurise === null) spare = fe;
      await yieldToLoop();
    }
  }
  for (let s = 0; s < nS; s++) {
    let any = false;
    for (let f = 0; f < nFrames; f++) if (counts[f * nS + s] > 0) any = true;
    if (!any) throw new InputError(`no environments of centre species "${centres[s]}"`, {}, 'check the centre species');
  }
  const envPool = pool.build(n0);

  // Baseline on the λ=0 component.
  const y = targets.values;
  const C = targets.components;
  const baseline = hasIso ? fitBaseline(counts, nFrames, nS, y, C) : new Float64Array(nS);

  // Cross-validation folds over frames (seeded).
  const folds = Math.min(5, nFrames);
  const perm = shuffleInPlace(rng, Int32Array.from({ length: nFrames }, (_, i) => i));
  const foldOf = foldsOf(perm, folds);
  const cv = nFrames >= 3 ? { fold: foldOf, folds, signal: hooks.signal } : null;
  const notes: string[] = isolatedFramesNote(targets.isolated, request.kind);
  if (!cv && settings.regularisation === null) notes.push('fewer than 3 frames: regulariser not cross-validated (default 1e-6)');
  const composition = compositionNote(centres, Array.from({ length: nFrames }, (_, f) => Array.from(counts.subarray(f * nS, (f + 1) * nS))), settings.speciesSplit ? speciesSplitText(settings.speciesSplit) : null);
  if (composition && targets.shape === 'tensor') notes.push(composition);

  // A linear model's applicability (its own sampling) needs nothing of the fit: on a worker thread, it runs beside it.
  const applicabilityInput: ApplicabilityInput = { pool: envPool, frames: nFrames, centres: nS };
  const applicabilityAside = linear && wantApplicability && runner?.applicability ? runner.applicability(applicabilityInput, hooks.signal) : null;
  applicabilityAside?.catch(() => undefined); // awaited below; a failure while fitting must not count as unhandled
  // Representatives (FPS per species) for kernel parts (and their applicability).
  const samples = linear ? null : envPool.perSpecies.map((cand) => farthestSample(envPool.p, n0, cand, exact ? cand.length : settings.anchorEnvironments));
  const repIndex = Int32Array.from((samples ?? []).flatMap((r) => [...r.chosen]));

  // Pass 2 for the sparse form: K_NM rows per frame and order.
  const parts: ModelPart[] = [];
  const sparseReps = new Map<Order, Representatives>();
  const sparseFactor = new Map<Order, Float64Array>();
  const sparseRows: Float64Array[][] = partsSpec.map(() => []);
  if (!linear && !exact) {
    for (const p of partsSpec) {
      const reps = representativesFrom(
        p.order === 0 ? { ...envPool, blocks: undefined } : envPool,
        repIndex,
        p.order,
      );
      sparseReps.set(p.order, reps);
      const size = reps.species.length * reps.width;
      sparseFactor.set(p.order, representativeFactor(representativeKernel(reps, settings.kernelExponent), size));
    }
    for (let f = 0; f < nFrames; f++) {
      checkAbort(hooks);
      const fe = feat(frames[f], f);
      partsSpec.forEach((p, k) => {
        const reps = sparseReps.get(p.order) as Representatives;
        const size = reps.species.length * reps.width;
        const knm = structureToRepresentatives(fe, reps, settings.kernelExponent);
        sparseRows[k].push(projectRows(knm, p.width, sparseFactor.get(p.order) as Float64Array, size));
      });
      if (feat === baseFeat && featurise === null) spare = fe;
      hooks.onProgress?.({ stage: 'kernel', done: f + 1, total: nFrames });
      await yieldToLoop();
    }
  }

  let leveragePart: ModelPart | undefined;
  const fitted: FittedPart[] = [];
  for (let k = 0; k < partsSpec.length; k++) {
    checkAbort(hooks);
    const p = partsSpec[k];
    hooks.onProgress?.({ stage: `fit λ=${p.order}`, done: k, total: partsSpec.length });
    await yieldToLoop();
    const rows = nFrames * p.width;
    const yy = new Float64Array(rows);
    const group = new Int32Array(rows);
    for (let f = 0; f < nFrames; f++) {
      for (let mu = 0; mu < p.width; mu++) {
        let v = y[f * C + p.offset + mu];
        if (p.aux) v = Math.hypot(...y.subarray(f * C, f * C + C));
        else if (p.order === 0) for (let s = 0; s < nS; s++) v -= counts[f * nS + s] * baseline[s];
        yy[f * p.width + mu] = v;
        group[f * p.width + mu] = f;
      }
    }
    let design: Design;
    if (exact) {
      const gram = new Float64Array(rows * rows);
      for (let a = 0; a < nFrames; a++) {
        for (let b = 0; b <= a; b++) {
          const blk = structureKernel(kept[a], kept[b], p.order, settings.kernelExponent);
          for (let mu = 0; mu < p.width; mu++) {
            for (let nu = 0; nu < p.width; nu++) {
              gram[(a * p.width + mu) * rows + b * p.width + nu] = blk[mu * p.width + nu];
              gram[(b * p.width + nu) * rows + a * p.width + mu] = blk[mu * p.width + nu];
            }
          }
        }
      }
      // λ=0: the per-species counts enter as a linear kernel N Nᵀ, so the baseline is refined jointly
      if (p.order === 0) {
        for (let a = 0; a < nFrames; a++) {
          for (let b = 0; b < nFrames; b++) {
            let c = 0;
            for (let s = 0; s < nS; s++) c += counts[a * nS + s] * counts[b * nS + s];
            gram[a * rows + b] += c;
          }
        }
      }
      design = { rows, group, y: yy, gram };
    } else {
      const src = linear ? linearRows[k] : sparseRows[k];
      const base = src[0].length / p.width;
      // λ=0: the per-species counts are extra columns, so the baseline is refined jointly with the weights
      const extra = p.order === 0 ? nS : 0;
      const fcount = base + extra;
      const phi = new Float64Array(rows * fcount);
      src.forEach((r, f) => {
        for (let mu = 0; mu < p.width; mu++) {
          phi.set(r.subarray(mu * base, (mu + 1) * base), (f * p.width + mu) * fcount);
          if (extra) phi.set(counts.subarray(f * nS, (f + 1) * nS), (f * p.width + mu) * fcount + base);
        }
      });
      design = { rows, group, y: yy, phi, features: fcount };
    }
    const given = settings.regularisation ?? (cv ? null : 1e-6);
    const fit = fitRidge(design, given, cv, p.order === 0);
    const regularisation = {
      relative: fit.relative,
      lambda: fit.lambda,
      cvError: fit.cvError,
      chosenBy: (settings.regularisation !== null ? 'given' : cv ? 'cross-validation' : 'default') as ModelPart['regularisation']['chosenBy'],
      grid: fit.grid,
    };
    if (!p.aux) {
      const edge = regulariserEdge(regularisation);
      if (edge) notes.push(`λ=${p.order}: ${edge}`);
    }
    const n = p.order === 0 ? n0 : (nOrder as number);
    const part: ModelPart = { order: p.order, offset: p.offset, form: linear ? 'linear' : 'kernel', method: linear ? fit.form : exact ? 'exact' : 'sparse', n, regularisation };
    const refineBaseline = (delta: ArrayLike<number>) => {
      if (p.aux) return;
      for (let s = 0; s < nS; s++) baseline[s] += delta[s];
    };
    if (exact) {
      // Representatives are every training environment; x_j = c of its frame's rows.
      const allReps = exactRepresentatives(kept, p.order);
      const x = new Float64Array(allReps.reps.species.length * p.width);
      allReps.frame.forEach((fr, j) => {
        for (let mu = 0; mu < p.width; mu++) x[j * p.width + mu] = fit.weights[fr * p.width + mu];
      });
      part.kernel = foldCoefficients(allReps.reps, x, settings.kernelExponent);
      if (p.order === 0) {
        const delta = new Float64Array(nS);
        for (let f = 0; f < nFrames; f++) for (let s = 0; s < nS; s++) delta[s] += fit.weights[f] * counts[f * nS + s];
        refineBaseline(delta);
      }
      if (fit.posterior) part.posterior = { ...fit.posterior, repFrame: allReps.frame, counts: Float64Array.from(counts) };
    } else {
      const w = primalWeights(design, fit);
      const base = (design.features as number) - (p.order === 0 ? nS : 0);
      if (p.order === 0) refineBaseline(w.subarray(base));
      if (linear) {
        part.weights = w.slice(0, base);
        if (fit.posterior) part.posterior = { ...fit.posterior };
      } else {
        const reps = sparseReps.get(p.order) as Representatives;
        const l = sparseFactor.get(p.order) as Float64Array;
        part.kernel = foldSparseWeights(reps, l, w.subarray(0, base), settings.kernelExponent);
        if (fit.posterior) part.posterior = { ...fit.posterior, nystrom: l };
      }
    }
    if (p.aux) leveragePart = part;
    else parts.push(part);
    fitted.push({ design, lambda: fit.lambda, noise: fit.posterior?.noise ?? null, spec: p });
  }
  const calibration = cv ? calibrate(fitted, cv, nFrames, hooks) : undefined;
  if (!calibration) notes.push(cv ? 'error bars not calibrated (the held-out errors were all zero)' : 'fewer than 3 frames: error bars not calibrated, predictions carry none');

  // Applicability threshold from held-out distances of the sampled training environments.
  let applicability: Model['applicability'] = { n0, species: new Int32Array(0), p: new Float64Array(0), threshold: 0, perSpecies: new Array(nS).fill(0), rule: '' };
  if (wantApplicability) {
    hooks.onProgress?.({ stage: 'applicability', done: 0, total: 1 });
    await yieldToLoop();
    if (applicabilityAside) applicability = await applicabilityAside;
    else applicability = samples ? applicabilityFrom(applicabilityInput, samples) : sampledApplicability(applicabilityInput);
    checkAbort(hooks);
  }

  if (settings.speciesSplit && hasIso && targets.shape === 'tensor' && nS >= 2) {
    hooks.onProgress?.({ stage: 'species split', done: 0, total: 1 });
    await yieldToLoop();
    notes.push(await applySpeciesSplit(settings.speciesSplit, centres, parts, baseline, counts, nFrames, (f) => feat(frames[f], f), hooks));
  }

  const stats = targetStatistics(y, nFrames, C);
  let vmin = Infinity;
  let vmax = -Infinity;
  let isolatedFrames = 0;
  targets.volumes.forEach((v, f) => {
    if (targets.isolated[f]) isolatedFrames++;
    else {
      vmin = Math.min(vmin, v);
      vmax = Math.max(vmax, v);
    }
  });
  if (isolatedFrames === nFrames) vmin = vmax = 0;
  hooks.onProgress?.({ stage: 'done', done: 1, total: 1 });
  return {
    createdAt: options.createdAt ?? new Date().toISOString(),
    target: {
      key: request.tensorKey,
      shape: targets.shape,
      kind: targets.shape === 'tensor' ? request.kind : null,
      route: request.route,
      learnt: learntQuantity(targets.shape, request.route),
      units: targets.shape === 'tensor' ? 'Å³' : 'as in the training file',
    },
    settings,
    species,
    centres,
    featureSizes: { n0, n: nOrder },
    tensorLimits: { nmax: featureSettingsOf(settings, species, centres).nmaxTensor as number, lmax: featureSettingsOf(settings, species, centres).lmaxTensor as number },
    featureSelection,
    baseline: [...baseline],
    parts,
    applicability,
    training: { frames: nFrames, atoms, atomsPerSpecies, volumeA3: { min: vmin, max: vmax }, target: stats, ...(isolatedFrames ? { isolatedFrames } : {}) },
    notes,
    calibration,
    leverage: leveragePart,
    domain: domain?.build(),
  };
}

/**
 * Moves the per-species offsets (species-split.ts) so that the species' mean λ=0 contributions over the training
 * frames follow the split's ratios as far as the compositions leave them open; returns the model note saying so.
 */
async function applySpeciesSplit(
  split: Exclude<SpeciesSplit, null>,
  centres: string[],
  parts: ModelPart[],
  baseline: Float64Array,
  counts: Float64Array,
  nFrames: number,
  featuresOf: (f: number) => EnvironmentFeatures,
  hooks: WorkHooks,
): Promise<string> {
  const nS = centres.length;
  const prior = splitValues(split, centres);
  const part = parts.find((p) => p.order === 0) as ModelPart;
  const sums = new Float64Array(nS);
  const atoms = new Float64Array(nS);
  for (let f = 0; f < nFrames; f++) {
    checkAbort(hooks);
    const fe = featuresOf(f);
    const c = localContributions(fe, 0, part.form === 'linear' ? { linear: part.weights as Float64Array } : { kernel: part.kernel as KernelExpansion });
    for (let e = 0; e < fe.count; e++) {
      const sp = fe.centreSpecies[e];
      sums[sp] += c[e] + baseline[sp];
      atoms[sp]++;
    }
    if (f % 16 === 15) await yieldToLoop();
  }
  const means = Array.from(sums, (v, k) => v / Math.max(1, atoms[k]));
  const rows = Array.from({ length: nFrames }, (_, f) => Array.from(counts.subarray(f * nS, (f + 1) * nS)));
  const { shift, free } = splitShift(means, rows, prior);
  for (let k = 0; k < nS; k++) baseline[k] += shift[k];
  const given = split === 'free-atom' ? `free-atom polarisabilities (${centres.map((c, k) => `${c} ${prior[k].toPrecision(3)} Å³, ${FREE_ATOM_POLARISABILITY_A3[c].source}`).join('; ')})` : `the ratios given (${centres.map((c, k) => `${c}:${prior[k]}`).join(', ')})`;
  // T⁰ = tr/√3: the mean per-atom contribution to the isotropic α is T⁰/√3
  const iso = (v: number) => (v / Math.sqrt(3)).toPrecision(3);
  const shares = (m: ArrayLike<number>) => centres.map((c, k) => `${c} ${iso(m[k])}`).join(', ');
  if (free === 0) return `species split: the training compositions already fix how the polarisability is shared between species, so ${given} changed nothing (mean per-atom isotropic contributions, in units of the learnt tensor: ${shares(means)})`;
  return `species split: where the training compositions leave it open, the polarisability is shared between species following ${given}; every training frame's total is unchanged (mean per-atom isotropic contributions, in units of the learnt tensor: ${shares(means.map((m, k) => m + shift[k]))}; as the fit left them: ${shares(means)})`;
}

interface FittedPart {
  design: Design;
  lambda: number;
  noise: number | null;
  spec: { order: Order; offset: number; width: number; aux?: boolean };
}

/**
 * One error-bar factor per part from the held-out folds of the training's cross-validation (calibration.ts):
 * the leverage of every held-out frame from the λ=0 design (the λ=0 part, or the auxiliary one of a vector
 * target), the held-out error of every row of every part. Undefined when no held-out error is non-zero.
 */
function calibrate(fitted: FittedPart[], cv: { fold: Int32Array; folds: number; signal?: AbortSignal }, nFrames: number, hooks: WorkHooks): Calibration | undefined {
  hooks.onProgress?.({ stage: 'calibration', done: 0, total: 1 });
  const lev = fitted.find((f) => f.spec.order === 0) as FittedPart;
  const levRows = heldOutRows(lev.design, cv, lev.lambda);
  const frameLeverage = new Float64Array(nFrames);
  for (let r = 0; r < lev.design.rows; r++) frameLeverage[lev.design.group[r]] = levRows.leverage[r];
  const parts: PartCalibration[] = [];
  for (const f of fitted) {
    if (f.spec.aux) continue;
    const held = f === lev ? levRows : heldOutRows(f.design, cv, f.lambda, false);
    const errors = Float64Array.from(held.predicted, (p, r) => p - f.design.y[r]);
    const leverage = Float64Array.from(f.design.group, (g) => frameLeverage[g]);
    const c = calibratePart(f.spec.order, errors, leverage, f.spec.order === 0 ? f.noise : null);
    if (!c) return undefined;
    parts.push(c);
  }
  return {
    rule: `one factor per part: held-out squared error / leverage, averaged over the ${cv.folds} folds of the training's cross-validation (RMS of held-out z = 1)`,
    folds: cv.folds,
    frames: nFrames,
    parts,
  };
}

function exactRepresentatives(kept: EnvironmentFeatures[], order: Order): { reps: Representatives; frame: Int32Array } {
  const total = kept.reduce((a, f) => a + f.count, 0);
  const n0 = kept[0].n0;
  const v0 = blockView(kept[0], order);
  const w = v0.width;
  const p = new Float64Array(total * n0);
  const blocks = new Float64Array(total * w * v0.n);
  const species = new Int32Array(total);
  const frame = new Int32Array(total);
  let at = 0;
  kept.forEach((fe, f) => {
    const v = blockView(fe, order);
    for (let e = 0; e < fe.count; e++, at++) {
      p.set(fe.scalar.subarray(e * n0, (e + 1) * n0), at * n0);
      blocks.set(v.data.subarray(e * w * v.n, (e + 1) * w * v.n), at * w * v.n);
      species[at] = fe.centreSpecies[e];
      frame[at] = f;
    }
  });
  return { reps: { order, n0, n: v0.n, width: w, species, p, blocks }, frame };
}

function targetStatistics(y: Float64Array, frames: number, c: number): TrainingSummary['target'] {
  const mean = new Array(c).fill(0);
  const std = new Array(c).fill(0);
  const min = new Array(c).fill(Infinity);
  const max = new Array(c).fill(-Infinity);
  for (let f = 0; f < frames; f++) {
    for (let k = 0; k < c; k++) {
      const v = y[f * c + k];
      mean[k] += v / frames;
      min[k] = Math.min(min[k], v);
      max[k] = Math.max(max[k], v);
    }
  }
  for (let f = 0; f < frames; f++) for (let k = 0; k < c; k++) std[k] += (y[f * c + k] - mean[k]) ** 2 / frames;
  return { mean, std: std.map(Math.sqrt), min, max };
}

/** Choose the settings of `grid` by cross-validation on the frames (core/learning/tuning.ts with this file's trainer). */
export function tuneSettings(frames: Frame[], request: TrainRequest, grid: TuneGrid, hooks: WorkHooks = {}): Promise<TuneResult> {
  return tuneSettingsWith((f, r, signal) => trainWithFeaturiser(f, r, null, { signal }, { applicability: false }), frames, request, grid, hooks);
}

/**
 * Train a model on frames (the contract of model-types.ts). With `request.tune`, the listed settings are first
 * chosen by cross-validation on the same frames (core/learning/tuning.ts); the choice is recorded in the model's notes.
 */
export async function trainModel(frames: Frame[], request: TrainRequest, hooks: TrainHooks = {}, featurise: Featuriser | null = null): Promise<Model> {
  // `featurise`: the frames' features already computed for the same settings (validation.ts tensorFeaturiser)
  if (!request.tune || tuneCombinations(request.tune).length <= 1) return trainWithFeaturiser(frames, request, featurise, hooks);
  const tuned = await tuneSettings(frames, request, request.tune, hooks);
  const model = await trainWithFeaturiser(frames, { ...request, tune: undefined, settings: { ...(request.settings ?? {}), ...tuned.best } }, null, hooks);
  const fmt = (s: Partial<ModelSettings>) => Object.entries(s).map(([k, v]) => `${settingSpec(k as NumericSettingKey).label.toLowerCase()} ${v}`).join(', ');
  model.notes.push(`tuned by cross-validation: ${fmt(tuned.best)} (scores: ${tuned.table.map((r) => `${fmt(r.settings)} → ${r.score.toPrecision(3)}`).join('; ')})`);
  return model;
}

/**
 * A warning when cross-validation chose the smallest or largest regulariser it tried: the best value may lie
 * beyond the range, and the fit is then limited by the range rather than by the data. The range is the grid
 * actually tried, which fitRidge has already widened at that edge (regression.ts, widenAtEdge) as far as it goes.
 */
export function regulariserEdge(r: Pick<ModelPart['regularisation'], 'relative' | 'chosenBy' | 'grid'>): string | null {
  if (r.chosenBy !== 'cross-validation' || r.grid.length < 3) return null;
  const tried = r.grid.map((g) => g.relative);
  const lo = Math.min(...tried);
  const hi = Math.max(...tried);
  const widened = lo < Math.min(...DEFAULT_REGULARISATION_GRID) || hi > Math.max(...DEFAULT_REGULARISATION_GRID) ? ', already widened beyond the usual 1e-9…1' : '';
  const range = `(${lo.toExponential(0)}…${hi.toExponential(0)}${widened})`;
  if (r.relative <= lo) {
    return `the regulariser chosen by cross-validation, ${lo.toExponential(0)}, is the smallest of the range tried ${range}: the model wants more freedom than the range allows — the features may be too few for the data (try more radial functions or a larger angular order), or the references nearly free of noise; give a smaller one with --regularisation to check`;
  }
  if (r.relative >= hi) {
    return `the regulariser chosen by cross-validation, ${hi.toExponential(0)}, is the largest of the range tried ${range}: the features explain little of this part beyond the per-species baseline — the part may be mostly noise, or need other settings`;
  }
  return null;
}

/** Check that a frame can be predicted by the model: species it knows. */
export function checkFrameSpecies(model: Model, frame: Frame, index = 0): void {
  const known = new Set(model.species);
  const unseen = [...new Set(frame.species.filter((s) => !known.has(s)))];
  if (unseen.length) {
    const where = whereOf(frame, index);
    const at = [where.file, where.frame !== undefined ? `frame ${where.frame}` : ''].filter(Boolean).join(', ');
    throw new ModelError(`${at ? at + ': ' : ''}the model never saw species ${unseen.join(', ')} (it knows ${model.species.join(', ')}); a prediction would be meaningless — train a model that includes them`);
  }
}

/**
 * Prediction of the learnt target of any shape, from features as computeFeatures gives them (the model's
 * feature selection, if any, is applied here).
 */
export function predictWithFeatures(model: Model, frame: Frame, raw: EnvironmentFeatures, index = 0): TargetPrediction {
  checkFrameSpecies(model, frame, index);
  const fe = model.featureSelection ? applyFeatureSelection(raw, model.featureSelection) : raw;
  return predictFromParts(model, frame, fe, null);
}

/**
 * The model's parts applied to λ=0 features `fe`; the λ>0 part's local contributions come from `readout` when
 * given (tensor-readout.ts), else from fe's λ>0 features.
 */
function predictFromParts(model: Model, frame: Frame, fe: EnvironmentFeatures, readout: { order: Order; values: Float64Array } | null, pairs?: NeighbourList): TargetPrediction {
  if (fe.n0 !== model.featureSizes.n0) throw new ModelError(`features have ${fe.n0} λ=0 components but the model was trained with ${model.featureSizes.n0}`);
  const nAtoms = frame.species.length;
  const C = model.target.shape === 'tensor' ? 6 : model.target.shape === 'vector' ? 3 : 1;
  const total = new Float64Array(C);
  const local = new Float64Array(nAtoms * C);
  let variance = 0;
  let leverage = NaN;
  // the key of this frame's λ=0 rows in the kernels' memory: copied there once for the linear part and the search
  const rowsKey = {};
  for (const part of model.parts) {
    const w = 2 * part.order + 1;
    let contrib: Float64Array;
    // a linear λ=0 part: its contributions and the per-species row sums its leverage needs, in one pass
    let sums: Float64Array | undefined;
    if (readout && readout.order === part.order) contrib = readout.values;
    else if (part.order === 0 && part.form === 'linear' && part.n === fe.n0) {
      const pass = linearScalarPass(fe, part.weights as Float64Array, model.centres.length, rowsKey);
      contrib = pass.contributions;
      sums = pass.sums;
    } else {
      const v = blockView(fe, part.order);
      if (v.n !== part.n) throw new ModelError(`features of order λ=${part.order} have ${v.n} components but the model expects ${part.n}`);
      contrib = localContributions(fe, part.order, part.form === 'linear' ? { linear: part.weights as Float64Array } : { kernel: part.kernel as KernelExpansion });
    }
    for (let e = 0; e < fe.count; e++) {
      const atom = fe.centre[e];
      for (let mu = 0; mu < w; mu++) {
        let c = contrib[e * w + mu];
        if (part.order === 0 && mu === 0) c += model.baseline[fe.centreSpecies[e]];
        local[atom * C + part.offset + mu] += c;
        total[part.offset + mu] += c;
      }
    }
    if (part.order === 0 && part.posterior) {
      leverage = partLeverage(model, part, fe, sums);
      variance = part.posterior.noise * leverage;
    }
  }
  if (model.leverage?.posterior) leverage = partLeverage(model, model.leverage, fe);
  requireFinite(frame, total);
  const applicability = applicabilityOf(model, frame, fe, pairs, rowsKey);
  applicability.variance = variance;
  return { irreducible: total, localIrreducible: local, components: C, applicability, uncertainty: uncertaintyOf(model, leverage, C) };
}

/** A model whose numbers overflow on a frame is damaged or far out of its range: no number rather than a non-finite one. */
function requireFinite(frame: Frame, ...values: ArrayLike<number>[]): void {
  for (const v of values) {
    for (let i = 0; i < v.length; i++) {
      if (Number.isFinite(v[i])) continue;
      const at = frame.source ? ` (${frame.source.file}, frame ${frame.source.index})` : '';
      throw new ModelError(`the model gives a non-finite prediction${at}: its stored numbers are damaged or far out of range; retrain or restore the model file`);
    }
  }
}

/** Predicts one frame (features included): what `predict` runs per frame. */
export type Predictor = (frame: Frame, index: number) => TargetPrediction;

/**
 * The fastest exact way for this model to predict frames. A λ>0 part (tensor or vector target) is applied by
 * the read-out of tensor-readout.ts, which never forms the λ>0 features (several times cheaper; equal to the
 * feature route to round-off); models with a feature selection take the feature route. Build it once per model
 * and reuse it: it prepares the weight matrices.
 */
export function modelPredictor(model: Model): Predictor {
  const order = tensorOrderOf(model.target.shape);
  const part = order === null ? undefined : model.parts.find((p) => p.order === order);
  if (order === null || !part || model.featureSelection) {
    const featurise = modelFeaturiser(model);
    return (frame, index) => predictTarget(model, frame, index, featurise);
  }
  const fs = featureSettingsOf(model.settings, model.species, model.centres, model.tensorLimits);
  const expected = featureCount(fs, order);
  if (part.n !== expected) throw new ModelError(`the model's λ=${order} part expects ${part.n} features, its settings give ${expected}`);
  const toMatrices = makeWeightMatrices(fs, order);
  let readout: TensorReadout;
  if (part.form === 'linear') {
    const weights = part.weights as Float64Array;
    const perSpecies = model.centres.map((_, s) => toMatrices(weights, s * part.n));
    readout = { lambda: order, matrices: (_e, s) => perSpecies[s], perSpecies };
  } else {
    const k = part.kernel as KernelExpansion;
    const u = new Float64Array(k.n);
    const W = new Float64Array(weightMatricesLength(fs, order));
    readout = { lambda: order, matrices: (e, s, scalar) => toMatrices(kernelWeights(k, scalar, e, s, u), 0, W) };
  }
  // the previous frame's neighbour list, features and read-out values, written over by the next frame (nothing of
  // them is kept in a prediction: predictFromParts copies what it returns)
  let last: ReadoutResult | undefined;
  let spare: NeighbourList | undefined;
  return (frame, index) => {
    checkFrameSpecies(model, frame, index);
    const pairs = neighbourList(frame, fs.cutoff, { reuse: spare });
    spare = undefined;
    const r = computeReadout(frame, fs, readout, pairs, undefined, last);
    last = undefined;
    const prediction = predictFromParts(model, frame, r.features, { order, values: r.values }, pairs);
    last = r;
    spare = pairs;
    return prediction;
  };
}

/** Calibrated standard deviation of every irreducible component (calibration.ts), or null without calibration. */
function uncertaintyOf(model: Model, leverage: number, components: number): TargetPrediction['uncertainty'] {
  const cal = model.calibration;
  if (!cal || !Number.isFinite(leverage)) return null;
  const sd = new Float64Array(components);
  for (const c of cal.parts) {
    const part = model.parts.find((p) => p.order === c.order);
    if (!part) return null;
    const s = Math.sqrt(c.varianceScale * leverage);
    for (let mu = 0; mu < 2 * c.order + 1; mu++) sd[part.offset + mu] = s;
  }
  return { leverage, sd };
}

/** The posterior of an explicit design (linear or sparse part) as regression.ts reads it: primal, or the design form. */
function explicitPosterior(post: PartPosterior): Posterior {
  const { size, factor, noise, lambda } = post;
  if (post.form === 'design') return { form: 'design', size, rows: post.rows as number, design: post.design as Float64Array, factor, noise, lambda };
  return { form: 'primal', size, factor, noise, lambda };
}

/**
 * Leverage of a frame against a part's training design: φᵀ(ΦᵀΦ + λI)⁻¹φ (its GP latent variance divided by the
 * noise variance), for the linear, sparse and exact forms. `sums`: a linear part's per-species row sums
 * (linearDesignRows(fe, 0, …)) when they are at hand already (linearScalarPass).
 */
function partLeverage(model: Model, part: ModelPart, fe: EnvironmentFeatures, sums?: Float64Array): number {
  const post = { ...(part.posterior as PartPosterior), noise: 1 };
  const nS = model.centres.length;
  const counts = new Float64Array(nS);
  for (let e = 0; e < fe.count; e++) counts[fe.centreSpecies[e]]++;
  const withCounts = (row: Float64Array) => {
    const out = new Float64Array(row.length + nS);
    out.set(row);
    out.set(counts, row.length);
    return out;
  };
  const explicit = explicitPosterior(post);
  if (part.form === 'linear') return posteriorVariance(explicit, withCounts(sums ?? linearDesignRows(fe, 0, nS)));
  const k = part.kernel as KernelExpansion;
  if (post.nystrom) {
    const reps: Representatives = { order: 0, n0: k.n0, n: k.n0, width: 1, species: k.species, p: k.p, blocks: k.p };
    const knm = structureToRepresentatives(fe, reps, k.zeta);
    const phi = projectRows(knm, 1, post.nystrom, reps.species.length);
    return posteriorVariance(explicit, withCounts(phi));
  }
  // exact: k* over training frames, k** of the frame with itself
  const repFrame = post.repFrame as Int32Array;
  const kStar = new Float64Array(post.size);
  for (let e = 0; e < fe.count; e++) {
    for (let r = 0; r < k.species.length; r++) {
      if (k.species[r] !== fe.centreSpecies[e]) continue;
      kStar[repFrame[r]] += kernelPower(scalarDot(fe.scalar, e, k.p, r, k.n0), k.zeta);
    }
  }
  const trainCounts = post.counts as Float64Array;
  for (let b = 0; b < post.size; b++) for (let s = 0; s < nS; s++) kStar[b] += counts[s] * trainCounts[b * nS + s];
  let kss = structureKernel(fe, fe, 0, k.zeta)[0];
  for (let s = 0; s < nS; s++) kss += counts[s] * counts[s];
  return posteriorVariance({ form: 'dual', size: post.size, factor: post.factor, noise: post.noise, lambda: post.lambda }, kStar, kss);
}

/**
 * Applicability of a frame: the feature distance of every centre to the nearest representative of its species
 * (nearest-search.ts), then the domain checks of domain.ts (geometry, density scale, number density) when the
 * model has their training ranges; models saved before them judge by the feature distance alone (any atom
 * beyond its species' threshold flags the frame, as they always did).
 */
function applicabilityOf(model: Model, frame: Frame, fe: EnvironmentFeatures, pairs?: NeighbourList, rowsKey?: object): Applicability {
  const a = model.applicability;
  const nAtoms = frame.species.length;
  const atomDistance = new Float64Array(nAtoms);
  const featureScore = new Float64Array(nAtoms);
  let maxDistance = 0;
  let beyond = 0;
  const m = a.species.length;
  // bounded search, prepared once per model object when the job is large enough to repay it; bit-identical to
  // sparse.ts nearestDistance (nearest-search.ts)
  const nearest = new Float64Array(fe.count);
  nearestAllOf(a, fe.scalar, fe.count, fe.centreSpecies, nearest, rowsKey);
  for (let e = 0; e < fe.count; e++) {
    let best = nearest[e];
    if (!Number.isFinite(best)) best = 2;
    const atom = fe.centre[e];
    atomDistance[atom] = best;
    if (best > maxDistance) maxDistance = best;
    const t = a.perSpecies[fe.centreSpecies[e]];
    if (m > 0 && t > 0) featureScore[atom] = best / t;
    if (m > 0 && best > t) beyond++;
  }
  const base = { atomDistance, maxDistance, threshold: a.threshold, variance: 0 };
  if (model.domain && m > 0) {
    const d = checkDomain(model.domain, frame, pairs ?? neighbourList(frame, model.domain.cutoffRadius), featureScore, {
      distance: atomDistance,
      threshold: a.perSpecies,
      centres: model.centres,
      centre: fe.centre,
      centreSpecies: fe.centreSpecies,
      norms: fe.norms,
    });
    return { ...base, atomsOutside: d.atomsOutside, outside: d.outside, atomScore: d.atomScore, score: d.score, fractionOutside: d.fractionOutside, reasons: d.reasons };
  }
  let sum2 = 0;
  for (let i = 0; i < nAtoms; i++) sum2 += featureScore[i] ** 2;
  const reasons: Applicability['reasons'] = [];
  if (beyond > 0) {
    let worst = 0;
    for (let i = 1; i < nAtoms; i++) if (featureScore[i] > featureScore[worst]) worst = i;
    reasons.push({ key: `${frame.species[worst]} environment`, text: `${beyond} atom(s) beyond the feature-distance threshold (largest ${maxDistance.toFixed(3)}, threshold ${a.threshold.toFixed(3)}); this model has no geometric or density checks (saved before them)`, score: featureScore[worst], atom: worst });
  }
  return { ...base, atomsOutside: beyond, outside: beyond > 0, atomScore: featureScore, score: nAtoms ? Math.sqrt(sum2 / nAtoms) : 0, fractionOutside: nAtoms ? beyond / nAtoms : 0, reasons };
}

const predictors = new WeakMap<Model, Predictor>();

/**
 * Prediction of the learnt target for any shape (tensor, vector, scalar): through `featurise` when given (the
 * feature route), else through the model's own predictor (modelPredictor, kept per model object).
 */
export function predictTarget(model: Model, frame: Frame, index = 0, featurise?: Featuriser): TargetPrediction {
  if (featurise) {
    checkFrameSpecies(model, frame, index);
    return predictWithFeatures(model, frame, featurise(frame, index), index);
  }
  let predictor = predictors.get(model);
  if (!predictor) {
    predictor = modelPredictor(model);
    predictors.set(model, predictor);
  }
  return predictor(frame, index);
}

/** The tensors of a tensor model's prediction for a periodic frame (the contract of model-types.ts). */
export function framePredictionFrom(model: Model, frame: Frame, pred: TargetPrediction, index = 0): FramePrediction {
  requireTensorModel(model);
  const v = frameVolume(frame, index);
  const learnt = fromIrreducible(pred.irreducible);
  const { alphaCM, alphaC, eps } = tensorsFromLearnt(learnt, model.target.route, v);
  requireFinite(frame, alphaCM, alphaC, eps);
  // route direct: contributions to ε − I of this cell, (4π/V) × the local α_c contribution (model-types.ts).
  const local = localTensors(pred, frame.species.length, model.target.route === 'direct' ? (4 * Math.PI) / v : 1);
  const errorBars = pred.uncertainty ? propagateErrorBars(eps, v, model.target.route, pred.uncertainty.sd) : null;
  return { volumeA3: v, alphaCM, alphaC, eps, local, applicability: pred.applicability, errorBars };
}

/**
 * A tensor model's prediction for any frame: a periodic frame as framePredictionFrom gives it; an isolated
 * molecule or cluster as its polarisability in vacuum (the learnt α_CM-like sum), with no ε. A route-direct
 * model learnt α_c per cell and cannot predict an isolated frame.
 */
export function tensorPredictionFrom(model: Model, frame: Frame, pred: TargetPrediction, index = 0): TensorPrediction {
  if (!isIsolated(frame)) return framePredictionFrom(model, frame, pred, index);
  requireTensorModel(model);
  if (model.target.route !== 'cm') {
    const at = frame.source ? `${frame.source.file}, frame ${frame.source.index}: ` : '';
    throw new ModelError(`${at}this frame has no periodic cell, and a route-direct model learnt α_c per cell volume, which a lone molecule does not have; use a model of route cm`);
  }
  const alphaMol = fromIrreducible(pred.irreducible);
  requireFinite(frame, alphaMol);
  const sd0 = pred.uncertainty ? pred.uncertainty.sd[0] : null;
  // tr α / 3 = T⁰/√3 (science.md §3), so its standard deviation is sd(T⁰)/√3
  const out: IsolatedPrediction = { isolated: true, alphaMol, local: localTensors(pred, frame.species.length, 1), applicability: pred.applicability, alphaIsoSd: sd0 === null ? null : sd0 / Math.sqrt(3) };
  return out;
}

function requireTensorModel(model: Model): void {
  if (model.target.shape !== 'tensor') {
    throw new ModelError(`this model predicts a ${model.target.shape} ("${model.target.key}"), not a tensor; use predictTarget`);
  }
}

/** Per-atom local tensors, 9 per atom, from the per-atom irreducible parts, times `scale`. */
function localTensors(pred: TargetPrediction, atoms: number, scale: number): Float64Array {
  const local = new Float64Array(atoms * 9);
  for (let i = 0; i < atoms; i++) fromIrreducibleAt(pred.localIrreducible, i * 6, local, i * 9, scale);
  return local;
}

export function predictFrame(model: Model, frame: Frame): FramePrediction {
  return framePredictionFrom(model, frame, predictTarget(model, frame));
}

/** The Cartesian dipole of a vector model's prediction. */
export function predictedVector(pred: TargetPrediction): Float64Array {
  return sphericalToVector(pred.irreducible);
}
