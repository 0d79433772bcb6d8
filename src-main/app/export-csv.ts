// The CSV of predicted tensors the Export view writes: the same layout as `polarweave predict -o OUT.csv`
// (io/prediction/prediction-format.ts: predictionCsvOptions, tensorPredictionRow, tensorCsv), so the window's
// file and the command line's agree row for row. Only the comment block's "Source" and "Written" lines differ.
import type { FramePredictionJ } from '../api/contract.ts';
import { predictionCsvOptions, tensorCsv, tensorPredictionRow } from '../io/prediction/prediction-format.ts';
import type { Frame } from '../core/geometry/frame.ts';
import type { Model } from '../core/learning/model.ts';
import type { FramePrediction } from '../core/learning/model-types.ts';

function asFramePrediction(f: FramePredictionJ, local: number[], atomDistance: number[]): FramePrediction {
  const a = f.applicability;
  return {
    volumeA3: f.volumeA3,
    alphaCM: Float64Array.from(f.alphaCM),
    alphaC: Float64Array.from(f.alphaC),
    eps: Float64Array.from(f.eps),
    local: Float64Array.from(local),
    applicability: { atomDistance: Float64Array.from(atomDistance), maxDistance: a.maxDistance, threshold: a.threshold, atomsOutside: a.atomsOutside, variance: a.variance, outside: a.outside },
  };
}

export function predictionsCsv(
  frames: FramePredictionJ[],
  local: number[][],
  atomDistance: number[][],
  sourceFrames: Frame[],
  model: Model,
  modelName: string,
): string {
  const rows = frames.map((f, k) => tensorPredictionRow(f.frame, sourceFrames[f.frame], asFramePrediction(f, local[k], atomDistance[k]), model));
  return tensorCsv(rows, predictionCsvOptions(model, `"${modelName}" (from the window)`));
}
