// The window's export sink of the predict use case: the CSV of predicted tensors in the layout of
// `polarweave predict -o OUT.csv` (io/prediction/prediction-format.ts), from the session's typed predictions,
// so the window's file and the command line's agree row for row, reference columns included when the frames
// carry the model's reference tensor. Only the comment block's "Source" and "Written" lines differ (the window
// has no model file path or checksum to name).
import type { Frame } from '../core/geometry/frame.ts';
import type { Model } from '../core/learning/model.ts';
import type { TensorPrediction } from '../core/learning/model-types.ts';
import type { Mat3 } from '../core/geometry/frame.ts';
import { predictionCsvOptions, tensorCsv, tensorCsvColumns, tensorPredictionRow, type TensorCsvOptions } from '../io/prediction/prediction-format.ts';
import { modelReferenceEps } from './predict/predict-frame.ts';

/**
 * The export's layout: predict's, by predict's rule (app/predict/prediction.ts csvLayoutOf) — the reference columns
 * when the first frame carries the model's reference, since predict streams and decides on its first frame. A set
 * whose first frame is a cluster (no ε reference) then has none, in the window as on the command line.
 */
function exportLayout(frameIndices: readonly number[], sourceFrames: Frame[], model: Model, modelName: string): { options: TensorCsvOptions; references: (Mat3 | null)[] | null } {
  const references = frameIndices.map((i) => modelReferenceEps(model, sourceFrames[i], i));
  const reference = references.length > 0 && references[0] !== null;
  return { options: predictionCsvOptions(model, `"${modelName}" (from the window)`, { reference }), references: reference ? references : null };
}

export function predictionsCsv(predictions: readonly TensorPrediction[], frameIndices: readonly number[], sourceFrames: Frame[], model: Model, modelName: string): string {
  const { options, references } = exportLayout(frameIndices, sourceFrames, model, modelName);
  const rows = predictions.map((p, k) => tensorPredictionRow(frameIndices[k], sourceFrames[frameIndices[k]], p, model, references ? { reference: references[k] } : {}));
  return tensorCsv(rows, options);
}

/** The header of that CSV, in order (the Export view describes the file from it). */
export function predictionsCsvColumns(frameIndices: readonly number[], sourceFrames: Frame[], model: Model): string[] {
  return tensorCsvColumns(exportLayout(frameIndices, sourceFrames, model, '').options);
}
