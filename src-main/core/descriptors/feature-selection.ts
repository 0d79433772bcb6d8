// Data-driven selection of feature columns, so a model can keep fewer features than the full power spectrum.
// Method: greedy column selection by largest residual norm (Gram–Schmidt with column pivoting, i.e. the
// deterministic column-pivoted QR form of CUR column selection): each step picks the column
// farthest from the span of the columns already chosen, then projects it out of the rest. A column is one
// feature over every sample environment (and every μ component for λ > 0). The chosen indices are stored with
// the model; applyFeatureSelection keeps those columns and re-normalises each environment block to unit norm.
import type { EnvironmentFeatures } from './feature-types.ts';

/** Chosen column indices (ascending) per λ; a λ that is absent keeps all its features. JSON-serialisable. */
export type FeatureSelection = Partial<Record<0 | 1 | 2, number[]>>;

/** View of one λ as a (rows × columns) matrix: rows are (environment, μ), columns features. */
function matrixOf(f: EnvironmentFeatures, lambda: 0 | 1 | 2): { rows: number; cols: number; data: Float64Array } {
  if (lambda === 0) return { rows: f.count, cols: f.n0, data: f.scalar };
  const t = f.tensor[lambda];
  if (!t) throw new RangeError(`selectFeatures: the sample has no λ = ${lambda} features`);
  return { rows: f.count * (2 * lambda + 1), cols: t.n, data: t.data };
}

/**
 * Up to k feature indices of order λ chosen from the sample environments (fewer when the sample's columns span
 * fewer than k dimensions, to relative residual 1e-10). Deterministic; O(k · features · rows).
 */
export function selectFeatures(sample: EnvironmentFeatures, k: number, lambda: 0 | 1 | 2 = 0): number[] {
  if (!Number.isInteger(k) || k < 1) throw new RangeError(`selectFeatures: k must be a positive integer, got ${k}`);
  const { rows, cols, data } = matrixOf(sample, lambda);
  if (rows === 0) throw new RangeError('selectFeatures: the sample has no environments');
  if (k >= cols) return Array.from({ length: cols }, (_, i) => i);
  // Column-major copy so a column is contiguous.
  const A = new Float64Array(rows * cols);
  for (let r = 0; r < rows; r++) for (let c = 0; c < cols; c++) A[c * rows + r] = data[r * cols + c];
  const residual = new Float64Array(cols);
  let largest = 0;
  for (let c = 0; c < cols; c++) {
    let s = 0;
    for (let r = 0; r < rows; r++) s += A[c * rows + r] ** 2;
    residual[c] = s;
    largest = Math.max(largest, s);
  }
  const chosen: number[] = [];
  const taken = new Uint8Array(cols);
  const q = new Float64Array(rows);
  for (let step = 0; step < k; step++) {
    let best = -1;
    for (let c = 0; c < cols; c++) if (!taken[c] && (best < 0 || residual[c] > residual[best])) best = c;
    if (best < 0 || !(residual[best] > 1e-20 * largest)) break;
    taken[best] = 1;
    chosen.push(best);
    // The chosen column, already orthogonalised in place below, becomes the next orthonormal direction q.
    const norm = Math.sqrt(residual[best]);
    for (let r = 0; r < rows; r++) q[r] = A[best * rows + r] / norm;
    for (let c = 0; c < cols; c++) {
      if (taken[c]) continue;
      let d = 0;
      const base = c * rows;
      for (let r = 0; r < rows; r++) d += q[r] * A[base + r];
      for (let r = 0; r < rows; r++) A[base + r] -= d * q[r];
      // Recompute instead of downdating, so round-off cannot make a residual negative.
      let s = 0;
      for (let r = 0; r < rows; r++) s += A[base + r] * A[base + r];
      residual[c] = s;
    }
  }
  return chosen.sort((a, b) => a - b);
}

/** Keeps the selected columns of each λ named in `selection` and re-normalises every environment block. */
export function applyFeatureSelection(features: EnvironmentFeatures, selection: FeatureSelection): EnvironmentFeatures {
  const check = (idx: number[], n: number, lambda: number) => {
    for (let i = 0; i < idx.length; i++) {
      if (!Number.isInteger(idx[i]) || idx[i] < 0 || idx[i] >= n || (i > 0 && idx[i] <= idx[i - 1])) {
        throw new RangeError(`applyFeatureSelection: λ = ${lambda} index ${idx[i]} at position ${i} is not an ascending index below ${n}`);
      }
    }
  };
  const pick = (data: Float64Array, rows: number, n: number, idx: number[], blockRows: number): Float64Array => {
    const m = idx.length;
    const out = new Float64Array(rows * m);
    for (let r = 0; r < rows; r++) for (let j = 0; j < m; j++) out[r * m + j] = data[r * n + idx[j]];
    const blockSize = blockRows * m;
    for (let b = 0; b < out.length; b += blockSize) {
      let s = 0;
      for (let i = b; i < b + blockSize; i++) s += out[i] * out[i];
      if (s > 0) {
        const inv = 1 / Math.sqrt(s);
        for (let i = b; i < b + blockSize; i++) out[i] *= inv;
      }
    }
    return out;
  };
  const result: EnvironmentFeatures = { ...features, tensor: { ...features.tensor } };
  const s0 = selection[0];
  if (s0) {
    check(s0, features.n0, 0);
    result.scalar = pick(features.scalar, features.count, features.n0, s0, 1);
    result.n0 = s0.length;
  }
  for (const lambda of [1, 2] as const) {
    const idx = selection[lambda];
    const t = features.tensor[lambda];
    if (!idx) continue;
    if (!t) throw new RangeError(`applyFeatureSelection: a λ = ${lambda} selection was given but these features have no λ = ${lambda}`);
    check(idx, t.n, lambda);
    result.tensor[lambda] = { n: idx.length, data: pick(t.data, features.count * (2 * lambda + 1), t.n, idx, 2 * lambda + 1) };
  }
  return result;
}
