// Error figures of predicted against reference tensors, in the tensor's own units (ε dimensionless, α in Å³):
// the engine's validation, the CLI, the demo report and the window's charts all take them from here. Pure and
// browser-safe (the window's parity chart computes the figures of a group of dots with the same function).
//
// - Isotropic part: the error of tr/3 (ε_iso, or the mean polarisability).
// - Anisotropic part: one measure, the anisotropy Δ = √(3/2)·‖ΔT − (tr ΔT/3) I‖ of the error tensor ΔT —
//   the same invariant as the `eps_aniso` column of a prediction (for an axial error, |Δ(ε∥ − ε⊥)|), root
//   mean square over frames. It does not depend on the axes, and a model that gets the size of the anisotropy
//   right but its direction wrong still shows an error.
// - "% of spread": the RMSE over the (population) standard deviation of the reference, measured the same way;
//   R² = 1 − (% of spread / 100)².
// docs/science-conventions.md relates these to the irreducible parts of the maths.
import { anisotropyOfParts, isotropicOfParts } from '../dielectric/tensor.ts';
import type { ErrorFigures } from './model-types.ts';

/**
 * What a validation compared (ValidationReport.target, and the comparisons beside it), in the tensor's units: ε
 * over periodic frames, α_CM (Å³) over periodic frames, the polarisability in vacuum (Å³) over isolated frames
 * (molecules, clusters). A set mixing the two kinds names the frames of each comparison.
 */
export function comparedOn(quantity: 'eps' | 'alpha-cm' | 'alpha-mol', mixed: boolean): string {
  const name = quantity === 'eps' ? 'eps' : `${quantity} (Å³)`;
  return mixed ? `${name}, ${quantity === 'alpha-mol' ? 'isolated' : 'periodic'} frames` : name;
}

/** Error figures of paired irreducible 6-vectors [T⁰, T²₋₂…T²₂] (one pair a frame), in the tensor's units. */
export function errorFigures(reference: ArrayLike<number>[], predicted: ArrayLike<number>[]): ErrorFigures {
  const n = reference.length;
  if (n === 0 || predicted.length !== n) throw new RangeError('errorFigures: need equal, non-empty lists');
  const mean = new Float64Array(6);
  for (const r of reference) for (let k = 0; k < 6; k++) mean[k] += r[k] / n;
  const diff = new Float64Array(6);
  let sseIso = 0;
  let sstIso = 0;
  let sseAniso = 0;
  let sstAniso = 0;
  for (let i = 0; i < n; i++) {
    const r = reference[i];
    const p = predicted[i];
    sseIso += isotropicOfParts([p[0] - r[0]]) ** 2;
    sstIso += isotropicOfParts([r[0] - mean[0]]) ** 2;
    for (let k = 0; k < 6; k++) diff[k] = p[k] - r[k];
    sseAniso += anisotropyOfParts(diff) ** 2;
    for (let k = 0; k < 6; k++) diff[k] = r[k] - mean[k];
    sstAniso += anisotropyOfParts(diff) ** 2;
  }
  const rmseIso = Math.sqrt(sseIso / n);
  const rmseAniso = Math.sqrt(sseAniso / n);
  const sdIso = Math.sqrt(sstIso / n);
  const sdAniso = Math.sqrt(sstAniso / n);
  // With a constant reference the relative figures are undefined; report them as infinite error / R² 0
  // rather than NaN so that nothing downstream mistakes them for numbers.
  const pct = (rmse: number, sd: number) => (sd > 0 ? (100 * rmse) / sd : rmse > 0 ? Infinity : 0);
  const r2 = (sse: number, sst: number) => (sst > 0 ? 1 - sse / sst : sse > 0 ? -Infinity : 1);
  return {
    rmseIso,
    rmseAniso,
    percentIso: pct(rmseIso, sdIso),
    percentAniso: pct(rmseAniso, sdAniso),
    r2Iso: r2(sseIso, sstIso),
    r2Aniso: r2(sseAniso, sstAniso),
    count: n,
  };
}

/** The squared Frobenius norm of the whole error tensor, per frame on average: 3·RMSE_iso² + (2/3)·RMSE_aniso². */
export function meanSquaredTensorError(e: ErrorFigures): number {
  return 3 * e.rmseIso ** 2 + (2 / 3) * e.rmseAniso ** 2;
}

// ---------------------------------------------------------------------------------------------------------
// The verdict: one rule for the CLI (validate), the demo and the window (Checks), judged on the headline
// figures (core/learning/state-points.ts headlineErrors: within state points when there are several).

/** Rule-of-thumb verdict thresholds on the error relative to the spread of the data (common practice, no source). */
export const GOOD_PERCENT = 10;
export const USABLE_PERCENT = 30;

/** The verdict on a tensor validation's figures (the worse of the isotropic and anisotropic relative errors). */
export function verdict(e: ErrorFigures): string {
  return verdictOf(Math.max(e.percentIso, e.percentAniso), 'both errors');
}

/** The verdict on the worst relative error of a validation; `what` names the figures for the good case. */
export function verdictOf(worst: number, what: string): string {
  if (worst <= GOOD_PERCENT) return `good (${what} ≤ ${GOOD_PERCENT} %)`;
  if (worst <= USABLE_PERCENT) return `usable with care (worst error ${fmtPct(worst)} of the spread, between ${GOOD_PERCENT} and ${USABLE_PERCENT} %)`;
  return `poor (worst error ${fmtPct(worst)} of the spread > ${USABLE_PERCENT} %): more or more varied training data, or other settings, are needed`;
}

/** A relative error as text, with the digits it deserves (one decimal below 10 %, none above). */
export function fmtPct(p: number): string {
  if (!Number.isFinite(p)) return 'undefined (the reference does not vary)';
  return `${p < 10 ? p.toFixed(1) : p.toFixed(0)} %`;
}
