// Inputs and outputs of the app's job tasks (train, validate, predict), shared by the service (which starts
// them) and the worker (app-tasks.ts, which runs them). Everything here crosses a thread boundary, so it is
// structured-clone safe: frames with typed arrays, models as plain objects, results as plain JSON.
import type { TrainRequestJ, ValidationReportJ } from '../api/contract.ts';
import type { Frame } from '../core/geometry/frame.ts';
import type { TensorPrediction } from '../core/learning/model-types.ts';

export interface ValidateTaskInput {
  request: TrainRequestJ;
  folds: number;
  /** Training-set sizes for the learning curve (empty: none). */
  learningCurve: number[];
  frames: Frame[];
  /** Index in the dataset of each frame (parity points are reported with these). */
  frameIndices: number[];
}

export interface TrainTaskInput extends ValidateTaskInput {
  /** Frames held out of training, predicted after it; their errors are the test report. */
  testFrames: Frame[];
  testIndices: number[];
}

export interface TrainTaskOutput {
  /** The trained model (plain JSON-serialisable object of core/learning/model.ts). */
  model: unknown;
  report: ValidationReportJ;
  test: ValidationReportJ | null;
}

export interface PredictTaskInput {
  model: unknown;
  frames: Frame[];
  frameIndices: number[];
  /**
   * What the model was trained on (its key, kind and, for a mixed set, the clusters' key): when a frame carries
   * that reference, it is reported beside the prediction (ε, or α in Å³ for a frame without a cell).
   */
  reference: Pick<TrainRequestJ, 'tensorKey' | 'kind' | 'isolatedKey'>;
}

/** Typed, as the predict use case gives it; the service turns it into JSON at the API boundary. */
export interface PredictTaskOutput {
  frameIndices: number[];
  predictions: TensorPrediction[];
  /** The frame's reference tensor as compared (ε; α in Å³ for an isolated frame), when it has one. */
  reference: (Float64Array | null)[];
}
