// Training's sampling of environments, fast: farthest-point sampling of representatives and each sampled
// environment's distance to the nearest representative of another frame (the applicability threshold), as the
// WebAssembly kernels of core/wasm/assembly/sampling-kernels.ts. Their numbers are those of sparse.ts farthestPointSample and
// nearestOtherDistances, bit for bit: every distance kept is summed as there; a lower bound from a few coordinates per
// environment (on a basis from nearest-search.ts, the one the applicability search of prediction uses) only decides
// which distances need no sum. sparse.ts stays the fallback (kernels off or unavailable, pools too large) and the oracle.
import { firstSampled, farthestPointSample, nearestOtherDistances, type EnvironmentPool, type RepresentativeAnchors } from './sparse.ts';
import { prepareNearestSearch } from './nearest-search.ts';
import { align16 } from '../wasm/arena.ts';
import { samplingKernels, type SamplingKernels } from '../wasm/sampling-kernels.ts';

/**
 * Basis vectors of the bound, and the rows of the evenly spaced subsample they are found on. Measured on 6,144
 * water-like hydrogen environments (n0 = 390), 256 chosen: of the 884,080 distances the triangle inequality leaves,
 * a basis of 8 / 16 / 24 leaves 143,215 / 86,998 / 67,831 to sum.
 */
const BOUND_BASIS = 16;
const BASIS_ROWS = 512;
/** Fewest rows for which the kernels pay for copying the rows into their memory (common practice, no source). */
const KERNEL_MIN_ROWS = 64;
/** Most bytes of module memory one call may reserve (as the dense kernels); larger pools take sparse.ts's loops. */
const KERNEL_MAX_BYTES = 256 * 2 ** 20;
/** Allowance on ρ² = |x − μ|² − |a|² (cancellation when the residual is small), relative to |x − μ|² (as nearest-search.ts). */
const RHO_ALLOWANCE = 1e-10;

/**
 * Rows per call of the coordinates and distance kernels, and sampling steps per call: the engine runs a module's
 * function unoptimised until it has run a while, and optimises it for its next call only, so work in one long call
 * would run unoptimised throughout (about twice as slow, measured).
 */
const CHUNK = 512;
const STEPS = 8;

export type Sample = ReturnType<typeof farthestPointSample>;

/** A basis (d rows of n0) and mean for the bound of one group of rows, from an evenly spaced subsample of them. */
interface Basis {
  d: number;
  mean: Float64Array;
  basis: Float64Array;
}

function basisOf(p: Float64Array, n0: number, rows: Int32Array): Basis {
  const m = Math.min(rows.length, BASIS_ROWS);
  const sub = new Float64Array(m * n0);
  for (let k = 0; k < m; k++) {
    const r = rows[Math.floor((k * rows.length) / m)];
    sub.set(p.subarray(r * n0, (r + 1) * n0), k * n0);
  }
  const sp = prepareNearestSearch(sub, new Int32Array(m), n0, { basis: BOUND_BASIS }).species.get(0);
  return sp ? { d: sp.d, mean: sp.mean, basis: sp.basis } : { d: 0, mean: new Float64Array(n0), basis: new Float64Array(0) };
}

/** Coordinates per row: the basis's d, zeros up to an even D2, then lo and hi of the residual norm. */
const D2 = BOUND_BASIS + (BOUND_BASIS % 2);
const W = D2 + 2;

/** The coordinates of a group of rows (W numbers per row, in the group's order), kept from the sampling for the distances after it. */
const coordinatesOf = new WeakMap<Int32Array, { p: Float64Array; coords: Float64Array }>();

/** Byte offsets of consecutive regions (16-byte aligned) from 0, and the total. */
function layout(sizes: number[]): { at: number[]; bytes: number } {
  const at: number[] = [];
  let o = 0;
  for (const s of sizes) {
    at.push(o);
    o += align16(s);
  }
  return { at, bytes: o };
}

/**
 * The coordinates of rows `rows` of p (W per row) into the module at `coords`, through `project`; the rows themselves
 * must already be at `rowsAt` in that order. `scratch` is room for the basis, the mean and one row.
 */
function projectInto(k: SamplingKernels, p: Float64Array, n0: number, rows: Int32Array, rowsAt: number, coords: number, scratch: number): void {
  const b = basisOf(p, n0, rows);
  // the basis preparation may grow no memory of this module, but take fresh views anyway
  k.module.f64(scratch, n0).set(b.mean);
  k.module.f64(scratch + 8 * n0, b.d * n0).set(b.basis);
  for (let c = 0; c < rows.length; c += CHUNK) {
    const count = Math.min(CHUNK, rows.length - c);
    k.project(rowsAt + 8 * c * n0, count, n0, scratch, scratch + 8 * n0, b.d, D2, coords + 8 * c * W, RHO_ALLOWANCE, scratch + 8 * n0 * (b.d + 1));
  }
}

/**
 * farthestPointSample(p, n0, candidates, m): the same choices, distances and nearest choices, bit for bit; through the
 * kernel when it is available and the rows fit its memory.
 */
export function farthestSample(p: Float64Array, n0: number, candidates: Int32Array, m: number): Sample {
  const n = candidates.length;
  const take = Math.min(m, n);
  const k = n >= KERNEL_MIN_ROWS && take > 0 ? samplingKernels() : null;
  if (!k) return farthestPointSample(p, n0, candidates, m);
  const { at, bytes } = layout([8 * n * n0, 8 * n * W, 8 * n, 8 * n, 4 * n, 8 * take, 4 * take, 4 * take, 8 * n0 * (BOUND_BASIS + 2)]);
  if (bytes > KERNEL_MAX_BYTES || !k.module.reserve(bytes)) return farthestPointSample(p, n0, candidates, m);
  const base = k.module.heapBase;
  const [rowsAt, coordsAt, distAt, dist2At, nearestAt, toNewAt, stampAt, chosenAt, scratchAt] = at.map((o) => base + o);
  const rows = k.module.f64(rowsAt, n * n0);
  for (let c = 0; c < n; c++) rows.set(p.subarray(candidates[c] * n0, (candidates[c] + 1) * n0), c * n0);
  projectInto(k, p, n0, candidates, rowsAt, coordsAt, scratchAt);
  k.module.f64(distAt, n).fill(Infinity);
  k.module.f64(dist2At, n).fill(Infinity);
  k.module.i32(nearestAt, n).fill(-1);
  k.module.i32(stampAt, take).fill(-1);
  let count = take;
  let next = firstSampled(p, n0, candidates);
  for (let from = 0; from < take; from += STEPS) {
    next = k.farthestPoints(rowsAt, coordsAt, n, n0, D2, from, Math.min(take, from + STEPS), next, distAt, dist2At, nearestAt, toNewAt, stampAt, chosenAt);
    if (next < 0) {
      count = -next - 1;
      break;
    }
  }
  coordinatesOf.set(candidates, { p, coords: k.module.f64(coordsAt, n * W).slice() });
  const picked = k.module.i32(chosenAt, count);
  const chosen = Int32Array.from(picked, (c) => candidates[c]);
  return { chosen, distance: k.module.f64(distAt, n).slice(), nearest: k.module.i32(nearestAt, n).slice() };
}

/**
 * nearestOtherDistances(pool, reps, frameOf, anchors): the same distances, bit for bit; through the kernel when it
 * is available, `groups` (the rows of each species, as sampled) cover the pool with rows of their own species only,
 * and the pool fits its memory. The coordinates of a group sampled by farthestSample are reused.
 */
export function nearestOthers(pool: EnvironmentPool, reps: Int32Array, groups: Int32Array[], frameOf?: Int32Array, anchors?: RepresentativeAnchors): Float64Array {
  const { count, n0, p } = pool;
  const k = count >= KERNEL_MIN_ROWS && reps.length > 0 ? samplingKernels() : null;
  const covered = new Uint8Array(count);
  let proper = true;
  groups.forEach((g, s) => {
    for (const i of g) {
      if (pool.species[i] !== s || covered[i]) proper = false;
      else covered[i] = 1;
    }
  });
  if (!k || !proper || covered.includes(0)) return nearestOtherDistances(pool, reps, frameOf, anchors);
  const r = reps.length;
  const kept = (g: Int32Array) => coordinatesOf.get(g)?.p === p;
  // room to project a group not sampled here: its rows one after the other, then their coordinates
  const spare = Math.max(0, ...groups.map((g) => (kept(g) ? 0 : g.length)));
  const { at, bytes } = layout([8 * count * n0, 8 * count * W, 4 * count, 4 * count, 4 * count, 4 * r, 8 * r, 8 * count, 8 * spare * (n0 + W), 8 * n0 * (BOUND_BASIS + 2)]);
  if (bytes > KERNEL_MAX_BYTES || !k.module.reserve(bytes)) return nearestOtherDistances(pool, reps, frameOf, anchors);
  const base = k.module.heapBase;
  const [rowsAt, coordsAt, speciesAt, frameAt, ownAt, repsAt, boundsAt, outAt, groupAt, scratchAt] = at.map((o) => base + o);
  k.module.f64(rowsAt, count * n0).set(p.subarray(0, count * n0));
  for (const g of groups) {
    let coords = coordinatesOf.get(g);
    if (!coords || !kept(g)) {
      const rows = k.module.f64(groupAt, g.length * n0);
      g.forEach((i, c) => rows.set(p.subarray(i * n0, (i + 1) * n0), c * n0));
      const into = groupAt + 8 * g.length * n0;
      projectInto(k, p, n0, g, groupAt, into, scratchAt);
      coords = { p, coords: k.module.f64(into, g.length * W).slice() };
    }
    const all = k.module.f64(coordsAt, count * W);
    g.forEach((i, c) => all.set(coords.coords.subarray(c * W, (c + 1) * W), i * W));
  }
  k.module.i32(speciesAt, count).set(pool.species.subarray(0, count));
  if (frameOf) k.module.i32(frameAt, count).set(frameOf.subarray(0, count));
  const own = k.module.i32(ownAt, count).fill(-1);
  // the last entry of a row in reps, as sparse.ts's map of them keeps it
  reps.forEach((i, t) => (own[i] = t));
  k.module.i32(repsAt, r).set(reps);
  for (let i = 0; i < count; i += CHUNK) k.nearestOthers(rowsAt, coordsAt, D2, n0, i, Math.min(count, i + CHUNK), speciesAt, frameOf ? frameAt : 0, ownAt, repsAt, r, boundsAt, outAt);
  return k.module.f64(outAt, count).slice();
}
