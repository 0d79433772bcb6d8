// The public shapes of the learning engine: what a trained model predicts for a frame, how training is asked
// for, and what validation reports. The engine (model.ts and friends) implements them; the CLI, the jobs, the
// browser host and the window speak only these types. Extend, do not break.
import type { Mat3 } from '../geometry/frame.ts';

/** What a tensor in a file is: the optical dielectric tensor, or a cell polarisability (Å³). */
export type TensorKind = 'eps' | 'alpha-c' | 'alpha-cm';

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
  settings?: Partial<ModelSettings>;
  /** Candidate values to choose by cross-validation on the training frames (each list tried in every combination). */
  tune?: TuneGrid;
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
  /** True when any atom lies outside the training data. */
  outside: boolean;
}

export interface FramePrediction {
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
}

/** One frame's reference and prediction in irreducible parts (for parity charts). */
export interface ParityPoint {
  frame: number;
  /** Tag or source of the frame, if any. */
  label?: string;
  /** [T⁰, T²₋₂…T²₂] of reference and prediction, in the target's units. */
  reference: number[];
  predicted: number[];
}

export interface ErrorFigures {
  /** RMSE of the λ=0 part, of the λ=2 part (over its 5 components, per frame norm). */
  rmseIso: number;
  rmseAniso: number;
  /** RMSE / standard deviation of the reference, in percent. */
  percentIso: number;
  percentAniso: number;
  r2Iso: number;
  r2Aniso: number;
  count: number;
}

export interface ValidationReport {
  route: Route;
  /** What was compared (units of the comparison, e.g. "eps" or "alpha-cm (Å³)"). */
  target: string;
  folds: number;
  errors: ErrorFigures;
  points: ParityPoint[];
  /** Learning curve: training-set size → held-out errors. */
  learningCurve: { trainSize: number; errors: ErrorFigures }[];
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
