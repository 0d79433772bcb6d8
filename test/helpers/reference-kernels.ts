// Kept reference versions of the hot kernels of featurisation and prediction, as they were before they were
// register-blocked or restructured for speed (issue 16): plain loops, one number at a time. The tests check the
// fast kernels against these (bit for bit where the summation order is kept, to 1e-12 relative where it had to
// change), and `npm run bench -- kernels` times both side by side on the same inputs. Do not optimise this file.
import { normalise, type Plan, type TensorPlan } from '../../src-main/core/descriptors/features.ts';
import type { ReadoutScratch } from '../../src-main/core/learning/tensor-readout.ts';
import { interpolateRadial, radialTable, type DensityExpander, type DensitySettings } from '../../src-main/core/descriptors/density.ts';
import { realSphericalHarmonics } from '../../src-main/core/descriptors/harmonics.ts';
import type { NearestSearch, SearchCounter } from '../../src-main/core/learning/nearest-search.ts';

/** The read-out of one environment (tensor-readout.ts readOne) with the plain loops of its first version. */
export function referenceReadOne(P: Plan, T: TensorPlan, c: Float64Array, W: Float64Array, S: ReadoutScratch, y: Float64Array, at: number): void {
  const tch = P.tch;
  const nM = 2 * T.lambda + 1;
  for (let l = 0; l < S.ct.length; l++) {
    const w = 2 * l + 1;
    const ct = S.ct[l];
    const base = P.tensorBase[l];
    for (let k = 0; k < tch; k++) {
      const o = base[k];
      for (let m = 0; m < w; m++) ct[m * tch + k] = c[o + m];
    }
    const g = S.gram[l];
    for (let m = 0; m < w; m++) {
      for (let n = m; n < w; n++) {
        let s = 0;
        for (let k = 0; k < tch; k++) s += ct[m * tch + k] * ct[n * tch + k];
        g[m * w + n] = s;
        g[n * w + m] = s;
      }
    }
  }
  for (let mu = 0; mu < nM; mu++) y[at + mu] = 0;
  let norm2 = 0;
  const { left, both } = S;
  for (let b = 0; b < T.blocks.length; b++) {
    const blk = T.blocks[b];
    const w1 = 2 * blk.l + 1, w2 = 2 * blk.l2 + 1;
    const a = S.ct[blk.l], bt = S.ct[blk.l2];
    const wb = b * tch * tch;
    const upper = blk.l === blk.l2;
    left.fill(0, 0, w1 * tch);
    for (let m = 0; m < w1; m++) {
      const lo = m * tch;
      for (let c1 = 0; c1 < tch; c1++) {
        const x = a[lo + c1];
        if (x === 0) continue;
        const wo = wb + c1 * tch;
        for (let c2 = upper ? c1 : 0; c2 < tch; c2++) left[lo + c2] += x * W[wo + c2];
      }
    }
    for (let m = 0; m < w1; m++) {
      for (let m2 = 0; m2 < w2; m2++) {
        let s = 0;
        for (let k = 0; k < tch; k++) s += left[m * tch + k] * bt[m2 * tch + k];
        both[m * w2 + m2] = s;
      }
    }
    const { muStart, e1, e2, ev } = blk;
    const ga = S.gram[blk.l], gb = S.gram[blk.l2];
    let blockNorm = 0;
    for (let mu = 0; mu < nM; mu++) {
      let s = 0;
      for (let k = muStart[mu]; k < muStart[mu + 1]; k++) {
        s += ev[k] * both[e1[k] * w2 + e2[k]];
        const ra = e1[k] * w1, rb = e2[k] * w2;
        let t = 0.5 * ev[k] * ga[ra + e1[k]] * gb[rb + e2[k]];
        for (let k2 = muStart[mu]; k2 < k; k2++) t += ev[k2] * ga[ra + e1[k2]] * gb[rb + e2[k2]];
        blockNorm += 2 * ev[k] * t;
      }
      y[at + mu] += s;
    }
    norm2 += blk.l === blk.l2 ? blockNorm : 2 * blockNorm;
  }
  if (norm2 > 0 && Number.isFinite(norm2)) {
    const inv = 1 / Math.sqrt(norm2);
    for (let mu = 0; mu < nM; mu++) y[at + mu] *= inv;
  } else {
    for (let mu = 0; mu < nM; mu++) y[at + mu] = 0;
  }
}

/** The λ = 0 row of one environment (features.ts powerSpectrum), pair by pair with one sum at a time. */
export function referencePowerSpectrum(P: Plan, c: Float64Array, out: Float64Array, at: number): number {
  const { p1, p2, pw, invSqrt, LL } = P;
  const lmax = P.settings.lmax;
  const L1 = lmax + 1;
  let f = at;
  for (let k = 0; k < p1.length; k++) {
    const A = p1[k] * LL, B = p2[k] * LL;
    const w = pw[k];
    for (let l = 0; l <= lmax; l++) {
      const lo = l * l, hi = lo + 2 * l + 1;
      let s = 0;
      for (let m = lo; m < hi; m++) s += c[A + m] * c[B + m];
      out[f + l] = w * invSqrt[l] * s;
    }
    f += L1;
  }
  return normalise(out, at, at + P.n0);
}

// Margins as in nearest-search.ts.
const MARGIN_RELATIVE = 1e-8;
const MARGIN_ABSOLUTE = 1e-10;
const RHO_ALLOWANCE = 1e-10;

// The bounded nearest-representative search (nearest-search.ts) as first written: one query at a time, its
// coordinates by four-way split dot products, the bounds one basis direction at a time.
let scratchBound = new Float64Array(0);
let scratchCoords = new Float64Array(0);
let scratchCentred = new Float64Array(0);
const scratchFirst = new Int32Array(4);
const scratchFirstBound = new Float64Array(4);
const scratchGroup = new Int32Array(4);
const scratchSums = new Float64Array(4);

/**
 * Squared distances from the query row (offset oa in a) to four representative rows (offsets o0 … o3 in reps),
 * each summed feature by feature in order exactly as nearestDistance does, with the same check every 16 features:
 * stop once all four partial sums reach `best` (a stopped sum is then ≥ best and cannot win). Writes the four sums
 * to `out`; returns the number of feature differences summed (for the counter).
 */
function sumFour(a: Float64Array, oa: number, reps: Float64Array, o0: number, o1: number, o2: number, o3: number, n0: number, best: number, out: Float64Array): number {
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  let f = 0;
  while (f < n0 && (s0 < best || s1 < best || s2 < best || s3 < best)) {
    const end = Math.min(n0, f + 16);
    for (; f < end; f++) {
      const x = a[oa + f];
      const d0 = x - reps[o0 + f];
      const d1 = x - reps[o1 + f];
      const d2 = x - reps[o2 + f];
      const d3 = x - reps[o3 + f];
      s0 += d0 * d0;
      s1 += d1 * d1;
      s2 += d2 * d2;
      s3 += d3 * d3;
    }
  }
  out[0] = s0;
  out[1] = s1;
  out[2] = s2;
  out[3] = s3;
  return f;
}

/**
 * Distance from row i of `a` to the nearest representative of `species` (Infinity if none): the same value, bit for
 * bit, as nearestDistance(a, i, reps, repSpecies, species, n0).
 */
export function referenceSearchNearest(search: NearestSearch, a: Float64Array, i: number, species: number, counter?: SearchCounter): number {
  const sp = search.species.get(species);
  if (counter) counter.queries++;
  if (!sp) return Infinity;
  const { n0, reps } = search;
  const { rows, d, mean, basis, coordsT, residual } = sp;
  const m = rows.length;
  if (scratchBound.length < m) scratchBound = new Float64Array(m);
  if (scratchCoords.length < d) scratchCoords = new Float64Array(d);
  if (scratchCentred.length < n0) scratchCentred = new Float64Array(n0);
  const bound = scratchBound;
  const q = scratchCoords;
  const oa = i * n0;
  // the centred query and |x − μ|², then its coordinates a = Qᵀ(x − μ) as dot products with four partial sums
  // each (these only feed the bound, so their summation order is free; one chain would stall on add latency)
  const xc = scratchCentred;
  let xx = 0;
  for (let f = 0; f < n0; f++) {
    const c = a[oa + f] - mean[f];
    xc[f] = c;
    xx += c * c;
  }
  // (the basis is on the first `width` features of the screening order: its vectors are zero on the others)
  const { width, order } = sp;
  const n4 = width - (width % 4);
  for (let j = 0; j < d; j++) {
    const ob = j * width;
    let c0 = 0;
    let c1 = 0;
    let c2 = 0;
    let c3 = 0;
    let f = 0;
    for (; f < n4; f += 4) {
      c0 += basis[ob + f] * xc[order[f]];
      c1 += basis[ob + f + 1] * xc[order[f + 1]];
      c2 += basis[ob + f + 2] * xc[order[f + 2]];
      c3 += basis[ob + f + 3] * xc[order[f + 3]];
    }
    for (; f < width; f++) c0 += basis[ob + f] * xc[order[f]];
    q[j] = c0 + c1 + c2 + c3;
  }
  let qq = 0;
  for (let j = 0; j < d; j++) qq += q[j] * q[j];
  // ρ_x lies in [lo, hi]: the residual from |x − μ|² − |a|², widened for the cancellation in that difference
  const t = xx - qq;
  const allowance = RHO_ALLOWANCE * xx;
  const lo = Math.sqrt(Math.max(0, t - allowance));
  const hi = Math.sqrt(Math.max(0, t + allowance));
  // bounds for all representatives, one basis direction at a time (again independent sums)
  for (let k = 0; k < m; k++) {
    const rk = residual[k];
    const gap = rk > hi ? rk - hi : rk < lo ? lo - rk : 0;
    bound[k] = gap * gap;
  }
  for (let j = 0; j < d; j++) {
    const qj = q[j];
    const oc = j * m;
    for (let k = 0; k < m; k++) {
      const g = qj - coordsT[oc + k];
      bound[k] += g * g;
    }
  }
  // Exact distances, four representatives at a time: each keeps its own sum in the same feature order as
  // nearestDistance (so a winning value is bit-identical), and four independent sums do not stall on add latency.
  // First the four smallest bounds (usually holding the winner), then every representative not ruled out.
  const first = scratchFirst;
  first.fill(-1);
  const firstBound = scratchFirstBound;
  firstBound.fill(Infinity);
  for (let k = 0; k < m; k++) {
    const b = bound[k];
    if (!(b < firstBound[3])) continue;
    let g = 3;
    while (g > 0 && b < firstBound[g - 1]) {
      firstBound[g] = firstBound[g - 1];
      first[g] = first[g - 1];
      g--;
    }
    firstBound[g] = b;
    first[g] = k;
  }
  const group = scratchGroup;
  const sums = scratchSums;
  let filled = 0;
  while (filled < 4 && first[filled] >= 0) {
    group[filled] = first[filled];
    filled++;
  }
  let best = Infinity;
  let exact = 0;
  let summed = 0;
  let next = 0;
  while (filled > 0) {
    for (let g = filled; g < 4; g++) group[g] = group[0]; // a short group repeats a member (harmless)
    exact += filled;
    summed += sumFour(a, oa, reps, rows[group[0]] * n0, rows[group[1]] * n0, rows[group[2]] * n0, rows[group[3]] * n0, n0, best, sums);
    for (let g = 0; g < 4; g++) if (sums[g] < best) best = sums[g];
    // refill from the representatives not yet visited whose bound does not rule them out: skipped only when the
    // bound beats the best by a margin far above round-off (a NaN bound is never skipped)
    filled = 0;
    while (filled < 4 && next < m) {
      const k = next++;
      if (k === first[0] || k === first[1] || k === first[2] || k === first[3]) continue;
      if (bound[k] - MARGIN_RELATIVE * best - MARGIN_ABSOLUTE > best) continue;
      group[filled++] = k;
    }
  }
  if (counter) {
    counter.exact += exact;
    counter.summed += summed;
  }
  return Math.sqrt(best);
}

/** Σ_m2 H[μ][m2] c[B + m2] for every partner channel of one first channel: the pair loop of tensorFeatures. */
function referenceContractPartners(
  half: Float64Array, nM: number, width: number, c: Float64Array, partnerBase: Int32Array, from: number, to: number,
  partner: Int32Array, weight: Float64Array, out: Float64Array, f: number, fStep: number, n: number,
): void {
  if (nM === 5) {
    // λ = 2: five independent accumulators, one pass over each partner's coefficients.
    for (let q = from; q < to; q++) {
      const B = partnerBase[partner[q]];
      let s0 = 0, s1 = 0, s2 = 0, s3 = 0, s4 = 0;
      for (let m = 0; m < width; m++) {
        const b = c[B + m];
        s0 += half[m] * b;
        s1 += half[width + m] * b;
        s2 += half[2 * width + m] * b;
        s3 += half[3 * width + m] * b;
        s4 += half[4 * width + m] * b;
      }
      const w = weight[q];
      const at = f + (q - from) * fStep;
      out[at] = w * s0;
      out[at + n] = w * s1;
      out[at + 2 * n] = w * s2;
      out[at + 3 * n] = w * s3;
      out[at + 4 * n] = w * s4;
    }
  } else {
    for (let q = from; q < to; q++) {
      const B = partnerBase[partner[q]];
      let s0 = 0, s1 = 0, s2 = 0;
      for (let m = 0; m < width; m++) {
        const b = c[B + m];
        s0 += half[m] * b;
        s1 += half[width + m] * b;
        s2 += half[2 * width + m] * b;
      }
      const w = weight[q];
      const at = f + (q - from) * fStep;
      out[at] = w * s0;
      out[at + n] = w * s1;
      out[at + 2 * n] = w * s2;
    }
  }
}

/**
 * (Kept first version of features.ts tensorFeatures: one partner channel per pass.)
 * λ > 0 block of one environment into out[(e·(2λ+1) + μ)·n + f]. For each pair block the half-coupling
 * H = C·c runs over the factor of HIGHER degree (once per channel), so the pair loop runs over the shorter m
 * axis: for (l, l') with l < l' the channel of degree l' is held and every channel of degree l is contracted.
 */
export function referenceTensorFeatures(P: Plan, T: TensorPlan, c: Float64Array, out: Float64Array, e: number): void {
  const { half, tch } = P;
  const nM = 2 * T.lambda + 1;
  const n = T.n;
  const base = e * nM * n;
  for (const blk of T.blocks) {
    const { l, l2, firstStart, ch2, weight, gatherStart, gatherIndex, gatherValue } = blk;
    const width = 2 * l + 1;
    const targets = nM * width;
    const A0 = P.tensorBase[l];
    if (l === l2) {
      let f = base + blk.offset;
      for (let c1 = 0; c1 < tch; c1++) {
        // Half-coupled H[μ][m'] = Σ_m C[m, m', μ] c_{ch1, l m} (gathered: one register sum per target).
        const A = A0[c1];
        for (let t = 0; t < targets; t++) {
          let h = 0;
          for (let k = gatherStart[t]; k < gatherStart[t + 1]; k++) h += gatherValue[k] * c[A + gatherIndex[k]];
          half[t] = h;
        }
        const from = firstStart[c1], to = firstStart[c1 + 1];
        referenceContractPartners(half, nM, width, c, A0, from, to, ch2, weight, out, f, 1, n);
        f += to - from;
      }
    } else {
      // Hold the degree-l2 channel c2; contract all degree-l channels c1; feature f = offset + c1·tch + c2.
      const B0 = P.tensorBase[l2];
      const f0 = base + blk.offset;
      for (let c2 = 0; c2 < tch; c2++) {
        const B = B0[c2];
        for (let t = 0; t < targets; t++) {
          let h = 0;
          for (let k = gatherStart[t]; k < gatherStart[t + 1]; k++) h += gatherValue[k] * c[B + gatherIndex[k]];
          half[t] = h;
        }
        referenceContractPartners(half, nM, width, c, A0, 0, tch, P.allChannels, P.sqrt2, out, f0 + c2, tch, n);
      }
    }
  }
  normalise(out, base, base + nM * n);
}


/** The density expansion (density.ts makeDensityExpander) as first written: the radial table read in its own layout. */
export function referenceDensityExpander(s: DensitySettings): DensityExpander {
  const { nmax, lmax, cutoff, cutoffWidth, channels } = s;
  const table = radialTable(s);
  const L1 = lmax + 1;
  const LL = L1 * L1;
  const NL = nmax * L1;
  const size = channels * nmax * LL;
  const Y = new Float64Array(LL);
  const FOUR_PI = 4 * Math.PI;
  // The centre's own Gaussian: f_c(0) Y_00 I_n0(0) in the l = 0 slot of its channel.
  const self = new Float64Array(NL);
  interpolateRadial(table, 0, self);
  const selfTerm = new Float64Array(nmax);
  for (let n = 0; n < nmax; n++) selfTerm[n] = (FOUR_PI / Math.sqrt(4 * Math.PI)) * self[n * L1];
  const inner = cutoff - cutoffWidth;
  const switchScale = Math.PI / cutoffWidth;
  // The table's coefficients reordered from n·(lmax+1) + l to l·nmax + n within each (interval, power).
  const byDegree = new Float64Array(table.coefficients.length);
  for (let b = 0; b < table.coefficients.length; b += NL) {
    for (let n = 0; n < nmax; n++) for (let l = 0; l <= lmax; l++) byDegree[b + l * nmax + n] = table.coefficients[b + n * L1 + l];
  }
  const radial = new Float64Array(NL);
  const work = new Float64Array(size);
  const intervals = table.intervals;
  const invSpacing = 1 / table.spacing;

  return {
    settings: { ...s },
    size,
    transposedAt: () => -1,
    coefficientsAt: () => -1,
    expand(pairs, centre, centreChannel, channelOf, out) {
      // Locals, not closure slots, in the loop (V8 keeps them in registers).
      const coef = byDegree, Yl = Y, rl = radial, acc = work, cut = cutoff, inn = inner, sw = switchScale, inv = invSpacing, last = intervals;
      acc.fill(0);
      const { start, neighbour, vectors, distances } = pairs;
      const end = start[centre + 1];
      for (let p = start[centre]; p < end; p++) {
        const d = distances[p];
        if (!(d < cut)) continue;
        const a = channelOf[neighbour[p]];
        if (a < 0) continue;
        realSphericalHarmonics(lmax, vectors[3 * p], vectors[3 * p + 1], vectors[3 * p + 2], Yl);
        const w = d <= inn ? FOUR_PI : FOUR_PI * 0.5 * (1 + Math.cos(sw * (d - inn)));
        // Radial integrals by the cubic pieces of interval k, ordered l·nmax + n.
        const u = d * inv;
        let k = Math.floor(u);
        if (k >= last) k = last - 1;
        const t = u - k;
        const t2 = t * t, t3 = t2 * t;
        const q0 = k * 4 * NL, q1 = q0 + NL, q2 = q1 + NL, q3 = q2 + NL;
        for (let j = 0; j < NL; j++) rl[j] = w * (coef[q0 + j] + t * coef[q1 + j] + t2 * coef[q2 + j] + t3 * coef[q3 + j]);
        // Accumulate in the work layout (a·LL + lm)·nmax + n: the inner loop runs over n, contiguous.
        const base = a * LL * nmax;
        for (let l = 0; l <= lmax; l++) {
          const rb = l * nmax;
          const hi = (l + 1) * (l + 1);
          for (let lm = l * l; lm < hi; lm++) {
            const y = Yl[lm];
            const ob = base + lm * nmax;
            for (let n = 0; n < nmax; n++) acc[ob + n] += y * rl[rb + n];
          }
        }
      }
      // Back to the public layout (a·nmax + n)·LL + lm, plus the centre's own Gaussian.
      for (let a = 0; a < channels; a++) {
        for (let lm = 0; lm < LL; lm++) {
          const src = (a * LL + lm) * nmax;
          for (let n = 0; n < nmax; n++) out[(a * nmax + n) * LL + lm] = acc[src + n];
        }
      }
      if (centreChannel >= 0) for (let n = 0; n < nmax; n++) out[(centreChannel * nmax + n) * LL] += selfTerm[n];
    },
    // no kernels here: every expansion writes `out`, nothing is left in a kernel's memory
    expandLeaving(pairs, centre, centreChannel, channelOf, out, slot) {
      this.expand(pairs, centre, centreChannel, channelOf, out, slot);
      return true;
    },
    copyCoefficients: () => false,
  };
}

// Farthest-point sampling and the leave-frame-out distances of core/learning/sparse.ts before the pruned searches.
function referenceRowDistance(a: Float64Array, ia: number, b: Float64Array, ib: number, n0: number): number {
  // four accumulators: this loop dominates farthest-point sampling and the applicability check
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  const oa = ia * n0;
  const ob = ib * n0;
  let f = 0;
  for (; f + 3 < n0; f += 4) {
    const d0 = a[oa + f] - b[ob + f];
    const d1 = a[oa + f + 1] - b[ob + f + 1];
    const d2 = a[oa + f + 2] - b[ob + f + 2];
    const d3 = a[oa + f + 3] - b[ob + f + 3];
    s0 += d0 * d0;
    s1 += d1 * d1;
    s2 += d2 * d2;
    s3 += d3 * d3;
  }
  for (; f < n0; f++) {
    const d = a[oa + f] - b[ob + f];
    s0 += d * d;
  }
  return Math.sqrt(s0 + s1 + s2 + s3);
}

/**
 * Farthest-point sampling of up to m rows among `candidates` (indices into p). Starts from the row farthest
 * from the candidates' mean (deterministic, no randomness), then repeatedly adds the row farthest from the
 * chosen set. Returns chosen indices in order and each candidate's distance to the chosen set.
 */
export function referenceFarthestPointSample(p: Float64Array, n0: number, candidates: Int32Array, m: number): { chosen: Int32Array; distance: Float64Array } {
  const n = candidates.length;
  const take = Math.min(m, n);
  const chosen = new Int32Array(take);
  const dist = new Float64Array(n).fill(Infinity);
  if (take === 0) return { chosen, distance: dist };
  const mean = new Float64Array(n0);
  for (let c = 0; c < n; c++) for (let f = 0; f < n0; f++) mean[f] += p[candidates[c] * n0 + f] / n;
  let next = 0;
  let far = -1;
  for (let c = 0; c < n; c++) {
    const d = referenceRowDistance(p, candidates[c], mean, 0, n0);
    if (d > far) {
      far = d;
      next = c;
    }
  }
  for (let k = 0; k < take; k++) {
    chosen[k] = candidates[next];
    dist[next] = 0;
    let best = -1;
    let bestAt = 0;
    for (let c = 0; c < n; c++) {
      if (dist[c] > 0) {
        const d = referenceRowDistance(p, candidates[c], p, chosen[k], n0);
        if (d < dist[c]) dist[c] = d;
      }
      if (dist[c] > best) {
        best = dist[c];
        bestAt = c;
      }
    }
    next = bestAt;
    if (best <= 0) {
      // every remaining candidate duplicates a chosen one
      return { chosen: chosen.slice(0, k + 1), distance: dist };
    }
  }
  return { chosen, distance: dist };
}

/**
 * Distance of each pool row to the nearest representative other than itself (leave-self-out), or, with
 * `frameOf`, to the nearest representative from another frame (leave-frame-out), for the applicability threshold. `reps` are pool indices; `repOf[i]` is i's own index in reps or −1.
 */
export function referenceNearestOtherDistances(pool: { count: number; n0: number; species: Int32Array; p: Float64Array }, reps: Int32Array, frameOf?: Int32Array): Float64Array {
  const own = new Map<number, number>();
  reps.forEach((r, k) => own.set(r, k));
  const out = new Float64Array(pool.count).fill(Infinity);
  for (let i = 0; i < pool.count; i++) {
    const self = own.get(i);
    for (let k = 0; k < reps.length; k++) {
      if (k === self || pool.species[reps[k]] !== pool.species[i]) continue;
      if (frameOf && frameOf[reps[k]] === frameOf[i]) continue;
      const d = referenceRowDistance(pool.p, i, pool.p, reps[k], pool.n0);
      if (d < out[i]) out[i] = d;
    }
  }
  return out;
}

/** L z = b in place (core/numerics/cholesky.ts forwardSubstitute) one row at a time, as first written. */
export function referenceForwardSubstitute(l: Float64Array, n: number, b: Float64Array): Float64Array {
  for (let i = 0; i < n; i++) {
    const ri = i * n;
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[ri + k] * b[k];
    b[i] = s / l[ri + i];
  }
  return b;
}

/** Lᵀ x = z in place (core/numerics/cholesky.ts backSubstitute) one row at a time, as first written. */
export function referenceBackSubstitute(l: Float64Array, n: number, z: Float64Array): Float64Array {
  for (let i = n - 1; i >= 0; i--) {
    const s = z[i] / l[i * n + i];
    z[i] = s;
    const ri = i * n;
    for (let k = 0; k < i; k++) z[k] -= l[ri + k] * s;
  }
  return z;
}

/** kernels.ts linearDesignRows as first written: one environment after another, entry by entry. */
export function referenceLinearDesignRows(data: Float64Array, count: number, width: number, n: number, centreSpecies: Int32Array, species: number): Float64Array {
  const cols = species * n;
  const rows = new Float64Array(width * cols);
  for (let e = 0; e < count; e++) {
    for (let mu = 0; mu < width; mu++) {
      const src = (e * width + mu) * n;
      const dst = mu * cols + centreSpecies[e] * n;
      for (let f = 0; f < n; f++) rows[dst + f] += data[src + f];
    }
  }
  return rows;
}

/** kernels.ts localContributions of a linear model as first written: one row, one sum at a time. */
export function referenceLinearContributions(data: Float64Array, count: number, width: number, n: number, centreSpecies: Int32Array, weights: Float64Array): Float64Array {
  const out = new Float64Array(count * width);
  for (let e = 0; e < count; e++) {
    const wOff = centreSpecies[e] * n;
    for (let mu = 0; mu < width; mu++) {
      const src = (e * width + mu) * n;
      let d = 0;
      for (let f = 0; f < n; f++) d += data[src + f] * weights[wOff + f];
      out[e * width + mu] = d;
    }
  }
  return out;
}
