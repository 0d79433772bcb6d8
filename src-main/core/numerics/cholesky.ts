// Dense symmetric positive-definite solves on plain Float64Array (row-major n×n), for the ridge systems of the
// regression. Written by hand because ml-matrix's generic loops are far slower here (bench/cholesky.bench.ts
// measures both, and the unblocked code this replaced); the loops run along contiguous rows so the JIT keeps them
// tight. The bulk of the factorisation (the panel solve and the trailing update), the many-right-hand-side
// forward substitution and both Gram matrices run as WebAssembly SIMD kernels (core/wasm/assembly/dense.ts) when
// they are on and the system fits: the same operations in the same order as the JavaScript here, so the same bits;
// the JavaScript stays as the fallback and as the kernels' oracle (setWebAssemblyKernels(false)). Tested against
// ml-matrix (test/core/numerics/cholesky.test.ts).
import { denseKernels, type DenseKernels } from '../wasm/dense.ts';

/** Columns per block of the blocked Cholesky (the panel's rows, kb doubles each, stay in the first cache levels). */
const BLOCK = 64;

/**
 * Smallest order handed to the WebAssembly kernels: below it, copying the matrix into the module's memory and back
 * costs about what the kernels save (bench/cholesky.bench.ts; common practice, no source).
 */
const KERNEL_MIN_ORDER = 128;

/**
 * Most bytes of module memory one factorisation or solve may reserve (256 MiB: a factorisation up to n ≈ 5,700).
 * The module keeps its memory once grown, so this bounds what it holds for the rest of the thread's life; larger
 * systems take the JavaScript path.
 */
const KERNEL_MAX_BYTES = 256 * 2 ** 20;

/**
 * Cholesky factor A = L Lᵀ, in place: the lower triangle of `a` becomes L (the strict upper triangle is left
 * untouched and must be ignored). Returns false when A is not positive definite (a pivot ≤ 0 or not finite).
 * Blocked, right-looking: factor a BLOCK-wide diagonal block, solve the panel below it against that block (copied
 * into a packed buffer, one row of BLOCK numbers after the other), then subtract the panel's outer product from the
 * trailing lower triangle — the bulk of the work, a small matrix product in 4 × 4 tiles of row pairs (16 running
 * sums per tile: each number loaded serves four products). Same result as the textbook order to round-off.
 * With the WebAssembly kernels the matrix is copied into the module's memory, factored there (the panel solve and
 * the trailing update as kernels, the diagonal block by the same JavaScript) and copied back: the same bits.
 */
export function choleskyInPlace(a: Float64Array, n: number): boolean {
  const kernels = n >= KERNEL_MIN_ORDER ? denseKernels() : null;
  if (kernels) {
    const done = choleskyInModule(kernels, a, n);
    if (done !== null) return done;
  }
  const packed = new Float64Array(Math.min(BLOCK, n) * Math.max(0, n - BLOCK));
  return factorBlocks(a, n, (k0, kb, r0) => {
    solvePanel(a, n, k0, kb, r0, packed);
    subtractPanelProduct(a, n, kb, r0, packed);
  });
}

/** The blocked loop: each diagonal block, then `belowBlock` (panel solve and trailing update) for the rows below it. */
function factorBlocks(a: Float64Array, n: number, belowBlock: (k0: number, kb: number, r0: number) => void): boolean {
  for (let k0 = 0; k0 < n; k0 += BLOCK) {
    const kb = Math.min(BLOCK, n - k0);
    if (!factorDiagonalBlock(a, n, k0, kb)) return false;
    const r0 = k0 + kb;
    if (r0 >= n) break;
    belowBlock(k0, kb, r0);
  }
  return true;
}

/**
 * choleskyInPlace in the kernels' memory: the matrix's lower triangle with four zero rows of padding below it (the
 * kernels work on whole groups of four rows; what they write past row n stays there), then the panel's tiles.
 * Null when that is more than KERNEL_MAX_BYTES or the module cannot grow (the caller takes the JavaScript path).
 */
function choleskyInModule(k: DenseKernels, a: Float64Array, n: number): boolean | null {
  const matrix = (n + 4) * n;
  const panelRows = roundUp(n - BLOCK, 4);
  const bytes = 8 * (matrix + panelRows * BLOCK);
  if (bytes > KERNEL_MAX_BYTES || !k.module.reserve(bytes)) return null;
  const at = k.module.heapBase;
  const x = at + 8 * matrix;
  const m = k.module.f64(at, matrix);
  // only the lower triangle is read and written (what the module holds above it is left as it was)
  for (let i = 0; i < n; i++) m.set(a.subarray(i * n, i * n + i + 1), i * n);
  m.fill(0, n * n);
  const ok = factorBlocks(m, n, (k0, kb, r0) => {
    const rows = roundUp(n - r0, 4);
    k.panelSolve(at, n, k0, kb, rows, x);
    k.trailingUpdate(at + 8 * (r0 * n + r0), n, x, rows, kb);
  });
  for (let i = 0; i < n; i++) a.set(m.subarray(i * n, i * n + i + 1), i * n);
  return ok;
}

/** The least multiple of `step` at or above v (0 for v ≤ 0). */
function roundUp(v: number, step: number): number {
  return Math.max(0, Math.ceil(v / step) * step);
}

/** Unblocked Cholesky of the kb × kb diagonal block at (k0, k0), whose earlier columns are already subtracted. */
function factorDiagonalBlock(a: Float64Array, n: number, k0: number, kb: number): boolean {
  for (let i = k0; i < k0 + kb; i++) {
    const ri = i * n;
    for (let j = k0; j <= i; j++) {
      const rj = j * n;
      let s0 = 0;
      let s1 = 0;
      let s2 = 0;
      let s3 = 0;
      let p = k0;
      for (; p + 3 < j; p += 4) {
        s0 += a[ri + p] * a[rj + p];
        s1 += a[ri + p + 1] * a[rj + p + 1];
        s2 += a[ri + p + 2] * a[rj + p + 2];
        s3 += a[ri + p + 3] * a[rj + p + 3];
      }
      for (; p < j; p++) s0 += a[ri + p] * a[rj + p];
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

/** Rows r0…n−1 of the block's columns: a[i, k0:k0+kb] ← a[i, k0:k0+kb] L₁₁⁻ᵀ, also into `packed` (row i − r0, kb wide). */
function solvePanel(a: Float64Array, n: number, k0: number, kb: number, r0: number, packed: Float64Array): void {
  for (let i = r0; i < n; i++) {
    const ri = i * n + k0;
    const pi = (i - r0) * kb;
    for (let j = 0; j < kb; j++) {
      const rj = (k0 + j) * n + k0;
      let s0 = 0;
      let s1 = 0;
      let s2 = 0;
      let s3 = 0;
      let p = 0;
      for (; p + 3 < j; p += 4) {
        s0 += packed[pi + p] * a[rj + p];
        s1 += packed[pi + p + 1] * a[rj + p + 1];
        s2 += packed[pi + p + 2] * a[rj + p + 2];
        s3 += packed[pi + p + 3] * a[rj + p + 3];
      }
      for (; p < j; p++) s0 += packed[pi + p] * a[rj + p];
      const x = (a[ri + j] - (s0 + s1 + s2 + s3)) / a[rj + j];
      packed[pi + j] = x;
      a[ri + j] = x;
    }
  }
}

/** a[i][j] −= Σ_p P[i−r0][p] P[j−r0][p] for r0 ≤ j ≤ i < n (the lower triangle only), P the packed panel. */
function subtractPanelProduct(a: Float64Array, n: number, kb: number, r0: number, packed: Float64Array): void {
  const m = n - r0;
  let i = 0;
  for (; i + 3 < m; i += 4) {
    const a0 = i * kb;
    const a1 = a0 + kb;
    const a2 = a1 + kb;
    const a3 = a2 + kb;
    for (let j = 0; j <= i; j += 4) {
      const b0 = j * kb;
      const b1 = b0 + kb;
      const b2 = b1 + kb;
      const b3 = b2 + kb;
      let s00 = 0, s01 = 0, s02 = 0, s03 = 0, s10 = 0, s11 = 0, s12 = 0, s13 = 0;
      let s20 = 0, s21 = 0, s22 = 0, s23 = 0, s30 = 0, s31 = 0, s32 = 0, s33 = 0;
      for (let p = 0; p < kb; p++) {
        const x0 = packed[a0 + p];
        const x1 = packed[a1 + p];
        const x2 = packed[a2 + p];
        const x3 = packed[a3 + p];
        const y0 = packed[b0 + p];
        const y1 = packed[b1 + p];
        const y2 = packed[b2 + p];
        const y3 = packed[b3 + p];
        s00 += x0 * y0; s01 += x0 * y1; s02 += x0 * y2; s03 += x0 * y3;
        s10 += x1 * y0; s11 += x1 * y1; s12 += x1 * y2; s13 += x1 * y3;
        s20 += x2 * y0; s21 += x2 * y1; s22 += x2 * y2; s23 += x2 * y3;
        s30 += x3 * y0; s31 += x3 * y1; s32 += x3 * y2; s33 += x3 * y3;
      }
      const r = (r0 + i) * n + r0 + j;
      // a tile on the diagonal (j = i) touches only its lower triangle
      a[r] -= s00;
      a[r + n] -= s10;
      a[r + n + 1] -= s11;
      a[r + 2 * n] -= s20;
      a[r + 2 * n + 1] -= s21;
      a[r + 2 * n + 2] -= s22;
      a[r + 3 * n] -= s30;
      a[r + 3 * n + 1] -= s31;
      a[r + 3 * n + 2] -= s32;
      a[r + 3 * n + 3] -= s33;
      if (j < i) {
        a[r + 1] -= s01;
        a[r + 2] -= s02;
        a[r + 3] -= s03;
        a[r + n + 2] -= s12;
        a[r + n + 3] -= s13;
        a[r + 2 * n + 3] -= s23;
      }
    }
  }
  for (; i < m; i++) {
    const a0 = i * kb;
    for (let j = 0; j <= i; j++) {
      const b0 = j * kb;
      let s = 0;
      for (let p = 0; p < kb; p++) s += packed[a0 + p] * packed[b0 + p];
      a[(r0 + i) * n + r0 + j] -= s;
    }
  }
}

/**
 * Factor A + jitter·I with the smallest jitter from a geometric ladder that makes it positive definite
 * (starting at 0). `a` is not modified; returns the factor and the jitter used. Throws when even a jitter
 * of 1e-2 × mean diagonal fails (a broken system, not round-off).
 * `shift` (λ): factor A + λI instead, its diagonal entries a_ii + λ formed here as a copy of A shifted by the caller
 * would hold them, so the same bits (the jitter then scales with the mean of a_ii + λ). `into`: an n × n array to
 * write the factor into (written over; it becomes the factor returned), so that a caller solving many systems of one
 * order need not allocate one per system — each new array of millions of numbers costs about as much as copying it.
 */
export function choleskyWithJitter(a: Float64Array, n: number, options: { shift?: number; into?: Float64Array } = {}): { factor: Float64Array; jitter: number } {
  const shift = options.shift ?? 0;
  let meanDiag = 0;
  for (let i = 0; i < n; i++) meanDiag += shift === 0 ? a[i * n + i] : a[i * n + i] + shift;
  meanDiag = n > 0 ? Math.abs(meanDiag / n) : 1;
  if (!(meanDiag > 0)) meanDiag = 1;
  const ladder = [0, 1e-12, 1e-10, 1e-8, 1e-6, 1e-4, 1e-2];
  for (const rel of ladder) {
    const f = options.into && options.into.length >= n * n ? options.into.subarray(0, n * n) : new Float64Array(n * n);
    f.set(a.subarray(0, n * n));
    if (shift !== 0) for (let i = 0; i < n; i++) f[i * n + i] += shift;
    const jitter = rel * meanDiag;
    if (jitter > 0) for (let i = 0; i < n; i++) f[i * n + i] += jitter;
    if (choleskyInPlace(f, n)) return { factor: f, jitter };
  }
  throw new RangeError(`Cholesky: the ${n}×${n} system is not positive definite even with a jitter of 1e-2 × its mean diagonal`);
}

/**
 * Solve L z = b in place (forward substitution); L lower triangular, row-major. Each z[i] is
 * (b[i] − L[i][0]·z[0] − … − L[i][i−1]·z[i−1]) / L[i][i], subtracted in that order. Four rows at a time: their sums
 * over the z already known run side by side (four independent chains instead of one), then each takes the terms
 * of the rows just solved before it — every z[i] with the same operations in the same order, so the same bits as
 * one row at a time.
 */
export function forwardSubstitute(l: Float64Array, n: number, b: Float64Array): Float64Array {
  let i = 0;
  for (; i + 3 < n; i += 4) {
    const r0 = i * n;
    const r1 = r0 + n;
    const r2 = r1 + n;
    const r3 = r2 + n;
    let s0 = b[i];
    let s1 = b[i + 1];
    let s2 = b[i + 2];
    let s3 = b[i + 3];
    for (let k = 0; k < i; k++) {
      const x = b[k];
      s0 -= l[r0 + k] * x;
      s1 -= l[r1 + k] * x;
      s2 -= l[r2 + k] * x;
      s3 -= l[r3 + k] * x;
    }
    s0 /= l[r0 + i];
    s1 -= l[r1 + i] * s0;
    s1 /= l[r1 + i + 1];
    s2 -= l[r2 + i] * s0;
    s2 -= l[r2 + i + 1] * s1;
    s2 /= l[r2 + i + 2];
    s3 -= l[r3 + i] * s0;
    s3 -= l[r3 + i + 1] * s1;
    s3 -= l[r3 + i + 2] * s2;
    s3 /= l[r3 + i + 3];
    b[i] = s0;
    b[i + 1] = s1;
    b[i + 2] = s2;
    b[i + 3] = s3;
  }
  for (; i < n; i++) {
    const ri = i * n;
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[ri + k] * b[k];
    b[i] = s / l[ri + i];
  }
  return b;
}

/**
 * Solve L z = b in place for each of `rows` right-hand sides, the rows of `b` (row-major rows × n): four rows per
 * pass over L, so each number of L loaded serves four solves. Every row gets the same operations in the same
 * order as forwardSubstitute, so the same bits.
 */
export function forwardSubstituteRows(l: Float64Array, n: number, b: Float64Array, rows: number): Float64Array {
  const kernels = n >= ROWS_KERNEL_MIN_ORDER && rows >= ROWS_KERNEL_MIN_ROWS ? denseKernels() : null;
  if (kernels && forwardRowsInModule(kernels, l, n, b, rows)) return b;
  let r = 0;
  for (; r + 3 < rows; r += 4) {
    const o0 = r * n;
    const o1 = o0 + n;
    const o2 = o1 + n;
    const o3 = o2 + n;
    for (let i = 0; i < n; i++) {
      const ri = i * n;
      let s0 = b[o0 + i];
      let s1 = b[o1 + i];
      let s2 = b[o2 + i];
      let s3 = b[o3 + i];
      for (let k = 0; k < i; k++) {
        const x = l[ri + k];
        s0 -= x * b[o0 + k];
        s1 -= x * b[o1 + k];
        s2 -= x * b[o2 + k];
        s3 -= x * b[o3 + k];
      }
      const d = l[ri + i];
      b[o0 + i] = s0 / d;
      b[o1 + i] = s1 / d;
      b[o2 + i] = s2 / d;
      b[o3 + i] = s3 / d;
    }
  }
  for (; r < rows; r++) forwardSubstitute(l, n, b.subarray(r * n, (r + 1) * n));
  return b;
}

/**
 * Smallest order and number of right-hand sides for which forwardSubstituteRows copies L into the kernels' memory
 * (the copy costs about one solve; common practice, no source).
 */
const ROWS_KERNEL_MIN_ORDER = 64;
const ROWS_KERNEL_MIN_ROWS = 8;

/** Right-hand sides per call of the forward-substitution kernel (the module holds L and this many at once). */
const ROWS_PER_KERNEL_CALL = 256;

/**
 * forwardSubstituteRows in the kernels' memory: L, then up to ROWS_PER_KERNEL_CALL right-hand sides at a time in
 * groups of eight, interleaved (b[k] of the eight side by side; a last group short of eight padded with zeros,
 * whose results are dropped). False when that is more than KERNEL_MAX_BYTES or the module cannot grow.
 */
function forwardRowsInModule(k: DenseKernels, l: Float64Array, n: number, b: Float64Array, rows: number): boolean {
  const most = Math.min(rows, ROWS_PER_KERNEL_CALL);
  const bytes = 8 * (n * n + roundUp(most, 8) * n);
  if (bytes > KERNEL_MAX_BYTES || !k.module.reserve(bytes)) return false;
  const at = k.module.heapBase;
  const bt = at + 8 * n * n;
  const lm = k.module.f64(at, n * n);
  for (let i = 0; i < n; i++) lm.set(l.subarray(i * n, i * n + i + 1), i * n); // the kernel reads L's lower triangle only
  const t = k.module.f64(bt, roundUp(most, 8) * n);
  for (let r0 = 0; r0 < rows; r0 += most) {
    const count = Math.min(most, rows - r0);
    const groups = Math.ceil(count / 8);
    t.fill(0, 8 * n * (groups - 1));
    for (let r = 0; r < count; r++) {
      const o = 8 * n * (r >> 3) + (r & 7);
      for (let i = 0, src = (r0 + r) * n; i < n; i++) t[o + 8 * i] = b[src + i];
    }
    k.forwardRows(at, n, bt, groups);
    for (let r = 0; r < count; r++) {
      const o = 8 * n * (r >> 3) + (r & 7);
      for (let i = 0, dst = (r0 + r) * n; i < n; i++) b[dst + i] = t[o + 8 * i];
    }
  }
  return true;
}

/**
 * Solve Lᵀ x = z in place (back substitution): from the last row up, x[i] = z[i] / L[i][i], then row i of L times
 * x[i] is subtracted from the entries above. Two rows at a time: each entry above takes row i's term, then row
 * i − 1's, as one row at a time would — the same bits, with half the passes over z.
 */
export function backSubstitute(l: Float64Array, n: number, z: Float64Array): Float64Array {
  let i = n - 1;
  for (; i >= 1; i -= 2) {
    const ri = i * n;
    const rh = ri - n;
    const s = z[i] / l[ri + i];
    z[i] = s;
    const t = (z[i - 1] - l[ri + i - 1] * s) / l[rh + i - 1];
    z[i - 1] = t;
    // subtract columns i and i − 1 of Lᵀ (rows i and i − 1 of L) from the entries above, in that order
    for (let k = 0; k < i - 1; k++) z[k] = z[k] - l[ri + k] * s - l[rh + k] * t;
  }
  if (i === 0) z[0] /= l[0];
  return z;
}

/** Solve A x = b given A's Cholesky factor; returns a new array. */
export function choleskySolve(l: Float64Array, n: number, b: ArrayLike<number>): Float64Array {
  const x = Float64Array.from(b);
  forwardSubstitute(l, n, x);
  backSubstitute(l, n, x);
  return x;
}

/** Fewest columns for which gramOfColumns runs in the kernels' memory (common practice, no source). */
const COLUMNS_KERNEL_MIN = 32;
/** Rows of Φ per call of the column-Gram kernel (the module holds G and this strip of Φ, packed). */
const COLUMNS_ROWS_PER_CALL = 512;

/**
 * gramOfColumns in the kernels' memory: G (its order rounded up to four), then a strip of Φ's rows packed as
 * columns in groups of four (zero columns past f); each call continues G's sums over the next strip. False when
 * that is more than KERNEL_MAX_BYTES, the module cannot grow, or Φ holds a number that is not finite (the
 * JavaScript loop skips zero factors, which only a non-finite partner would notice).
 */
function gramOfColumnsInModule(k: DenseKernels, phi: Float64Array, rows: number, f: number, g: Float64Array): boolean {
  const f4 = roundUp(f, 4);
  const strip = Math.min(rows, COLUMNS_ROWS_PER_CALL);
  const bytes = 8 * (f4 * f4 + f4 * strip);
  if (bytes > KERNEL_MAX_BYTES) return false;
  for (let i = 0; i < rows * f; i++) if (!Number.isFinite(phi[i])) return false;
  if (!k.module.reserve(bytes)) return false;
  const at = k.module.heapBase;
  const x = at + 8 * f4 * f4;
  const c = k.module.f64(at, f4 * f4);
  c.fill(0);
  const t = k.module.f64(x, f4 * strip);
  for (let r0 = 0; r0 < rows; r0 += strip) {
    const count = Math.min(strip, rows - r0);
    // column q of the strip's row r at ((⌊q/4⌋·count + r)·4 + q mod 4)
    t.fill(0);
    for (let r = 0; r < count; r++) {
      const src = (r0 + r) * f;
      for (let q = 0; q < f; q++) t[((q >> 2) * count + r) * 4 + (q & 3)] = phi[src + q];
    }
    k.gramColumnsAdd(at, f4, x, count, f4 / 4);
  }
  for (let i = 0; i < f; i++) {
    for (let j = 0; j <= i; j++) {
      const v = c[i * f4 + j];
      g[i * f + j] = v;
      g[j * f + i] = v;
    }
  }
  return true;
}

/**
 * G = Φᵀ Φ (F×F) of a row-major rows×F matrix, both triangles filled: each entry summed over the rows in order
 * (in the kernels' memory too, four by four columns at a time — the same bits).
 */
export function gramOfColumns(phi: Float64Array, rows: number, f: number): Float64Array {
  const g = new Float64Array(f * f);
  const kernels = f >= COLUMNS_KERNEL_MIN && rows > 0 ? denseKernels() : null;
  if (kernels && gramOfColumnsInModule(kernels, phi, rows, f, g)) return g;
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

/** Fewest rows for which gramOfRows copies Φ into the kernels' memory (common practice, no source). */
const GRAM_KERNEL_MIN_ROWS = 16;

/** gramOfRows in the kernels' memory (Φ, then K); false when that is more than KERNEL_MAX_BYTES or it cannot grow. */
function gramOfRowsInModule(kn: DenseKernels, phi: Float64Array, rows: number, f: number, k: Float64Array): boolean {
  const bytes = 8 * (rows * f + rows * rows);
  if (bytes > KERNEL_MAX_BYTES || !kn.module.reserve(bytes)) return false;
  const at = kn.module.heapBase;
  const kAt = at + 8 * rows * f;
  kn.module.f64(at, rows * f).set(phi.subarray(0, rows * f));
  kn.gramRows(at, rows, f, kAt);
  k.set(kn.module.f64(kAt, rows * rows));
  return true;
}

/**
 * K = Φ Φᵀ (rows×rows) of a row-major rows×F matrix. Each entry sums its even and its odd columns apart and adds
 * the two (the order of one entry never changes, so K of a subset of rows is a selection of K's numbers); the
 * entries go in 2 × 2 tiles of row pairs, each number loaded serving two products (×2 against one entry at a time,
 * bench/cholesky.bench.ts). With the WebAssembly kernels, the same sums in the same order in SIMD registers (the
 * even and the odd sum of an entry in one register's two lanes).
 */
export function gramOfRows(phi: Float64Array, rows: number, f: number): Float64Array {
  const k = new Float64Array(rows * rows);
  const kernels = rows >= GRAM_KERNEL_MIN_ROWS ? denseKernels() : null;
  if (kernels && gramOfRowsInModule(kernels, phi, rows, f, k)) return k;
  const entry = (i: number, j: number) => {
    const bi = i * f;
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
  };
  let i = 0;
  for (; i + 1 < rows; i += 2) {
    const a0 = i * f;
    const a1 = a0 + f;
    for (let j = 0; j + 1 <= i; j += 2) {
      const b0 = j * f;
      const b1 = b0 + f;
      // (i, j), (i, j+1), (i+1, j), (i+1, j+1), each as two sums
      let p0 = 0, p1 = 0, q0 = 0, q1 = 0, r0 = 0, r1 = 0, t0 = 0, t1 = 0;
      let c = 0;
      for (; c + 1 < f; c += 2) {
        const x0 = phi[a0 + c];
        const x1 = phi[a0 + c + 1];
        const y0 = phi[b0 + c];
        const y1 = phi[b0 + c + 1];
        const u0 = phi[a1 + c];
        const u1 = phi[a1 + c + 1];
        const v0 = phi[b1 + c];
        const v1 = phi[b1 + c + 1];
        p0 += x0 * y0;
        p1 += x1 * y1;
        q0 += x0 * v0;
        q1 += x1 * v1;
        r0 += u0 * y0;
        r1 += u1 * y1;
        t0 += u0 * v0;
        t1 += u1 * v1;
      }
      if (c < f) {
        p0 += phi[a0 + c] * phi[b0 + c];
        q0 += phi[a0 + c] * phi[b1 + c];
        r0 += phi[a1 + c] * phi[b0 + c];
        t0 += phi[a1 + c] * phi[b1 + c];
      }
      const sp = p0 + p1;
      const sq = q0 + q1;
      const sr = r0 + r1;
      const st = t0 + t1;
      k[i * rows + j] = sp;
      k[j * rows + i] = sp;
      k[i * rows + j + 1] = sq;
      k[(j + 1) * rows + i] = sq;
      k[(i + 1) * rows + j] = sr;
      k[j * rows + i + 1] = sr;
      k[(i + 1) * rows + j + 1] = st;
      k[(j + 1) * rows + i + 1] = st;
    }
    entry(i, i);
    entry(i + 1, i);
    entry(i + 1, i + 1);
  }
  if (i < rows) for (let j = 0; j <= i; j++) entry(i, j);
  return k;
}
