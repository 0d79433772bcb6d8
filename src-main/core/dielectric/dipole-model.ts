// The interacting point-dipole model: atoms with isotropic point polarisabilities α_i (Å³) polarise each other
// through the dipole field tensor, with Thole-type damping at short range. It is the reference model of the
// invented demo data and a physics baseline a user can compare a trained model against.
//
// Induced dipoles in a field E₀: μ_i = α_i (E₀ + Σ_j T_ij μ_j), i.e. (A⁻¹ − T) μ = E₀ (science notes §6); the
// cell polarisability is Σ_i μ_i per unit field, column by column. A⁻¹ − T is symmetric, and positive definite
// exactly when the induced dipoles are stable; it loses definiteness at the "polarisation catastrophe".
// We solve it by conjugate gradients preconditioned with A, which detects a loss of definiteness (pᵀMp ≤ 0).
//
// Damping (Thole, Chem. Phys. 59, 341 (1981)): each dipole is smeared over ρ(u) = (3a/4π) e^(−a u³),
// u = r/(α_i α_j)^(1/6). The charge inside radius u is Q(u) = 1 − e^(−a u³), and the damped tensor is
//   T_ij = 3 λ₅ r rᵀ/r⁵ − λ₃ I/r³,   λ₃ = Q = 1 − e^(−a u³),   λ₅ = Q − r Q′/3 = 1 − (1 + a u³) e^(−a u³)
// (derived in test/core/fixtures/thole_reference.py with sympy). thole: null means no damping (λ₃ = λ₅ = 1).
// No intramolecular exclusions: the damping alone tames the short range.
//
// Periodic cells (ewald.ts): the bare tensor is Ewald-summed; the damping changes T only by
//   ΔT(r) = T_damped − T_bare = −3 e₅ r rᵀ/r⁵ + e₃ I/r³,   e₃ = e^(−a u³), e₅ = (1 + a u³) e^(−a u³),
// which decays like e^(−a u³); it is added in real space for every pair and periodic image (an atom's own
// images included) with a u³ < 50 (e₅ < 1e−20), and the real-space cutoff is raised to cover that range.
import type { Frame, Mat3 } from '../geometry/frame.ts';
import { InputError, PhysicsError, type Where } from '../errors.ts';
import { cellVolume } from '../geometry/cell.ts';
import { neighbourList } from '../geometry/neighbours.ts';
import { convertTensor } from './clausius-mossotti.ts';
import { symmetricEigen } from './tensor.ts';
import {
  addRadialTensor,
  addRealSpaceTensor,
  ewaldParameters,
  ReciprocalOperator,
  reciprocalSum,
  selfCoefficient,
  type EwaldOptions,
  type EwaldParameters,
} from './ewald.ts';

export interface DipoleModel {
  /** Point polarisability volume per element symbol (Å³). */
  polarisabilities: Record<string, number>;
  /** Thole parameter a (dimensionless) of the e^(−a u³) damping; null = undamped point dipoles. */
  thole: number | null;
}

/** conducting: periodic, tin-foil boundary → α_c; sphere: periodic, spherical vacuum boundary → α_CM;
 * open: an isolated cluster (direct sum over all pairs, no images). */
export type Boundary = 'conducting' | 'sphere' | 'open';

export interface SolveOptions extends EwaldOptions {
  boundary?: Boundary;
  /** Relative residual at which conjugate gradients stops (default 1e-11). */
  tolerance?: number;
  maxIterations?: number;
  /** Where the frame came from, for error messages. */
  where?: Where;
}

export interface DipoleResult {
  boundary: Boundary;
  /** Cell (or cluster) polarisability, symmetric, Å³. */
  alpha: Mat3;
  /** Per atom, 9 values row-major: column k is the induced dipole μ_i for a unit field along k (Σ_j B_ij). */
  atomAlpha: Float64Array;
  /** Cell volume (Å³), null for an open cluster. */
  volumeA3: number | null;
  /** Conjugate-gradient iterations (the three fields are solved together). */
  iterations: number;
  ewald: EwaldParameters | null;
}

/** Damping factors λ₃, λ₅ at reduced distance u (see header). */
export function tholeFactors(a: number | null, u: number): { l3: number; l5: number } {
  if (a === null) return { l3: 1, l5: 1 };
  const x = a * u * u * u;
  const e = Math.exp(-x);
  return { l3: 1 - e, l5: 1 - (1 + x) * e };
}

/** The damped dipole field tensor of one displacement (field at i from a unit dipole at j), row-major 3×3. */
export function dampedDipoleTensor(r: ArrayLike<number>, alphaI: number, alphaJ: number, a: number | null): Mat3 {
  const out = new Float64Array(6);
  addDampedTensor(r[0], r[1], r[2], Math.pow(alphaI * alphaJ, 1 / 6), a, out, 0);
  return fromSix(out, 0);
}

function addDampedTensor(x: number, y: number, z: number, scale: number, a: number | null, out: Float64Array, at: number): void {
  const r2 = x * x + y * y + z * z;
  const r = Math.sqrt(r2);
  const { l3, l5 } = tholeFactors(a, r / scale);
  const inv3 = 1 / (r2 * r);
  addRadialTensor(x, y, z, (3 * l5 * inv3) / r2, l3 * inv3, out, at);
}

/** Adds ΔT = T_damped − T_bare (see header) unless it is below 1e−20 relative. */
function addTholeCorrection(x: number, y: number, z: number, scale: number, a: number, out: Float64Array, at: number): void {
  const r2 = x * x + y * y + z * z;
  const r = Math.sqrt(r2);
  const u = r / scale;
  const q = a * u * u * u;
  if (q >= THOLE_REACH) return;
  const e3 = Math.exp(-q);
  const e5 = (1 + q) * e3;
  const inv3 = 1 / (r2 * r);
  addRadialTensor(x, y, z, (-3 * e5 * inv3) / r2, -e3 * inv3, out, at);
}

/** a u³ beyond which the damping correction is dropped: (1 + 50) e^(−50) ≈ 1e−20. */
const THOLE_REACH = 50;

function fromSix(t: Float64Array, at: number): Mat3 {
  const [xx, yy, zz, xy, xz, yz] = [t[at], t[at + 1], t[at + 2], t[at + 3], t[at + 4], t[at + 5]];
  return Float64Array.from([xx, xy, xz, xy, yy, yz, xz, yz, zz]);
}

/** Per-atom polarisabilities of a frame from the model, with a clear error for a missing or bad element. */
export function atomPolarisabilities(frame: Frame, model: DipoleModel, where: Where = {}): Float64Array {
  const n = frame.species.length;
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const s = frame.species[i];
    const v = model.polarisabilities[s];
    if (v === undefined) {
      throw new InputError(`no point polarisability for element ${s} (atom ${i + 1})`, where, `give one, e.g. ${s}=1.0 (Å³)`);
    }
    if (!(v > 0) || !Number.isFinite(v)) {
      throw new InputError(`point polarisability of ${s} must be a positive number of Å³, got ${v}`, where);
    }
    out[i] = v;
  }
  return out;
}

/**
 * The field operator out = T μ of one frame and boundary (pairs, self term, reciprocal part, surface term),
 * applied to the three fields at once: vectors hold 9 values per atom, index 9i + 3c + r for Cartesian
 * component c of the dipole induced by the unit field along r (one pass over the pair and k tables).
 */
interface FieldOperator {
  apply(mu: Float64Array, out: Float64Array): void;
}

/** Pair tensors [xx, yy, zz, xy, xz, yz]. With symmetric: the pair acts both ways (out_i += T μ_j and
 * out_j += T μ_i, T(−r) = T(r)); otherwise one way only (an atom and its own periodic images). */
interface PairTensors {
  i: Int32Array;
  j: Int32Array;
  t: Float64Array;
  symmetric: boolean;
}

function makePairs(i: number[], j: number[], t: number[], symmetric: boolean): PairTensors {
  return { i: Int32Array.from(i), j: Int32Array.from(j), t: Float64Array.from(t), symmetric };
}

function applyPairs(p: PairTensors, mu: Float64Array, out: Float64Array): void {
  const { i: pi, j: pj, t } = p;
  for (let q = 0; q < pi.length; q++) {
    const i = 9 * pi[q], j = 9 * pj[q], o = 6 * q;
    const xx = t[o], yy = t[o + 1], zz = t[o + 2], xy = t[o + 3], xz = t[o + 4], yz = t[o + 5];
    for (let r = 0; r < 3; r++) {
      const mx = mu[j + r], my = mu[j + 3 + r], mz = mu[j + 6 + r];
      out[i + r] += xx * mx + xy * my + xz * mz;
      out[i + 3 + r] += xy * mx + yy * my + yz * mz;
      out[i + 6 + r] += xz * mx + yz * my + zz * mz;
      if (p.symmetric) {
        const nx = mu[i + r], ny = mu[i + 3 + r], nz = mu[i + 6 + r];
        out[j + r] += xx * nx + xy * ny + xz * nz;
        out[j + 3 + r] += xy * nx + yy * ny + yz * nz;
        out[j + 6 + r] += xz * nx + yz * ny + zz * nz;
      }
    }
  }
}

function openOperator(frame: Frame, alpha: Float64Array, a: number | null, where: Where): FieldOperator {
  const n = alpha.length;
  const pos = frame.positions;
  const pi: number[] = [], pj: number[] = [], t: number[] = [];
  const six = new Float64Array(6);
  for (let i = 0; i < n; i++) {
    for (let j = i + 1; j < n; j++) {
      const x = pos[3 * j] - pos[3 * i], y = pos[3 * j + 1] - pos[3 * i + 1], z = pos[3 * j + 2] - pos[3 * i + 2];
      if (x * x + y * y + z * z === 0) throw new InputError(`atoms ${i + 1} and ${j + 1} sit on the same point`, where, 'check the structure');
      six.fill(0);
      addDampedTensor(x, y, z, Math.pow(alpha[i] * alpha[j], 1 / 6), a, six, 0);
      pi.push(i); pj.push(j); t.push(...six);
    }
  }
  const pairs = makePairs(pi, pj, t, true);
  return { apply: (mu, out) => { out.fill(0); applyPairs(pairs, mu, out); } };
}

function periodicOperator(
  frame: Frame,
  alpha: Float64Array,
  a: number | null,
  boundary: 'conducting' | 'sphere',
  options: EwaldOptions,
  where: Where,
): { op: FieldOperator; ewald: EwaldParameters; volume: number } {
  const cell = frame.cell as Mat3;
  const n = alpha.length;
  const volume = cellVolume(cell);
  if (!(volume > 0)) throw new InputError('the cell has zero volume', where, 'check the lattice vectors');
  let maxAlpha = 0;
  for (const v of alpha) maxAlpha = Math.max(maxAlpha, v);
  // Reach of the damping correction: a u³ < THOLE_REACH with u = r/(α_i α_j)^(1/6).
  const tholeRange = a === null ? 0 : Math.cbrt(THOLE_REACH / a) * Math.cbrt(maxAlpha);
  let ewald = ewaldParameters(cell, options);
  if (ewald.cutoff < tholeRange) {
    if (options.cutoff !== undefined) {
      throw new InputError(`real-space cutoff ${options.cutoff} Å is shorter than the damping range ${tholeRange.toFixed(2)} Å`, where, 'raise the cutoff');
    }
    ewald = ewaldParameters(cell, { ...options, cutoff: tholeRange });
  }
  const list = neighbourList(frame, ewald.cutoff);
  // The list holds every pair both ways: keep i < j once (applied both ways) and an atom's own images one way.
  const between = { i: [] as number[], j: [] as number[], t: [] as number[] };
  const images = { i: [] as number[], j: [] as number[], t: [] as number[] };
  const six = new Float64Array(6);
  for (let i = 0; i < n; i++) {
    for (let q = list.start[i]; q < list.start[i + 1]; q++) {
      const j = list.neighbour[q];
      if (j < i) continue;
      const x = list.vectors[3 * q], y = list.vectors[3 * q + 1], z = list.vectors[3 * q + 2];
      if (list.distances[q] === 0) {
        throw new InputError(`atoms ${i + 1} and ${j + 1} sit on the same point (periodic image)`, where, 'check the structure');
      }
      six.fill(0);
      addRealSpaceTensor(x, y, z, ewald.beta, six, 0);
      if (a !== null) addTholeCorrection(x, y, z, Math.pow(alpha[i] * alpha[j], 1 / 6), a, six, 0);
      const into = j === i ? images : between;
      into.i.push(i); into.j.push(j);
      for (let c = 0; c < 6; c++) into.t.push(six[c]);
    }
  }
  const pairs = [makePairs(between.i, between.j, between.t, true), makePairs(images.i, images.j, images.t, false)];
  const recip = new ReciprocalOperator(reciprocalSum(cell, ewald.beta, ewald.kmax), frame.positions, n);
  const self = selfCoefficient(ewald.beta);
  const surface = boundary === 'sphere' ? (-4 * Math.PI) / (3 * volume) : 0;
  const op: FieldOperator = {
    apply(mu, out) {
      for (let k = 0; k < 9 * n; k++) out[k] = self * mu[k];
      for (const p of pairs) applyPairs(p, mu, out);
      recip.addTo(mu, out);
      if (surface !== 0) {
        const total = new Float64Array(9);
        for (let i = 0; i < n; i++) for (let k = 0; k < 9; k++) total[k] += mu[9 * i + k];
        for (let i = 0; i < n; i++) for (let k = 0; k < 9; k++) out[9 * i + k] += surface * total[k];
      }
    },
  };
  return { op, ewald, volume };
}

function periodicity(frame: Frame, where: Where): boolean {
  const [x, y, z] = frame.pbc;
  if (x && y && z) {
    if (frame.cell === null) throw new InputError('the frame is periodic but has no cell', where, 'add a Lattice');
    return true;
  }
  if (!x && !y && !z) return false;
  throw new InputError(`partly periodic frames (pbc ${frame.pbc.map((b) => (b ? 'T' : 'F')).join(' ')}) are not supported by the dipole model`, where, 'make the frame fully periodic (pad with vacuum) or open');
}

function frameWhere(frame: Frame): Where {
  return frame.source ? { file: frame.source.file, line: frame.source.line, frame: frame.source.index } : {};
}

/** Solve the induced-dipole equations for unit fields along x, y, z and sum the dipoles. */
export function cellPolarisability(frame: Frame, model: DipoleModel, options: SolveOptions = {}): DipoleResult {
  const where = options.where ?? frameWhere(frame);
  const periodic = periodicity(frame, where);
  const boundary: Boundary = options.boundary ?? (periodic ? 'conducting' : 'open');
  if (boundary !== 'open' && !periodic) {
    throw new InputError(`the ${boundary} boundary needs a periodic frame`, where, 'give a cell with pbc, or use the open boundary');
  }
  if (model.thole !== null && !(model.thole > 0)) throw new InputError(`Thole parameter must be positive, got ${model.thole}`, where);
  const n = frame.species.length;
  if (n === 0) throw new InputError('the frame has no atoms', where);
  const alpha = atomPolarisabilities(frame, model, where);
  let op: FieldOperator;
  let ewald: EwaldParameters | null = null;
  let volume: number | null = null;
  if (boundary === 'open') op = openOperator(frame, alpha, model.thole, where);
  else ({ op, ewald, volume } = periodicOperator(frame, alpha, model.thole, boundary, options, where));

  const tol = options.tolerance ?? 1e-11;
  const maxIt = options.maxIterations ?? Math.max(200, 3 * n);
  // Right-hand sides: unit fields along x, y, z (index 9i + 3c + r is 1 when c = r).
  const rhs = new Float64Array(9 * n);
  for (let i = 0; i < n; i++) for (let r = 0; r < 3; r++) rhs[9 * i + 4 * r] = 1;
  const { x, iterations } = solveCg(op, alpha, rhs, tol, maxIt, where);
  const cellAlpha = new Float64Array(9);
  for (let i = 0; i < n; i++) for (let k = 0; k < 9; k++) cellAlpha[k] += x[9 * i + k];
  const sym = new Float64Array(9);
  for (let r = 0; r < 3; r++) for (let c = 0; c < 3; c++) sym[3 * r + c] = 0.5 * (cellAlpha[3 * r + c] + cellAlpha[3 * c + r]);
  return { boundary, alpha: sym, atomAlpha: x, volumeA3: volume, iterations, ewald };
}

/**
 * Preconditioned conjugate gradients on M = A⁻¹ − T with preconditioner A (diagonal), three independent
 * systems in lockstep (separate scalars per field r; a converged system stops moving).
 */
function solveCg(op: FieldOperator, alpha: Float64Array, b: Float64Array, tol: number, maxIt: number, where: Where): { x: Float64Array; iterations: number } {
  const m = b.length;
  const x = new Float64Array(m);
  const r = Float64Array.from(b);
  const z = new Float64Array(m);
  const p = new Float64Array(m);
  const q = new Float64Array(m);
  const dot3 = (u: Float64Array, v: Float64Array): number[] => {
    const s = [0, 0, 0];
    for (let k = 0; k < m; k += 3) { s[0] += u[k] * v[k]; s[1] += u[k + 1] * v[k + 1]; s[2] += u[k + 2] * v[k + 2]; }
    return s;
  };
  const precondition = (): void => { for (let k = 0; k < m; k++) z[k] = alpha[(k / 9) | 0] * r[k]; };
  const bnorm = dot3(b, b).map(Math.sqrt);
  const done = [false, false, false];
  precondition();
  p.set(z);
  let rz = dot3(r, z);
  for (let it = 1; it <= maxIt; it++) {
    op.apply(p, q);
    for (let k = 0; k < m; k++) q[k] = p[k] / alpha[(k / 9) | 0] - q[k];
    const pq = dot3(p, q);
    const step = [0, 0, 0];
    for (let f = 0; f < 3; f++) {
      if (done[f]) continue;
      if (!(pq[f] > 0)) {
        throw new PhysicsError(
          'polarisation catastrophe: the induced-dipole equations have no stable solution (A⁻¹ − T is not positive definite) — atoms are too close for their polarisabilities; use stronger damping (smaller Thole a) or smaller polarisabilities',
          where,
        );
      }
      step[f] = rz[f] / pq[f];
    }
    for (let k = 0; k < m; k++) { const s = step[k % 3]; x[k] += s * p[k]; r[k] -= s * q[k]; }
    const rr = dot3(r, r);
    for (let f = 0; f < 3; f++) if (Math.sqrt(rr[f]) <= tol * bnorm[f]) done[f] = true;
    if (done[0] && done[1] && done[2]) return { x, iterations: it };
    precondition();
    const rzNew = dot3(r, z);
    const beta = [0, 1, 2].map((f) => (done[f] ? 0 : rzNew[f] / rz[f]));
    rz = rzNew;
    for (let k = 0; k < m; k++) { const f = k % 3; p[k] = done[f] ? 0 : z[k] + beta[f] * p[k]; }
  }
  throw new PhysicsError(`induced dipoles did not converge in ${maxIt} iterations (close to the polarisation catastrophe?)`, where);
}

export interface ReferenceTensors {
  volumeA3: number;
  /** Conducting-boundary cell polarisability (Å³). */
  alphaC: Mat3;
  /** Clausius–Mossotti cell polarisability (Å³). */
  alphaCM: Mat3;
  /** Optical dielectric tensor. */
  eps: Mat3;
  iterations: number;
}

/**
 * α_c, α_CM and ε of a periodic frame. One conducting-boundary solve; α_CM and ε follow through the exact
 * Clausius–Mossotti relations (science notes §2; the tests check them against an independent spherical-boundary
 * solve). Pass independent: true to solve the spherical boundary as well and use it for α_CM.
 */
export function referenceTensors(frame: Frame, model: DipoleModel, options: SolveOptions & { independent?: boolean } = {}): ReferenceTensors {
  const cond = cellPolarisability(frame, model, { ...options, boundary: 'conducting' });
  const volume = cond.volumeA3 as number;
  const where = options.where ?? frameWhere(frame);
  const eig = symmetricEigen(cond.alpha).values[0];
  if (!(eig > 0)) {
    throw new PhysicsError(`polarisation catastrophe: the cell polarisability has a non-positive principal value (${eig.toExponential(3)} Å³)`, where);
  }
  let alphaCM: Mat3;
  let iterations = cond.iterations;
  if (options.independent) {
    const sph = cellPolarisability(frame, model, { ...options, boundary: 'sphere' });
    alphaCM = sph.alpha;
    iterations += sph.iterations;
  } else {
    alphaCM = convertTensor(cond.alpha, 'alpha-c', 'alpha-cm', volume, where);
  }
  const eps = convertTensor(cond.alpha, 'alpha-c', 'eps', volume, where);
  return { volumeA3: volume, alphaC: cond.alpha, alphaCM, eps, iterations };
}
