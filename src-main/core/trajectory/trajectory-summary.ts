// Statistics of tensors along a trajectory: mean tensors with block-averaged standard errors per component,
// and principal values, refractive indices and birefringence of the mean ε with errors by the delta method.
//
// Delta method with correlated samples: for a smooth function f of the mean tensor T̄, the error of f(T̄) is the
// standard error of the mean of the per-frame linearised series g_t = ∇f(T̄) · (T_t − T̄). Block averaging
// g_t (statistics.ts) includes the correlation in time and between components. For a principal value λ_k with
// unit eigenvector v_k (non-degenerate), ∂λ_k/∂T = v_k v_kᵀ (first-order perturbation theory), so
// g_t = v_kᵀ (T_t − T̄) v_k; n_k = √λ_k gives δn_k = δλ_k / (2 n_k); Δn = n_3 − n_1 gives δΔn = δn_3 − δn_1.
// Pure code (no I/O).
import type { Mat3 } from '../geometry/frame.ts';
import { blockAverage, type BlockAverage } from './statistics.ts';
import { anisotropy, isotropicMean, symmetricEigen } from '../dielectric/tensor.ts';

/** Symmetric components in the order written to files, with their row-major indices. */
export const COMPONENTS = ['xx', 'yy', 'zz', 'yz', 'xz', 'xy'] as const;
export const COMPONENT_INDEX = [0, 4, 8, 5, 2, 1];

export interface ComponentStats {
  component: string;
  stats: BlockAverage;
}

/** Fewest blocks a block size may leave in block averaging, unless the caller says otherwise (analyse, the window). */
export const DEFAULT_MIN_BLOCKS = 8;

export interface TensorStats {
  mean: Mat3;
  /** Per component (xx yy zz yz xz xy). */
  components: ComponentStats[];
  /** Isotropic part tr/3 (a linear function: block-averaged directly). */
  iso: BlockAverage;
  /** Anisotropy of the mean tensor (not of each frame), with the delta-method error. */
  anisotropy: number;
  anisotropyError: number;
  anisotropyStats: BlockAverage | null;
}

/** Series of 9 numbers (row-major symmetric) per frame → per-frame component k. */
function component(series: Float64Array, idx: number): Float64Array {
  const n = series.length / 9;
  const out = new Float64Array(n);
  for (let f = 0; f < n; f++) out[f] = series[9 * f + idx];
  return out;
}

function meanTensor(series: Float64Array): Mat3 {
  const n = series.length / 9;
  const m = new Float64Array(9);
  for (let f = 0; f < n; f++) for (let i = 0; i < 9; i++) m[i] += series[9 * f + i];
  for (let i = 0; i < 9; i++) m[i] /= n;
  return m;
}

/** The linearised series g_t = Σ_ij G_ij (T_t − T̄)_ij for a gradient G (row-major 3×3). */
function linearised(series: Float64Array, mean: Mat3, grad: ArrayLike<number>): Float64Array {
  const n = series.length / 9;
  const g = new Float64Array(n);
  for (let f = 0; f < n; f++) {
    let s = 0;
    for (let i = 0; i < 9; i++) s += grad[i] * (series[9 * f + i] - mean[i]);
    g[f] = s;
  }
  return g;
}

export function tensorStats(series: Float64Array, minBlocks = DEFAULT_MIN_BLOCKS): TensorStats {
  const n = series.length / 9;
  if (!Number.isInteger(n) || n < 2) throw new RangeError(`tensorStats: need 9 numbers per frame and at least 2 frames, got ${series.length} numbers`);
  const mean = meanTensor(series);
  const components = COMPONENTS.map((c, k) => ({ component: c, stats: blockAverage(component(series, COMPONENT_INDEX[k]), minBlocks) }));
  const iso = new Float64Array(n);
  for (let f = 0; f < n; f++) iso[f] = (series[9 * f] + series[9 * f + 4] + series[9 * f + 8]) / 3;
  // anisotropy a = sqrt(3/2 tr(β²)), β = T − tr(T)/3 I: ∂a/∂T = (3/2) β / a (β symmetric)
  const a = anisotropy(mean);
  let anisotropyStats: BlockAverage | null = null;
  let anisotropyError = NaN;
  if (a > 1e-12 * Math.max(1, Math.abs(isotropicMean(mean)))) {
    const t = isotropicMean(mean);
    const grad = new Float64Array(9);
    for (let i = 0; i < 9; i++) grad[i] = (1.5 * (mean[i] - (i % 4 === 0 ? t : 0))) / a;
    anisotropyStats = blockAverage(linearised(series, mean, grad), minBlocks);
    anisotropyError = anisotropyStats.standardError;
  }
  return { mean, components, iso: blockAverage(iso, minBlocks), anisotropy: a, anisotropyError, anisotropyStats };
}

export interface OpticalStats {
  /** Principal values of the mean ε, ascending, with errors. */
  principal: number[];
  principalErrors: number[];
  /** Refractive indices √λ_k with errors. */
  n: number[];
  nErrors: number[];
  /** n_3 − n_1 and its error. */
  birefringence: number;
  birefringenceError: number;
  /** Block-averaging of the linearised series behind each error (n_1, n_2, n_3, Δn), for the plateau report. */
  stats: BlockAverage[];
  /**
   * Per frame, the indices along the principal axes of the mean ε to first order, n_k + δn_k(t): the series
   * whose mean is n_k and whose block-averaged error is nErrors[k] (what a chart of indices against time shows;
   * sorting each frame's own indices instead would push n_1 down and n_3 up, a Δn even for an isotropic liquid).
   */
  series: Float64Array[];
  /** Pairs of principal values closer than the sum of their errors (not resolved by this trajectory). */
  unresolved: [number, number][];
  method: string;
}

export function opticalStats(epsSeries: Float64Array, minBlocks = DEFAULT_MIN_BLOCKS): OpticalStats {
  const mean = meanTensor(epsSeries);
  const { values, vectors } = symmetricEigen(mean);
  const principal = Array.from(values);
  if (principal[0] <= 0) throw new RangeError(`opticalStats: the mean ε has a principal value ${principal[0]} ≤ 0`);
  const n = principal.map(Math.sqrt);
  const stats: BlockAverage[] = [];
  const gk: Float64Array[] = [];
  const principalErrors: number[] = [];
  const series: Float64Array[] = [];
  for (let k = 0; k < 3; k++) {
    // v_k is column k of the eigenvector matrix
    const v = [vectors[k], vectors[3 + k], vectors[6 + k]];
    const grad = new Float64Array(9);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) grad[3 * i + j] = v[i] * v[j];
    const g = linearised(epsSeries, mean, grad);
    gk.push(g);
    const b = blockAverage(g, minBlocks);
    principalErrors.push(b.standardError);
    const gn = g.map((x) => x / (2 * n[k]));
    stats.push(blockAverage(gn, minBlocks));
    series.push(gn.map((x) => n[k] + x));
  }
  const dn = new Float64Array(gk[0].length);
  for (let f = 0; f < dn.length; f++) dn[f] = gk[2][f] / (2 * n[2]) - gk[0][f] / (2 * n[0]);
  const dnStats = blockAverage(dn, minBlocks);
  stats.push(dnStats);
  const unresolved: [number, number][] = [];
  for (const [i, j] of [[0, 1], [1, 2]] as const) if (principal[j] - principal[i] <= principalErrors[i] + principalErrors[j]) unresolved.push([i + 1, j + 1]);
  return {
    principal,
    principalErrors,
    n,
    nErrors: stats.slice(0, 3).map((s) => s.standardError),
    birefringence: n[2] - n[0],
    birefringenceError: dnStats.standardError,
    stats,
    series,
    unresolved,
    method:
      'principal values, indices and birefringence are those of the mean ε; their errors by the delta method: the per-frame first-order change (∂f/∂ε at the mean)·(ε_t − ε̄), block-averaged like the components (first-order perturbation theory for the eigenvalues)',
  };
}
