// The Clausius–Mossotti (Lorentz–Lorenz) relations between the optical dielectric tensor ε, the
// conducting-boundary cell polarisability α_c and the Clausius–Mossotti cell polarisability α_CM (both
// polarisability volumes in Å³, cell volume V in Å³), in exact tensor form (docs/science-conventions.md §CM):
//   ε = I + (4π/V) α_c                      α_c = (V/4π)(ε − I)
//   ε = (I + 2X)(I − X)⁻¹,  X = (4π/3V) α_CM   α_CM = (3V/4π)(ε − I)(ε + 2I)⁻¹
//   α_CM = α_c (I + (4π/3V) α_c)⁻¹          α_c = α_CM (I − X)⁻¹
// Every factor is a function of one symmetric matrix, so they commute; the non-linear relations are applied
// to the principal values (Q f(Λ) Qᵀ), which is exact and lets the guards speak about principal values.
// Also: warnings for ε∞ below 1, principal refractive indices and birefringence.
import { InputError, PhysicsError, type Where } from '../errors.ts';
import type { Mat3 } from '../geometry/frame.ts';
import type { CellTensorKind, Route, TensorErrorBars, TensorKind } from '../learning/model-types.ts';
import { SYMMETRY_TOLERANCE, fromIrreducible, mat3Inverse, mat3Multiply, symmetricEigen, symmetricFunction } from './tensor.ts';

export type { TensorKind } from '../learning/model-types.ts';

/** Every kind of tensor a file can carry (model-types.ts TensorKind), in the order the options list them. */
export const TENSOR_KINDS: readonly TensorKind[] = ['eps', 'alpha-c', 'alpha-cm', 'alpha-mol'];
/** The kinds of a periodic cell's tensor, which the relations below turn into one another. */
export const CELL_TENSOR_KINDS: readonly CellTensorKind[] = ['eps', 'alpha-c', 'alpha-cm'];

const FOUR_PI = 4 * Math.PI;

/** Relative closeness to a singular point (ε = −2 principal value) treated as singular. */
const SINGULAR_TOLERANCE = 1e-12;

/** A tensor kind in words. */
export function describeKind(kind: TensorKind): string {
  if (kind === 'alpha-mol') return 'the polarisability of an isolated molecule or cluster';
  return kind === 'eps' ? 'the optical dielectric tensor ε' : kind === 'alpha-c' ? 'the conducting-boundary polarisability α_c' : 'the Clausius–Mossotti polarisability α_CM';
}

function checkInput(T: Mat3, kind: TensorKind, volumeA3: number, where: Where): void {
  if (!(typeof volumeA3 === 'number' && Number.isFinite(volumeA3) && volumeA3 > 0)) {
    throw new InputError(`cell volume must be a positive number of Å³, got ${volumeA3}`, where, 'a Clausius–Mossotti conversion needs the periodic cell (or the volume per molecule)');
  }
  if (T.length !== 9) throw new RangeError(`convertTensor: a tensor is 9 numbers, got ${T.length}`);
  let big = 0;
  for (let i = 0; i < 9; i++) {
    if (!Number.isFinite(T[i])) throw new InputError(`${describeKind(kind)} has a non-finite component (${T[i]})`, where);
    big = Math.max(big, Math.abs(T[i]));
  }
  for (const [i, j] of [[1, 3], [2, 6], [5, 7]]) {
    if (Math.abs(T[i] - T[j]) > SYMMETRY_TOLERANCE * big) {
      throw new InputError(`${describeKind(kind)} is not symmetric (${T[i]} against ${T[j]})`, where, 'only symmetric tensors can be converted');
    }
  }
}

function catastrophe(lambda: number, volumeA3: number, where: Where): PhysicsError {
  const X = (FOUR_PI * lambda) / (3 * volumeA3);
  return new PhysicsError(
    `polarisation catastrophe: the Clausius–Mossotti polarisability has a principal value of ${lambda.toPrecision(6)} Å³ in a ` +
      `volume of ${volumeA3.toPrecision(6)} Å³, so 4πα/3V = ${X.toPrecision(6)} ≥ 1 and the dielectric constant would be infinite or negative. ` +
      'Check that the volume is the cell volume in Å³ and that the polarisability is in Å³ (not bohr³) and is α_CM, not α_c.',
    where,
  );
}

function singularInverse(what: string, where: Where): PhysicsError {
  return new PhysicsError(
    `${what} has a principal value at which the Clausius–Mossotti relation is singular (ε = −2); no Clausius–Mossotti ` +
      'polarisability exists. An optical dielectric tensor has principal values ≥ 1: check the tensor kind and units.',
    where,
  );
}

/** Averages the off-diagonal pairs, so outputs are exactly symmetric (inputs are symmetric to 1e−6). */
function symmetrise(r: Float64Array): Float64Array {
  for (const [i, j] of [[1, 3], [2, 6], [5, 7]]) r[i] = r[j] = (r[i] + r[j]) / 2;
  return r;
}

/** α_c = (V/4π)(ε − I). */
export function epsToAlphaC(eps: Mat3, volumeA3: number): Mat3 {
  const r = Float64Array.from(eps, (v) => (v * volumeA3) / FOUR_PI);
  for (const d of [0, 4, 8]) r[d] = ((eps[d] - 1) * volumeA3) / FOUR_PI;
  return symmetrise(r);
}

/** ε = I + (4π/V) α_c. */
export function alphaCToEps(alphaC: Mat3, volumeA3: number): Mat3 {
  const r = Float64Array.from(alphaC, (v) => (FOUR_PI * v) / volumeA3);
  for (const d of [0, 4, 8]) r[d] += 1;
  return symmetrise(r);
}

/** α_CM = (3V/4π)(ε − I)(ε + 2I)⁻¹; PhysicsError where ε has a principal value −2. */
export function epsToAlphaCM(eps: Mat3, volumeA3: number, where: Where = {}): Mat3 {
  return symmetricFunction(eps, (e) => {
    if (Math.abs(e + 2) <= SINGULAR_TOLERANCE * (1 + Math.abs(e))) throw singularInverse('ε', where);
    return ((3 * volumeA3) / FOUR_PI) * ((e - 1) / (e + 2));
  });
}

/** ε = (I + 2X)(I − X)⁻¹ with X = (4π/3V) α_CM; PhysicsError (polarisation catastrophe) if any λ(X) ≥ 1. */
export function alphaCMToEps(alphaCM: Mat3, volumeA3: number, where: Where = {}): Mat3 {
  return symmetricFunction(alphaCM, (a) => {
    const X = (FOUR_PI * a) / (3 * volumeA3);
    if (!(X < 1)) throw catastrophe(a, volumeA3, where);
    return (1 + 2 * X) / (1 - X);
  });
}

/** α_CM = α_c (I + (4π/3V) α_c)⁻¹. */
export function alphaCToAlphaCM(alphaC: Mat3, volumeA3: number, where: Where = {}): Mat3 {
  return symmetricFunction(alphaC, (a) => {
    const y = 1 + (FOUR_PI * a) / (3 * volumeA3);
    if (Math.abs(y) <= SINGULAR_TOLERANCE * (1 + Math.abs((FOUR_PI * a) / (3 * volumeA3)))) throw singularInverse('α_c', where);
    return a / y;
  });
}

/** α_c = α_CM (I − X)⁻¹; PhysicsError (polarisation catastrophe) if any λ(X) ≥ 1. */
export function alphaCMToAlphaC(alphaCM: Mat3, volumeA3: number, where: Where = {}): Mat3 {
  return symmetricFunction(alphaCM, (a) => {
    const X = (FOUR_PI * a) / (3 * volumeA3);
    if (!(X < 1)) throw catastrophe(a, volumeA3, where);
    return a / (1 - X);
  });
}

/**
 * `T` of kind `from` as kind `to` for a cell (or molecule) of volume `volumeA3` (Å³). Polarisabilities are
 * polarisability volumes in Å³. Returns a new array (a copy when from = to). Throws InputError for a bad
 * volume or an asymmetric tensor, PhysicsError at the polarisation catastrophe or a singular inverse.
 */
export function convertTensor(T: Mat3, from: TensorKind, to: TensorKind, volumeA3: number, where: Where = {}): Mat3 {
  for (const k of [from, to]) {
    if (k === 'alpha-mol' && from !== to) {
      throw new InputError(`${describeKind(k)} has no cell volume, so it cannot be turned into ${describeKind(k === from ? to : from)}`, where,
        'ε, n and Δn are not defined for a lone molecule; a model trained on clusters predicts a periodic frame\'s ε through α_CM');
    }
    if (!TENSOR_KINDS.includes(k)) throw new RangeError(`convertTensor: unknown tensor kind '${String(k)}' (use eps, alpha-c or alpha-cm)`);
  }
  checkInput(T, from, volumeA3, where);
  if (from === to) return Float64Array.from(T);
  switch (`${from}>${to}`) {
    case 'eps>alpha-c':
      return epsToAlphaC(T, volumeA3);
    case 'alpha-c>eps':
      return alphaCToEps(T, volumeA3);
    case 'eps>alpha-cm':
      return epsToAlphaCM(T, volumeA3, where);
    case 'alpha-cm>eps':
      return alphaCMToEps(T, volumeA3, where);
    case 'alpha-c>alpha-cm':
      return alphaCToAlphaCM(T, volumeA3, where);
    case 'alpha-cm>alpha-c':
      return alphaCMToAlphaC(T, volumeA3, where);
  }
  throw new RangeError(`convertTensor: no relation from ${from} to ${to}`);
}

/**
 * Plain-language warnings for an optical dielectric tensor: principal values below 1 are unphysical for ε∞
 * (a transparent medium at optical frequencies has n ≥ 1 in this static-response picture). Empty when fine.
 */
export function epsWarnings(eps: Mat3): string[] {
  const { values } = symmetricEigen(eps);
  const warnings: string[] = [];
  values.forEach((v, k) => {
    if (v < 1) {
      warnings.push(
        `principal value ${k + 1} of ε∞ is ${v.toPrecision(6)} < 1, which is unphysical for an optical dielectric tensor` +
          (v <= 0 ? ' (no real refractive index)' : ` (refractive index ${Math.sqrt(v).toPrecision(6)} < 1)`),
      );
    }
  });
  return warnings;
}

export interface RefractiveIndices {
  /** Principal refractive indices √λ_k(ε), ascending. */
  indices: Float64Array;
  /** Principal axes: column k belongs to indices[k] (orthonormal, right-handed). */
  axes: Mat3;
}

/** Principal refractive indices of ε; PhysicsError if a principal value is negative (no real index). */
export function refractiveIndices(eps: Mat3, where: Where = {}): RefractiveIndices {
  const { values, vectors } = symmetricEigen(eps);
  for (const v of values) {
    if (v < 0) throw new PhysicsError(`ε has a negative principal value (${v.toPrecision(6)}): no real refractive index`, where);
  }
  return { indices: Float64Array.from(values, Math.sqrt), axes: vectors };
}

export interface Birefringence {
  /** n_max − n_min (≥ 0). */
  delta: number;
  /** isotropic: all three indices within the tolerance; uniaxial: exactly two coincide; else biaxial. */
  kind: 'isotropic' | 'uniaxial' | 'biaxial';
  /** For uniaxial: the ordinary index (mean of the coinciding pair) and the extraordinary one. */
  nOrdinary: number | null;
  nExtraordinary: number | null;
  /** For uniaxial: n_e − n_o (positive: optically positive crystal). */
  signed: number | null;
  /** For uniaxial: the optic axis (unit vector along the extraordinary principal axis). */
  opticAxis: Float64Array | null;
}

/** Default tolerance on refractive indices for "coinciding" principal values (about a measurement's precision). */
export const INDEX_TOLERANCE = 1e-5;

/** Birefringence of ε: n_max − n_min, and for a uniaxial tensor the signed n_e − n_o and the optic axis. */
export function birefringence(eps: Mat3, tolerance = INDEX_TOLERANCE, where: Where = {}): Birefringence {
  const { indices: n, axes } = refractiveIndices(eps, where);
  const delta = n[2] - n[0];
  const none = { nOrdinary: null, nExtraordinary: null, signed: null, opticAxis: null };
  if (delta <= tolerance) return { delta, kind: 'isotropic', ...none };
  const low = n[1] - n[0] <= tolerance, high = n[2] - n[1] <= tolerance;
  if (low === high) return { delta, kind: 'biaxial', ...none };
  const e = low ? 2 : 0; // the single (extraordinary) index
  const nO = low ? (n[0] + n[1]) / 2 : (n[1] + n[2]) / 2;
  return {
    delta,
    kind: 'uniaxial',
    nOrdinary: nO,
    nExtraordinary: n[e],
    signed: n[e] - nO,
    opticAxis: Float64Array.of(axes[e], axes[3 + e], axes[6 + e]),
  };
}

// ---------------------------------------------------------------------------------------------------------
// Error propagation (delta method, science notes §8)

/**
 * First-order change of ε for a change dL of the learnt cell tensor, at the prediction ε:
 *   route cm (L = α_CM): ε = (I + 2X)(I − X)⁻¹, X = (4π/3V) α_CM  ⇒  dε = (4π/9V) (ε + 2I) dL (ε + 2I)
 *   route direct (L = α_c): ε = I + (4π/V) α_c                    ⇒  dε = (4π/V) dL
 * (cm: dε = (2I + ε) dX (I − X)⁻¹ and (I − X)⁻¹ = (ε + 2I)/3.)
 */
export function epsDifferential(dLearnt: Mat3, route: Route, eps: Mat3, volumeA3: number): Mat3 {
  if (route === 'direct') return Float64Array.from(dLearnt, (v) => (FOUR_PI / volumeA3) * v);
  const e2 = Float64Array.from(eps);
  for (const d of [0, 4, 8]) e2[d] += 2;
  const out = mat3Multiply(mat3Multiply(e2, dLearnt), e2);
  const f = FOUR_PI / (9 * volumeA3);
  for (let i = 0; i < 9; i++) out[i] *= f;
  return symmetrise(out);
}

/**
 * Delta-method standard deviations of ε_iso, the principal ε_k, n_k, Δn and α_CM iso, from independent
 * standard deviations of the six irreducible components [T⁰, T²₋₂…T²₂] of the learnt tensor (route cm: α_CM;
 * direct: α_c; Å³). Each component is pushed through the linearised relation (epsDifferential) and the
 * first-order change of each principal value (u_kᵀ dε u_k, non-degenerate perturbation theory) is summed in
 * quadrature. Neglected: correlations between the learnt components, and the second-order terms — including
 * those of nearly equal principal values (an almost isotropic ε), where the ordered ε_k are not Gaussian.
 */
export function propagateErrorBars(eps: Mat3, volumeA3: number, route: Route, learntSd: ArrayLike<number>): TensorErrorBars {
  const { values, vectors: U } = symmetricEigen(eps);
  const n = Array.from(values, (v) => Math.sqrt(Math.max(v, 0)));
  const e2 = Float64Array.from(eps);
  for (const d of [0, 4, 8]) e2[d] += 2;
  const e2inv = mat3Inverse(e2, 'ε + 2I');
  const cmScale = (9 * volumeA3) / FOUR_PI;
  const acc = { iso: 0, k: [0, 0, 0], n: [0, 0, 0], dn: 0, cm: 0 };
  const unit = new Float64Array(6);
  for (let c = 0; c < 6; c++) {
    const s = learntSd[c];
    if (!(s > 0)) continue;
    unit.fill(0);
    unit[c] = s;
    const de = epsDifferential(fromIrreducible(unit), route, eps, volumeA3);
    acc.iso += ((de[0] + de[4] + de[8]) / 3) ** 2;
    const dk = [0, 1, 2].map((k) => {
      let q = 0;
      for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) q += U[i * 3 + k] * de[i * 3 + j] * U[j * 3 + k];
      return q;
    });
    const dn = dk.map((d, k) => (n[k] > 0 ? d / (2 * n[k]) : NaN));
    for (let k = 0; k < 3; k++) {
      acc.k[k] += dk[k] ** 2;
      acc.n[k] += dn[k] ** 2;
    }
    acc.dn += (dn[2] - dn[0]) ** 2;
    const dcm = mat3Multiply(mat3Multiply(e2inv, de), e2inv);
    acc.cm += ((cmScale * (dcm[0] + dcm[4] + dcm[8])) / 3) ** 2;
  }
  const r3 = (a: number[]) => [Math.sqrt(a[0]), Math.sqrt(a[1]), Math.sqrt(a[2])] as [number, number, number];
  return { epsIso: Math.sqrt(acc.iso), epsPrincipal: r3(acc.k), n: r3(acc.n), dn: Math.sqrt(acc.dn), alphaCmIso: Math.sqrt(acc.cm) };
}
