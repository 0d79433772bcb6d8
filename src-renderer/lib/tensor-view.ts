// Small numbers shown beside tensors in the views: isotropic mean and anisotropy of a symmetric 3×3 matrix
// given as 9 numbers, row-major. The anisotropy is the core's one definition (core/dielectric/tensor.ts, the
// shared browser-safe tensor algebra), the one the CSV's *_aniso columns and `analyse` use.
import { anisotropy } from '../../src-main/core/dielectric/tensor.ts';

export function isoOf(t: ArrayLike<number>): number {
  return (t[0] + t[4] + t[8]) / 3;
}

/** √(3/2)·‖T − tr(T)/3 · I‖_F (= √(½Σ(λi − λj)²) of the principal values). */
export function anisoOf(t: ArrayLike<number>): number {
  return anisotropy(Float64Array.from(t));
}

/** How the anisotropy is labelled wherever it is shown. */
export const ANISOTROPY_LABEL = 'anisotropy √(3/2)‖T − tr/3‖';
