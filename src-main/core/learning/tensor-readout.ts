// Linear read-out of the λ > 0 features without forming them. A model that is linear in the unit-norm λ = 1 or
// λ = 2 features of an environment (ζ = 1 weights, or a kernel model's per-environment folded weights u) needs
// only y_μ = Σ_f ξ̂_fμ u_f, not the (2λ+1)·nλ features themselves, and both factors of that sum are cheap from
// the density coefficients:
//
//   numerator:  Σ_f ξ_fμ u_f = Σ_blocks Σ_{m m'} C^{λμ}_{lm,l'm'} (Aᵀ W B)_{m m'}
//   norm²:      Σ_f Σ_μ ξ_fμ² = Σ_blocks k Σ_μ tr(C^μᵀ G_A C^μ G_B),   G_A = AᵀA, G_B = BᵀB
//
// where, for a block (l, l'), A and B hold the coefficients c_{ch,lm} and c_{ch,l'm'} of the tensor channels
// (channels × (2l+1) and channels × (2l'+1)), W is the channels × channels matrix of the weights u_f times the
// storage weights (1 or √2, features.ts) of the block's stored pairs, and k = 2 for l < l' (both orders of the
// pair are stored once with weight √2) and 1 for l = l' (the stored c1 ≤ c2 pairs with √2 off the diagonal count
// every ordered pair once, because the coupled product is symmetric in the two factors when l + l' + λ is even).
// The cost per environment is about Σ_blocks channels²·(2l+1) multiply-adds instead of the
// Σ_blocks pairs·(2λ+1)·(2l+1) of the features plus the dot products; the result equals the feature route to
// round-off (tested against computeFeatures + a dot product).
import type { NeighbourPairs } from '../descriptors/density.ts';
import type { EnvironmentFeatures, FeatureSettings } from '../descriptors/feature-types.ts';
import { featurePlan, featurise, prepare, type FeatureTimings, type Plan, type TensorPlan, type TensorStep } from '../descriptors/features.ts';
import type { Frame } from '../geometry/frame.ts';
import type { KernelModule } from '../wasm/load.ts';
import { align16, residentName, type Region } from '../wasm/arena.ts';
import { descriptorKernels } from '../wasm/descriptors.ts';

/** What a read-out needs per environment: its weight matrices (weightMatrices layout). */
export interface TensorReadout {
  lambda: 1 | 2;
  /**
   * The weight matrices for environment e, given the index of its centre species and its complete unit-norm
   * λ = 0 row scalar[at…at+n0) (a kernel model's weights depend on it). The array may be reused between calls.
   */
  matrices(e: number, centreSpecies: number, scalar: Float64Array, at: number): Float64Array;
  /**
   * When the matrices depend on the centre species alone (a linear model): perSpecies[s] is what `matrices`
   * answers for species s. The WebAssembly read-out then keeps them in its memory instead of copying them per
   * environment. The arrays must not change afterwards.
   */
  perSpecies?: Float64Array[];
}

export interface ReadoutResult {
  /** The λ = 0 features of every centre (no λ > 0 block: `tensor` is empty). */
  features: EnvironmentFeatures;
  /** Per environment, the 2λ+1 read-out values y_μ = Σ_f ξ̂_fμ u_f (μ = 0…2λ for m = −λ…λ). */
  values: Float64Array;
}

function tensorPlanOf(settings: FeatureSettings, lambda: 1 | 2): { P: Plan; T: TensorPlan } {
  const P = featurePlan(settings, [lambda]);
  return { P, T: P.tensors[0] };
}

/** Length of the weight-matrix array of order λ: one channels × channels matrix per (l, l') block. */
export function weightMatricesLength(settings: FeatureSettings, lambda: 1 | 2): number {
  const { P, T } = tensorPlanOf(settings, lambda);
  return T.blocks.length * P.tch * P.tch;
}

/**
 * A converter from weight vectors over the λ features in storage order (u[from…from+nλ)) to weight matrices:
 * block b's matrix W[b·ch² + c1·ch + c2] = u_f × storage weight of the pair (c1, c2) stored as feature f, 0 where
 * no pair is stored (c2 < c1 in an l = l' block). Make it once per settings (a kernel model converts per
 * environment).
 */
export function makeWeightMatrices(settings: FeatureSettings, lambda: 1 | 2): (u: Float64Array, from?: number, out?: Float64Array) => Float64Array {
  const { P, T } = tensorPlanOf(settings, lambda);
  const tch = P.tch;
  const size = T.blocks.length * tch * tch;
  return (u, from = 0, out) => {
    if (u.length < from + T.n) throw new RangeError(`weightMatrices: ${u.length - from} weights from index ${from}, the λ = ${lambda} features have ${T.n}`);
    const W = out ?? new Float64Array(size);
    if (W.length < size) throw new RangeError(`weightMatrices: the output holds ${W.length} numbers, ${size} are needed`);
    W.fill(0, 0, size);
    for (let b = 0; b < T.blocks.length; b++) {
      const blk = T.blocks[b];
      const base = b * tch * tch;
      for (let c1 = 0; c1 < tch; c1++) {
        for (let q = blk.firstStart[c1]; q < blk.firstStart[c1 + 1]; q++) {
          W[base + c1 * tch + blk.ch2[q]] = u[from + blk.offset + q] * blk.weight[q];
        }
      }
    }
    return W;
  };
}

/** makeWeightMatrices for a single conversion. */
export function weightMatrices(settings: FeatureSettings, lambda: 1 | 2, u: Float64Array, from = 0, out?: Float64Array): Float64Array {
  return makeWeightMatrices(settings, lambda)(u, from, out);
}

/** Scratch of one read-out: transposed coefficients and Gram matrices per degree, block products. */
export interface ReadoutScratch {
  /** Per degree l: (2l+1) × channels, the coefficients c_{ch,lm} with m outer. */
  ct: Float64Array[];
  /** Per degree l: (2l+1) × (2l+1) Gram matrix Σ_ch c_{ch,lm} c_{ch,lm'}. */
  gram: Float64Array[];
  /** (2l+1) × channels product AᵀW, and (2l+1) × (2l'+1) product AᵀWB. */
  left: Float64Array;
  both: Float64Array;
}

export function readoutScratch(P: Plan, T: TensorPlan): ReadoutScratch {
  const lmax = T.blocks.reduce((m, b) => Math.max(m, b.l2), 0);
  const w = 2 * lmax + 1;
  return {
    ct: Array.from({ length: lmax + 1 }, (_, l) => new Float64Array((2 * l + 1) * P.tch)),
    gram: Array.from({ length: lmax + 1 }, (_, l) => new Float64Array((2 * l + 1) * (2 * l + 1))),
    left: new Float64Array(w * P.tch),
    both: new Float64Array(w * w),
  };
}

/**
 * out[i·cols + j] = Σ_k a[i·len + k] · b[j·len + k] for i < rows, j < cols: products of rows with rows, in tiles
 * of two rows by four columns (eight independent sums, six loads per eight products), then two rows by one
 * column, and one row by four or one columns for an odd last row. Every sum runs over k in ascending order from
 * zero, so the values are those of the plain loop bit for bit.
 */
function rowsTimesRows(a: Float64Array, rows: number, b: Float64Array, cols: number, len: number, out: Float64Array): void {
  let i = 0;
  for (; i + 1 < rows; i += 2) {
    const a0 = i * len, a1 = a0 + len;
    const o0 = i * cols, o1 = o0 + cols;
    let j = 0;
    for (; j + 3 < cols; j += 4) {
      const b0 = j * len, b1 = b0 + len, b2 = b1 + len, b3 = b2 + len;
      let s00 = 0, s01 = 0, s02 = 0, s03 = 0, s10 = 0, s11 = 0, s12 = 0, s13 = 0;
      for (let k = 0; k < len; k++) {
        const x = a[a0 + k], z = a[a1 + k];
        const y0 = b[b0 + k], y1 = b[b1 + k], y2 = b[b2 + k], y3 = b[b3 + k];
        s00 += x * y0;
        s01 += x * y1;
        s02 += x * y2;
        s03 += x * y3;
        s10 += z * y0;
        s11 += z * y1;
        s12 += z * y2;
        s13 += z * y3;
      }
      out[o0 + j] = s00;
      out[o0 + j + 1] = s01;
      out[o0 + j + 2] = s02;
      out[o0 + j + 3] = s03;
      out[o1 + j] = s10;
      out[o1 + j + 1] = s11;
      out[o1 + j + 2] = s12;
      out[o1 + j + 3] = s13;
    }
    for (; j < cols; j++) {
      const bj = j * len;
      let s0 = 0, s1 = 0;
      for (let k = 0; k < len; k++) {
        const y = b[bj + k];
        s0 += a[a0 + k] * y;
        s1 += a[a1 + k] * y;
      }
      out[o0 + j] = s0;
      out[o1 + j] = s1;
    }
  }
  if (i < rows) {
    const a0 = i * len;
    const o0 = i * cols;
    let j = 0;
    for (; j + 3 < cols; j += 4) {
      const b0 = j * len, b1 = b0 + len, b2 = b1 + len, b3 = b2 + len;
      let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
      for (let k = 0; k < len; k++) {
        const x = a[a0 + k];
        s0 += x * b[b0 + k];
        s1 += x * b[b1 + k];
        s2 += x * b[b2 + k];
        s3 += x * b[b3 + k];
      }
      out[o0 + j] = s0;
      out[o0 + j + 1] = s1;
      out[o0 + j + 2] = s2;
      out[o0 + j + 3] = s3;
    }
    for (; j < cols; j++) {
      const bj = j * len;
      let s = 0;
      for (let k = 0; k < len; k++) s += a[a0 + k] * b[bj + k];
      out[o0 + j] = s;
    }
  }
}

/**
 * left[m·tch + c2] = Σ_c1 a[m·tch + c1] · W[wb + c1·tch + c2] (c1 ascending from zero) for m < rows: Aᵀ W of a
 * block, two rows and four columns at a time (eight independent sums). For an l = l' block W is upper triangular,
 * so the sum for columns c2…c2+3 stops at c1 = c2 + 3: the terms it then still takes with c1 > c2 are products
 * with the zeros below W's diagonal, which add nothing (a sum starting from +0 stays +0 when ±0 is added), so the
 * values equal those of the plain loop that skips them, bit for bit.
 */
function rowsTimesMatrix(a: Float64Array, rows: number, W: Float64Array, wb: number, tch: number, upper: boolean, left: Float64Array): void {
  let m = 0;
  for (; m + 1 < rows; m += 2) {
    const a0 = m * tch, a1 = a0 + tch;
    let c2 = 0;
    for (; c2 + 3 < tch; c2 += 4) {
      const end = upper ? c2 + 4 : tch;
      let s00 = 0, s01 = 0, s02 = 0, s03 = 0, s10 = 0, s11 = 0, s12 = 0, s13 = 0;
      for (let c1 = 0; c1 < end; c1++) {
        const wo = wb + c1 * tch + c2;
        const w0 = W[wo], w1 = W[wo + 1], w2 = W[wo + 2], w3 = W[wo + 3];
        const x = a[a0 + c1], z = a[a1 + c1];
        s00 += x * w0;
        s01 += x * w1;
        s02 += x * w2;
        s03 += x * w3;
        s10 += z * w0;
        s11 += z * w1;
        s12 += z * w2;
        s13 += z * w3;
      }
      left[a0 + c2] = s00;
      left[a0 + c2 + 1] = s01;
      left[a0 + c2 + 2] = s02;
      left[a0 + c2 + 3] = s03;
      left[a1 + c2] = s10;
      left[a1 + c2 + 1] = s11;
      left[a1 + c2 + 2] = s12;
      left[a1 + c2 + 3] = s13;
    }
    for (; c2 < tch; c2++) {
      const end = upper ? c2 + 1 : tch;
      let s0 = 0, s1 = 0;
      for (let c1 = 0; c1 < end; c1++) {
        const w = W[wb + c1 * tch + c2];
        s0 += a[a0 + c1] * w;
        s1 += a[a1 + c1] * w;
      }
      left[a0 + c2] = s0;
      left[a1 + c2] = s1;
    }
  }
  for (; m < rows; m++) {
    const a0 = m * tch;
    let c2 = 0;
    for (; c2 + 3 < tch; c2 += 4) {
      const end = upper ? c2 + 4 : tch;
      let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
      for (let c1 = 0; c1 < end; c1++) {
        const wo = wb + c1 * tch + c2;
        const x = a[a0 + c1];
        s0 += x * W[wo];
        s1 += x * W[wo + 1];
        s2 += x * W[wo + 2];
        s3 += x * W[wo + 3];
      }
      left[a0 + c2] = s0;
      left[a0 + c2 + 1] = s1;
      left[a0 + c2 + 2] = s2;
      left[a0 + c2 + 3] = s3;
    }
    for (; c2 < tch; c2++) {
      const end = upper ? c2 + 1 : tch;
      let s = 0;
      for (let c1 = 0; c1 < end; c1++) s += a[a0 + c1] * W[wb + c1 * tch + c2];
      left[a0 + c2] = s;
    }
  }
}

/**
 * y[at…at+2λ] = the read-out of one environment with coefficients c and weight matrices W. The products are
 * register-blocked (rowsTimesMatrix, rowsTimesRows); every number is summed in the same order as in the
 * plain loops, so the values are bit-identical to them (test/core/learning/tensor-readout.test.ts keeps the plain
 * version as the reference).
 */
export function readOne(P: Plan, T: TensorPlan, c: Float64Array, W: Float64Array, S: ReadoutScratch, y: Float64Array, at: number): void {
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
    // the Gram matrix: both triangles computed (the same products in the same order, so g is exactly symmetric)
    rowsTimesRows(ct, w, ct, w, tch, S.gram[l]);
  }
  for (let mu = 0; mu < nM; mu++) y[at + mu] = 0;
  let norm2 = 0;
  const { left, both } = S;
  for (let b = 0; b < T.blocks.length; b++) {
    const blk = T.blocks[b];
    const w1 = 2 * blk.l + 1, w2 = 2 * blk.l2 + 1;
    // left = Aᵀ W (w1 × channels); an l = l' block's W is upper triangular (pairs c1 ≤ c2 only)
    rowsTimesMatrix(S.ct[blk.l], w1, W, b * tch * tch, tch, blk.l === blk.l2, left);
    // both = Aᵀ W B (w1 × w2)
    rowsTimesRows(left, w1, S.ct[blk.l2], w2, tch, both);
    const { muStart, e1, e2, ev } = blk;
    const ga = S.gram[blk.l], gb = S.gram[blk.l2];
    let blockNorm = 0;
    for (let mu = 0; mu < nM; mu++) {
      let s = 0;
      for (let k = muStart[mu]; k < muStart[mu + 1]; k++) {
        s += ev[k] * both[e1[k] * w2 + e2[k]];
        // Σ_{k'} v_k v_k' G_A[m_k, m_k'] G_B[m'_k, m'_k'], the terms k' = k once and k' < k twice
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
    // a zero block (e.g. λ = 2 of a lone atom) stays zero, as in computeFeatures
    for (let mu = 0; mu < nM; mu++) y[at + mu] = 0;
  }
}

/**
 * The λ = 0 features of every centre of `frame` and the read-out of its λ > 0 features: what a prediction needs
 * from the features, at a fraction of the cost of computeFeatures with λ > 0. Environments in atom order.
 * `reuse`: an earlier result the caller no longer needs, whose arrays are written over when their sizes fit
 * (every number is written, as in computeFeatures: it saves the system's zeroing of fresh pages, 2.9 MB of λ = 0
 * features per 384-atom frame).
 */
export function computeReadout(frame: Frame, settings: FeatureSettings, readout: TensorReadout, neighbours?: NeighbourPairs, timings?: FeatureTimings, reuse?: ReadoutResult): ReadoutResult {
  const lambda = readout.lambda;
  const prep = prepare(frame, settings, [0, lambda], neighbours, timings);
  const P = prep.P;
  const T = P.tensors[0];
  const count = prep.centres.length;
  const nM = 2 * lambda + 1;
  const fits = (a: Float64Array | undefined, length: number) => (a !== undefined && a.length === length ? a : undefined);
  const scalar = fits(reuse?.features.scalar, count * P.n0) ?? new Float64Array(count * P.n0);
  const values = fits(reuse?.values, count * nM) ?? new Float64Array(count * nM);
  const norms = fits(reuse?.features.norms, count) ?? new Float64Array(count);
  const read = readoutStep(P, T, readout, scalar, values);
  const step: TensorStep = (e, k0, c) => read(e, k0, c, prep.centreSpecies[e]);
  const inPlace = read.inPlace;
  if (inPlace) step.inPlace = (e, at) => inPlace(e, prep.centreSpecies[e], at);
  featurise(prep, scalar, (e) => e, step, null, timings, norms);
  return {
    features: { count, centre: prep.centres, centreSpecies: prep.centreSpecies, frame: new Int32Array(count), n0: P.n0, scalar, tensor: {}, norms },
    values,
  };
}

/** Reads environment e (λ = 0 row k0 of `scalar`, coefficients c, centre species s) into its values. */
export interface ReadStep {
  (e: number, k0: number, c: Float64Array, species: number): void;
  /**
   * Present where the weights do not depend on the λ = 0 row (readout.perSpecies) and the kernel runs: reads
   * environment e from coefficients already in the descriptor kernels' memory (TensorStep.inPlace); false when
   * they are not there any more (the caller then calls the step).
   */
  inPlace?: (e: number, species: number, at: () => number) => boolean;
}

/**
 * The read-out of one environment after another into values[e·(2λ+1)…]: through the WebAssembly kernel where
 * it is available (the same bits), else readOne. Make one per frame.
 */
export function readoutStep(P: Plan, T: TensorPlan, readout: TensorReadout, scalar: Float64Array, values: Float64Array): ReadStep {
  return wasmReadout(P, T, readout, scalar, values) ?? plainReadout(P, T, readout, scalar, values);
}

/** The read-out step by readOne in JavaScript. */
function plainReadout(P: Plan, T: TensorPlan, readout: TensorReadout, scalar: Float64Array, values: Float64Array): ReadStep {
  const S = readoutScratch(P, T);
  const nM = 2 * T.lambda + 1;
  return (e, k0, c, s) => readOne(P, T, c, readout.matrices(e, s, scalar, k0 * P.n0), S, values, e * nM);
}

/** The key of the read-out's scratch region (coefficients, one weight set, the output) in the kernel arena. */
const READOUT_SCRATCH = {};

/**
 * The read-out step through the WebAssembly kernel (../wasm/assembly/descriptors.ts readOut, the same bits as
 * readOne here), or null where the kernels are off or unavailable. It runs in the descriptor kernels' module, whose
 * arena the density expansion and the feature plans share: the plan's tables stay there per plan, and a linear
 * model's per-species matrices (readout.perSpecies) per model; the coefficients of each environment (and a kernel
 * model's matrices) are copied in per environment. Before each environment the regions are asked for again when
 * anything was placed in that memory since (the expansion's region may grow, the arena may start again).
 */
function wasmReadout(P: Plan, T: TensorPlan, readout: TensorReadout, scalar: Float64Array, values: Float64Array): ReadStep | null {
  const k = descriptorKernels();
  if (!k) return null;
  const tch = P.tch;
  const wSize = T.blocks.length * tch * tch;
  // a matrix set and the coefficients are read up to two doubles past their ends (the kernel's last lane pair)
  const wStride = (wSize + 2) * 8;
  const cLen = P.coefficients.length;
  const nM = 2 * T.lambda + 1;
  const perSpecies = readout.perSpecies;
  const yOff = (cLen + 2) * 8;
  const wOff = yOff + Math.ceil(nM / 2) * 16;
  const regions: Region[] = [
    { name: residentName('readout-plan', T), key: T, bytes: layoutPlan(P, T, 0, null), fill: (m, at) => layoutPlan(P, T, at, m) },
    { name: 'readout-scratch', key: READOUT_SCRATCH, bytes: wOff + (perSpecies ? 0 : wStride) },
  ];
  if (perSpecies) {
    regions.push({
      name: residentName('readout-weights', perSpecies),
      key: perSpecies,
      bytes: perSpecies.length * wStride,
      fill: (m, at) => perSpecies.forEach((w, s) => m.f64(at + s * wStride, wSize).set(w.subarray(0, wSize))),
    });
  }
  let planAt = 0, cAt = 0, weightsAt = 0, yAt = 0, wAt = 0;
  let epoch = -1;
  let cView: Float64Array = new Float64Array(0);
  let yView: Float64Array = cView;
  let wView: Float64Array | null = null;
  /** Whether the regions are in place (asked for again when anything was placed since); their addresses and views. */
  const place = (): boolean => {
    if (epoch === k.epoch() && cView.length !== 0) return true;
    const at = k.arena.acquire(regions);
    if (!at) return false;
    [planAt, cAt, weightsAt] = at;
    yAt = cAt + yOff;
    wAt = cAt + wOff;
    epoch = k.epoch();
    cView = k.module.f64(cAt, cLen);
    yView = k.module.f64(yAt, nM);
    wView = perSpecies ? null : k.module.f64(wAt, wSize);
    return true;
  };
  if (!place()) return null;
  let plain: ReadStep | null = null;
  const step: ReadStep = (e, k0, c, s) => {
    if (!place()) {
      // the memory could not hold the regions again: the JavaScript read-out (the same bits)
      plain ??= plainReadout(P, T, readout, scalar, values);
      plain(e, k0, c, s);
      return;
    }
    cView.set(c);
    let W: number;
    if (wView) {
      wView.set(readout.matrices(e, s, scalar, k0 * P.n0).subarray(0, wSize));
      W = wAt;
    } else W = weightsAt + s * wStride;
    k.readOut(planAt, cAt, W, yAt);
    for (let mu = 0; mu < nM; mu++) values[e * nM + mu] = yView[mu];
  };
  if (perSpecies) {
    step.inPlace = (e, s, at) => {
      if (!place()) return false;
      const c = at(); // after placing: −1 when that moved anything
      if (c < 0) return false;
      k.readOut(planAt, c, weightsAt + s * wStride, yAt);
      for (let mu = 0; mu < nM; mu++) values[e * nM + mu] = yView[mu];
      return true;
    };
  }
  return step;
}

/**
 * Lays out the kernel's plan of (P, T) from byte address `at` (see assembly/descriptors.ts readOut): header, channel
 * offsets, Gram matrices per degree, left and both scratch, block records, their coupling tables and two address
 * tables. Writes it into `m` when given; returns the bytes it takes.
 */
function layoutPlan(P: Plan, T: TensorPlan, at: number, m: KernelModule | null): number {
  const tch = P.tch;
  const nM = 2 * T.lambda + 1;
  const nL = T.blocks.reduce((x, b) => Math.max(x, b.l2), 0) + 1;
  const wmax = 2 * nL - 1;
  let p = at;
  const take = (bytes: number) => {
    const q = p;
    p += align16(bytes);
    return q;
  };
  const header = take(48);
  const chOff = take(4 * tch);
  const gramAt = take(4 * nL);
  const gram = Array.from({ length: nL }, (_, l) => take(8 * (2 * l + 1) * (2 * l + 1)));
  const left = take(8 * wmax * tch);
  const both = take(8 * wmax * wmax);
  const blocks = take(32 * T.blocks.length);
  const tables = T.blocks.map((b) => ({ muStart: take(4 * (nM + 1)), e1: take(4 * b.e1.length), e2: take(4 * b.e2.length), ev: take(8 * b.ev.length) }));
  const tabA = take(4 * tch);
  const tabB = take(4 * tch);
  if (m) {
    const buffer = m.f64(at, 0).buffer;
    const i32 = (q: number, n: number) => new Int32Array(buffer, q, n);
    i32(header, 11).set([tch, nM, nL, T.blocks.length, chOff, gramAt, left, both, blocks, tabA, tabB]);
    i32(chOff, tch).set(P.tensorBase[0]);
    i32(gramAt, nL).set(gram);
    T.blocks.forEach((b, k) => {
      const t = tables[k];
      i32(blocks + 32 * k, 7).set([b.l, b.l2, k * tch * tch * 8, t.muStart, t.e1, t.e2, t.ev]);
      i32(t.muStart, nM + 1).set(b.muStart);
      i32(t.e1, b.e1.length).set(b.e1);
      i32(t.e2, b.e2.length).set(b.e2);
      m.f64(t.ev, b.ev.length).set(b.ev);
    });
  }
  return p - at;
}
