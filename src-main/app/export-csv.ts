// The window's export sink of the predict use case: the CSV of predicted tensors in the layout of
// `polarweave predict -o OUT.csv` (io/prediction/prediction-format.ts), from the session's typed predictions,
// so the window's file and the command line's agree row for row. Only the comment block's "Source" and
// "Written" lines differ (the window has no model file path or checksum to name).
import type { Frame } from '../core/geometry/frame.ts';
import type { Model } from '../core/learning/model.ts';
import type { FramePrediction } from '../core/learning/model-types.ts';
import { predictionCsvOptions, tensorCsv, tensorPredictionRow } from '../io/prediction/prediction-format.ts';

export function predictionsCsv(predictions: readonly FramePrediction[], frameIndices: readonly number[], sourceFrames: Frame[], model: Model, modelName: string): string {
  const rows = predictions.map((p, k) => tensorPredictionRow(frameIndices[k], sourceFrames[frameIndices[k]], p, model));
  return tensorCsv(rows, predictionCsvOptions(model, `"${modelName}" (from the window)`));
}
