// Ewald summation of the dipole–dipole field tensor in a periodic cell: the pieces the interacting-dipole model
// (dipole-model.ts) assembles into its field operator. Gaussian units, Å, polarisability volumes.
//
// The field at atom i from a periodic array of point dipoles μ_j is E_i = Σ_j Σ_n T(r_ij + n) μ_j with
// T(r) = (3 r rᵀ − r² I)/r⁵; the lattice sum is conditionally convergent. Splitting 1/r = erfc(βr)/r + erf(βr)/r
// (the standard Ewald split for point multipoles, e.g. W. Smith, CCP5 Info. Quart. 46 (1998); Allen & Tildesley,
// "Computer Simulation of Liquids", §5.2) gives, for the conducting ("tin-foil") boundary:
//   real space   T_R(r) = C(r) r rᵀ − B(r) I,
//                B(r) = [erfc(βr) + (2βr/√π) e^(−β²r²)] / r³,
//                C(r) = [3 erfc(βr) + (2βr/√π)(3 + 2β²r²) e^(−β²r²)] / r⁵,
//   reciprocal   T_K(r) = −(4π/V) Σ_{k≠0} (k kᵀ/k²) e^(−k²/4β²) cos(k·r),   k = 2π(h b₁ + k b₂ + l b₃),
//   self         T_self = +(4β³/(3√π)) I on every atom (removes the atom's own screening Gaussian).
// A spherical sample in vacuum adds the surface (shape) term −(4π/3V) I on every pair, self included.
// Truncation: with s = √(−ln δ) we take β = s/r_c and k_max = 2βs, so both neglected tails are ~e^(−s²) = δ.
import type { Mat3 } from '../geometry/frame.ts';
import { erfc } from '../numerics/erfc.ts';
import { cellVolume, reciprocalCell } from '../geometry/cell.ts';
import { PhysicsError } from '../errors.ts';

export interface EwaldParameters {
  /** Splitting parameter β (Å⁻¹). */
  beta: number;
  /** Real-space cutoff (Å). */
  cutoff: number;
  /** Reciprocal-space cutoff |k| (Å⁻¹, including the 2π). */
  kmax: number;
}

export interface EwaldOptions {
  /** Target relative size of the neglected tails (default 1e-8). */
  accuracy?: number;
  /** Real-space cutoff (Å); default from the cell volume. */
  cutoff?: number;
  /** Splitting parameter (Å⁻¹); default s/cutoff. With an explicit β the k-space cutoff follows from it. */
  beta?: number;
}

const SQRT_PI = Math.sqrt(Math.PI);

/** Choose β, r_c and k_max for a cell and a target accuracy (see header). */
export function ewaldParameters(cell: Mat3, options: EwaldOptions = {}): EwaldParameters {
  const accuracy = options.accuracy ?? 1e-8;
  if (!(accuracy > 0 && accuracy < 1)) throw new RangeError(`ewaldParameters: accuracy must lie in (0, 1), got ${accuracy}`);
  const s = Math.sqrt(-Math.log(accuracy));
  const volume = cellVolume(cell);
  // Real-space work grows like r_c³, reciprocal work like V²/r_c³ per atom pair count: r_c ∝ V^(1/3) balances
  // them for the cell sizes of this project (a few hundred atoms); the clamp keeps tiny and huge cells sane.
  const cutoff = options.cutoff ?? Math.min(14, Math.max(6, 0.7 * Math.cbrt(volume)));
  if (!(cutoff > 0)) throw new RangeError(`ewaldParameters: cutoff must be positive, got ${cutoff}`);
  const beta = options.beta ?? s / cutoff;
  if (!(beta > 0)) throw new RangeError(`ewaldParameters: beta must be positive, got ${beta}`);
  if (beta * cutoff < s * 0.999) {
    throw new RangeError(
      `ewaldParameters: β·r_c = ${(beta * cutoff).toFixed(3)} is below √(−ln δ) = ${s.toFixed(3)}; the real-space tail would exceed the accuracy — raise β or the cutoff`,
    );
  }
  return { beta, cutoff, kmax: 2 * beta * s };
}

/** Adds c r rᵀ − b I of the displacement r = (x, y, z) into out[at…at+5] as [xx, yy, zz, xy, xz, yz]. */
export function addRadialTensor(x: number, y: number, z: number, c: number, b: number, out: Float64Array, at: number): void {
  out[at] += c * x * x - b;
  out[at + 1] += c * y * y - b;
  out[at + 2] += c * z * z - b;
  out[at + 3] += c * x * y;
  out[at + 4] += c * x * z;
  out[at + 5] += c * y * z;
}

/** The real-space Ewald tensor C r rᵀ − B I of one displacement, as [xx, yy, zz, xy, xz, yz] added into out. */
export function addRealSpaceTensor(x: number, y: number, z: number, beta: number, out: Float64Array, at: number): void {
  const r2 = x * x + y * y + z * z;
  const r = Math.sqrt(r2);
  const br = beta * r;
  const g = (2 * br / SQRT_PI) * Math.exp(-br * br);
  const ec = erfc(br);
  const r3 = r2 * r;
  addRadialTensor(x, y, z, (3 * ec + g * (3 + 2 * br * br)) / (r3 * r2), (ec + g) / r3, out, at);
}

/** Coefficient of the self term T_self = s I. */
export function selfCoefficient(beta: number): number {
  return (4 * beta ** 3) / (3 * SQRT_PI);
}

export interface ReciprocalSum {
  /** Cartesian k vectors, 3 per vector (half space: one of each ±k pair). */
  k: Float64Array;
  /** −(4π/V)·2·e^(−k²/4β²)/k² per vector (the 2 counts −k). */
  weight: Float64Array;
  count: number;
}

/** The half-space set of reciprocal vectors with 0 < |k| ≤ k_max and their weights. */
export function reciprocalSum(cell: Mat3, beta: number, kmax: number, maxVectors = 2_000_000): ReciprocalSum {
  const b = reciprocalCell(cell); // rows b_i with a_i·b_j = δ_ij (no 2π)
  const volume = cellVolume(cell);
  const bound = (row: number): number => {
    const len = Math.hypot(cell[3 * row], cell[3 * row + 1], cell[3 * row + 2]);
    return Math.floor((kmax * len) / (2 * Math.PI)); // |h| = |a_row·k|/2π ≤ |a_row| k_max/2π
  };
  const [h1, h2, h3] = [bound(0), bound(1), bound(2)];
  const estimate = (2 * h1 + 1) * (2 * h2 + 1) * (2 * h3 + 1);
  if (estimate > 8 * maxVectors) {
    throw new PhysicsError(
      `Ewald sum needs about ${estimate} reciprocal vectors (k_max ${kmax.toFixed(3)} Å⁻¹, cell volume ${volume.toFixed(1)} Å³); raise the real-space cutoff or lower the accuracy`,
    );
  }
  const ks: number[] = [];
  const ws: number[] = [];
  const kmax2 = kmax * kmax;
  const pref = (-4 * Math.PI / volume) * 2;
  for (let i = 0; i <= h1; i++) {
    for (let j = i === 0 ? 0 : -h2; j <= h2; j++) {
      for (let l = i === 0 && j === 0 ? 1 : -h3; l <= h3; l++) {
        const kx = 2 * Math.PI * (i * b[0] + j * b[3] + l * b[6]);
        const ky = 2 * Math.PI * (i * b[1] + j * b[4] + l * b[7]);
        const kz = 2 * Math.PI * (i * b[2] + j * b[5] + l * b[8]);
        const k2 = kx * kx + ky * ky + kz * kz;
        if (k2 > kmax2) continue;
        ks.push(kx, ky, kz);
        ws.push((pref * Math.exp(-k2 / (4 * beta * beta))) / k2);
      }
    }
  }
  if (ks.length / 3 > maxVectors) {
    throw new PhysicsError(`Ewald sum needs ${ks.length / 3} reciprocal vectors; raise the real-space cutoff or lower the accuracy`);
  }
  return { k: Float64Array.from(ks), weight: Float64Array.from(ws), count: ks.length / 3 };
}

/**
 * The reciprocal-space part as an operator on a dipole vector: out_i += Σ_j T_K(r_i − r_j) μ_j.
 * With c_i = cos(k·r_i), s_i = sin(k·r_i): cos(k·(r_i − r_j)) = c_i c_j + s_i s_j, so each k costs O(N).
 */
export class ReciprocalOperator {
  private readonly cos: Float64Array;
  private readonly sin: Float64Array;
  constructor(
    readonly sum: ReciprocalSum,
    positions: Float64Array,
    readonly atoms: number,
  ) {
    const n = atoms;
    this.cos = new Float64Array(sum.count * n);
    this.sin = new Float64Array(sum.count * n);
    for (let q = 0; q < sum.count; q++) {
      const kx = sum.k[3 * q], ky = sum.k[3 * q + 1], kz = sum.k[3 * q + 2];
      for (let i = 0; i < n; i++) {
        const phase = kx * positions[3 * i] + ky * positions[3 * i + 1] + kz * positions[3 * i + 2];
        this.cos[q * n + i] = Math.cos(phase);
        this.sin[q * n + i] = Math.sin(phase);
      }
    }
  }

  /** For three dipole fields at once, interleaved as index 9i + 3c + r (see dipole-model.ts). */
  addTo(mu: Float64Array, out: Float64Array): void {
    const n = this.atoms;
    const { k, weight, count } = this.sum;
    const cos = this.cos, sin = this.sin;
    for (let q = 0; q < count; q++) {
      const kx = k[3 * q], ky = k[3 * q + 1], kz = k[3 * q + 2];
      const base = q * n;
      let c0 = 0, c1 = 0, c2 = 0, s0 = 0, s1 = 0, s2 = 0;
      for (let j = 0; j < n; j++) {
        const o = 9 * j;
        const cj = cos[base + j], sj = sin[base + j];
        const k0 = kx * mu[o] + ky * mu[o + 3] + kz * mu[o + 6];
        const k1 = kx * mu[o + 1] + ky * mu[o + 4] + kz * mu[o + 7];
        const k2 = kx * mu[o + 2] + ky * mu[o + 5] + kz * mu[o + 8];
        c0 += k0 * cj; c1 += k1 * cj; c2 += k2 * cj;
        s0 += k0 * sj; s1 += k1 * sj; s2 += k2 * sj;
      }
      const w = weight[q];
      for (let i = 0; i < n; i++) {
        const o = 9 * i;
        const ci = w * cos[base + i], si = w * sin[base + i];
        const f0 = ci * c0 + si * s0, f1 = ci * c1 + si * s1, f2 = ci * c2 + si * s2;
        out[o] += f0 * kx; out[o + 1] += f1 * kx; out[o + 2] += f2 * kx;
        out[o + 3] += f0 * ky; out[o + 4] += f1 * ky; out[o + 5] += f2 * ky;
        out[o + 6] += f0 * kz; out[o + 7] += f1 * kz; out[o + 8] += f2 * kz;
      }
    }
  }
}
