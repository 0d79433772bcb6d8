// Wigner rotation matrices of the REAL harmonics of harmonics.ts, defined by
//   Y_lm(R r̂) = Σ_m' D^l_mm'(R) Y_lm'(r̂)          (row-major (2l+1)², index (m+l)(2l+1) + m'+l)
// and built numerically: by orthonormality D^l_mm'(R) = ∫ Y_lm(R r̂) Y_lm'(r̂) dΩ, and the integrand is a
// polynomial of degree 2l on the sphere, so the Gauss–Legendre × uniform-φ product rule of quadrature.ts
// gives it exactly (to round-off) — no linear solve, no Euler angles, no convention to mix up.
// Coefficients c_lm = Σ_j w_j Y_lm(r̂_j) of an environment rotated by R become D^l(R) c_l.
// Relation to the complex matrices: with U of real-basis.ts, D^l_real(R) = U conj(D^l(R)) U†, where D^l(R) is
// the usual ⟨l m'|exp(−iθ n·J)|l m⟩ matrix; for R about y by β, conj(D) = d^l(β) (real), see
// docs/science-conventions.md.
import type { Mat3 } from '../geometry/frame.ts';
import { realSphericalHarmonics } from './harmonics.ts';
import { sphereProductRule, type SphereRule } from '../numerics/quadrature.ts';
import type { Rng } from '../numerics/random.ts';

interface Grid {
  rule: SphereRule;
  /** Y_lm at each rule point, (lmax+1)² per point, already multiplied by the point's weight. */
  weighted: Float64Array;
}

const grids = new Map<number, Grid>();

function grid(lmax: number): Grid {
  const hit = grids.get(lmax);
  if (hit) return hit;
  const rule = sphereProductRule(2 * lmax);
  const n = (lmax + 1) * (lmax + 1);
  const weighted = new Float64Array(rule.count * n);
  for (let k = 0; k < rule.count; k++) {
    const y = weighted.subarray(k * n, (k + 1) * n);
    realSphericalHarmonics(lmax, rule.points[3 * k], rule.points[3 * k + 1], rule.points[3 * k + 2], y);
    for (let i = 0; i < n; i++) y[i] *= rule.weights[k];
  }
  const g = { rule, weighted };
  grids.set(lmax, g);
  return g;
}

function checkOrthogonal(R: Mat3): void {
  if (R.length !== 9) throw new RangeError(`wignerDReal: R must be a 3×3 matrix (9 numbers), got ${R.length}`);
  let worst = 0;
  for (let i = 0; i < 3; i++) {
    for (let j = 0; j < 3; j++) {
      let s = 0;
      for (let k = 0; k < 3; k++) s += R[3 * k + i] * R[3 * k + j];
      worst = Math.max(worst, Math.abs(s - (i === j ? 1 : 0)));
    }
  }
  if (!(worst < 1e-8)) throw new RangeError(`wignerDReal: R is not orthogonal (|RᵀR − I| = ${worst.toExponential(2)})`);
}

/**
 * D^l(R) for l = 0…lmax, one (2l+1)² row-major matrix each. R must be orthogonal; an improper R (det −1) gives
 * (−1)^l times the matrix of the proper part, as the definition implies.
 */
export function wignerDRealUpTo(lmax: number, R: Mat3): Float64Array[] {
  if (!Number.isInteger(lmax) || lmax < 0) throw new RangeError(`wignerDReal: l must be a non-negative integer, got ${lmax}`);
  checkOrthogonal(R);
  const { rule, weighted } = grid(lmax);
  const n = (lmax + 1) * (lmax + 1);
  const out: Float64Array[] = [];
  for (let l = 0; l <= lmax; l++) out.push(new Float64Array((2 * l + 1) * (2 * l + 1)));
  const yr = new Float64Array(n);
  for (let k = 0; k < rule.count; k++) {
    const x = rule.points[3 * k], y = rule.points[3 * k + 1], z = rule.points[3 * k + 2];
    realSphericalHarmonics(lmax, R[0] * x + R[1] * y + R[2] * z, R[3] * x + R[4] * y + R[5] * z, R[6] * x + R[7] * y + R[8] * z, yr);
    const w = weighted.subarray(k * n, (k + 1) * n);
    for (let l = 0; l <= lmax; l++) {
      const D = out[l];
      const size = 2 * l + 1;
      const base = l * l;
      for (let i = 0; i < size; i++) {
        const a = yr[base + i];
        const row = i * size;
        for (let j = 0; j < size; j++) D[row + j] += a * w[base + j];
      }
    }
  }
  return out;
}

/** D^l(R), (2l+1)² row-major, with Y_lm(R r̂) = Σ_m' D_mm' Y_lm'(r̂). */
export function wignerDReal(l: number, R: Mat3): Float64Array {
  return wignerDRealUpTo(l, R)[l];
}

/** A rotation matrix drawn uniformly from SO(3) (unit quaternion by Shoemake's method, Graphics Gems III, 1992). */
export function randomRotation(rng: Pick<Rng, 'uniform'>): Mat3 {
  const u1 = rng.uniform(), u2 = rng.uniform(), u3 = rng.uniform();
  const s1 = Math.sqrt(1 - u1), s2 = Math.sqrt(u1);
  const x = s1 * Math.sin(2 * Math.PI * u2), y = s1 * Math.cos(2 * Math.PI * u2);
  const z = s2 * Math.sin(2 * Math.PI * u3), w = s2 * Math.cos(2 * Math.PI * u3);
  return rotationFromQuaternion(w, x, y, z);
}

/** Rotation matrix of the unit quaternion w + xi + yj + zk (normalised here). */
export function rotationFromQuaternion(w: number, x: number, y: number, z: number): Mat3 {
  const n = Math.hypot(w, x, y, z);
  if (!(n > 0)) throw new RangeError('rotationFromQuaternion: zero quaternion');
  w /= n; x /= n; y /= n; z /= n;
  return Float64Array.of(
    1 - 2 * (y * y + z * z), 2 * (x * y - w * z), 2 * (x * z + w * y),
    2 * (x * y + w * z), 1 - 2 * (x * x + z * z), 2 * (y * z - w * x),
    2 * (x * z - w * y), 2 * (y * z + w * x), 1 - 2 * (x * x + y * y),
  );
}

/** Active rotation by `angle` (radians, right-hand rule) about the axis (ax, ay, az) (normalised here). */
export function rotationAboutAxis(ax: number, ay: number, az: number, angle: number): Mat3 {
  const n = Math.hypot(ax, ay, az);
  if (!(n > 0)) throw new RangeError('rotationAboutAxis: zero axis');
  const s = Math.sin(angle / 2) / n;
  return rotationFromQuaternion(Math.cos(angle / 2), ax * s, ay * s, az * s);
}
