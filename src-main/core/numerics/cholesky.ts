// Dense symmetric positive-definite solves on plain Float64Array (row-major n×n), for the ridge systems of the
// regression. Written by hand because ml-matrix's generic loops are far slower here (bench/training.bench.ts
// measures both); the loops below run along contiguous rows so the JIT keeps them tight.

/**
 * Cholesky factor A = L Lᵀ, in place: the lower triangle of `a` becomes L (the strict upper triangle is left
 * untouched and must be ignored). Returns false when A is not positive definite (a pivot ≤ 0 or not finite).
 */
export function choleskyInPlace(a: Float64Array, n: number): boolean {
  for (let i = 0; i < n; i++) {
    const ri = i * n;
    for (let j = 0; j <= i; j++) {
      const rj = j * n;
      // dot product of the two row prefixes, four accumulators (about 1.5× faster in V8 than one)
      let s0 = 0;
      let s1 = 0;
      let s2 = 0;
      let s3 = 0;
      let k = 0;
      for (; k + 3 < j; k += 4) {
        s0 += a[ri + k] * a[rj + k];
        s1 += a[ri + k + 1] * a[rj + k + 1];
        s2 += a[ri + k + 2] * a[rj + k + 2];
        s3 += a[ri + k + 3] * a[rj + k + 3];
      }
      for (; k < j; k++) s0 += a[ri + k] * a[rj + k];
      const s = a[ri + j] - (s0 + s1 + s2 + s3);
      if (i === j) {
        if (!(s > 0) || !Number.isFinite(s)) return false;
        a[ri + i] = Math.sqrt(s);
      } else {
        a[ri + j] = s / a[rj + j];
      }
    }
  }
  return true;
}

/**
 * Factor A + jitter·I with the smallest jitter from a geometric ladder that makes it positive definite
 * (starting at 0). `a` is not modified; returns the factor and the jitter used. Throws when even a jitter
 * of 1e-2 × mean diagonal fails (a broken system, not round-off).
 */
export function choleskyWithJitter(a: Float64Array, n: number): { factor: Float64Array; jitter: number } {
  let meanDiag = 0;
  for (let i = 0; i < n; i++) meanDiag += a[i * n + i];
  meanDiag = n > 0 ? Math.abs(meanDiag / n) : 1;
  if (!(meanDiag > 0)) meanDiag = 1;
  const ladder = [0, 1e-12, 1e-10, 1e-8, 1e-6, 1e-4, 1e-2];
  for (const rel of ladder) {
    const f = Float64Array.from(a);
    const jitter = rel * meanDiag;
    if (jitter > 0) for (let i = 0; i < n; i++) f[i * n + i] += jitter;
    if (choleskyInPlace(f, n)) return { factor: f, jitter };
  }
  throw new RangeError(`Cholesky: the ${n}×${n} system is not positive definite even with a jitter of 1e-2 × its mean diagonal`);
}

/** Solve L z = b in place (forward substitution); L lower triangular, row-major. */
export function forwardSubstitute(l: Float64Array, n: number, b: Float64Array): Float64Array {
  for (let i = 0; i < n; i++) {
    const ri = i * n;
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[ri + k] * b[k];
    b[i] = s / l[ri + i];
  }
  return b;
}

/** Solve Lᵀ x = z in place (back substitution). */
export function backSubstitute(l: Float64Array, n: number, z: Float64Array): Float64Array {
  for (let i = n - 1; i >= 0; i--) {
    const s = z[i] / l[i * n + i];
    z[i] = s;
    // subtract column i of Lᵀ (row i of L) from the entries above
    const ri = i * n;
    for (let k = 0; k < i; k++) z[k] -= l[ri + k] * s;
  }
  return z;
}

/** Solve A x = b given A's Cholesky factor; returns a new array. */
export function choleskySolve(l: Float64Array, n: number, b: ArrayLike<number>): Float64Array {
  const x = Float64Array.from(b);
  forwardSubstitute(l, n, x);
  backSubstitute(l, n, x);
  return x;
}

/** G = Φᵀ Φ (F×F) of a row-major rows×F matrix, both triangles filled. */
export function gramOfColumns(phi: Float64Array, rows: number, f: number): Float64Array {
  const g = new Float64Array(f * f);
  for (let r = 0; r < rows; r++) {
    const base = r * f;
    for (let i = 0; i < f; i++) {
      const v = phi[base + i];
      if (v === 0) continue;
      const gi = i * f;
      for (let j = i; j < f; j++) g[gi + j] += v * phi[base + j];
    }
  }
  for (let i = 0; i < f; i++) for (let j = 0; j < i; j++) g[i * f + j] = g[j * f + i];
  return g;
}

/** K = Φ Φᵀ (rows×rows) of a row-major rows×F matrix. */
export function gramOfRows(phi: Float64Array, rows: number, f: number): Float64Array {
  const k = new Float64Array(rows * rows);
  for (let i = 0; i < rows; i++) {
    const bi = i * f;
    for (let j = 0; j <= i; j++) {
      const bj = j * f;
      let s0 = 0;
      let s1 = 0;
      let c = 0;
      for (; c + 1 < f; c += 2) {
        s0 += phi[bi + c] * phi[bj + c];
        s1 += phi[bi + c + 1] * phi[bj + c + 1];
      }
      if (c < f) s0 += phi[bi + c] * phi[bj + c];
      const s = s0 + s1;
      k[i * rows + j] = s;
      k[j * rows + i] = s;
    }
  }
  return k;
}
