// The sparse (subset-of-regressors / projected-process) form: M representative environments per centre species
// chosen by farthest-point sampling in the λ=0 feature space, and the design that turns the sparse problem
//   (K_NMᵀ K_NM + λ K_MM) x = K_NMᵀ y
// into an ordinary ridge problem on the features Φ' = K_NM L⁻ᵀ (K_MM = L Lᵀ), solved by regression.ts; then
// x = L⁻ᵀ w'. Also the per-atom applicability distances to the representatives.
import { backSubstitute, choleskyWithJitter, forwardSubstituteRows } from '../numerics/cholesky.ts';
import type { EnvironmentFeatures } from '../descriptors/feature-types.ts';
import { kernelPower, type KernelExpansion, type Order } from './kernels.ts';

/** Environments kept from training for sampling: their λ=0 rows and (optionally) the order-λ blocks. */
export interface EnvironmentPool {
  n0: number;
  count: number;
  species: Int32Array;
  p: Float64Array;
  /** Order-λ blocks, count × (2λ+1) × n, when the kernel form needs them. */
  blocks?: { order: Order; n: number; data: Float64Array };
}

/** Euclidean distance between two λ=0 rows (unit rows: 0 … 2). */
export function rowDistance(a: Float64Array, ia: number, b: Float64Array, ib: number, n0: number): number {
  return Math.sqrt(squaredDistanceBelow(a, ia, b, ib, n0, Infinity));
}

/**
 * The squared distance of rowDistance (four accumulators over f mod 4, the tail into the first, combined as
 * s0 + s1 + s2 + s3), or, as soon as that combination of the partial sums reaches `bound` (checked every 32
 * features), a value ≥ `bound`. Every partial sum only grows as terms are added (rounding is monotone), so a
 * row left early would have had a full sum ≥ `bound`: searches for a minimum that pass the sum of the best so
 * far get the same minimum, bit for bit, as with the full sums.
 */
export function squaredDistanceBelow(a: Float64Array, ia: number, b: Float64Array, ib: number, n0: number, bound: number): number {
  // four accumulators: this loop dominates farthest-point sampling and the applicability check
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  const oa = ia * n0;
  const ob = ib * n0;
  let f = 0;
  while (f + 3 < n0) {
    const stop = Math.min(n0 - 3, f + 32);
    for (; f < stop; f += 4) {
      const d0 = a[oa + f] - b[ob + f];
      const d1 = a[oa + f + 1] - b[ob + f + 1];
      const d2 = a[oa + f + 2] - b[ob + f + 2];
      const d3 = a[oa + f + 3] - b[ob + f + 3];
      s0 += d0 * d0;
      s1 += d1 * d1;
      s2 += d2 * d2;
      s3 += d3 * d3;
    }
    if (s0 + s1 + s2 + s3 >= bound) return s0 + s1 + s2 + s3;
  }
  for (; f < n0; f++) {
    const d = a[oa + f] - b[ob + f];
    s0 += d * d;
  }
  return s0 + s1 + s2 + s3;
}

/**
 * Farthest-point sampling of up to m rows among `candidates` (indices into p). Starts from the row farthest
 * from the candidates' mean (deterministic, no randomness), then repeatedly adds the row farthest from the
 * chosen set. Returns chosen indices in order and each candidate's distance to the chosen set.
 *
 * The distances to each new point are computed only as far as they can still lower a candidate's distance:
 * a candidate whose distance to the chosen point nearest it is less than half that point's distance to the
 * new one (with a margin far above rounding) cannot come nearer (triangle inequality), and a sum that passes
 * the candidate's squared distance so far is left early (squaredDistanceBelow). Every distance that is taken
 * is the full sum of rowDistance, so the choice and the distances are those of the plain loop, bit for bit
 * (kept in test/helpers/reference-kernels.ts, which the tests compare against). Training samples through
 * sampling.ts, whose WebAssembly kernel runs this loop with one more bound; this one is its fallback and oracle.
 */
export function farthestPointSample(p: Float64Array, n0: number, candidates: Int32Array, m: number): { chosen: Int32Array; distance: Float64Array; nearest: Int32Array } {
  const n = candidates.length;
  const take = Math.min(m, n);
  const chosen = new Int32Array(take);
  const dist = new Float64Array(n).fill(Infinity);
  // the chosen point (index into chosen) nearest each candidate, and the squared sum whose root is dist[c]
  const nearest = new Int32Array(n).fill(-1);
  if (take === 0) return { chosen, distance: dist, nearest };
  const dist2 = new Float64Array(n).fill(Infinity);
  // distance of chosen point j to the newest one (computed when first needed in a step: stamp[j] = step)
  const toNew = new Float64Array(take);
  const stamp = new Int32Array(take).fill(-1);
  let next = firstSampled(p, n0, candidates);
  const SAFE = 1 + 1e-9;
  for (let k = 0; k < take; k++) {
    const q = candidates[next];
    chosen[k] = q;
    dist[next] = 0;
    dist2[next] = 0;
    nearest[next] = k;
    let best = -1;
    let bestAt = 0;
    for (let c = 0; c < n; c++) {
      const dc = dist[c];
      if (dc > 0) {
        const near = nearest[c];
        if (near >= 0 && stamp[near] !== k) {
          toNew[near] = rowDistance(p, chosen[near], p, q, n0);
          stamp[near] = k;
        }
        // d(c, q) ≥ d(near, q) − d(c, near) ≥ d(c, near) when d(near, q) ≥ 2 d(c, near)
        if (near < 0 || toNew[near] < 2 * dc * SAFE) {
          const s = squaredDistanceBelow(p, candidates[c], p, q, n0, dist2[c]);
          if (s < dist2[c]) {
            const d = Math.sqrt(s);
            if (d < dc) {
              dist[c] = d;
              dist2[c] = s;
              nearest[c] = k;
            }
          }
        }
      }
      if (dist[c] > best) {
        best = dist[c];
        bestAt = c;
      }
    }
    next = bestAt;
    if (best <= 0) {
      // every remaining candidate duplicates a chosen one
      return { chosen: chosen.slice(0, k + 1), distance: dist, nearest };
    }
  }
  return { chosen, distance: dist, nearest };
}

/** The candidate farthest-point sampling starts from (an index into `candidates`): the one farthest from their mean. */
export function firstSampled(p: Float64Array, n0: number, candidates: Int32Array): number {
  const n = candidates.length;
  const mean = new Float64Array(n0);
  for (let c = 0; c < n; c++) for (let f = 0; f < n0; f++) mean[f] += p[candidates[c] * n0 + f] / n;
  let next = 0;
  let far = -1;
  for (let c = 0; c < n; c++) {
    const d = rowDistance(p, candidates[c], mean, 0, n0);
    if (d > far) {
      far = d;
      next = c;
    }
  }
  return next;
}

/** For each pool row, a representative near it (an index into the representatives, −1 if none) and its distance. */
export interface RepresentativeAnchors {
  rep: Int32Array;
  distance: Float64Array;
}

/**
 * The anchors that farthest-point sampling leaves behind: each candidate's nearest chosen row and its distance,
 * per species, with the representatives numbered as the species' chosen rows one after the other.
 */
export function anchorsOf(count: number, candidates: Int32Array[], samples: { chosen: Int32Array; distance: Float64Array; nearest: Int32Array }[]): RepresentativeAnchors {
  const rep = new Int32Array(count).fill(-1);
  const distance = new Float64Array(count).fill(Infinity);
  let offset = 0;
  samples.forEach((sample, s) => {
    const cand = candidates[s];
    for (let c = 0; c < cand.length; c++) {
      if (sample.nearest[c] < 0) continue;
      rep[cand[c]] = offset + sample.nearest[c];
      distance[cand[c]] = sample.distance[c];
    }
    offset += sample.chosen.length;
  });
  return { rep, distance };
}

/**
 * Distance of each pool row to the nearest representative other than itself (leave-self-out), or, with
 * `frameOf`, to the nearest representative from another frame (leave-frame-out), for the applicability threshold. `reps` are pool indices; `repOf[i]` is i's own index in reps or −1.
 * Sums that pass the best so far are left early (squaredDistanceBelow): the same minimum, bit for bit.
 *
 * With `anchors` (a representative a near each row i, at distance d(i,a)), the representatives of i's species
 * are visited in ascending distance from a, and the search stops at the first one with d(a,k) > d(i,a) + best
 * (with a margin far above rounding): by the triangle inequality it and all later ones are farther than the best
 * so far. One with d(i,a) > d(a,k) + best is skipped likewise. The minimum, and so the result, is the same.
 * Training calls it through sampling.ts, whose WebAssembly kernel gives the same numbers; this is its fallback and oracle.
 */
export function nearestOtherDistances(pool: EnvironmentPool, reps: Int32Array, frameOf?: Int32Array, anchors?: RepresentativeAnchors): Float64Array {
  const own = new Map<number, number>();
  reps.forEach((r, k) => own.set(r, k));
  const out = new Float64Array(pool.count).fill(Infinity);
  const n0 = pool.n0;
  const p = pool.p;
  // (without finite distances between the representatives there is no order to stop in: the plain loop)
  const ordered = anchors ? anchorOrders(pool, reps) : null;
  const SAFE = 1 + 1e-9;
  for (let i = 0; i < pool.count; i++) {
    const self = own.get(i) ?? -1;
    const si = pool.species[i];
    const a = anchors ? anchors.rep[i] : -1;
    // anchored: the group of i's species in ascending distance from a; else every representative in order
    const anchored = ordered !== null && anchors !== undefined && a >= 0 && pool.species[reps[a]] === si;
    const members = anchored ? ordered.group[si] : reps;
    const m = members.length;
    const row = anchored ? ordered.at[a] * m : 0;
    const da = anchored ? anchors.distance[i] : 0;
    let best2 = Infinity;
    let best = Infinity;
    for (let t = 0; t < m; t++) {
      let k = t;
      if (anchored) {
        const b = ordered.order[si][row + t];
        const dab = ordered.dist[si][row + b];
        if (dab > (da + best) * SAFE) break;
        if (da > (dab + best) * SAFE) continue;
        k = members[b];
      } else if (pool.species[reps[k]] !== si) continue;
      if (k === self) continue;
      if (frameOf && frameOf[reps[k]] === frameOf[i]) continue;
      const s = squaredDistanceBelow(p, i, p, reps[k], n0, best2);
      if (s < best2) {
        const d = Math.sqrt(s);
        if (d < out[i]) {
          out[i] = d;
          best2 = s;
          best = d;
        }
      }
    }
  }
  return out;
}

/**
 * The representatives grouped by species (indices into reps, in order), each one's place in its group, the
 * distances between the group's members (m × m) and, for each member, the group ordered by distance from it.
 */
function anchorOrders(pool: EnvironmentPool, reps: Int32Array): { group: Int32Array[]; at: Int32Array; dist: Float64Array[]; order: Int32Array[] } | null {
  let species = 0;
  for (let k = 0; k < reps.length; k++) species = Math.max(species, pool.species[reps[k]] + 1);
  const lists: number[][] = Array.from({ length: species }, () => []);
  const at = new Int32Array(reps.length);
  for (let k = 0; k < reps.length; k++) {
    const list = lists[pool.species[reps[k]]];
    at[k] = list.length;
    list.push(k);
  }
  const group = lists.map((l) => Int32Array.from(l));
  const dist: Float64Array[] = [];
  const order: Int32Array[] = [];
  for (const members of group) {
    const m = members.length;
    const d = new Float64Array(m * m);
    for (let a = 0; a < m; a++) {
      for (let b = a + 1; b < m; b++) d[a * m + b] = d[b * m + a] = rowDistance(pool.p, reps[members[a]], pool.p, reps[members[b]], pool.n0);
    }
    if (!d.every(Number.isFinite)) return null;
    const o = new Int32Array(m * m);
    const idx = Array.from({ length: m }, (_, b) => b);
    for (let a = 0; a < m; a++) {
      const row = d.subarray(a * m, (a + 1) * m);
      const sorted = idx.slice().sort((u, v) => row[u] - row[v] || u - v);
      o.set(sorted, a * m);
    }
    dist.push(d);
    order.push(o);
  }
  return { group, at, dist, order };
}

/** The representatives of a sparse model of one order: λ=0 rows and order-λ blocks copied out of the pool. */
export interface Representatives {
  order: Order;
  n0: number;
  n: number;
  width: number;
  species: Int32Array;
  p: Float64Array;
  blocks: Float64Array;
}

export function representativesFrom(pool: EnvironmentPool, reps: Int32Array, order: Order): Representatives {
  const n0 = pool.n0;
  const width = 2 * order + 1;
  let n = n0;
  let src = pool.p;
  if (order !== 0) {
    if (!pool.blocks || pool.blocks.order !== order) throw new RangeError(`pool lacks order-${order} blocks`);
    n = pool.blocks.n;
    src = pool.blocks.data;
  }
  const m = reps.length;
  const p = new Float64Array(m * n0);
  const blocks = new Float64Array(m * width * n);
  reps.forEach((r, k) => {
    p.set(pool.p.subarray(r * n0, r * n0 + n0), k * n0);
    blocks.set(src.subarray(r * width * n, (r + 1) * width * n), k * width * n);
  });
  return { order, n0, n, width, species: Int32Array.from(reps, (r) => pool.species[r]), p, blocks };
}

/** K_MM over (representative, μ) pairs, (M·w)×(M·w). */
export function representativeKernel(reps: Representatives, zeta: number): Float64Array {
  const { width: w, n, n0 } = reps;
  const m = reps.species.length;
  const size = m * w;
  const k = new Float64Array(size * size);
  for (let a = 0; a < m; a++) {
    for (let b = 0; b <= a; b++) {
      if (reps.species[a] !== reps.species[b]) continue;
      let pp = 0;
      for (let f = 0; f < n0; f++) pp += reps.p[a * n0 + f] * reps.p[b * n0 + f];
      const s = kernelPower(pp, zeta - 1);
      for (let mu = 0; mu < w; mu++) {
        for (let nu = 0; nu < w; nu++) {
          let d = 0;
          const oa = (a * w + mu) * n;
          const ob = (b * w + nu) * n;
          for (let f = 0; f < n; f++) d += reps.blocks[oa + f] * reps.blocks[ob + f];
          const val = d * s;
          k[(a * w + mu) * size + b * w + nu] = val;
          k[(b * w + nu) * size + a * w + mu] = val;
        }
      }
    }
  }
  return k;
}

/**
 * K_NM rows of one structure: for each μ, Σ over its environments of K^λ_μμ'(i, m), columns (m, μ').
 * Returns w × (M·w).
 */
export function structureToRepresentatives(feat: EnvironmentFeatures, reps: Representatives, zeta: number): Float64Array {
  const { width: w, n, n0 } = reps;
  const m = reps.species.length;
  const cols = m * w;
  const out = new Float64Array(w * cols);
  const data = reps.order === 0 ? feat.scalar : feat.tensor[reps.order]?.data;
  if (!data) throw new RangeError(`features of order λ=${reps.order} were not computed`);
  // Accumulate Y_m = Σ_i s(i,m) ξ(i) per representative, then contract with ξ(m).
  const acc = new Float64Array(w * n);
  for (let r = 0; r < m; r++) {
    acc.fill(0);
    let any = false;
    for (let e = 0; e < feat.count; e++) {
      if (feat.centreSpecies[e] !== reps.species[r]) continue;
      let pp = 0;
      for (let f = 0; f < n0; f++) pp += feat.scalar[e * n0 + f] * reps.p[r * n0 + f];
      const s = kernelPower(pp, zeta - 1);
      if (s === 0) continue;
      any = true;
      const src = e * w * n;
      for (let q = 0; q < w * n; q++) acc[q] += s * data[src + q];
    }
    if (!any) continue;
    for (let mu = 0; mu < w; mu++) {
      for (let nu = 0; nu < w; nu++) {
        let d = 0;
        const ob = (r * w + nu) * n;
        for (let f = 0; f < n; f++) d += acc[mu * n + f] * reps.blocks[ob + f];
        out[mu * cols + r * w + nu] = d;
      }
    }
  }
  return out;
}

/** Cholesky factor of K_MM (with the smallest jitter that makes it positive definite). */
export function representativeFactor(kmm: Float64Array, size: number): Float64Array {
  return choleskyWithJitter(kmm, size).factor;
}

/** Φ' rows = L⁻¹ k for every row of a K_NM block (in place on a copy). */
export function projectRows(knm: Float64Array, rows: number, l: Float64Array, size: number): Float64Array {
  return forwardSubstituteRows(l, size, Float64Array.from(knm), rows);
}

/** x = L⁻ᵀ w' and the folded expansion v_m = Σ_μ' x_mμ' ξ_μ'(m). */
export function foldSparseWeights(reps: Representatives, l: Float64Array, wPrime: Float64Array, zeta: number): KernelExpansion {
  const size = reps.species.length * reps.width;
  const x = backSubstitute(l, size, Float64Array.from(wPrime));
  return foldCoefficients(reps, x, zeta);
}

/** v_m = Σ_μ' x_(m,μ') ξ_μ'(m), for coefficients x over (representative, μ') pairs. */
export function foldCoefficients(reps: Representatives, x: Float64Array, zeta: number): KernelExpansion {
  const { width: w, n } = reps;
  const m = reps.species.length;
  const v = new Float64Array(m * n);
  for (let r = 0; r < m; r++) {
    for (let nu = 0; nu < w; nu++) {
      const c = x[r * w + nu];
      if (c === 0) continue;
      const ob = (r * w + nu) * n;
      for (let f = 0; f < n; f++) v[r * n + f] += c * reps.blocks[ob + f];
    }
  }
  return { zeta, n0: reps.n0, n, species: Int32Array.from(reps.species), p: Float64Array.from(reps.p), v };
}

/**
 * Distance from row i of `a` to the nearest row of `reps` whose species is `species` (Infinity if none).
 * Partial sums are checked every 16 features against the best so far, so far-away representatives are left
 * early; the result is exact. Prediction uses the bounded search of nearest-search.ts, which returns the same
 * number bit for bit; this plain scan stays as its reference.
 */
export function nearestDistance(a: Float64Array, i: number, reps: Float64Array, repSpecies: Int32Array, species: number, n0: number): number {
  let best = Infinity;
  const oa = i * n0;
  for (let r = 0; r < repSpecies.length; r++) {
    if (repSpecies[r] !== species) continue;
    const ob = r * n0;
    let s = 0;
    let f = 0;
    while (f < n0 && s < best) {
      const end = Math.min(n0, f + 16);
      for (; f < end; f++) {
        const d = a[oa + f] - reps[ob + f];
        s += d * d;
      }
    }
    if (s < best) best = s;
  }
  return Math.sqrt(best);
}
