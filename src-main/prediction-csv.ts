// The CSV of predicted tensors the Export view writes: the same columns and number formatting as
// `polarweave predict -o OUT.csv` (core/predict-rows.ts, csvLine), so the window's file and the command
// line's agree row for row. Only the comment line differs (it names the model instead of a model path).
import type { FramePredictionJ } from './api.ts';
import { csvLine } from './cli/commands/predict.ts';
import type { Frame } from './core/frame.ts';
import type { FramePrediction } from './core/model-types.ts';
import { tensorPredictionRow, tensorRowColumns } from './core/predict-rows.ts';

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

export function predictionsCsv(frames: FramePredictionJ[], local: number[][], atomDistance: number[][], sourceFrames: Frame[], modelName: string): string {
  const columns = tensorRowColumns();
  let text = `# Polarweave predictions (model estimates) from ${modelName.replace(/\n/g, ' ')}\n` + csvLine(columns);
  frames.forEach((f, k) => {
    const row = tensorPredictionRow(f.frame, sourceFrames[f.frame], asFramePrediction(f, local[k], atomDistance[k]));
    text += csvLine(columns.map((c) => row[c] ?? ''));
  });
  return text;
}
