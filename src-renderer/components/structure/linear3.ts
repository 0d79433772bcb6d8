// Small 3×3 linear algebra for drawing (row-major, length 9, as `Mat3` in core/geometry/frame.ts): products, rotations
// about an axis, re-orthonormalisation of an accumulated view rotation, and the symmetric eigenproblem (cyclic
// Jacobi, delegated to the pure core/dielectric/tensor.ts so that drawing and tables use one solver).
import { symmetricEigen } from '../../../src-main/core/dielectric/tensor.ts';

export type M3 = Float64Array | number[];
export type V3 = [number, number, number];

export function identity3(): Float64Array {
  return Float64Array.of(1, 0, 0, 0, 1, 0, 0, 0, 1);
}

export function multiply3(a: ArrayLike<number>, b: ArrayLike<number>): Float64Array {
  const c = new Float64Array(9);
  for (let i = 0; i < 3; i++)
    for (let j = 0; j < 3; j++) c[3 * i + j] = a[3 * i] * b[j] + a[3 * i + 1] * b[3 + j] + a[3 * i + 2] * b[6 + j];
  return c;
}

export function transpose3(a: ArrayLike<number>): Float64Array {
  return Float64Array.of(a[0], a[3], a[6], a[1], a[4], a[7], a[2], a[5], a[8]);
}

export function apply3(a: ArrayLike<number>, v: ArrayLike<number>): V3 {
  return [
    a[0] * v[0] + a[1] * v[1] + a[2] * v[2],
    a[3] * v[0] + a[4] * v[1] + a[5] * v[2],
    a[6] * v[0] + a[7] * v[1] + a[8] * v[2],
  ];
}

export function inverse3(a: ArrayLike<number>): Float64Array {
  const [a0, a1, a2, a3, a4, a5, a6, a7, a8] = Array.from({ length: 9 }, (_, i) => a[i]);
  const c0 = a4 * a8 - a5 * a7;
  const c1 = a5 * a6 - a3 * a8;
  const c2 = a3 * a7 - a4 * a6;
  const det = a0 * c0 + a1 * c1 + a2 * c2;
  if (det === 0 || !Number.isFinite(det)) throw new RangeError('inverse3: the matrix is singular (a flat or empty cell?)');
  const r = 1 / det;
  return Float64Array.of(
    c0 * r, (a2 * a7 - a1 * a8) * r, (a1 * a5 - a2 * a4) * r,
    c1 * r, (a0 * a8 - a2 * a6) * r, (a2 * a3 - a0 * a5) * r,
    c2 * r, (a1 * a6 - a0 * a7) * r, (a0 * a4 - a1 * a3) * r,
  );
}

/** Rotation by `angle` (radians, right-handed) about a unit axis (Rodrigues' formula). */
export function axisRotation(axis: V3, angle: number): Float64Array {
  const n = Math.hypot(axis[0], axis[1], axis[2]);
  const [x, y, z] = [axis[0] / n, axis[1] / n, axis[2] / n];
  const c = Math.cos(angle);
  const s = Math.sin(angle);
  const t = 1 - c;
  return Float64Array.of(
    t * x * x + c, t * x * y - s * z, t * x * z + s * y,
    t * x * y + s * z, t * y * y + c, t * y * z - s * x,
    t * x * z - s * y, t * y * z + s * x, t * z * z + c,
  );
}

/** Gram–Schmidt on the rows, so a rotation built from many small steps stays a rotation. */
export function orthonormalise3(r: ArrayLike<number>): Float64Array {
  const a: V3 = [r[0], r[1], r[2]];
  const na = Math.hypot(...a);
  const u: V3 = [a[0] / na, a[1] / na, a[2] / na];
  const b: V3 = [r[3], r[4], r[5]];
  const d = u[0] * b[0] + u[1] * b[1] + u[2] * b[2];
  const b2: V3 = [b[0] - d * u[0], b[1] - d * u[1], b[2] - d * u[2]];
  const nb = Math.hypot(...b2);
  const v: V3 = [b2[0] / nb, b2[1] / nb, b2[2] / nb];
  const w: V3 = [u[1] * v[2] - u[2] * v[1], u[2] * v[0] - u[0] * v[2], u[0] * v[1] - u[1] * v[0]];
  return Float64Array.of(...u, ...v, ...w);
}

export interface Eigen3 {
  /** Eigenvalues, ascending. */
  values: V3;
  /** Eigenvectors as columns (row-major storage): vector k is (v[k], v[3+k], v[6+k]). */
  vectors: Float64Array;
}

/**
 * Eigen-decomposition of a symmetric 3×3 matrix by cyclic Jacobi rotations. The input's symmetric part is used
 * (½(T + Tᵀ)), so a slightly asymmetric tensor from a file is handled; values ascending, vectors as columns.
 */
export function symmetricEigen3(t: ArrayLike<number>): Eigen3 {
  // The science core's Jacobi solver (pure, no Node APIs), so the ellipsoids and the tables share one method.
  const a = Float64Array.from(t);
  // Drawing code checks for bad tensors itself; keep NaN in, NaN out rather than throwing mid-render.
  if (!a.every(Number.isFinite)) return { values: [NaN, NaN, NaN], vectors: identity3() };
  const { values, vectors } = symmetricEigen(a);
  return { values: [values[0], values[1], values[2]], vectors };
}
