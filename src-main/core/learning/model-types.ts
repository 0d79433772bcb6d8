// The public shapes of the learning engine: what a trained model predicts for a frame, how training is asked
// for, and what validation reports. The engine (model.ts and friends) implements them; the CLI, the jobs, the
// browser host and the window speak only these types. Extend, do not break.
import type { Mat3 } from '../geometry/frame.ts';

/**
 * What a tensor in a file is: the optical dielectric tensor, a cell polarisability (Å³), or the polarisability
 * of an isolated molecule or cluster in vacuum (`alpha-mol`, Å³; frames without a cell). A body in vacuum
 * responds to the field it feels as a spherical sample in vacuum does, so `alpha-mol` is learnt as the same
 * additive quantity as α_CM (route cm); ε, n and Δn are not defined for it.
 */
export type TensorKind = 'eps' | 'alpha-c' | 'alpha-cm' | 'alpha-mol';

/** The kinds of a periodic cell's tensor (convertible into one another through the cell volume). */
export type CellTensorKind = Exclude<TensorKind, 'alpha-mol'>;

/** cm: learn α_CM (after the inverse Clausius–Mossotti relation) and convert back; direct: learn ε itself. */
export type Route = 'cm' | 'direct';

/** The model settings: defined, with their names, limits and defaults, in the one settings table. */
export type { ModelSettings } from '../settings-table.ts';
import type { ModelSettings, TunableSetting } from '../settings-table.ts';

export interface TrainRequest {
  /** Key of the reference tensor in each frame's properties. */
  tensorKey: string;
  /** What that tensor is. */
  kind: TensorKind;
  route: Route;
  /**
   * Key of the molecule's or cluster's polarisability (Å³) in frames without a cell, when the set mixes them with
   * periodic frames of a cell kind (core/learning/targets.ts frameTarget). Not needed when kind is alpha-mol.
   */
  isolatedKey?: string;
  settings?: Partial<ModelSettings>;
  /** Candidate values to choose by cross-validation on the training frames (each list tried in every combination). */
  tune?: TuneGrid;
  /** Train even when the reference values look unlike `kind` (core/learning/kind-check.ts); off by default. */
  trustKind?: boolean;
}

/** Settings to choose by cross-validation (on request: each combination costs one training). */
export type TuneGrid = { [K in TunableSetting]?: number[] };

export interface Progress {
  stage: string;
  done: number;
  total: number;
}

export interface WorkHooks {
  onProgress?: (p: Progress) => void;
  signal?: AbortSignal;
}

/** Applicability figures of one prediction. */
export interface Applicability {
  /** Per atom: distance (in feature space, 0…2) to the nearest training environment of its species. */
  atomDistance: Float64Array;
  /** Largest atomDistance in the frame. */
  maxDistance: number;
  /** Threshold above which an atom counts as outside the training data (stored with the model). */
  threshold: number;
  atomsOutside: number;
  /** Predictive variance of the frame's λ=0 part (model units²), where the model provides one. */
  variance: number;
  /** True when the frame is at risk (core/learning/domain.ts: density out, an atom far out, or more atoms out than chance). */
  outside: boolean;
  /** Per atom domain score u: 0 at the training median, 1 at the training's limit, above 1 outside. */
  atomScore: Float64Array;
  /** Graded per-frame score √(mean u² + u_density²) (about 0.3–0.6 inside the training data). */
  score: number;
  /** Fraction of atoms with u > 1. */
  fractionOutside: number;
  /** Why atoms or the frame lie outside, worst first (empty when nothing is). */
  reasons: DomainReason[];
}

/** One reason a frame is at risk, in words, with a key to group reasons over a trajectory. */
export interface DomainReason {
  /** Kind of reason (e.g. "O–H shorter", "number density higher"), for summaries. */
  key: string;
  text: string;
  /** The worst score of this kind in the frame. */
  score: number;
  /** The worst atom (0-based), or null for a frame property. */
  atom: number | null;
}

/** Standard deviations of the quantities a user reads from a predicted ε (all dimensionless except α_CM, Å³). */
export interface TensorErrorBars {
  /** ε_iso = tr ε / 3. */
  epsIso: number;
  /** Principal values ε_1 ≤ ε_2 ≤ ε_3. */
  epsPrincipal: [number, number, number];
  /** Principal refractive indices n_k = √ε_k: σ(n_k) = σ(ε_k)/(2 n_k). */
  n: [number, number, number];
  /** Δn = n_3 − n_1 (with the correlation of n_3 and n_1 kept). */
  dn: number;
  /** Isotropic Clausius–Mossotti cell polarisability tr α_CM / 3 (Å³). */
  alphaCmIso: number;
}

export interface FramePrediction {
  /** Absent or false: a periodic frame (IsolatedPrediction is the other case). */
  isolated?: false;
  /** Cell volume (Å³). */
  volumeA3: number;
  /** Clausius–Mossotti cell polarisability (Å³). */
  alphaCM: Mat3;
  /** Conducting-boundary cell polarisability (Å³). */
  alphaC: Mat3;
  /** Optical dielectric tensor. */
  eps: Mat3;
  /** Per-atom local contributions, 9 per atom, to the learnt additive target (α_CM in Å³ for route cm;
   * contributions to ε − I per cell for route direct). */
  local: Float64Array;
  applicability: Applicability;
  /** Calibrated one-standard-deviation model error bars (delta method through Clausius–Mossotti); null when the
   * model carries no calibration (models saved before error bars existed, or trained on fewer than 3 frames). */
  errorBars: TensorErrorBars | null;
}

/**
 * The prediction for a frame without a periodic cell (an isolated molecule or cluster): its polarisability in
 * vacuum and the local contributions that sum to it. It has no volume, and ε, n, Δn and α_c are not defined.
 */
export interface IsolatedPrediction {
  isolated: true;
  /** Polarisability of the molecule or cluster in vacuum (Å³), learnt as α_CM is (route cm). */
  alphaMol: Mat3;
  /** Per-atom local contributions, 9 per atom (Å³), summing to alphaMol. */
  local: Float64Array;
  applicability: Applicability;
  /** Calibrated one-standard-deviation error bar of tr alphaMol / 3 (Å³); null when the model carries no calibration. */
  alphaIsoSd: number | null;
}

/** A tensor model's prediction for any frame: periodic (ε and the cell polarisabilities) or isolated (α only). */
export type TensorPrediction = FramePrediction | IsolatedPrediction;

/** One frame's reference and prediction in irreducible parts (for parity charts). */
export interface ParityPoint {
  frame: number;
  /** Tag or source of the frame, if any. */
  label?: string;
  /** [T⁰, T²₋₂…T²₂] of reference and prediction, in the target's units. */
  reference: number[];
  predicted: number[];
}

/** Error figures in the tensor's units (definitions in core/learning/error-figures.ts). */
export interface ErrorFigures {
  /** RMSE of the isotropic value tr/3 (ε_iso). */
  rmseIso: number;
  /** RMS over frames of the anisotropy √(3/2)‖ΔT − tr ΔT/3‖ of the error tensor (the eps_aniso invariant). */
  rmseAniso: number;
  /** Error relative to the spread of the data: RMSE / standard deviation of the reference, in percent. */
  percentIso: number;
  percentAniso: number;
  r2Iso: number;
  r2Aniso: number;
  count: number;
}

/** Errors within and per state point (computed in core/learning/state-points.ts). */
export interface StatePointErrors {
  source: 'property' | 'density';
  what: string;
  /** Errors relative to the pooled spread within the state points: the headline figure. */
  within: ErrorFigures;
  /** Per state point, errors relative to that state point's own spread. */
  groups: { label: string; errors: ErrorFigures }[];
}

/** A learning-curve point from repeated random splits (core/learning/curve-splits.ts). */
/** Standard deviations over the repeats of the relative and absolute errors. */
export interface ErrorSpread {
  percentIso: number;
  percentAniso: number;
  rmseIso: number;
  rmseAniso: number;
}

export interface CurvePoint {
  trainSize: number;
  /** Mean over the repeats. */
  errors: ErrorFigures;
  /** Standard deviation over the repeats (0 with one repeat). */
  spread?: ErrorSpread;
  repeats?: number;
}

export interface ValidationReport {
  route: Route;
  /** What was compared (units of the comparison, e.g. "eps" or "alpha-cm (Å³)"). */
  target: string;
  folds: number;
  errors: ErrorFigures;
  /** Errors within and per state point, when the frames come from several (core/learning/state-points.ts); lead with `within`. */
  statePoints?: StatePointErrors | null;
  points: ParityPoint[];
  /** Learning curve: training-set size → held-out errors (mean over repeated random splits, with their spread). */
  learningCurve: CurvePoint[];
  /** Whether more data would help, from the slope of the last points against their spread (core/learning/curve-splits.ts). */
  curveTrend?: string | null;
}

/*
 * Function contracts (implemented in core/learning/model.ts and io/model-file.ts):
 *   trainModel(frames: Frame[], request: TrainRequest, hooks?: WorkHooks): Promise<Model>
 *   predictFrame(model: Model, frame: Frame): FramePrediction
 *   validate(frames: Frame[], request: TrainRequest, options: { folds: number; learningCurve?: number[] },
 *            hooks?: WorkHooks): Promise<ValidationReport>
 *   serialiseModel(model): string;  parseModel(text: string, fileName: string): Model (ModelError on bad files)
 *   saveModel(path, model) (atomic);  loadModel(path): Promise<Model>
 * `Model` is a plain JSON-serialisable object defined in core/learning/model.ts.
 */
