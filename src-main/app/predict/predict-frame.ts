// The per-frame step of every predict sink: predict one frame with a loaded model and give its row (CSV), its
// annotated and stamped frame (extended XYZ) or its text. The streamed file path (in worker threads), the
// in-memory path (CIF and other small inputs), the window's export and the demo all go through here, so a
// frame is predicted and laid out the same way whichever front end asked. The layout itself is
// io/prediction/prediction-format.ts.
import type { Frame, Mat3 } from '../../core/geometry/frame.ts';
import { tensorPredictionFrom, type Model, type Predictor } from '../../core/learning/model.ts';
import type { TensorPrediction } from '../../core/learning/model-types.ts';
import type { SetFrame } from '../../core/learning/set-summary.ts';
import { findMolecules } from '../../core/geometry/molecules.ts';
import { formatExtxyzFrame } from '../../io/extxyz.ts';
import { referenceEpsOf } from '../../core/learning/targets.ts';
import {
  annotateFrame,
  hasReferenceColumns,
  PRED_ARRAYS,
  stampFrame,
  tensorCsvRow,
  tensorPredictionRow,
  valuePredictionRow,
  valueRowText,
  type FrameStamp,
  type PredictionRow,
  type TensorCsvOptions,
  type TensorRow,
} from '../../io/prediction/prediction-format.ts';

export type PredictFormat = 'csv' | 'extxyz';

export interface PredictedFrame {
  index: number;
  /** Tensor models: the cell tensors (an isolated frame: its polarisability), local contributions and applicability. */
  tensor: TensorPrediction | null;
  /** Vector and scalar models: the table row. */
  valueRow: PredictionRow | null;
  outside: boolean;
  atomsOutside: number;
  maxDistance: number;
}

/** Predict one frame (any target shape). */
export function predictOne(model: Model, predict: Predictor, frame: Frame, index: number): PredictedFrame {
  const pred = predict(frame, index);
  const a = pred.applicability;
  const figures = { index, outside: a.outside, atomsOutside: a.atomsOutside, maxDistance: a.maxDistance };
  if (model.target.shape !== 'tensor') return { ...figures, tensor: null, valueRow: valuePredictionRow(model, index, frame, pred) };
  return { ...figures, tensor: tensorPredictionFrom(model, frame, pred, index), valueRow: null };
}

/**
 * What the set summary (core/learning/set-summary.ts) takes of a predicted frame: ε, its error bars and the
 * frame's reference ε under the model's own key (as the window shows it); null for vector and scalar models,
 * and for an isolated molecule or cluster (no ε).
 */
export function setFrameOf(model: Model, frame: Frame, one: PredictedFrame): SetFrame | null {
  if (!one.tensor || one.tensor.isolated) return null;
  return { eps: one.tensor.eps, errorBars: one.tensor.errorBars, reference: modelReferenceEps(model, frame, one.index), outside: one.outside };
}

/** The reference tensor the model was trained on, as ε, when the frame carries it (else null). */
export function modelReferenceEps(model: Model, frame: Frame, index: number): Mat3 | null {
  const t = model.target;
  return t.shape === 'tensor' && t.kind ? referenceEpsOf(frame, index, t.key, t.kind) : null;
}

/** A tensor prediction's table row (with the frame's reference tensor beside it, when given; null: empty cells). */
export function predictedRow(model: Model, frame: Frame, one: PredictedFrame, more: { reference?: Mat3 | null; tagKey?: string } = {}): TensorRow {
  return tensorPredictionRow(one.index, frame, one.tensor as TensorPrediction, model, more);
}

/** The annotated frame extended XYZ output holds: prediction keys, per-atom arrays, molecules, the stamp. */
export function predictedFrame(model: Model, frame: Frame, one: PredictedFrame, stamp: FrameStamp): Frame {
  const out = annotateFrame(frame, one.tensor as TensorPrediction, model);
  out.arrays[PRED_ARRAYS.molecule] = { kind: 'int', width: 1, data: findMolecules(frame).molecule };
  return stampFrame(out, one.index, stamp);
}

/** The exact text `predict` writes for one predicted frame (a CSV row or an annotated extended XYZ frame). */
export function predictedText(model: Model, frame: Frame, one: PredictedFrame, format: PredictFormat, stamp: FrameStamp, csvOptions?: TensorCsvOptions): string {
  if (model.target.shape !== 'tensor') return valueRowText(model, one.valueRow as PredictionRow);
  if (format === 'csv') {
    const reference = hasReferenceColumns(csvOptions) ? modelReferenceEps(model, frame, one.index) : undefined;
    return tensorCsvRow(predictedRow(model, frame, one, { reference }), csvOptions as TensorCsvOptions);
  }
  return formatExtxyzFrame(predictedFrame(model, frame, one, stamp));
}

export interface FrameText {
  text: string;
  /** For the set summary (tensor models). */
  set: SetFrame | null;
  outside: boolean;
  atomsOutside: number;
  maxDistance: number;
}

/** Predict one frame and format it. */
export function predictFrameText(model: Model, predict: Predictor, frame: Frame, index: number, format: PredictFormat, stamp: FrameStamp, csvOptions?: TensorCsvOptions): FrameText {
  const one = predictOne(model, predict, frame, index);
  return { text: predictedText(model, frame, one, format, stamp, csvOptions), set: setFrameOf(model, frame, one), outside: one.outside, atomsOutside: one.atomsOutside, maxDistance: one.maxDistance };
}
