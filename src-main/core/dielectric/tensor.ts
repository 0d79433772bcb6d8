// 3×3 tensors (Float64Array(9), row-major): small matrix helpers, the orthonormal split of a symmetric tensor
// into its irreducible parts (λ = 0 and λ = 2), rotations, the symmetric eigenproblem (cyclic Jacobi), the
// usual invariants, and reading a tensor from 9 or 6 (Voigt) numbers with a symmetry check.
// Conventions: docs/science-conventions.md §"Irreducible parts".
import { InputError, type Where } from '../errors.ts';
import type { Mat3 } from '../geometry/frame.ts';

// ---------------------------------------------------------------------------------------------------------
// Matrix helpers

export function mat3Identity(): Mat3 {
  return Float64Array.of(1, 0, 0, 0, 1, 0, 0, 0, 1);
}

export function mat3Multiply(A: Mat3, B: Mat3, out: Mat3 = new Float64Array(9)): Mat3 {
  const r = new Float64Array(9);
  for (let i = 0; i < 3; i++) {
    for (let j = 0; j < 3; j++) r[3 * i + j] = A[3 * i] * B[j] + A[3 * i + 1] * B[3 + j] + A[3 * i + 2] * B[6 + j];
  }
  out.set(r);
  return out;
}

export function mat3Transpose(A: Mat3): Mat3 {
  return Float64Array.of(A[0], A[3], A[6], A[1], A[4], A[7], A[2], A[5], A[8]);
}

export function mat3Determinant(A: Mat3): number {
  return A[0] * (A[4] * A[8] - A[5] * A[7]) - A[1] * (A[3] * A[8] - A[5] * A[6]) + A[2] * (A[3] * A[7] - A[4] * A[6]);
}

export function mat3Trace(A: Mat3): number {
  return A[0] + A[4] + A[8];
}

export function mat3Add(A: Mat3, B: Mat3): Mat3 {
  const r = new Float64Array(9);
  for (let i = 0; i < 9; i++) r[i] = A[i] + B[i];
  return r;
}

export function mat3Sub(A: Mat3, B: Mat3): Mat3 {
  const r = new Float64Array(9);
  for (let i = 0; i < 9; i++) r[i] = A[i] - B[i];
  return r;
}

/** Element-wise mean of 3×3 matrices (e.g. ε over the frames of a set). */
export function mat3Mean(ts: ArrayLike<number>[]): Mat3 {
  const m = new Float64Array(9);
  for (const t of ts) for (let k = 0; k < 9; k++) m[k] += t[k] / ts.length;
  return m;
}

export function mat3Scale(A: Mat3, s: number): Mat3 {
  const r = new Float64Array(9);
  for (let i = 0; i < 9; i++) r[i] = A[i] * s;
  return r;
}

/** Matrix–vector product A v. */
export function mat3Apply(A: Mat3, v: ArrayLike<number>): Float64Array {
  return Float64Array.of(
    A[0] * v[0] + A[1] * v[1] + A[2] * v[2],
    A[3] * v[0] + A[4] * v[1] + A[5] * v[2],
    A[6] * v[0] + A[7] * v[1] + A[8] * v[2],
  );
}

/** Frobenius norm. */
export function mat3Norm(A: Mat3): number {
  let s = 0;
  for (let i = 0; i < 9; i++) s += A[i] * A[i];
  return Math.sqrt(s);
}

/**
 * Inverse by the adjugate. Refuses a singular or numerically singular matrix (|det| ≤ 1e-14 ‖A‖³, i.e. the
 * inverse would carry no correct digits) with a RangeError naming `what`.
 */
export function mat3Inverse(A: Mat3, what = 'matrix'): Mat3 {
  const det = mat3Determinant(A);
  const n = mat3Norm(A);
  if (!Number.isFinite(det) || Math.abs(det) <= 1e-14 * n * n * n) {
    throw new RangeError(`${what} is singular (determinant ${det.toExponential(3)}) and cannot be inverted`);
  }
  const inv = Float64Array.of(
    A[4] * A[8] - A[5] * A[7], A[2] * A[7] - A[1] * A[8], A[1] * A[5] - A[2] * A[4],
    A[5] * A[6] - A[3] * A[8], A[0] * A[8] - A[2] * A[6], A[2] * A[3] - A[0] * A[5],
    A[3] * A[7] - A[4] * A[6], A[1] * A[6] - A[0] * A[7], A[0] * A[4] - A[1] * A[3],
  );
  for (let i = 0; i < 9; i++) inv[i] /= det;
  return inv;
}

/** The helpers under one name, for call sites that prefer `mat3.multiply(A, B)`. */
export const mat3 = {
  identity: mat3Identity,
  multiply: mat3Multiply,
  transpose: mat3Transpose,
  inverse: mat3Inverse,
  determinant: mat3Determinant,
  trace: mat3Trace,
  add: mat3Add,
  sub: mat3Sub,
  scale: mat3Scale,
  apply: mat3Apply,
  norm: mat3Norm,
} as const;

// ---------------------------------------------------------------------------------------------------------
// Irreducible parts

const S2 = Math.SQRT2;
const S3 = Math.sqrt(3);
const S6 = Math.sqrt(6);

/**
 * [T⁰, T²₋₂, T²₋₁, T²₀, T²₁, T²₂] of a 3×3 tensor, an orthonormal split (Σ parts² = ‖T‖²_F for symmetric T):
 *   T⁰ = tr/√3;  T²₋₂ = √2 Txy;  T²₋₁ = √2 Tyz;  T²₀ = (2Tzz − Txx − Tyy)/√6;  T²₁ = √2 Txz;  T²₂ = (Txx − Tyy)/√2.
 * The order follows the real harmonics, so for T = r⊗r, T²_μ = √(8π/15) r² Y_2μ(r̂). A non-symmetric T is
 * read through its symmetric part (off-diagonal pairs averaged); its antisymmetric (λ = 1) part is dropped.
 */
export function toIrreducible(T: Mat3, out: Float64Array = new Float64Array(6)): Float64Array {
  const xy = (T[1] + T[3]) / 2, yz = (T[5] + T[7]) / 2, xz = (T[2] + T[6]) / 2;
  out[0] = (T[0] + T[4] + T[8]) / S3;
  out[1] = S2 * xy;
  out[2] = S2 * yz;
  out[3] = (2 * T[8] - T[0] - T[4]) / S6;
  out[4] = S2 * xz;
  out[5] = (T[0] - T[4]) / S2;
  return out;
}

/** The symmetric tensor with the given irreducible parts (inverse of toIrreducible). */
export function fromIrreducible(parts: ArrayLike<number>): Mat3 {
  if (parts.length !== 6) throw new RangeError(`fromIrreducible: need 6 parts [T0, T2_-2..T2_2], got ${parts.length}`);
  const out = new Float64Array(9);
  fromIrreducibleAt(parts, 0, out, 0, 1);
  return out;
}

/**
 * fromIrreducible of parts[from…from+6) into out[at…at+9), each entry times `scale`: for many tensors side by side
 * (per-atom contributions) without a new array per tensor. Scale 1 leaves every entry as it is (x·1 = x).
 */
export function fromIrreducibleAt(parts: ArrayLike<number>, from: number, out: Float64Array, at: number, scale: number): void {
  const iso = parts[from] / S3;
  const zz = (2 * parts[from + 3]) / S6;
  const xx = (-zz + S2 * parts[from + 5]) / 2;
  const yy = (-zz - S2 * parts[from + 5]) / 2;
  const xy = parts[from + 1] / S2, yz = parts[from + 2] / S2, xz = parts[from + 4] / S2;
  out[at] = (iso + xx) * scale;
  out[at + 1] = xy * scale;
  out[at + 2] = xz * scale;
  out[at + 3] = xy * scale;
  out[at + 4] = (iso + yy) * scale;
  out[at + 5] = yz * scale;
  out[at + 6] = xz * scale;
  out[at + 7] = yz * scale;
  out[at + 8] = (iso + zz) * scale;
}

/** R T Rᵀ: the tensor of a rotated structure (R maps old Cartesian coordinates to new ones). */
export function rotateTensor(T: Mat3, R: Mat3): Mat3 {
  return mat3Multiply(mat3Multiply(R, T), mat3Transpose(R));
}

// ---------------------------------------------------------------------------------------------------------
// Symmetric eigenproblem

export interface SymmetricEigen {
  /** Principal values, ascending. */
  values: Float64Array;
  /** Orthonormal eigenvectors as the COLUMNS of a right-handed (det +1) matrix, in the order of `values`. */
  vectors: Mat3;
}

/**
 * Eigen-decomposition of a symmetric 3×3 tensor by cyclic Jacobi rotations (Golub & Van Loan, Matrix
 * Computations, 4th ed., §8.5.3). Only the symmetric part of T is used. Signs are fixed deterministically:
 * the first two columns have their largest-magnitude component positive, the third is their cross product.
 */
export function symmetricEigen(T: Mat3): SymmetricEigen {
  for (let i = 0; i < 9; i++) {
    if (!Number.isFinite(T[i])) throw new RangeError(`symmetricEigen: non-finite tensor entry ${T[i]}`);
  }
  // rows in typed arrays: one hidden class whatever the numbers (plain arrays of small integers or doubles each
  // deoptimised this function once more in a fresh thread)
  const a = [
    Float64Array.of(T[0], (T[1] + T[3]) / 2, (T[2] + T[6]) / 2),
    Float64Array.of((T[1] + T[3]) / 2, T[4], (T[5] + T[7]) / 2),
    Float64Array.of((T[2] + T[6]) / 2, (T[5] + T[7]) / 2, T[8]),
  ];
  const v = [Float64Array.of(1, 0, 0), Float64Array.of(0, 1, 0), Float64Array.of(0, 0, 1)];
  const scale = Math.max(Math.abs(a[0][0]), Math.abs(a[1][1]), Math.abs(a[2][2]), Math.abs(a[0][1]), Math.abs(a[0][2]), Math.abs(a[1][2]));
  for (let sweep = 0; sweep < 50 && scale > 0; sweep++) {
    const off = Math.abs(a[0][1]) + Math.abs(a[0][2]) + Math.abs(a[1][2]);
    if (off <= 1e-300 || off <= 1e-17 * scale) break;
    for (const [p, q] of [[0, 1], [0, 2], [1, 2]] as const) {
      const apq = a[p][q];
      if (apq === 0) continue;
      // Rotation angle that zeroes a[p][q] (the smaller root keeps it stable).
      const theta = (a[q][q] - a[p][p]) / (2 * apq);
      const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
      const c = 1 / Math.sqrt(t * t + 1);
      const s = t * c;
      for (let k = 0; k < 3; k++) {
        const akp = a[k][p], akq = a[k][q];
        a[k][p] = c * akp - s * akq;
        a[k][q] = s * akp + c * akq;
      }
      for (let k = 0; k < 3; k++) {
        const apk = a[p][k], aqk = a[q][k];
        a[p][k] = c * apk - s * aqk;
        a[q][k] = s * apk + c * aqk;
      }
      for (let k = 0; k < 3; k++) {
        const vkp = v[k][p], vkq = v[k][q];
        v[k][p] = c * vkp - s * vkq;
        v[k][q] = s * vkp + c * vkq;
      }
    }
  }
  const order = [0, 1, 2].sort((i, j) => a[i][i] - a[j][j]);
  const values = Float64Array.from(order, (i) => a[i][i]);
  const column = (i: number) => Float64Array.of(v[0][i], v[1][i], v[2][i]);
  const cols = [column(order[0]), column(order[1]), column(order[2])];
  for (let c = 0; c < 2; c++) {
    const col = cols[c];
    let big = 0;
    for (let k = 1; k < 3; k++) if (Math.abs(col[k]) > Math.abs(col[big]) + 1e-12) big = k;
    if (col[big] < 0) for (let k = 0; k < 3; k++) col[k] = -col[k];
  }
  const [e0, e1] = cols;
  cols[2] = Float64Array.of(e0[1] * e1[2] - e0[2] * e1[1], e0[2] * e1[0] - e0[0] * e1[2], e0[0] * e1[1] - e0[1] * e1[0]);
  const vectors = new Float64Array(9);
  for (let j = 0; j < 3; j++) for (let k = 0; k < 3; k++) vectors[3 * k + j] = cols[j][k];
  return { values, vectors };
}

/** Q diag(f(λ)) Qᵀ for a symmetric tensor: a function of the matrix, exact through its eigen-decomposition. */
export function symmetricFunction(T: Mat3, f: (value: number, index: number) => number): Mat3 {
  const { values, vectors: Q } = symmetricEigen(T);
  const fv = Float64Array.from(values, (x, i) => f(x, i));
  const r = new Float64Array(9);
  for (let i = 0; i < 3; i++) {
    for (let j = i; j < 3; j++) {
      let s = 0;
      for (let k = 0; k < 3; k++) s += Q[3 * i + k] * fv[k] * Q[3 * j + k];
      r[3 * i + j] = s;
      r[3 * j + i] = s;
    }
  }
  return r;
}

// ---------------------------------------------------------------------------------------------------------
// Invariants

/** tr(T)/3: the isotropic (mean) polarisability or mean dielectric constant. */
export function isotropicMean(T: Mat3): number {
  return (T[0] + T[4] + T[8]) / 3;
}

/**
 * The polarisability anisotropy invariant Δ = √(½[(λ1−λ2)² + (λ2−λ3)² + (λ3−λ1)²]) of the principal values;
 * equal to √(3/2)·‖T − (tr T/3) I‖_F = √(3/2)·‖T²‖, computed that way (no eigenvalues needed). Zero for an
 * isotropic tensor; for an axial tensor diag(a, a, b) it is |b − a|.
 */
export function anisotropy(T: Mat3): number {
  return anisotropyOfParts(toIrreducible(T));
}

/** tr/3 of the tensor with irreducible parts [T⁰, T²₋₂…T²₂] (T⁰ = tr/√3). */
export function isotropicOfParts(parts: ArrayLike<number>): number {
  return parts[0] / S3;
}

/** The anisotropy Δ = √(3/2)·‖T²‖ (see `anisotropy`) of the tensor with irreducible parts [T⁰, T²₋₂…T²₂]. */
export function anisotropyOfParts(p: ArrayLike<number>): number {
  return Math.sqrt(1.5 * (p[1] * p[1] + p[2] * p[2] + p[3] * p[3] + p[4] * p[4] + p[5] * p[5]));
}

/**
 * The Cartesian components xx, yy, zz, xy, xz, yz of the anisotropic part T − (tr T/3) I of the tensor with
 * irreducible parts [T⁰, T²₋₂…T²₂]: what a user reads off a table of the tensor, minus its mean.
 */
export function anisotropicComponentsOfParts(p: ArrayLike<number>): number[] {
  const A = fromIrreducible([0, p[1], p[2], p[3], p[4], p[5]]);
  return [A[0], A[4], A[8], A[1], A[2], A[5]];
}

// ---------------------------------------------------------------------------------------------------------
// Reading and writing

/** Relative asymmetry above which tensor input is rejected rather than symmetrised. */
export const SYMMETRY_TOLERANCE = 1e-6;

/**
 * A symmetric tensor from 9 numbers (row-major xx xy xz yx yy yz zx zy zz) or 6 in Voigt order
 * (xx yy zz yz xz xy). Nine numbers must be symmetric to a relative 1e-6 (of the largest entry); then they are
 * symmetrised. Anything else is an InputError saying where.
 */
export function tensorFromValues(values: ArrayLike<number>, where: Where = {}): Mat3 {
  const n = values.length;
  for (let i = 0; i < n; i++) {
    if (typeof values[i] !== 'number' || !Number.isFinite(values[i])) {
      throw new InputError(`tensor component ${i + 1} is not a finite number (${String(values[i])})`, where, 'give plain decimal numbers');
    }
  }
  if (n === 6) {
    const [xx, yy, zz, yz, xz, xy] = Array.from(values);
    return Float64Array.of(xx, xy, xz, xy, yy, yz, xz, yz, zz);
  }
  if (n !== 9) {
    throw new InputError(`a tensor needs 9 numbers (row-major) or 6 (Voigt: xx yy zz yz xz xy), got ${n}`, where, 'check the property holds a 3×3 tensor');
  }
  let big = 0;
  for (let i = 0; i < 9; i++) big = Math.max(big, Math.abs(values[i]));
  const T = Float64Array.from(values);
  for (const [i, j] of [[1, 3], [2, 6], [5, 7]]) {
    const diff = Math.abs(T[i] - T[j]);
    if (diff > SYMMETRY_TOLERANCE * big) {
      const names = ['xx', 'xy', 'xz', 'yx', 'yy', 'yz', 'zx', 'zy', 'zz'];
      throw new InputError(
        `tensor is not symmetric: ${names[i]} = ${T[i]} but ${names[j]} = ${T[j]} (relative difference ${(diff / big).toExponential(2)})`,
        where,
        'polarisability and dielectric tensors must be symmetric; check the component order (row-major) in the file',
      );
    }
    const mean = (T[i] + T[j]) / 2;
    T[i] = mean;
    T[j] = mean;
  }
  return T;
}

/** The 6 Voigt components xx yy zz yz xz xy of a (symmetric) tensor; off-diagonals averaged. */
export function tensorToVoigt(T: Mat3): Float64Array {
  return Float64Array.of(T[0], T[4], T[8], (T[5] + T[7]) / 2, (T[2] + T[6]) / 2, (T[1] + T[3]) / 2);
}
