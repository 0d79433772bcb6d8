// The per-frame product of `predict`: one flat row of named values from a prediction (for CSV), and the same
// prediction attached to a frame (for extended XYZ: frame tensors as info keys, per-atom local tensors and
// applicability distances as per-atom arrays). Pure functions, so the trajectory and job code can reuse them.
import type { Frame } from '../../core/geometry/frame.ts';
import type { FramePrediction } from '../../core/learning/model-types.ts';
import type { Model, TargetPrediction } from '../../core/learning/model.ts';
import { predictedVector } from '../../core/learning/model.ts';

export type RowValue = number | string | boolean;
export type PredictionRow = Record<string, RowValue>;

/** Applicability figures written beside every prediction, with their meaning (for file headers). */
export const APPLICABILITY_COLUMNS: Record<string, string> = {
  max_distance: 'largest per-atom distance in normalised λ=0 feature space to the nearest training representative of its species (0…2)',
  threshold: "the model's applicability threshold on that distance",
  atoms_outside: 'number of atoms beyond the threshold',
  outside: '1 when any atom lies outside the training data (treat the prediction with care), else 0',
  variance_iso: 'predictive variance of the λ=0 part of the learnt tensor (Å⁶; GP posterior of the model)',
};

function tagOf(frame: Frame): string {
  const t = frame.info.tag;
  return typeof t === 'string' ? t : '';
}

function applicabilityFigures(a: FramePrediction['applicability']): Record<string, number> {
  return { max_distance: a.maxDistance, threshold: a.threshold, atoms_outside: a.atomsOutside, outside: a.outside ? 1 : 0, variance_iso: a.variance };
}

/**
 * A tensor prediction as a per-frame table row (the TensorRow shape of io/csv.ts): ε, the learnt cell
 * polarisability of the route (α_CM for cm, α_c for direct), a `tag` column and the applicability figures.
 */
export function tensorPredictionRow(index: number, frame: Frame, p: FramePrediction, model: Model) {
  return {
    frame: index,
    tags: { tag: tagOf(frame) },
    volumeA3: p.volumeA3,
    eps: p.eps,
    alpha: model.target.route === 'cm' ? p.alphaCM : p.alphaC,
    extra: applicabilityFigures(p.applicability),
  };
}

/** Column names of a vector or scalar model's rows. */
export function valueRowColumns(model: Model): string[] {
  const v = model.target.shape === 'vector' ? ['value_x', 'value_y', 'value_z'] : ['value'];
  return ['frame', 'tag', ...v, ...Object.keys(APPLICABILITY_COLUMNS)];
}

export function valuePredictionRow(model: Model, index: number, frame: Frame, p: TargetPrediction): PredictionRow {
  const row: PredictionRow = { frame: index, tag: tagOf(frame) };
  if (model.target.shape === 'vector') {
    const v = predictedVector(p);
    row.value_x = v[0];
    row.value_y = v[1];
    row.value_z = v[2];
  } else row.value = p.irreducible[0];
  Object.assign(row, applicabilityFigures(p.applicability));
  return row;
}

/** A copy of the frame with the prediction attached (info keys pred_*, per-atom arrays local_*, distance). */
export function annotateFrame(frame: Frame, p: FramePrediction, model: Model): Frame {
  const out: Frame = { ...frame, info: { ...frame.info }, arrays: { ...frame.arrays } };
  out.info.pred_eps = [...p.eps];
  out.info.pred_alpha_cm_A3 = [...p.alphaCM];
  out.info.pred_alpha_c_A3 = [...p.alphaC];
  out.info.pred_outside = p.applicability.outside;
  out.info.pred_max_distance = p.applicability.maxDistance;
  out.info.pred_route = model.target.route;
  const localName = model.target.route === 'cm' ? 'local_alpha_cm_A3' : 'local_eps_minus_1';
  out.arrays[localName] = { kind: 'real', width: 9, data: Float64Array.from(p.local) };
  out.arrays.feature_distance = { kind: 'real', width: 1, data: Float64Array.from(p.applicability.atomDistance) };
  return out;
}
