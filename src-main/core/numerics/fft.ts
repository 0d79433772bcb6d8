// Radix-2 complex fast Fourier transform on Float64Array pairs (in place), and helpers for real series.
// Iterative Cooley–Tukey with bit-reversal; lengths must be powers of two (callers zero-pad).

export function nextPowerOfTwo(n: number): number {
  let p = 1;
  while (p < n) p *= 2;
  return p;
}

/** In-place FFT of (re, im). sign = −1: forward (e^{−2πi kn/N}); +1: inverse without the 1/N factor. */
export function fftInPlace(re: Float64Array, im: Float64Array, sign: -1 | 1 = -1): void {
  const n = re.length;
  if (im.length !== n) throw new RangeError('fft: re and im must have equal length');
  if (n & (n - 1)) throw new RangeError(`fft: length ${n} is not a power of two`);
  for (let i = 1, j = 0; i < n; i++) {
    let bit = n >> 1;
    for (; j & bit; bit >>= 1) j ^= bit;
    j ^= bit;
    if (i < j) {
      let t = re[i];
      re[i] = re[j];
      re[j] = t;
      t = im[i];
      im[i] = im[j];
      im[j] = t;
    }
  }
  for (let len = 2; len <= n; len *= 2) {
    const ang = (sign * 2 * Math.PI) / len;
    const wr = Math.cos(ang);
    const wi = Math.sin(ang);
    const half = len / 2;
    for (let start = 0; start < n; start += len) {
      let cr = 1;
      let ci = 0;
      for (let k = 0; k < half; k++) {
        const a = start + k;
        const b = a + half;
        const xr = re[b] * cr - im[b] * ci;
        const xi = re[b] * ci + im[b] * cr;
        re[b] = re[a] - xr;
        im[b] = im[a] - xi;
        re[a] += xr;
        im[a] += xi;
        const ncr = cr * wr - ci * wi;
        ci = cr * wi + ci * wr;
        cr = ncr;
      }
    }
  }
}

/**
 * Autocorrelation C(τ) = (1/(N−τ)) Σ_t x(t) x(t+τ) for τ = 0…maxLag, by the Wiener–Khinchin theorem
 * (FFT of the series zero-padded to ≥ 2N so the correlation is linear, not circular). Unbiased normalisation.
 */
export function autocorrelation(xs: ArrayLike<number>, maxLag = xs.length - 1): Float64Array {
  return crossCorrelation(xs, xs, maxLag);
}

/** C_xy(τ) = (1/(N−τ)) Σ_t x(t) y(t+τ), τ = 0…maxLag, via FFT. */
export function crossCorrelation(xs: ArrayLike<number>, ys: ArrayLike<number>, maxLag = xs.length - 1): Float64Array {
  const n = xs.length;
  if (ys.length !== n) throw new RangeError('crossCorrelation: series differ in length');
  if (maxLag >= n) throw new RangeError(`crossCorrelation: maxLag ${maxLag} must be below the series length ${n}`);
  const m = nextPowerOfTwo(2 * n);
  const ar = new Float64Array(m);
  const ai = new Float64Array(m);
  const br = new Float64Array(m);
  const bi = new Float64Array(m);
  for (let i = 0; i < n; i++) {
    ar[i] = xs[i];
    br[i] = ys[i];
  }
  fftInPlace(ar, ai, -1);
  fftInPlace(br, bi, -1);
  // conj(X) · Y
  for (let k = 0; k < m; k++) {
    const r = ar[k] * br[k] + ai[k] * bi[k];
    const i = ar[k] * bi[k] - ai[k] * br[k];
    ar[k] = r;
    ai[k] = i;
  }
  fftInPlace(ar, ai, 1);
  const out = new Float64Array(maxLag + 1);
  for (let tau = 0; tau <= maxLag; tau++) out[tau] = ar[tau] / m / (n - tau);
  return out;
}
