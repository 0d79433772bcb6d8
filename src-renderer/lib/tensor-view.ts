// Small numbers shown beside tensors in the views: isotropic mean and anisotropy of a symmetric 3×3 matrix
// given as 9 numbers, row-major. (The science lives in src-main; these are display figures only.)

export function isoOf(t: ArrayLike<number>): number {
  return (t[0] + t[4] + t[8]) / 3;
}

/** ‖T − tr(T)/3 · I‖_F: the size of the traceless (λ = 2) part. */
export function anisoOf(t: ArrayLike<number>): number {
  const m = isoOf(t);
  let s = 0;
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) s += (t[3 * i + j] - (i === j ? m : 0)) ** 2;
  return Math.sqrt(s);
}
