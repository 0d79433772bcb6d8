// Scaled modified spherical Bessel functions of the first kind, s_l(x) = e^(−x) i_l(x), l = 0…L, for x ≥ 0.
// The density expansion needs them for x = r r_ij / σ² up to ~10³, where i_l itself overflows; the scaled form
// stays in [0, 1]. Three regimes, each stable where it is used:
//   x ≤ 30          power series i_l(x) = x^l/(2l+1)!! Σ_k (x²/2)^k / (k! (2l+3)(2l+5)…(2l+2k+1)) (DLMF 10.53.3);
//                   all terms positive, so no cancellation.
//   x > 30, x ≥ L²  upward recurrence s_{l+1} = s_{l−1} − (2l+1)/x s_l from the closed forms
//                   s_0 = (1 − e^(−2x))/(2x), s_1 = ((1 + e^(−2x)) − (1 − e^(−2x))/x)/(2x)  (DLMF 10.49.8–9, 10.51.4).
//   otherwise       downward recurrence from well above L (the minimal solution), normalised to the closed form of s_0.

const SERIES_LIMIT = 30;

/** Writes s_0(x)…s_L(x) into out[0…L]. */
export function scaledSphericalBesselI(L: number, x: number, out: Float64Array): void {
  if (!(x >= 0) || !Number.isFinite(x)) throw new RangeError(`scaledSphericalBesselI: x must be finite and ≥ 0, got ${x}`);
  if (x === 0) {
    out[0] = 1;
    for (let l = 1; l <= L; l++) out[l] = 0;
    return;
  }
  if (x <= SERIES_LIMIT) {
    const e = Math.exp(-x);
    const h = 0.5 * x * x;
    let prefactor = e; // e^(−x) x^l / (2l+1)!!
    for (let l = 0; l <= L; l++) {
      if (l > 0) prefactor *= x / (2 * l + 1);
      let term = 1;
      let sum = 1;
      for (let k = 1; k < 500; k++) {
        term *= h / (k * (2 * l + 2 * k + 1));
        sum += term;
        if (term < 1e-17 * sum) break;
      }
      out[l] = prefactor * sum;
    }
    return;
  }
  const e2 = Math.exp(-2 * x);
  const s0 = -Math.expm1(-2 * x) / (2 * x);
  if (x >= L * L) {
    out[0] = s0;
    if (L === 0) return;
    out[1] = (1 + e2 - (1 - e2) / x) / (2 * x);
    for (let l = 1; l < L; l++) out[l + 1] = out[l - 1] - ((2 * l + 1) / x) * out[l];
    return;
  }
  // Downward: start far enough above L that the ratio i_{l+1}/i_l ~ x/(2l) has made the start value negligible.
  const start = L + 40 + Math.ceil(x);
  let above = 0;
  let here = 1e-300;
  for (let l = start; l >= 1; l--) {
    const below = above + ((2 * l + 1) / x) * here;
    above = here;
    here = below;
    if (l - 1 <= L) out[l - 1] = here;
    if (here > 1e250) {
      // Rescale to stay finite; only ratios matter.
      above *= 1e-250;
      here *= 1e-250;
      for (let k = l - 1; k <= L; k++) out[k] *= 1e-250;
    }
  }
  const scale = s0 / out[0];
  for (let l = 0; l <= L; l++) out[l] *= scale;
}
