// Small 3×3 linear algebra for drawing (row-major, length 9, as `Mat3` in core/frame.ts): products, rotations
// about an axis, re-orthonormalisation of an accumulated view rotation, and the symmetric eigenproblem (cyclic
// Jacobi). The renderer sees only the API's types, so it carries this little copy instead of importing core.

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
  const a = new Float64Array(9);
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) a[3 * i + j] = 0.5 * (t[3 * i + j] + t[3 * j + i]);
  const v = identity3();
  for (let sweep = 0; sweep < 50; sweep++) {
    const off = a[1] * a[1] + a[2] * a[2] + a[5] * a[5];
    const scale = a[0] * a[0] + a[4] * a[4] + a[8] * a[8] + off;
    if (off <= 1e-30 * scale || off === 0) break;
    for (const [p, q] of [
      [0, 1],
      [0, 2],
      [1, 2],
    ] as const) {
      const apq = a[3 * p + q];
      if (apq === 0) continue;
      const theta = (a[3 * q + q] - a[3 * p + p]) / (2 * apq);
      const tt = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
      const c = 1 / Math.sqrt(tt * tt + 1);
      const s = tt * c;
      for (let k = 0; k < 3; k++) {
        const akp = a[3 * k + p];
        const akq = a[3 * k + q];
        a[3 * k + p] = c * akp - s * akq;
        a[3 * k + q] = s * akp + c * akq;
      }
      for (let k = 0; k < 3; k++) {
        const apk = a[3 * p + k];
        const aqk = a[3 * q + k];
        a[3 * p + k] = c * apk - s * aqk;
        a[3 * q + k] = s * apk + c * aqk;
      }
      for (let k = 0; k < 3; k++) {
        const vkp = v[3 * k + p];
        const vkq = v[3 * k + q];
        v[3 * k + p] = c * vkp - s * vkq;
        v[3 * k + q] = s * vkp + c * vkq;
      }
    }
  }
  const order = [0, 1, 2].sort((i, j) => a[4 * i] - a[4 * j]);
  const vectors = new Float64Array(9);
  order.forEach((src, dst) => {
    for (let k = 0; k < 3; k++) vectors[3 * k + dst] = v[3 * k + src];
  });
  return { values: [a[4 * order[0]], a[4 * order[1]], a[4 * order[2]]], vectors };
}
