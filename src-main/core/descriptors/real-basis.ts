// The unitary change of basis from complex (Condon–Shortley) to real spherical harmonics of degree l:
//   Y^real_m = Σ_m' U_mm' Y^complex_m'   (m, m' = −l…l; row-major (2l+1)², index m + l)
// From the real forms of docs/science-conventions.md, with Y_l^{−μ} = (−1)^μ conj(Y_l^μ):
//   m > 0:  Y_m  = [(−1)^m Y^m + Y^{−m}] / √2
//   m = 0:  Y_0  = Y^0
//   m < 0:  Y_m  = i [Y^m − (−1)^m Y^{−m}] / √2     (μ = −m, so (−1)^μ = (−1)^m)
// Each row has at most two non-zero entries (columns m and −m).

export interface ComplexMatrix {
  /** Side length (2l+1). */
  size: number;
  re: Float64Array;
  im: Float64Array;
}

const cache = new Map<number, ComplexMatrix>();

/** U of degree l (cached; do not modify the returned arrays). */
export function realBasisTransform(l: number): ComplexMatrix {
  if (!Number.isInteger(l) || l < 0) throw new RangeError(`realBasisTransform: l must be a non-negative integer, got ${l}`);
  const hit = cache.get(l);
  if (hit) return hit;
  const size = 2 * l + 1;
  const re = new Float64Array(size * size);
  const im = new Float64Array(size * size);
  const h = Math.SQRT1_2;
  for (let m = -l; m <= l; m++) {
    const row = (m + l) * size;
    const sign = m % 2 === 0 ? 1 : -1;
    if (m > 0) {
      re[row + m + l] = sign * h;
      re[row - m + l] = h;
    } else if (m === 0) {
      re[row + l] = 1;
    } else {
      im[row + m + l] = h;
      im[row - m + l] = -sign * h;
    }
  }
  const u = { size, re, im };
  cache.set(l, u);
  return u;
}
