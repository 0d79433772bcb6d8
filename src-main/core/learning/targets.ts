// What the learning engine learns from a frame's reference value, and how a prediction turns back into the
// tensors a user asked for. A symmetric 3×3 tensor is learnt as an additive (extensive) cell polarisability,
// split into its λ=0 and λ=2 parts; a 3-vector (dipole) as λ=1; a single number as λ=0.
//
// Routes for tensors (docs/learning-engine.md, "Routes"):
//   cm     — learn α_CM = (3V/4π)(ε − I)(ε + 2I)⁻¹ as a sum of local contributions; ε by the forward relation.
//   direct — learn α_c = (ε − I) V/4π as a sum of local contributions; ε = I + (4π/V) α_c. This is ε itself
//            without the local-field correction, made extensive by the volume so that a supercell of the same
//            material keeps its ε (the additive target must scale with the number of atoms).
import { convertTensor } from '../dielectric/clausius-mossotti.ts';
import { cellVolume } from '../geometry/cell.ts';
import { InputError, type Where } from '../errors.ts';
import type { Frame, Mat3 } from '../geometry/frame.ts';
import type { Route, TensorKind, TensorPrediction, TrainRequest } from './model-types.ts';
import { tensorFromValues } from '../dielectric/tensor.ts';

export type TargetShape = 'tensor' | 'vector' | 'scalar';

/** The quantity the kernel model sums over atoms. */
export type LearntQuantity = 'alpha-cm' | 'alpha-c' | 'vector' | 'scalar';

export function whereOf(frame: Frame, index: number): Where {
  return frame.source ? { file: frame.source.file, line: frame.source.line, frame: frame.source.index } : { frame: index };
}

/** The raw values of `key` in a frame, with a clear error when missing or not numeric. */
export function readValues(frame: Frame, key: string, index: number): number[] {
  const v = frame.info[key];
  const where = whereOf(frame, index);
  if (v === undefined) {
    const keys = Object.keys(frame.info);
    throw new InputError(`no property "${key}" in this frame`, where, keys.length ? `keys present: ${keys.join(', ')}` : 'the frame has no per-frame properties');
  }
  const values = typeof v === 'number' ? [v] : Array.isArray(v) ? v : null;
  if (!values || values.some((x) => typeof x !== 'number' || !Number.isFinite(x))) {
    throw new InputError(`property "${key}" is not a list of finite numbers`, where, 'give 9 (row-major 3×3), 6 (Voigt), 3 (a vector) or 1 number');
  }
  return values;
}

export function shapeOfValues(values: number[], key: string, where: Where): TargetShape {
  if (values.length === 9 || values.length === 6) return 'tensor';
  if (values.length === 3) return 'vector';
  if (values.length === 1) return 'scalar';
  throw new InputError(`property "${key}" has ${values.length} numbers`, where, 'a tensor needs 9 (row-major) or 6 (Voigt xx yy zz yz xz xy), a vector 3, a scalar 1');
}

export function learntQuantity(shape: TargetShape, route: Route): LearntQuantity {
  if (shape === 'vector') return 'vector';
  if (shape === 'scalar') return 'scalar';
  return route === 'cm' ? 'alpha-cm' : 'alpha-c';
}

/**
 * True for a frame without a periodic cell — no Lattice, or pbc="F F F": an isolated molecule or cluster, whose
 * neighbour list has no periodic images (core/geometry/neighbours.ts) and whose tensor is a polarisability in
 * vacuum. A frame periodic along one or two axes (a slab, a wire) is not isolated.
 */
export function isIsolated(frame: Frame): boolean {
  return frame.cell === null || !(frame.pbc[0] || frame.pbc[1] || frame.pbc[2]);
}

/** Cell volume (Å³) of a frame whose tensor is to be learnt or predicted; a clear error for open structures. */
export function frameVolume(frame: Frame, index: number): number {
  const where = whereOf(frame, index);
  if (isIsolated(frame)) {
    throw new InputError('this frame has no periodic cell', where,
      'cell tensors (ε, α_c, α_CM) need a periodic cell (Lattice="…" with pbc true); for an isolated molecule or cluster give its polarisability in vacuum (--as alpha-mol, Å³)');
  }
  return cellVolume(frame.cell as Mat3, where);
}

/** Where a frame's reference tensor is and what it is (the kind of the request, or alpha-mol for an isolated frame). */
export interface FrameTarget {
  key: string;
  kind: TensorKind;
  isolated: boolean;
}

/**
 * The key and kind of a frame's reference tensor. Kind alpha-mol: every frame must be isolated. A cell kind
 * (eps, alpha-c, alpha-cm): periodic frames carry it under `tensorKey`; isolated frames carry the molecule's
 * polarisability (Å³) under `isolatedKey`, which a mixed set must name — an ε of 1.7 and a polarisability of
 * 1.7 Å³ look alike, so the tool never guesses which one a cluster's number is.
 */
export function frameTarget(frame: Frame, request: Pick<TrainRequest, 'tensorKey' | 'kind' | 'isolatedKey' | 'route'>, index: number): FrameTarget {
  const isolated = isIsolated(frame);
  const where = whereOf(frame, index);
  if (isolated && request.route === 'direct') {
    throw new InputError('route direct learns α_c = (ε − I)V/4π, which a frame without a periodic cell does not have', where,
      'learn isolated molecules and clusters through route cm (their polarisability is learnt as α_CM is)');
  }
  if (request.kind === 'alpha-mol') {
    if (!isolated) {
      throw new InputError('this frame has a periodic cell, but its tensor is given as an isolated polarisability (alpha-mol)', where,
        'mark a molecule in a vacuum box as isolated (pbc="F F F"), or give the periodic frames\' kind (eps, alpha-c or alpha-cm) and the clusters\' key with the isolated-tensor option');
    }
    return { key: request.tensorKey, kind: 'alpha-mol', isolated };
  }
  if (!isolated) return { key: request.tensorKey, kind: request.kind, isolated };
  if (request.isolatedKey === undefined) {
    throw new InputError(`this frame has no periodic cell, so "${request.tensorKey}" cannot be ${request.kind === 'eps' ? 'ε' : `a cell polarisability (${request.kind})`}`, where,
      'for isolated molecules or clusters only, use --as alpha-mol; to mix them with periodic frames, name the clusters\' polarisability (Å³) with --isolated-tensor KEY');
  }
  return { key: request.isolatedKey, kind: 'alpha-mol', isolated };
}

/** The reference tensor of a frame, as a symmetric Mat3 of the given kind. */
export function readTensor(frame: Frame, key: string, index: number): Mat3 {
  const values = readValues(frame, key, index);
  const where = whereOf(frame, index);
  if (shapeOfValues(values, key, where) !== 'tensor') throw new InputError(`property "${key}" is not a 3×3 tensor`, where);
  return tensorFromValues(values, where);
}

/**
 * The additive tensor to learn (α_CM or α_c, Å³) from a reference tensor of kind `kind`; an isolated
 * polarisability is learnt as it is (route cm; frameTarget refuses route direct), with no volume.
 */
export function learntTensor(t: Mat3, kind: TensorKind, route: Route, volumeA3: number | null): Mat3 {
  if (kind === 'alpha-mol') {
    if (route !== 'cm') throw new RangeError('learntTensor: an isolated polarisability is learnt through route cm only');
    return Float64Array.from(t);
  }
  if (volumeA3 === null) throw new RangeError(`learntTensor: a ${kind} tensor needs the cell volume`);
  return convertTensor(t, kind, route === 'cm' ? 'alpha-cm' : 'alpha-c', volumeA3);
}

/** α_CM, α_c and ε from a predicted additive tensor of a route. */
export function tensorsFromLearnt(learnt: Mat3, route: Route, volumeA3: number): { alphaCM: Mat3; alphaC: Mat3; eps: Mat3 } {
  const from: TensorKind = route === 'cm' ? 'alpha-cm' : 'alpha-c';
  return {
    alphaCM: route === 'cm' ? Float64Array.from(learnt) : convertTensor(learnt, from, 'alpha-cm', volumeA3),
    alphaC: route === 'direct' ? Float64Array.from(learnt) : convertTensor(learnt, from, 'alpha-c', volumeA3),
    eps: convertTensor(learnt, from, 'eps', volumeA3),
  };
}

/** A Cartesian vector (x, y, z) in the real-harmonic λ=1 order μ = −1, 0, 1 ↔ (y, z, x) (science.md §3). */
export function vectorToSpherical(v: ArrayLike<number>): Float64Array {
  return Float64Array.of(v[1], v[2], v[0]);
}

export function sphericalToVector(s: ArrayLike<number>): Float64Array {
  return Float64Array.of(s[2], s[0], s[1]);
}

/**
 * The reference tensor `key` of kind `kind` a frame carries, as ε; null when the frame has none (missing, not a
 * 3×3 tensor, no cell, or not convertible). For comparing predictions with references (predict's reference
 * columns, the window's parity of predicted frames), where a frame without one is not an error.
 */
export function referenceEpsOf(frame: Frame, index: number, key: string, kind: TensorKind): Mat3 | null {
  const v = frame.info[key];
  if (!Array.isArray(v) || (v.length !== 9 && v.length !== 6) || !frame.cell) return null;
  try {
    return convertTensor(readTensor(frame, key, index), kind, 'eps', frameVolume(frame, index));
  } catch {
    return null;
  }
}

/**
 * A frame's reference tensor in the units its prediction is compared in — ε for a periodic frame, the
 * polarisability in vacuum (Å³, under the request's key for alpha-mol or its isolatedKey in a mixed set) for an
 * isolated one — or null when the frame carries none (missing, not a 3×3 tensor, not convertible). What
 * `validate` compares per kind; the window's held-out test frames and predicted frames use it too.
 */
export function comparedReferenceOf(frame: Frame, index: number, request: Pick<TrainRequest, 'tensorKey' | 'kind' | 'isolatedKey'>): Mat3 | null {
  if (!isIsolated(frame)) return request.kind === 'alpha-mol' ? null : referenceEpsOf(frame, index, request.tensorKey, request.kind);
  const key = request.kind === 'alpha-mol' ? request.tensorKey : request.isolatedKey;
  const v = key === undefined ? undefined : frame.info[key];
  if (!Array.isArray(v) || (v.length !== 9 && v.length !== 6)) return null;
  try {
    return readTensor(frame, key as string, index);
  } catch {
    return null;
  }
}

/** The predicted tensor compared with comparedReferenceOf: ε of a periodic frame, α (Å³) of an isolated one. */
export function comparedPrediction(p: TensorPrediction): Mat3 {
  return p.isolated ? p.alphaMol : p.eps;
}
