// The per-frame product of `predict`: one flat row of named values from a prediction (for CSV), and the same
// prediction attached to a frame (for extended XYZ: frame tensors as info keys, per-atom local tensors and
// applicability distances as per-atom arrays). Pure functions, so the trajectory and job code can reuse them.
import type { Frame } from './frame.ts';
import type { FramePrediction } from './model-types.ts';
import type { Model, TargetPrediction } from './model.ts';
import { predictedVector } from './model.ts';
import { symmetricEigen, tensorToVoigt } from './tensor.ts';

export type RowValue = number | string | boolean;
export type PredictionRow = Record<string, RowValue>;

const VOIGT = ['xx', 'yy', 'zz', 'yz', 'xz', 'xy'];

function tensorColumns(prefix: string, t: Float64Array, row: PredictionRow): void {
  const v = tensorToVoigt(t);
  VOIGT.forEach((c, k) => (row[`${prefix}_${c}`] = v[k]));
}

/** The column names of a tensor model's rows, in order (stable for CSV headers). */
export function tensorRowColumns(): string[] {
  const cols = ['frame', 'tag', 'volume_A3'];
  for (const p of ['eps', 'alpha_cm_A3', 'alpha_c_A3']) for (const c of VOIGT) cols.push(`${p}_${c}`);
  cols.push('n_1', 'n_2', 'n_3', 'max_distance', 'threshold', 'atoms_outside', 'outside', 'variance_iso');
  return cols;
}

function tagOf(frame: Frame): string {
  const t = frame.info.tag;
  return typeof t === 'string' ? t : '';
}

function applicabilityColumns(pred: { applicability: FramePrediction['applicability'] }, row: PredictionRow): void {
  const a = pred.applicability;
  row.max_distance = a.maxDistance;
  row.threshold = a.threshold;
  row.atoms_outside = a.atomsOutside;
  row.outside = a.outside;
  row.variance_iso = a.variance;
}

/** Row of a tensor prediction; `index` is the frame's index in its file. */
export function tensorPredictionRow(index: number, frame: Frame, p: FramePrediction): PredictionRow {
  const row: PredictionRow = { frame: index, tag: tagOf(frame), volume_A3: p.volumeA3 };
  tensorColumns('eps', p.eps, row);
  tensorColumns('alpha_cm_A3', p.alphaCM, row);
  tensorColumns('alpha_c_A3', p.alphaC, row);
  // principal refractive indices n_k = sqrt(λ_k(ε)), ascending; NaN-free: ε eigenvalues below 0 cannot come out
  // of the forward Clausius–Mossotti relation, which raises an error first.
  const ev = symmetricEigen(p.eps).values;
  for (let k = 0; k < 3; k++) row[`n_${k + 1}`] = Math.sqrt(Math.max(0, ev[k]));
  applicabilityColumns(p, row);
  return row;
}

/** Column names of a vector or scalar model's rows. */
export function valueRowColumns(model: Model): string[] {
  const v = model.target.shape === 'vector' ? ['value_x', 'value_y', 'value_z'] : ['value'];
  return ['frame', 'tag', ...v, 'max_distance', 'threshold', 'atoms_outside', 'outside', 'variance_iso'];
}

export function valuePredictionRow(model: Model, index: number, frame: Frame, p: TargetPrediction): PredictionRow {
  const row: PredictionRow = { frame: index, tag: tagOf(frame) };
  if (model.target.shape === 'vector') {
    const v = predictedVector(p);
    row.value_x = v[0];
    row.value_y = v[1];
    row.value_z = v[2];
  } else row.value = p.irreducible[0];
  applicabilityColumns(p, row);
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
