// The CSV layout of predicted tensors, shared by `polarweave predict` and the window's export so that both
// write the same columns and header block.
import type { Model } from '../../core/learning/model.ts';
import { APPLICABILITY_COLUMNS } from './prediction-rows.ts';
import type { TensorCsvOptions } from '../csv.ts';

/** io/csv.ts options for the predictions of `model`; `modelPath` names the model in the header block. */
export function predictionCsvOptions(model: Model, modelPath: string): TensorCsvOptions {
  return {
    title: 'Polarweave predicted dielectric tensors',
    tagColumns: ['tag'],
    alpha: { kind: model.target.route === 'cm' ? 'alpha-cm' : 'alpha-c', unit: 'A3' },
    extraColumns: Object.keys(APPLICABILITY_COLUMNS),
    extraDescriptions: APPLICABILITY_COLUMNS,
    source: `model ${modelPath} (route ${model.target.route}, trained on ${model.training.frames} frames)`,
    predicted: true,
  };
}
