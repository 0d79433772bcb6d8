// Exact nearest-representative search with a lower bound, for the per-atom applicability distance. The plain
// scan (nearestDistance in sparse.ts) starts a distance to every representative of the species: the distances
// are all similar, so its partial-sum exit only comes after a good part of the features. Here each species'
// representatives get a small orthonormal basis Q spanning most of their spread (greedy pivoted Gram–Schmidt of the
// centred rows restricted to their SEARCH_FEATURES features of largest spread, refined by a few steps of subspace
// iteration towards the leading principal directions there), their coordinates b = Qᵀ(p − μ) and residual norms
// ρ_p (over all features). For a query x with a = Qᵀ(x − μ) and residual norm ρ_x,
//   |x − p|² = |a − b|² + |r_x − r_p|²  ≥  |a − b|² + (ρ_x − ρ_p)²     (Pythagoras, then the triangle inequality)
// for any orthonormal Q, so a representative whose bound exceeds a distance already found cannot be the nearest.
// The representatives the bound leaves are screened: their squared distances summed in float32 from centred
// float32 copies, with the features in the order of decreasing spread (most are left after a sixth of them),
// against the smallest distance so far, with a margin from a written bound on the float32 rounding (NARROW_UNIT)
// on top of the float64 one; queries or rows that float32 cannot hold are screened in float64. The few left
// after that (usually one) get their exact distance, summed in float64 as nearestDistance sums it (same
// features, same order), so the minimum is bit-identical to the plain scan; the bound and the screening only
// decide what to skip (nearestOf). The prepared search is kept outside the
// stored model (a WeakMap keyed on the representatives' owner object), so the saved model stays a plain
// structured-clone-friendly object.

import { nearestDistance } from './sparse.ts';
import { align16, residentName, type Region } from '../wasm/arena.ts';
import { fillFrameRows, frameRowsRegion, predictKernels, type PredictKernels } from '../wasm/prediction-kernels.ts';

/**
 * Basis size per species, chosen by measurement (bench/applicability.bench.ts: water-like frames, nmax 8, lmax 6,
 * n0 = 952, 256 representatives per species, basis on SEARCH_FEATURES = 256 features). Each basis vector costs a
 * query SEARCH_FEATURES multiply-adds, and each representative its bound one more term; with d = 4/8/16/24 about
 * 60/25/12/8 representatives per query are screened, and beyond d ≈ 8 the projection and the bounds cost more
 * than the screening they save (the bounds' loop is also written out for d = 8).
 */
export const SEARCH_BASIS = 8;
/**
 * Features the basis is made from: the first SEARCH_FEATURES of a species' screening order (largest spread). A
 * query's coordinates then cost d·SEARCH_FEATURES multiply-adds instead of d·n0, and the bound stays valid (the
 * basis is orthonormal, zero on the other features). Measured at d = 8, n0 = 952 (water-like frames, 2 × 256
 * representatives): all 952 / 512 / 256 / 128 features leave 22.0 / 22.5 / 24.7 / 29.5 representatives to screen,
 * and the search with 256 or 128 took 7–9 % less time than with all 952 (in process, alternating).
 */
export const SEARCH_FEATURES = 256;
/** Below this many representatives a basis does not pay; the bound then uses ρ = |x − μ| alone. */
const MIN_ROWS_FOR_BASIS = 8;

/** The most basis vectors a species of m representatives gets (the JavaScript and the kernel preparation alike). */
function basisLimit(m: number, n0: number, maxBasis: number): number {
  return m < MIN_ROWS_FOR_BASIS ? 0 : Math.min(maxBasis, n0, m);
}
/** Subspace-iteration steps after the Gram–Schmidt start (measured at d = 8: 0/2 steps leave about 38/21 exact
 * distances per query; more steps change little). */
export const SUBSPACE_STEPS = 2;
/** Gram–Schmidt stops when the largest remaining residual is below this fraction of the largest row norm. */
const RANK_TOLERANCE = 1e-9;
/**
 * Pruning margins. The bound and the exact sums each carry round-off of order n0·ε·(scale) ≈ 1e-13 for unit
 * rows (n0 ≈ 1000, ε ≈ 1.1e-16), and Q is orthonormal to about 1e-15 after re-orthogonalisation; a representative
 * is skipped only when its bound beats the best by RELATIVE·best + ABSOLUTE, orders of magnitude above that. The
 * float32 screening adds its own, larger margin on top (limitNarrow).
 */
const MARGIN_RELATIVE = 1e-8;
const MARGIN_ABSOLUTE = 1e-10;
/** Allowance on ρ_x² = |x − μ|² − |a|² (cancellation when the residual is small), relative to |x − μ|². */
const RHO_ALLOWANCE = 1e-10;
/**
 * The float32 screening. Where a species' centred representatives p − μ and a query's centred features x − μ are
 * finite and at most NARROW_LARGEST = 2^50 in size (so that no difference, square or sum of n0 ≤ 2^20 squares can
 * overflow float32), the screening sums Σ (x̂_f − p̂_f)² in float32, x̂ and p̂ the centred features rounded to
 * float32. Error bound, with u = NARROW_UNIT = 2^−23 (twice float32's unit round-off 2^−24, so that it also
 * covers the float64 centring and the float64 evaluation of these formulas) and η = NARROW_TINY = 2^−149 (the
 * smallest float32 subnormal: the absolute error of a product that underflows):
 *   - |x̂_f − (x_f − μ_f)| ≤ u·|x_f − μ_f| (+ η), likewise for p̂, so over any set F of features, with D = |x_F − p_F|
 *     and D̂ = |x̂_F − p̂_F| (Euclidean norms), |D̂ − D| ≤ e := u·(|x − μ| + R) + 2√n0·η, R the species' largest
 *     centred row norm (triangle inequality);
 *   - each difference and square rounds by at most a factor (1 ± u) (a difference that underflows is exact, a
 *     square that underflows loses at most η), and a float32 sum of at most n0 non-negative terms, in any order,
 *     is within a factor (1 ± γ), γ = n0·u/(1 − n0·u) (≈ 1.1e−4 at n0 = 952), of the exact sum of its rounded
 *     terms; so a screened (partial) sum S̃_F satisfies
 *       (1 − γ)(1 − u)³·D̂² − (1 + γ)·n0·η  ≤  S̃_F  ≤  (1 + γ)(1 + u)³·D̂² + (1 + γ)·n0·η.
 * Hence S̃_F > limitNarrow(L) = (1 + γ)(1 + u)³·(√L + e)² + (1 + γ)·n0·η implies D > √L, and the full distance
 * |x − p|² ≥ D² > L: a representative is ruled out only where the float64 rule (L = limitOf(t)) would rule it
 * out. And a full screened sum S̃ bounds the representative's squared distance from above by upperNarrow(S̃) =
 * (√((S̃ + (1 + γ)·n0·η)/((1 − γ)(1 − u)³)) + e)², which takes the place of the screened sum as t: t is then at least
 * the true squared distance of some representative, which is all the argument of nearestOf needs. With unit
 * rows (|x − μ|, R ≲ 1) the limit is about 1.1e−4 relative plus 2.4e−7 on the distance above the float64 one,
 * far below the gaps the screening uses. NaN, infinite or huge features take the float64 screening (feature order),
 * as does a species whose rows do not fit.
 */
const NARROW_UNIT = 2 ** -23;
const NARROW_TINY = 2 ** -149;
const NARROW_LARGEST = 2 ** 50;
/** A query takes the float32 screening when its |x − μ|² (as summed, within 1 + n0·2^−53 of the true one) is at most this: then every |x_f − μ_f| < 2^50, and no feature is NaN or infinite. */
const NARROW_QUERY_NORM = 2 ** 98;

/** One species' prepared representatives. */
export interface SpeciesSearch {
  /** Representative indices (rows of the full array) of this species, in their original order. */
  rows: Int32Array;
  /** Basis size actually used (≤ SEARCH_BASIS; smaller for few or rank-deficient rows, or n0 < basis). */
  d: number;
  mean: Float64Array;
  /** The basis's features: the first `width` of the screening order (min(n0, SEARCH_FEATURES)). */
  width: number;
  /** d × width, row-major: the orthonormal basis vectors, on the features order[0…width) (zero on the others). */
  basis: Float64Array;
  /** d × rows, row-major: the representatives' coordinates Qᵀ(p − μ), one basis direction per row. */
  coordsT: Float64Array;
  /** Each representative's residual norm |(I − QQᵀ)(p − μ)|. */
  residual: Float64Array;
  /** The features in the order the screening sums them (screeningOrder). */
  order: Int32Array;
}

/** A prepared search over all species of one set of representatives. */
export interface NearestSearch {
  n0: number;
  reps: Float64Array;
  species: Map<number, SpeciesSearch>;
}

/** Statistics of the searches made (for the benchmark and the tests). */
export interface SearchCounter {
  queries: number;
  /** Representatives whose bound did not rule them out, summed in the screening order (most left early). */
  screened: number;
  /** Full distances summed in feature order (the candidates left after screening; usually one per query). */
  exact: number;
  /** Feature differences summed in both. */
  summed: number;
}

/**
 * Row k of a (rows of n0) dotted with row j of b; four partial sums (preparation only: the order decides no result,
 * but the kernel's dot4 keeps it, so that both preparations give the same bits).
 */
function dotRows(a: Float64Array, k: number, b: Float64Array, j: number, n0: number): number {
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  const oa = k * n0;
  const ob = j * n0;
  let f = 0;
  for (; f + 3 < n0; f += 4) {
    s0 += a[oa + f] * b[ob + f];
    s1 += a[oa + f + 1] * b[ob + f + 1];
    s2 += a[oa + f + 2] * b[ob + f + 2];
    s3 += a[oa + f + 3] * b[ob + f + 3];
  }
  for (; f < n0; f++) s0 += a[oa + f] * b[ob + f];
  return s0 + s1 + s2 + s3;
}

/**
 * Orthonormalises row j of `v` against its rows 0…j−1 (already orthonormal) and normalises it: two passes of
 * Gram–Schmidt, so that orthogonality holds to round-off. False when the row is (numerically) dependent on them.
 */
function orthonormaliseRow(v: Float64Array, j: number, n0: number, tiny: number): boolean {
  const oj = j * n0;
  const before = Math.sqrt(dotRows(v, j, v, j, n0));
  for (let pass = 0; pass < 2; pass++) {
    for (let i = 0; i < j; i++) {
      const c = dotRows(v, j, v, i, n0);
      const oi = i * n0;
      for (let f = 0; f < n0; f++) v[oj + f] -= c * v[oi + f];
    }
  }
  const nv = Math.sqrt(dotRows(v, j, v, j, n0));
  if (!(nv > tiny * before) || !(nv > 0)) return false;
  for (let f = 0; f < n0; f++) v[oj + f] /= nv;
  return true;
}

/** Orthonormalises the first `count` rows of `v` in order (orthonormaliseRow); false at the first dependent row. */
function orthonormaliseRows(v: Float64Array, count: number, n0: number, tiny: number): boolean {
  for (let j = 0; j < count; j++) if (!orthonormaliseRow(v, j, n0, tiny)) return false;
  return true;
}

/** What the preparation proper gives for rows of n0 features (prepareSpeciesJs, the kernel's prepareSpecies). */
interface PreparedCore {
  d: number;
  mean: Float64Array;
  basis: Float64Array;
  coordsT: Float64Array;
  residual: Float64Array;
}

/** The mean of the rows `rows` of `reps` (rows of n0): summed in ascending row order, then divided. */
function meanOfRows(reps: Float64Array, rows: Int32Array, n0: number): Float64Array {
  const mean = new Float64Array(n0);
  for (let k = 0; k < rows.length; k++) {
    const o = rows[k] * n0;
    for (let f = 0; f < n0; f++) mean[f] += reps[o + f];
  }
  for (let f = 0; f < n0; f++) mean[f] /= rows.length;
  return mean;
}

/**
 * One species' prepared search (the rows `rows` of `reps`): its mean, its screening order, and the basis of the
 * preparation proper (`core`: prepareSpeciesJs or the kernel's) made from the first `width` features of the
 * screening order (those of largest spread; the basis vectors are zero on the others, still orthonormal, so the
 * bound holds), with each representative's residual norm over all n0 features. The same bits either way.
 */
function prepareSpecies(reps: Float64Array, rows: Int32Array, n0: number, features: number, core: (compact: Float64Array, m: number, width: number) => PreparedCore | null): SpeciesSearch | null {
  const m = rows.length;
  const mean = meanOfRows(reps, rows, n0);
  const order = screeningOrder(reps, rows, mean, n0);
  const width = Math.min(n0, features);
  const compact = new Float64Array(m * width);
  for (let k = 0; k < m; k++) {
    const o = rows[k] * n0;
    for (let i = 0; i < width; i++) compact[k * width + i] = reps[o + order[i]];
  }
  const prepared = core(compact, m, width);
  if (!prepared) return null;
  const { d, basis, coordsT } = prepared;
  const residual = prepared.residual;
  if (width < n0) {
    // the residual's part outside the basis's features, summed explicitly
    for (let k = 0; k < m; k++) {
      const o = rows[k] * n0;
      let rest = 0;
      for (let i = width; i < n0; i++) {
        const v = reps[o + order[i]] - mean[order[i]];
        rest += v * v;
      }
      residual[k] = Math.sqrt(residual[k] * residual[k] + rest);
    }
  }
  return { rows, d, width, mean, basis, coordsT, residual, order };
}

/**
 * The preparation proper of rows of n0 features (the rows `rows` of `reps`). The WebAssembly kernel
 * (assembly/prediction-kernels.ts prepareSpecies, through wasmPrepare) does the very same operations in the same
 * order, so both give the same bits: each dot product as dotRows (four partial sums), each row update element by
 * element, each sum of rows in ascending row order.
 */
function prepareSpeciesJs(reps: Float64Array, rows: Int32Array, n0: number, maxBasis: number, steps: number): PreparedCore {
  const m = rows.length;
  const mean = meanOfRows(reps, rows, n0);
  const centred = new Float64Array(m * n0);
  for (let k = 0; k < m; k++) {
    const o = rows[k] * n0;
    for (let f = 0; f < n0; f++) centred[k * n0 + f] = reps[o + f] - mean[f];
  }
  const limit = basisLimit(m, n0, maxBasis);
  // squared residual norms, kept up to date by subtraction: they only choose the pivot
  const left = new Float64Array(m);
  // the scale for the rank test: the rows themselves, not their spread (identical rows leave only round-off)
  let first = 0;
  for (let k = 0; k < m; k++) {
    left[k] = dotRows(centred, k, centred, k, n0);
    first = Math.max(first, dotRows(reps, rows[k], reps, rows[k], n0));
  }
  // Start: greedy pivoted Gram–Schmidt (the row with the largest residual next), which also finds the rank. The
  // residuals are not kept: a row's component along a new basis vector is its centred row's (the basis vector is
  // orthogonal to the ones before), and the pivot's residual is rebuilt from its components.
  const coef = new Float64Array(m * limit); // coef[k·limit + j] = ⟨centred row k, basis vector j⟩
  let basis = new Float64Array(limit * n0);
  let d = 0;
  while (d < limit) {
    let pivot = -1;
    let largest = 0;
    for (let k = 0; k < m; k++) {
      if (left[k] > largest) {
        largest = left[k];
        pivot = k;
      }
    }
    if (pivot < 0 || largest <= RANK_TOLERANCE * RANK_TOLERANCE * first) break;
    const od = d * n0;
    for (let f = 0; f < n0; f++) basis[od + f] = centred[pivot * n0 + f];
    for (let i = 0; i < d; i++) {
      const c = coef[pivot * limit + i];
      for (let f = 0; f < n0; f++) basis[od + f] -= c * basis[i * n0 + f];
    }
    if (!orthonormaliseRow(basis, d, n0, RANK_TOLERANCE)) break;
    for (let k = 0; k < m; k++) {
      const c = dotRows(centred, k, basis, d, n0);
      coef[k * limit + d] = c;
      left[k] = k === pivot ? 0 : left[k] - c * c;
    }
    d++;
  }
  basis = basis.slice(0, d * n0);
  // Then a few steps of subspace iteration Q ← orth(CᵀC Q) towards the d leading principal directions: the bound
  // depends only on the span, and the principal span holds the most spread, so fewer exact distances are needed.
  // The first step's projections C Qᵀ are the Gram–Schmidt components already at hand.
  for (let step = 0; step < steps && d > 0; step++) {
    if (step > 0) for (let k = 0; k < m; k++) for (let j = 0; j < d; j++) coef[k * limit + j] = dotRows(centred, k, basis, j, n0);
    const next = new Float64Array(d * n0);
    for (let k = 0; k < m; k++) {
      for (let j = 0; j < d; j++) {
        const c = coef[k * limit + j];
        for (let f = 0; f < n0; f++) next[j * n0 + f] += c * centred[k * n0 + f];
      }
    }
    if (!orthonormaliseRows(next, d, n0, RANK_TOLERANCE)) break; // keep the last good basis
    basis = next;
  }
  // coordinates and residual norms from the centred rows, computed explicitly (not by cancellation)
  const residual = new Float64Array(m);
  const coordsT = new Float64Array(d * m);
  const r = new Float64Array(n0);
  for (let k = 0; k < m; k++) {
    r.set(centred.subarray(k * n0, k * n0 + n0));
    for (let j = 0; j < d; j++) {
      const c = dotRows(centred, k, basis, j, n0);
      coordsT[j * m + k] = c;
      for (let f = 0; f < n0; f++) r[f] -= c * basis[j * n0 + f];
    }
    residual[k] = Math.sqrt(dotRows(r, 0, r, 0, n0));
  }
  return { d, mean, basis, coordsT, residual };
}

/** Prepares the search over representatives `reps` (rows of n0) with species `repSpecies`. */
export function prepareNearestSearch(
  reps: Float64Array,
  repSpecies: Int32Array,
  n0: number,
  options: { basis?: number; steps?: number; features?: number } = {},
): NearestSearch {
  const maxBasis = options.basis ?? SEARCH_BASIS;
  const steps = options.steps ?? SUBSPACE_STEPS;
  const features = options.features ?? SEARCH_FEATURES;
  const k = predictKernels();
  const species = new Map<number, SpeciesSearch>();
  for (const [s, rows] of rowsBySpecies(repSpecies)) {
    const wasm = k ? prepareSpecies(reps, rows, n0, features, (compact, m, width) => wasmPrepare(k, compact, m, width, maxBasis, steps)) : null;
    species.set(s, wasm ?? (prepareSpecies(reps, rows, n0, features, (compact, m, width) => prepareSpeciesJs(compact, Int32Array.from({ length: m }, (_, i) => i), width, maxBasis, steps)) as SpeciesSearch));
  }
  return { n0, reps, species };
}

const cache = new WeakMap<object, NearestSearch>();

/**
 * The prepared search for representatives owned by `owner` (e.g. a model's applicability object), built on first
 * use and kept as long as the owner lives. The owner's arrays must not be changed in place afterwards.
 */
export function cachedNearestSearch(owner: { n0: number; species: Int32Array; p: Float64Array }): NearestSearch {
  let s = cache.get(owner);
  if (!s || s.reps !== owner.p || s.n0 !== owner.n0) {
    s = prepareNearestSearch(owner.p, owner.species, owner.n0);
    cache.set(owner, s);
  }
  return s;
}

/**
 * Queries an owner answers by the plain scan before its search is prepared. With the WebAssembly kernels,
 * preparing 2 × 256 representatives at n0 = 952 takes 16 ms (43 ms the first time in a process) and saves about
 * 30 µs per query (plain scan 44–50 µs, prepared search 17 µs; load ≈ 4 on 2 cores), so it pays after 550–1,400
 * queries; in JavaScript 95–130 ms against 185 and 36 µs, after about 700 (figures of 3 December 2026; since the
 * float32 screening, preparing takes 7–8 ms and a prepared query about 5 µs, so preparing would pay somewhat sooner;
 * the constant only decides speed, so it was left). So a small job (one 384-atom frame) never prepares, and a longer
 * one pays at most this many slower queries first. Either way the distances are the same numbers.
 */
export const PLAIN_QUERIES_BEFORE_PREPARING = 1024;

/** The number of plain queries before preparing, in this thread now (the same with the kernels on or off). */
export function plainQueriesBeforePreparing(): number {
  return PLAIN_QUERIES_BEFORE_PREPARING;
}
const plainQueries = new WeakMap<object, number>();

/**
 * searchNearestAll over the representatives of `owner`: with its prepared search (cachedNearestSearch) once the
 * owner has answered plainQueriesBeforePreparing() queries (or was prepared already), before that by the plain
 * scan (sparse.ts nearestDistance, or its WebAssembly kernel), whose numbers the search reproduces bit for bit.
 * `rowsKey` as for searchNearestAll.
 */
export function nearestAllOf(owner: { n0: number; species: Int32Array; p: Float64Array }, a: Float64Array, count: number, species: Int32Array, out: Float64Array, rowsKey?: object): void {
  const asked = plainQueries.get(owner) ?? 0;
  const prepared = cache.get(owner);
  if (asked + count > plainQueriesBeforePreparing() || (prepared && prepared.reps === owner.p && prepared.n0 === owner.n0)) {
    searchNearestAll(cachedNearestSearch(owner), a, count, species, out, undefined, rowsKey);
    return;
  }
  plainQueries.set(owner, asked + count);
  if (wasmScanAll(owner, a, count, species, out, rowsKey)) return;
  for (let e = 0; e < count; e++) out[e] = nearestDistance(a, e, owner.p, owner.species, species[e], owner.n0);
}

// scratch buffers reused between queries (prediction is single-threaded per worker)
let scratchBound = new Float64Array(0);
let scratchCoords = new Float64Array(0);
let scratchCentred = new Float64Array(0);
let scratchWidth = new Float64Array(0);
const scratchNorms = new Float64Array(4);
const scratchRows = new Int32Array(4);
let scratchNarrow = new Float32Array(0);
let scratchKept = new Int32Array(0);
let scratchKeptSum = new Float64Array(0);

/**
 * For the query rows rowsOf[0…count) of `a` (count ≤ 4): the centred rows x − μ, their squared norms xx[g] and
 * their coordinates q[g·d + j] = Qᵀ(x − μ). Four queries and two basis vectors per pass (eight independent sums,
 * six loads per eight products). These numbers only feed the bound, so their summation order is free. A group of
 * fewer than four repeats its first row (computed and ignored).
 */
function project(sp: SpeciesSearch, n0: number, a: Float64Array, rowsOf: Int32Array, count: number, xc: Float64Array, q: Float64Array, xx: Float64Array): void {
  const { d, mean, basis, width, order } = sp;
  const xk = scratchWidth;
  for (let g = 0; g < 4; g++) {
    const oa = rowsOf[g < count ? g : 0] * n0;
    const ox = g * n0;
    let s = 0;
    for (let f = 0; f < n0; f++) {
      const v = a[oa + f] - mean[f];
      xc[ox + f] = v;
      s += v * v;
    }
    xx[g] = s;
    // the basis's features of the centred query
    for (let i = 0; i < width; i++) xk[g * width + i] = xc[ox + order[i]];
  }
  const x1 = width, x2 = 2 * width, x3 = 3 * width;
  let j = 0;
  for (; j + 1 < d; j += 2) {
    const b0 = j * width, b1 = b0 + width;
    let s00 = 0, s01 = 0, s10 = 0, s11 = 0, s20 = 0, s21 = 0, s30 = 0, s31 = 0;
    for (let f = 0; f < width; f++) {
      const u = basis[b0 + f], v = basis[b1 + f];
      const y0 = xk[f], y1 = xk[x1 + f], y2 = xk[x2 + f], y3 = xk[x3 + f];
      s00 += u * y0;
      s01 += v * y0;
      s10 += u * y1;
      s11 += v * y1;
      s20 += u * y2;
      s21 += v * y2;
      s30 += u * y3;
      s31 += v * y3;
    }
    q[j] = s00;
    q[j + 1] = s01;
    q[d + j] = s10;
    q[d + j + 1] = s11;
    q[2 * d + j] = s20;
    q[2 * d + j + 1] = s21;
    q[3 * d + j] = s30;
    q[3 * d + j + 1] = s31;
  }
  if (j < d) {
    const b0 = j * width;
    let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
    for (let f = 0; f < width; f++) {
      const u = basis[b0 + f];
      s0 += u * xk[f];
      s1 += u * xk[x1 + f];
      s2 += u * xk[x2 + f];
      s3 += u * xk[x3 + f];
    }
    q[j] = s0;
    q[d + j] = s1;
    q[2 * d + j] = s2;
    q[3 * d + j] = s3;
  }
}

/**
 * Σ (x_f − r_f)² of the query row at offset xo of `x` and the row at offset `o` of `rows` (the float64 screening,
 * used where the float32 one cannot be: in feature order), in any summation order (four partial sums), checked
 * after every 16 features: the sum so far as soon as it exceeds `limit` (the representative is then ruled out),
 * else the full sum. Adds the features summed to counter.summed.
 */
function screen(x: Float64Array, xo: number, rows: Float64Array, o: number, n0: number, limit: number, counter?: SearchCounter): number {
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  let f = 0;
  for (; f + 15 < n0; f += 16) {
    for (let g = f; g < f + 16; g += 4) {
      const d0 = x[xo + g] - rows[o + g];
      const d1 = x[xo + g + 1] - rows[o + g + 1];
      const d2 = x[xo + g + 2] - rows[o + g + 2];
      const d3 = x[xo + g + 3] - rows[o + g + 3];
      s0 += d0 * d0;
      s1 += d1 * d1;
      s2 += d2 * d2;
      s3 += d3 * d3;
    }
    const s = s0 + s1 + (s2 + s3);
    if (s > limit) {
      if (counter) counter.summed += f + 16;
      return s;
    }
  }
  let s = s0 + s1 + (s2 + s3);
  for (; f < n0; f++) {
    const d = x[xo + f] - rows[o + f];
    s += d * d;
  }
  if (counter) counter.summed += n0;
  return s;
}

const fround = Math.fround;

/**
 * Σ (x_f − r_f)² in float32 of the float32 query `x` and the float32 row at offset `o` of `rows` (centred, features
 * in the species' screening order), as the kernel's screen32 sums it, operation for operation (each float32
 * operation here is the float64 one rounded to float32, which is the correctly rounded float32 result, so the
 * bits are the kernel's): sixteen lanes, lane i summing the features f ≡ i (mod 16) in order; after every 32
 * features, and after a last block of 16, the lanes are added as (l_i + l_{i+4}) + (l_{i+8} + l_{i+12}) for
 * i < 4, then (0 + 1) + (2 + 3), and the sum so far returned as soon as it exceeds `limit`; else the full sum,
 * the last n0 mod 16 features added to it one by one. Adds the features summed to counter.summed.
 */
function screenNarrow(x: Float32Array, rows: Float32Array, o: number, n0: number, limit: number, counter?: SearchCounter): number {
  let l0 = 0, l1 = 0, l2 = 0, l3 = 0, l4 = 0, l5 = 0, l6 = 0, l7 = 0, l8 = 0, l9 = 0, l10 = 0, l11 = 0, l12 = 0, l13 = 0, l14 = 0, l15 = 0;
  let d = 0;
  let s = 0;
  let f = 0;
  for (; f + 15 < n0; f += 16) {
    const r = o + f;
    d = fround(x[f] - rows[r]);
    l0 = fround(l0 + fround(d * d));
    d = fround(x[f + 1] - rows[r + 1]);
    l1 = fround(l1 + fround(d * d));
    d = fround(x[f + 2] - rows[r + 2]);
    l2 = fround(l2 + fround(d * d));
    d = fround(x[f + 3] - rows[r + 3]);
    l3 = fround(l3 + fround(d * d));
    d = fround(x[f + 4] - rows[r + 4]);
    l4 = fround(l4 + fround(d * d));
    d = fround(x[f + 5] - rows[r + 5]);
    l5 = fround(l5 + fround(d * d));
    d = fround(x[f + 6] - rows[r + 6]);
    l6 = fround(l6 + fround(d * d));
    d = fround(x[f + 7] - rows[r + 7]);
    l7 = fround(l7 + fround(d * d));
    d = fround(x[f + 8] - rows[r + 8]);
    l8 = fround(l8 + fround(d * d));
    d = fround(x[f + 9] - rows[r + 9]);
    l9 = fround(l9 + fround(d * d));
    d = fround(x[f + 10] - rows[r + 10]);
    l10 = fround(l10 + fround(d * d));
    d = fround(x[f + 11] - rows[r + 11]);
    l11 = fround(l11 + fround(d * d));
    d = fround(x[f + 12] - rows[r + 12]);
    l12 = fround(l12 + fround(d * d));
    d = fround(x[f + 13] - rows[r + 13]);
    l13 = fround(l13 + fround(d * d));
    d = fround(x[f + 14] - rows[r + 14]);
    l14 = fround(l14 + fround(d * d));
    d = fround(x[f + 15] - rows[r + 15]);
    l15 = fround(l15 + fround(d * d));
    // the kernel looks after each block of 32 and after a last block of 16
    if ((f & 31) !== 16 && f + 31 < n0) continue;
    s = fround(
      fround(fround(fround(l0 + l4) + fround(l8 + l12)) + fround(fround(l1 + l5) + fround(l9 + l13))) +
        fround(fround(fround(l2 + l6) + fround(l10 + l14)) + fround(fround(l3 + l7) + fround(l11 + l15))),
    );
    if (s > limit) {
      if (counter) counter.summed += f + 16;
      return s;
    }
  }
  for (; f < n0; f++) {
    d = fround(x[f] - rows[o + f]);
    s = fround(s + fround(d * d));
  }
  if (counter) counter.summed += n0;
  return s;
}

/**
 * The full squared distance from the query row (offset oa in a) to the representative row (offset o in reps),
 * summed feature by feature from zero as nearestDistance sums a distance it does not leave early: the same bits.
 */
function exactDistance(a: Float64Array, oa: number, reps: Float64Array, o: number, n0: number): number {
  let s = 0;
  for (let f = 0; f < n0; f++) {
    const d = a[oa + f] - reps[o + f];
    s += d * d;
  }
  return s;
}

/**
 * Whether a species' representatives may be screened in float32, and the largest norm of its centred rows: every
 * centred feature p_f − μ_f finite and at most NARROW_LARGEST in size (then no float32 difference, square or sum
 * of n0 of them can overflow). Made on first use.
 */
interface NarrowInfo {
  fits: boolean;
  largest: number;
}
const narrowInfos = new WeakMap<SpeciesSearch, NarrowInfo>();

function narrowInfo(reps: Float64Array, sp: SpeciesSearch, n0: number): NarrowInfo {
  let info = narrowInfos.get(sp);
  if (!info) {
    let fits = true;
    let largest = 0;
    for (let k = 0; k < sp.rows.length; k++) {
      const o = sp.rows[k] * n0;
      let ss = 0;
      for (let f = 0; f < n0; f++) {
        const v = reps[o + f] - sp.mean[f];
        if (!(Math.abs(v) <= NARROW_LARGEST)) fits = false;
        ss += v * v;
      }
      largest = Math.max(largest, Math.sqrt(ss));
    }
    info = { fits, largest };
    narrowInfos.set(sp, info);
  }
  return info;
}

/** Each species' centred representatives in float32 with their features in its screening order (rows of n0), made on first use; null when they do not fit (narrowInfo). */
const narrowRows = new WeakMap<SpeciesSearch, Float32Array | null>();

function narrowRowsOf(search: NearestSearch, sp: SpeciesSearch): Float32Array | null {
  let rows = narrowRows.get(sp);
  if (rows === undefined) {
    rows = narrowInfo(search.reps, sp, search.n0).fits ? new Float32Array(sp.rows.length * search.n0) : null;
    if (rows) fillNarrow(search.reps, sp, search.n0, rows);
    narrowRows.set(sp, rows);
  }
  return rows;
}

/** Writes the centred representatives of `sp` rounded to float32, features in its screening order, into `out` (rows of n0). */
function fillNarrow(reps: Float64Array, sp: SpeciesSearch, n0: number, out: Float32Array): void {
  const { rows, order, mean } = sp;
  for (let k = 0; k < rows.length; k++) {
    const from = rows[k] * n0;
    const to = k * n0;
    for (let i = 0; i < n0; i++) out[to + i] = reps[from + order[i]] - mean[order[i]];
  }
}

/**
 * The features of a species in the order its screening sums them: by decreasing spread (variance about the mean)
 * over its representatives, ties by index, so that a sum that is going to pass a limit passes it early. The order
 * decides only how soon a representative is ruled out, never a number kept.
 */
function screeningOrder(reps: Float64Array, rows: Int32Array, mean: Float64Array, n0: number): Int32Array {
  const spread = new Float64Array(n0);
  for (let k = 0; k < rows.length; k++) {
    const o = rows[k] * n0;
    for (let f = 0; f < n0; f++) {
      const v = reps[o + f] - mean[f];
      spread[f] += v * v;
    }
  }
  return Int32Array.from({ length: n0 }, (_, f) => f).sort((x, y) => spread[y] - spread[x] || x - y);
}

/** The terms of limitNarrow and upperNarrow that depend on n0 only (narrow: (1 − γ)(1 − u)³, wide: (1 + γ)(1 + u)³, tiny: (1 + γ)·n0·η). */
function narrowTerms(n0: number): { wide: number; narrow: number; tiny: number } {
  if (lastNarrowTerms.n0 === n0) return lastNarrowTerms.terms;
  const g = (n0 * NARROW_UNIT) / (1 - n0 * NARROW_UNIT);
  const terms = {
    wide: (1 + g) * ((1 + NARROW_UNIT) * (1 + NARROW_UNIT) * (1 + NARROW_UNIT)),
    narrow: (1 - g) * ((1 - NARROW_UNIT) * (1 - NARROW_UNIT) * (1 - NARROW_UNIT)),
    tiny: (1 + g) * n0 * NARROW_TINY,
  };
  lastNarrowTerms = { n0, terms };
  return terms;
}
/** narrowTerms of the last n0 asked for (every query of a search asks for the same). */
let lastNarrowTerms: { n0: number; terms: { wide: number; narrow: number; tiny: number } } = { n0: -1, terms: { wide: 1, narrow: 1, tiny: 0 } };

/**
 * The limit a float32 screened sum must pass so that the representative's exact squared distance passes the
 * float64 limit `limit` (see the top of this file): (√limit + e)²·(1 + γ)(1 + u)³ + (1 + γ)·n0·η, with e the
 * query's rounding term. The kernel's limitNarrow does the same operations.
 */
function limitNarrow(limit: number, e: number, wide: number, tiny: number): number {
  const a = Math.sqrt(limit) + e;
  return wide * (a * a) + tiny;
}

/** An upper bound on the exact squared distance whose float32 screened sum (in full) is s: (√((s + tiny)/narrow) + e)². */
function upperNarrow(s: number, e: number, narrow: number, tiny: number): number {
  const a = Math.sqrt((s + tiny) / narrow) + e;
  return a * a;
}

/** The margin a screened sum or a bound must pass to rule a representative out, given the smallest sum t so far. */
function limitOf(t: number): number {
  return t + MARGIN_RELATIVE * t + MARGIN_ABSOLUTE;
}

/**
 * The exact nearest distance of the query row at offset oa of `a`, given its coordinates q[qo…qo+d) and its
 * squared centred norm xx (from project). Three steps, the same in the kernel (assembly/prediction-kernels.ts
 * candidates and searchSpecies):
 *   1. the lower bound of every representative (see the top of this file);
 *   2. screening: the representative of the smallest bound, then every one its bound does not rule out, summed
 *      (screenNarrow: float32, centred, in the species' screening order; screen: float64 in feature order where
 *      the query or the rows do not fit float32), each against the smallest distance t so far, and left as soon
 *      as its sum passes t's margin. In float64, t is the smallest screened sum: a screened sum and the exact one
 *      are sums of the very same terms (x_f − p_f)² in two orders, each within n0·ε (≈ 1e-13) relative of the
 *      true sum, so a sum that passes t by the margin limitOf(t) (1e-8 relative) belongs to a representative
 *      strictly farther than the one t came from, which is never the nearest, nor tied with it. In float32, t is
 *      the smallest upper bound upperNarrow of a full screened sum (at least the true squared distance of the
 *      representative it came from), and a sum passing limitNarrow(limitOf(t)) proves the true distance passes
 *      limitOf(t) (see NARROW_UNIT): the same conclusion;
 *   3. the exact distance, in float64 and in feature order as nearestDistance sums it, of every screened
 *      representative whose sum is within t's margin (usually one): their smallest is the minimum of the plain
 *      scan, bit for bit.
 * A NaN bound or sum rules nothing out (its exact distance, NaN, never wins, as in the plain scan).
 */
function nearestOf(search: NearestSearch, sp: SpeciesSearch, a: Float64Array, oa: number, xc: Float64Array, xo: number, q: Float64Array, qo: number, xx: number, counter?: SearchCounter): number {
  const { n0, reps } = search;
  const { rows, d, coordsT, residual, order } = sp;
  const m = rows.length;
  const bound = scratchBound;
  let qq = 0;
  for (let j = 0; j < d; j++) qq += q[qo + j] * q[qo + j];
  // ρ_x lies in [lo, hi]: the residual from |x − μ|² − |a|², widened for the cancellation in that difference
  const t0 = xx - qq;
  const allowance = RHO_ALLOWANCE * xx;
  const lo = Math.sqrt(Math.max(0, t0 - allowance));
  const hi = Math.sqrt(Math.max(0, t0 + allowance));
  // bounds for all representatives, four basis directions per pass (again free summation order)
  for (let k = 0; k < m; k++) {
    const rk = residual[k];
    const gap = rk > hi ? rk - hi : rk < lo ? lo - rk : 0;
    bound[k] = gap * gap;
  }
  let j = 0;
  for (; j + 3 < d; j += 4) {
    const q0 = q[qo + j], q1 = q[qo + j + 1], q2 = q[qo + j + 2], q3 = q[qo + j + 3];
    const o0 = j * m, o1 = o0 + m, o2 = o1 + m, o3 = o2 + m;
    for (let k = 0; k < m; k++) {
      const g0 = q0 - coordsT[o0 + k], g1 = q1 - coordsT[o1 + k], g2 = q2 - coordsT[o2 + k], g3 = q3 - coordsT[o3 + k];
      bound[k] += g0 * g0 + g1 * g1 + (g2 * g2 + g3 * g3);
    }
  }
  for (; j < d; j++) {
    const qj = q[qo + j];
    const oc = j * m;
    for (let k = 0; k < m; k++) {
      const g = qj - coordsT[oc + k];
      bound[k] += g * g;
    }
  }
  let first = -1;
  let smallest = Infinity;
  for (let k = 0; k < m; k++) {
    if (bound[k] < smallest) {
      smallest = bound[k];
      first = k;
    }
  }
  // float32 screening (the centred query in the screening order, rounded) when the species' rows allow it and the
  // query's centred features are finite and not huge; else float64 in feature order
  const narrow = narrowRowsOf(search, sp);
  const xn = scratchNarrow;
  const narrowQuery = narrow !== null && xx <= NARROW_QUERY_NORM;
  if (narrow && narrowQuery) for (let i = 0; i < n0; i++) xn[i] = xc[xo + order[i]];
  const { wide, narrow: shrink, tiny } = narrowTerms(n0);
  const e = NARROW_UNIT * (Math.sqrt(xx) + narrowInfo(reps, sp, n0).largest) + 2 * Math.sqrt(n0) * NARROW_TINY;
  const kept = scratchKept;
  const keptSum = scratchKeptSum;
  let nk = 0;
  let looked = 0;
  let t = Infinity;
  if (first >= 0) {
    looked++;
    const s = narrowQuery ? screenNarrow(xn, narrow, first * n0, n0, Infinity, counter) : screen(a, oa, reps, rows[first] * n0, n0, Infinity, counter);
    t = narrowQuery ? upperNarrow(s, e, shrink, tiny) : s;
    kept[0] = first;
    keptSum[0] = s;
    nk = 1;
  }
  let limit = limitOf(t);
  let cut = narrowQuery ? limitNarrow(limit, e, wide, tiny) : limit;
  for (let k = 0; k < m; k++) {
    if (k === first || bound[k] > limit) continue;
    looked++;
    const s = narrowQuery ? screenNarrow(xn, narrow, k * n0, n0, cut, counter) : screen(a, oa, reps, rows[k] * n0, n0, cut, counter);
    if (s > cut) continue;
    kept[nk] = k;
    keptSum[nk] = s;
    nk++;
    // the smallest distance (a NaN sum, from a representative with NaN features, is passed over)
    const u = narrowQuery ? upperNarrow(s, e, shrink, tiny) : s;
    if (u < t || (Number.isNaN(t) && !Number.isNaN(u))) {
      t = u;
      limit = limitOf(t);
      cut = narrowQuery ? limitNarrow(limit, e, wide, tiny) : limit;
    }
  }
  let best = Infinity;
  let exact = 0;
  for (let i = 0; i < nk; i++) {
    if (keptSum[i] > cut) continue;
    exact++;
    const s = exactDistance(a, oa, reps, rows[kept[i]] * n0, n0);
    if (s < best) best = s;
  }
  if (counter) {
    counter.screened += looked;
    counter.exact += exact;
    counter.summed += exact * n0;
  }
  return Math.sqrt(best);
}

/**
 * Distance from row i of `a` to the nearest representative of `species` (Infinity if none): the same value, bit for
 * bit, as nearestDistance(a, i, reps, repSpecies, species, n0).
 */
export function searchNearest(search: NearestSearch, a: Float64Array, i: number, species: number, counter?: SearchCounter): number {
  const sp = search.species.get(species);
  if (counter) counter.queries++;
  if (!sp) return Infinity;
  ensureScratch(search, sp);
  scratchRows[0] = i;
  project(sp, search.n0, a, scratchRows, 1, scratchCentred, scratchCoords, scratchNorms);
  return nearestOf(search, sp, a, i * search.n0, scratchCentred, 0, scratchCoords, 0, scratchNorms[0], counter);
}

/**
 * searchNearest for every row e < count of `a`, whose species is species[e], into out[e]: the same numbers, with
 * the coordinates of four queries of one species computed in one pass (project). `rowsKey`: the key of the rows'
 * copy in the kernel's memory (prediction-kernels.ts fillFrameRows), shared with other callers of one frame.
 */
export function searchNearestAll(search: NearestSearch, a: Float64Array, count: number, species: Int32Array, out: Float64Array, counter?: SearchCounter, rowsKey?: object): void {
  const k = predictKernels();
  if (k && wasmSearchAll(k, search, a, count, species, out, counter, rowsKey)) return;
  const n0 = search.n0;
  for (let e = 0; e < count; e++) if (!search.species.has(species[e])) out[e] = Infinity;
  if (counter) counter.queries += count;
  for (const [s, sp] of search.species) {
    ensureScratch(search, sp);
    let filled = 0;
    const flush = () => {
      project(sp, n0, a, scratchRows, filled, scratchCentred, scratchCoords, scratchNorms);
      for (let g = 0; g < filled; g++) {
        const e = scratchRows[g];
        out[e] = nearestOf(search, sp, a, e * n0, scratchCentred, g * n0, scratchCoords, g * sp.d, scratchNorms[g], counter);
      }
      filled = 0;
    };
    for (let e = 0; e < count; e++) {
      if (species[e] !== s) continue;
      scratchRows[filled++] = e;
      if (filled === 4) flush();
    }
    if (filled > 0) flush();
  }
}

function ensureScratch(search: NearestSearch, sp: SpeciesSearch): void {
  if (scratchBound.length < sp.rows.length) {
    scratchBound = new Float64Array(sp.rows.length);
    scratchKept = new Int32Array(sp.rows.length);
    scratchKeptSum = new Float64Array(sp.rows.length);
  }
  if (scratchNarrow.length < search.n0) scratchNarrow = new Float32Array(search.n0);
  if (scratchCoords.length < 4 * sp.d) scratchCoords = new Float64Array(4 * sp.d);
  if (scratchCentred.length < 4 * search.n0) scratchCentred = new Float64Array(4 * search.n0);
  if (scratchWidth.length < 4 * sp.width) scratchWidth = new Float64Array(4 * sp.width);
}

/** Queries copied into the kernel's memory at a time (a 384-atom frame in one or two passes, bounded scratch). */
const QUERY_CHUNK = 256;
/**
 * Queries passed to the plain scan's kernel at a time: fewer than QUERY_CHUNK, so that a fresh process's first
 * frame calls it several times. V8 first runs a WebAssembly function on its baseline tier and replaces it with
 * optimised code only for later calls, never during a call. A 384-atom frame in 6 calls instead of 2: its plain
 * scan took 20 ms (median of 5) in a fresh process against 31 ms, and 15–16 ms optimised (load 2, in process).
 * The distances do not change (each query is answered on its own). The prepared search keeps QUERY_CHUNK: it
 * takes queries of a species in fours, and smaller passes leave more fours part-empty.
 */
const SCAN_CHUNK = 64;

/** A set of representatives as the kernels hold it: each species' rows contiguous, in their original order. */
interface RepsLayout {
  bytes: number;
  n0: number;
  /** Per species: its rows (indices into the full array) and their byte offset in the region. */
  species: Map<number, { rows: Int32Array; offset: number }>;
  /** The groupings (a species array, a prepared search) already found to group the rows as this layout does. */
  checked: WeakSet<object>;
}
const repsLayouts = new WeakMap<Float64Array, RepsLayout>();

/**
 * The layout of representatives `reps` grouped by `source` (a species array or a prepared search; `rowsOf` gives its
 * rows per species in their first-seen order). The layout, like the resident region it describes, is kept per
 * array; null when `source` groups the same array otherwise (or with another row length) than the layout already
 * held, and the caller takes the JavaScript path.
 */
function repsLayout(reps: Float64Array, n0: number, source: object, rowsOf: () => Map<number, Int32Array>): RepsLayout | null {
  const held = repsLayouts.get(reps);
  if (held) {
    if (held.checked.has(source)) return held;
    if (held.n0 !== n0 || !sameGrouping(held.species, rowsOf())) return null;
    held.checked.add(source);
    return held;
  }
  const species = new Map<number, { rows: Int32Array; offset: number }>();
  let p = 0;
  for (const [s, rows] of rowsOf()) {
    species.set(s, { rows, offset: p });
    p += align16(8 * rows.length * n0);
  }
  const l: RepsLayout = { bytes: p, n0, species, checked: new WeakSet([source]) };
  repsLayouts.set(reps, l);
  return l;
}

/** Whether `rows` holds the same species with the same rows in the same order as `held`. */
function sameGrouping(held: RepsLayout['species'], rows: Map<number, Int32Array>): boolean {
  if (held.size !== rows.size) return false;
  for (const [s, r] of rows) {
    const h = held.get(s)?.rows;
    if (!h || h.length !== r.length || h.some((x, i) => x !== r[i])) return false;
  }
  return true;
}

/** The rows of each species of `repSpecies`, in order of first appearance (as prepareNearestSearch groups them). */
function rowsBySpecies(repSpecies: Int32Array): Map<number, Int32Array> {
  const lists = new Map<number, number[]>();
  repSpecies.forEach((s, r) => {
    const list = lists.get(s);
    if (list) list.push(r);
    else lists.set(s, [r]);
  });
  return new Map([...lists].map(([s, list]) => [s, Int32Array.from(list)]));
}

/** The resident region of representatives `reps` (filled once per set and thread). */
function repsRegion(reps: Float64Array, n0: number, layout: RepsLayout): Region {
  return {
    name: residentName('representatives', reps),
    key: reps,
    bytes: layout.bytes,
    fill: (m, at) => {
      for (const { rows, offset } of layout.species.values()) {
        const r = m.f64(at + offset, rows.length * n0);
        for (let j = 0; j < rows.length; j++) r.set(reps.subarray(rows[j] * n0, rows[j] * n0 + n0), j * n0);
      }
    },
  };
}

/** Byte offsets, from the start of the search's region, of each species' record (assembly searchSpecies `sp`). */
interface SearchLayout {
  bytes: number;
  record: Map<number, number>;
  /** The largest representative count and basis size of a species (the scratch is sized for them). */
  maxRows: number;
  maxBasis: number;
  maxWidth: number;
}
const layouts = new WeakMap<NearestSearch, SearchLayout>();

function searchLayout(search: NearestSearch): SearchLayout {
  let l = layouts.get(search);
  if (l) return l;
  const n0 = search.n0;
  let p = 0;
  const record = new Map<number, number>();
  let maxRows = 0;
  let maxBasis = 0;
  let maxWidth = 0;
  for (const [s, sp] of search.species) {
    const m = sp.rows.length;
    record.set(s, p);
    // record, mean, basis (d × n0), coordinates (d × m), residual norms (m), screening order (n0 i32), the
    // centred representatives in float32 in that order (m × n0 f32, when they fit)
    const narrow = narrowInfo(search.reps, sp, n0).fits;
    p += 64 + align16(8 * n0) + align16(8 * sp.d * sp.width) + align16(8 * sp.d * m) + align16(8 * m) + align16(4 * n0) + (narrow ? align16(4 * m * n0) : 0);
    maxRows = Math.max(maxRows, m);
    maxBasis = Math.max(maxBasis, sp.d);
    maxWidth = Math.max(maxWidth, sp.width);
  }
  l = { bytes: p, record, maxRows, maxBasis, maxWidth };
  layouts.set(search, l);
  return l;
}

/** Writes the species' records and arrays of `search` at byte address `at` (layout of searchLayout). */
function writeSearch(k: PredictKernels, search: NearestSearch, at: number): void {
  const n0 = search.n0;
  const buffer = k.module.f64(at, 0).buffer;
  const { record } = searchLayout(search);
  for (const [s, sp] of search.species) {
    const m = sp.rows.length;
    const d = sp.d;
    const base = at + (record.get(s) as number);
    const mean = base + 64;
    const basis = mean + align16(8 * n0);
    const coordsT = basis + align16(8 * d * sp.width);
    const residual = coordsT + align16(8 * d * m);
    const order = residual + align16(8 * m);
    const ordered = order + align16(4 * n0);
    const narrow = narrowInfo(search.reps, sp, n0);
    new Int32Array(buffer, base, 10).set([m, d, n0, narrow.fits ? 1 : 0, mean, basis, coordsT, residual, order, ordered]);
    new Float64Array(buffer, base + 40, 1)[0] = narrow.largest;
    new Int32Array(buffer, base + 48, 1)[0] = sp.width;
    const meanOrdered = k.module.f64(mean, n0);
    for (let i = 0; i < n0; i++) meanOrdered[i] = sp.mean[sp.order[i]];
    k.module.f64(basis, d * sp.width).set(sp.basis);
    k.module.f64(coordsT, d * m).set(sp.coordsT);
    k.module.f64(residual, m).set(sp.residual);
    new Int32Array(buffer, order, n0).set(sp.order);
    if (narrow.fits) fillNarrow(search.reps, sp, n0, new Float32Array(buffer, ordered, m * n0));
  }
}

/** The key of the searches' scratch region in the kernel arena. */
const SEARCH_SCRATCH = {};

/**
 * The queries of `a` (rows e < count, species species[e]) through a WebAssembly kernel: the rows held whole in the
 * kernel's memory under `rowsKey` (frameRowsRegion, fillFrameRows: copied once per frame for every caller with that key) when it
 * is given and they fit, else `chunk` rows copied into the scratch at a time. For each species present and
 * each chunk of `chunk` (at most QUERY_CHUNK) rows, `run(s, rowsAt, idxAt, nq, outAt)` answers the rows idx[0…nq) of the chunk at
 * rowsAt into outAt; a species the representatives lack gets Infinity. `regions` are the resident regions the
 * kernel reads; the scratch (queries, indices, distances and `extra` bytes before them) is added here. False when
 * the kernel's memory cannot hold them.
 */
function wasmQueries(
  k: PredictKernels,
  n0: number,
  a: Float64Array,
  count: number,
  species: Int32Array,
  out: Float64Array,
  known: ReadonlyMap<number, unknown>,
  regions: Region[],
  extra: number,
  run: (at: number[], scr: number, s: number, rowsAt: number, idxAt: number, nq: number, outAt: number) => void,
  rowsKey?: object,
  chunk = QUERY_CHUNK,
): boolean {
  const whole = rowsKey ? frameRowsRegion(count, n0) : null;
  const rows = align16(extra);
  const idx = rows + (whole ? 0 : 8 * QUERY_CHUNK * n0);
  const dist = idx + 4 * QUERY_CHUNK;
  const scratch: Region = { name: 'search-scratch', key: SEARCH_SCRATCH, bytes: dist + 8 * QUERY_CHUNK };
  const at = k.arena.acquire(whole ? [...regions, whole, scratch] : [...regions, scratch]);
  if (!at) return false;
  const scr = at[at.length - 1];
  const held = whole ? at[at.length - 2] : -1;
  if (whole && rowsKey) fillFrameRows(k, held, a, count, n0, rowsKey);
  const idxView = new Int32Array(k.module.f64(scr, 0).buffer, scr + idx, QUERY_CHUNK);
  const distView = k.module.f64(scr + dist, QUERY_CHUNK);
  for (let e0 = 0; e0 < count; e0 += chunk) {
    const e1 = Math.min(count, e0 + chunk);
    if (!whole) k.module.f64(scr + rows, QUERY_CHUNK * n0).set(a.subarray(e0 * n0, e1 * n0));
    const rowsAt = whole ? held + 8 * e0 * n0 : scr + rows;
    for (let e = e0; e < e1; e++) if (!known.has(species[e])) out[e] = Infinity;
    for (const s of known.keys()) {
      let nq = 0;
      for (let e = e0; e < e1; e++) if (species[e] === s) idxView[nq++] = e - e0;
      if (nq === 0) continue;
      run(at, scr, s, rowsAt, scr + idx, nq, scr + dist);
      for (let j = 0; j < nq; j++) out[e0 + idxView[j]] = distView[j];
    }
  }
  return true;
}

/**
 * searchNearestAll through the WebAssembly kernel (assembly/prediction-kernels.ts searchSpecies: the same numbers
 * bit for bit): the representatives and the prepared bases stay in the module's memory per set and search.
 */
function wasmSearchAll(k: PredictKernels, search: NearestSearch, a: Float64Array, count: number, species: Int32Array, out: Float64Array, counter?: SearchCounter, rowsKey?: object): boolean {
  const n0 = search.n0;
  const layout = searchLayout(search);
  const reps = repsLayout(search.reps, n0, search, () => new Map([...search.species].map(([s, sp]) => [s, sp.rows])));
  if (!reps) return false;
  // scratch record (10 addresses), bound, the four centred queries (float32, screening order), coordinates, squared
  // norms, statistics (3), an unused slot, the kept records, the pending pairs and their sums, the basis's features
  // of the four centred queries (assembly searchSpecies)
  const m = layout.maxRows;
  const bound = 48;
  const xc = bound + align16(8 * m);
  const q = xc + align16(4 * 4 * n0);
  const xx = q + align16(8 * 4 * layout.maxBasis);
  const stats = xx + 32;
  const xp = stats + 32; // the unused slot: no bytes
  const kept = xp;
  const pending = kept + 16 * m;
  const pendingSums = pending + 8 * 4 * m;
  const xk = pendingSums + align16(8 * (4 * m + 3));
  let statsView: Float64Array | null = null;
  const ok = wasmQueries(
    k,
    n0,
    a,
    count,
    species,
    out,
    search.species,
    [repsRegion(search.reps, n0, reps), { name: residentName('search', search), key: search, bytes: layout.bytes, fill: (_m, at) => writeSearch(k, search, at) }],
    xk + 8 * 4 * layout.maxWidth,
    ([repsAt, searchAt], scr, s, rowsAt, idxAt, nq, outAt) => {
      if (!statsView) {
        new Int32Array(k.module.f64(scr, 0).buffer, scr, 10).set([bound, xc, q, xx, stats, xp, kept, pending, pendingSums, xk].map((o) => scr + o));
        statsView = k.module.f64(scr + stats, 3);
        statsView.fill(0);
      }
      const rowsOf = reps.species.get(s) as { offset: number };
      k.searchSpecies(searchAt + (layout.record.get(s) as number), repsAt + rowsOf.offset, scr, rowsAt, idxAt, nq, outAt);
    },
    rowsKey,
  );
  if (ok && counter) {
    const st = statsView as Float64Array | null;
    counter.queries += count;
    counter.screened += st ? st[0] : 0;
    counter.exact += st ? st[1] : 0;
    counter.summed += st ? st[2] : 0;
  }
  return ok;
}

/**
 * The plain scan (sparse.ts nearestDistance) of every row e < count of `a` through the WebAssembly kernel
 * (assembly scanSpecies, the same numbers bit for bit), with the representatives resident; false when the kernels
 * are off or cannot hold them.
 */
function wasmScanAll(owner: { n0: number; species: Int32Array; p: Float64Array }, a: Float64Array, count: number, species: Int32Array, out: Float64Array, rowsKey?: object): boolean {
  const k = predictKernels();
  if (!k) return false;
  const n0 = owner.n0;
  const reps = repsLayout(owner.p, n0, owner.species, () => rowsBySpecies(owner.species));
  if (!reps) return false;
  return wasmQueries(k, n0, a, count, species, out, reps.species, [repsRegion(owner.p, n0, reps)], 0, ([repsAt], _scr, s, rowsAt, idxAt, nq, outAt) => {
    const { rows, offset } = reps.species.get(s) as { rows: Int32Array; offset: number };
    k.scanSpecies(repsAt + offset, rows.length, n0, rowsAt, idxAt, nq, outAt);
  }, rowsKey, SCAN_CHUNK);
}

/** Scratch of the preparation kernel: the record of its nine arrays' addresses, the arrays, then the rows (byte offsets). */
function prepareLayout(m: number, n0: number, limit: number): { offsets: number[]; bytes: number } {
  const sizes = [n0, m * n0, m, m * limit, limit * n0, limit * n0, n0, limit * m, m, m * n0];
  const offsets: number[] = [];
  let p = 48;
  for (const n of sizes) {
    offsets.push(p);
    p += align16(8 * n);
  }
  return { offsets, bytes: p };
}

/** The key of the preparation's scratch region in the kernel arena. */
const PREPARE_SCRATCH = {};

/**
 * The preparation proper of m rows of n0 features (`rows`, contiguous) through the WebAssembly kernel (assembly
 * prepareSpecies: the same bits as prepareSpeciesJs); null when the kernel's memory cannot hold them.
 */
function wasmPrepare(k: PredictKernels, rows: Float64Array, m: number, n0: number, maxBasis: number, steps: number): PreparedCore | null {
  const limit = basisLimit(m, n0, maxBasis);
  const { offsets, bytes } = prepareLayout(m, n0, limit);
  const at = k.arena.acquire([{ name: 'prepare-scratch', key: PREPARE_SCRATCH, bytes }]);
  if (!at) return null;
  const [scr] = at;
  new Int32Array(k.module.f64(scr, 0).buffer, scr, 9).set(offsets.slice(0, 9).map((o) => scr + o));
  k.module.f64(scr + offsets[9], m * n0).set(rows);
  const d = k.prepareSpecies(scr + offsets[9], m, n0, limit, steps, scr);
  // fresh views after the call (a reservation may have grown the memory); copies, not views, are kept
  const read = (slot: number, length: number) => k.module.f64(scr + offsets[slot], length).slice();
  return { d, mean: read(0, n0), basis: read(4, d * n0), coordsT: read(7, d * m), residual: read(8, m) };
}
