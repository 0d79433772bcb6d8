// One equivariance harness for features, kernels and whole models. It transforms a frame (positions AND cell)
// by an orthogonal matrix R (a random rotation, or an improper one: mirror, inversion), evaluates the quantity
// under test on both frames, and measures how far the transformed result is from D^λ(R) applied to the original.
//
// A quantity declares how it transforms by listing its axes: an axis of order λ has length 2λ+1 and the given
// stride; D^λ(R) of core/descriptors/wigner.ts (Y_lm(R r̂) = Σ_m' D_mm' Y_lm'(r̂)) acts on each listed axis. Examples:
//   features of λ = 2, layout (e·5 + μ)·n + f          → axes [{ lambda: 2, stride: n, length: 5 }]
//   a tensor kernel K_{μμ'}(i, j) stored (μ·5 + μ')    → axes [{ lambda: 2, stride: 5 }, { lambda: 2, stride: 1 }]
//   an invariant (λ = 0 features, a scalar kernel)      → axes []
// For a proper tensor D^λ(R) with det R = −1 is what wignerDReal returns ((−1)^λ on inversion); a pseudo-tensor
// would need an extra det R, so improper R checks parity too.
import type { Frame, Mat3 } from '../../src-main/core/geometry/frame.ts';
import { makeFrame } from '../../src-main/core/geometry/frame.ts';
import { wignerDReal, randomRotation } from '../../src-main/core/descriptors/wigner.ts';
import type { Rng } from '../../src-main/core/numerics/random.ts';

export interface TransformAxis {
  lambda: 0 | 1 | 2 | 3 | 4;
  /** Distance in the flat array between μ and μ+1 on this axis. */
  stride: number;
}

export interface Equivariant {
  data: ArrayLike<number>;
  axes: TransformAxis[];
}

/** Applies R to every position and every lattice vector (rows of the cell); species, pbc, info kept. */
export function transformFrame(frame: Frame, R: Mat3): Frame {
  const N = frame.species.length;
  const pos = new Float64Array(3 * N);
  const x = frame.positions;
  for (let i = 0; i < N; i++) {
    for (let k = 0; k < 3; k++) pos[3 * i + k] = R[3 * k] * x[3 * i] + R[3 * k + 1] * x[3 * i + 1] + R[3 * k + 2] * x[3 * i + 2];
  }
  let cell: Float64Array | null = null;
  if (frame.cell) {
    const H = frame.cell;
    cell = new Float64Array(9);
    for (let a = 0; a < 3; a++) {
      for (let k = 0; k < 3; k++) cell[3 * a + k] = R[3 * k] * H[3 * a] + R[3 * k + 1] * H[3 * a + 1] + R[3 * k + 2] * H[3 * a + 2];
    }
  }
  const out = makeFrame(frame.species, pos, cell);
  out.pbc = [...frame.pbc];
  return out;
}

/** Shifts every position by t (cell unchanged). */
export function translateFrame(frame: Frame, t: [number, number, number]): Frame {
  const out = makeFrame(frame.species, frame.positions, frame.cell);
  out.pbc = [...frame.pbc];
  for (let i = 0; i < frame.species.length; i++) for (let k = 0; k < 3; k++) out.positions[3 * i + k] += t[k];
  return out;
}

/** Reorders atoms: atom k of the result is atom order[k] of the input. */
export function permuteFrame(frame: Frame, order: number[]): Frame {
  const pos = new Float64Array(3 * order.length);
  order.forEach((j, k) => pos.set(frame.positions.subarray(3 * j, 3 * j + 3), 3 * k));
  const out = makeFrame(order.map((j) => frame.species[j]), pos, frame.cell);
  out.pbc = [...frame.pbc];
  return out;
}

export const INVERSION: Mat3 = Float64Array.of(-1, 0, 0, 0, -1, 0, 0, 0, -1);
/** Mirror in the plane normal to (1, 2, −1)/√6 (a generic improper transformation). */
export const MIRROR: Mat3 = (() => {
  const n = [1 / Math.sqrt(6), 2 / Math.sqrt(6), -1 / Math.sqrt(6)];
  const M = new Float64Array(9);
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) M[3 * i + j] = (i === j ? 1 : 0) - 2 * n[i] * n[j];
  return M;
})();

/** D^λ(R) applied on each listed axis of q (every other index untouched). */
export function applyWigner(q: Equivariant, R: Mat3): Float64Array {
  let cur = Float64Array.from(q.data);
  for (const axis of q.axes) {
    if (axis.lambda === 0) continue;
    const D = wignerDReal(axis.lambda, R);
    const size = 2 * axis.lambda + 1;
    const next = new Float64Array(cur.length);
    const block = size * axis.stride;
    if (cur.length % block !== 0) throw new RangeError(`applyWigner: length ${cur.length} is not a multiple of (2λ+1)·stride = ${block}`);
    for (let outer = 0; outer < cur.length; outer += block) {
      for (let inner = 0; inner < axis.stride; inner++) {
        for (let mu = 0; mu < size; mu++) {
          let s = 0;
          for (let nu = 0; nu < size; nu++) s += D[mu * size + nu] * cur[outer + nu * axis.stride + inner];
          next[outer + mu * axis.stride + inner] = s;
        }
      }
    }
    cur = next;
  }
  return cur;
}

/**
 * Largest |q(R·frame) − D(R) q(frame)| over every quantity returned by `evaluate`, per quantity name, for each
 * given transformation. `evaluate` must return the same names, lengths and axes for both frames.
 */
export function equivarianceError(
  evaluate: (frame: Frame) => Record<string, Equivariant>,
  frame: Frame,
  transforms: Mat3[],
): Record<string, number> {
  const base = evaluate(frame);
  const worst: Record<string, number> = {};
  for (const name of Object.keys(base)) worst[name] = 0;
  for (const R of transforms) {
    const moved = evaluate(transformFrame(frame, R));
    for (const [name, q] of Object.entries(base)) {
      const expected = applyWigner(q, R);
      const got = moved[name];
      if (!got || got.data.length !== expected.length) throw new Error(`equivarianceError: ${name} changed shape under the transformation`);
      for (let k = 0; k < expected.length; k++) worst[name] = Math.max(worst[name], Math.abs(got.data[k] - expected[k]));
    }
  }
  return worst;
}

/** `count` random rotations from the seeded generator. */
export function randomRotations(rng: Rng, count: number): Mat3[] {
  return Array.from({ length: count }, () => randomRotation(rng));
}

/** Atoms placed uniformly in a sphere of radius `radius`, at least `minDistance` apart. */
export function randomCluster(rng: Rng, species: string[], radius: number, minDistance = 0.8): Frame {
  const pos: number[] = [];
  for (const _ of species) {
    for (let attempt = 0; ; attempt++) {
      if (attempt > 10000) throw new Error('randomCluster: could not place atoms; use a larger radius');
      const p = [0, 1, 2].map(() => (2 * rng.uniform() - 1) * radius);
      if (Math.hypot(p[0], p[1], p[2]) > radius) continue;
      let ok = true;
      for (let k = 0; k < pos.length; k += 3) if (Math.hypot(p[0] - pos[k], p[1] - pos[k + 1], p[2] - pos[k + 2]) < minDistance) ok = false;
      if (!ok) continue;
      pos.push(...p);
      break;
    }
  }
  return makeFrame(species, pos, null);
}

/** Atoms in a random (skewed, triclinic) periodic cell with the given lattice lengths, at least minDistance apart. */
export function randomPeriodicFrame(rng: Rng, species: string[], lengths: [number, number, number], minDistance = 0.8): Frame {
  const skew = () => (rng.uniform() - 0.5) * 0.5;
  const H = Float64Array.of(
    lengths[0], 0, 0,
    skew() * lengths[1], lengths[1], 0,
    skew() * lengths[2], skew() * lengths[2], lengths[2],
  );
  const pos: number[] = [];
  for (const _ of species) {
    for (let attempt = 0; ; attempt++) {
      if (attempt > 10000) throw new Error('randomPeriodicFrame: could not place atoms; use a larger cell');
      const f = [rng.uniform(), rng.uniform(), rng.uniform()];
      const p = [0, 1, 2].map((k) => f[0] * H[k] + f[1] * H[3 + k] + f[2] * H[6 + k]);
      let ok = true;
      // Minimum distance over the 27 nearest images (enough for cells wider than 2·minDistance).
      for (let k = 0; k < pos.length && ok; k += 3) {
        for (let a = -1; a <= 1 && ok; a++) for (let b = -1; b <= 1 && ok; b++) for (let c = -1; c <= 1 && ok; c++) {
          const d = [0, 1, 2].map((q) => p[q] - pos[k + q] + a * H[q] + b * H[3 + q] + c * H[6 + q]);
          if (Math.hypot(d[0], d[1], d[2]) < minDistance) ok = false;
        }
      }
      if (!ok) continue;
      pos.push(...p);
      break;
    }
  }
  return makeFrame(species, pos, H);
}
