// Symmetry-adapted local features of every centre atom of a frame (science notes §4): the λ = 0 power spectrum
// and the λ = 1, 2 equivariant couplings of the density coefficients c^a_nlm(i) of density.ts, in the layout of
// EnvironmentFeatures (feature-types.ts). This is the hot loop of training and prediction: all scratch lives in
// a per-settings plan reused across environments; no allocation per pair or per environment.
//
// Layouts and weights (docs/learning-engine.md):
// - Channels ch = a·nmax + n (a: index into settings.species).
// - λ = 0: feature f = pair·(lmax+1) + l over the unique channel pairs ch1 ≤ ch2 (ch1 outer), value
//     w · (2l+1)^(−1/2) Σ_m c_{ch1,lm} c_{ch2,lm},   w = √2 for ch1 < ch2, 1 for ch1 = ch2,
//   so the dot product of two stored rows equals that of the full (all ordered pairs) power spectra.
// - λ = 1, 2: blocks (l, l') with l ≤ l', |l − l'| ≤ λ ≤ l + l' and l + l' + λ even (proper tensors only),
//   l ascending then l'; in each block the channel pairs (tensor channels n < nmaxTensor): all ordered pairs
//   when l < l', ch1 ≤ ch2 when l = l'. Value w Σ_{m m'} C^{λμ}_{lm,l'm'} c_{ch1,lm} c_{ch2,l'm'} with w = √2
//   unless (l, ch1) = (l', ch2): the real Clebsch–Gordan coefficients with l + l' + λ even are symmetric under
//   swapping the two factors, so again the stored dot product equals that of all ordered pairs.
// - Every environment's block has unit norm (λ = 0: its row; λ > 0: its (2λ+1)×nλ block); a block whose norm is
//   zero (e.g. λ = 2 of an atom with no neighbours) stays zero.
import { InputError, type Where } from '../errors.ts';
import { MIN_ATOM_DISTANCE_A } from '../limits.ts';
import { DEFAULT_SETTINGS, settingsProblems } from '../settings-table.ts';
import type { Frame } from '../geometry/frame.ts';
import type { EnvironmentFeatures, FeatureSettings } from './feature-types.ts';
import { realClebschGordanSparse, type SparseCoupling } from './clebsch-gordan.ts';
import { densityExpander, EXPANSION_SLOTS, type DensityExpander, type NeighbourPairs } from './density.ts';
import { neighbourList } from '../geometry/neighbours.ts';
import { align16 } from '../wasm/arena.ts';
import { descriptorKernels, type DescriptorKernels } from '../wasm/descriptors.ts';

export type Lambda = 0 | 1 | 2;

/** Default angular limit of the tensor features when lmaxTensor is omitted (see docs/learning-engine.md). */
export const DEFAULT_LMAX_TENSOR = 4;

/** The radial and angular limits actually used for λ = 1, 2. */
export function tensorLimits(s: FeatureSettings): { nmax: number; lmax: number } {
  return { nmax: s.nmaxTensor ?? s.nmax, lmax: s.lmaxTensor ?? Math.min(s.lmax, DEFAULT_LMAX_TENSOR) };
}

/** Throws InputError when the settings cannot define features. */
export function checkFeatureSettings(s: FeatureSettings): void {
  const bad = (problem: string, hint: string): never => {
    throw new InputError(`feature settings: ${problem}`, {}, hint);
  };
  // The user-facing limits and the rules between them are the settings table's (one definition).
  const problems = settingsProblems({ ...DEFAULT_SETTINGS, cutoffRadius: s.cutoff, switchWidth: s.cutoffWidth, densityWidth: s.sigma, radialFunctions: s.nmax, angularOrder: s.lmax });
  if (problems.length) bad(problems[0], 'see `polarweave train --help` for the limits of every setting');
  const t = tensorLimits(s);
  if (!Number.isInteger(t.nmax) || t.nmax < 1 || t.nmax > s.nmax) bad(`nmaxTensor = ${t.nmax} must be an integer in 1…nmax`, 'omit it to use nmax');
  if (!Number.isInteger(t.lmax) || t.lmax < 0 || t.lmax > s.lmax) bad(`lmaxTensor = ${t.lmax} must be an integer in 0…lmax`, 'omit it to use the default');
  if (s.species.length === 0) bad('no neighbour species', 'list every species of the data, e.g. ["H", "O"]');
  if (new Set(s.species).size !== s.species.length) bad(`species ${s.species.join(', ')} repeat`, 'list each species once');
  if (s.centres.length === 0) bad('no centre species', 'name the species that get environments, e.g. ["O", "H"]');
  if (new Set(s.centres).size !== s.centres.length) bad(`centres ${s.centres.join(', ')} repeat`, 'list each centre species once');
}

/** One feature's indices: species a, b (into settings.species), radial n, n2, degrees l, l2, and its weight. */
export interface FeatureLabel {
  a: number;
  n: number;
  l: number;
  b: number;
  n2: number;
  l2: number;
  weight: number;
}

export interface Block {
  l: number;
  l2: number;
  /**
   * The non-zero real Clebsch–Gordan coefficients in gather form for the half-coupling H[μ·(2l+1) + m] =
   * Σ C c_{held}: for target t the entries gatherStart[t]…gatherStart[t+1] give the held factor's m index and
   * the coefficient. The held factor is the first (degree l) when l = l2, else the second (degree l2).
   */
  gatherStart: Int32Array;
  gatherIndex: Int32Array;
  gatherValue: Float64Array;
  /** For each first channel (index into the tensor channel list) the range of its pairs in ch2/weight. */
  firstStart: Int32Array;
  ch2: Int32Array;
  weight: Float64Array;
  /** Index of the block's first feature. */
  offset: number;
  /**
   * The same coefficients sorted by μ for the read-out (tensor-readout.ts): entries muStart[μ]…muStart[μ+1]
   * have first-factor index e1 (degree l), second-factor index e2 (degree l2) and value ev.
   */
  muStart: Int32Array;
  e1: Int32Array;
  e2: Int32Array;
  ev: Float64Array;
}

/** The sparse coefficients grouped by μ (the muStart/e1/e2/ev fields of Block). */
function byComponent(sp: SparseCoupling, lambda: number): Pick<Block, 'muStart' | 'e1' | 'e2' | 'ev'> {
  const nM = 2 * lambda + 1;
  const order = Array.from(sp.value, (_, k) => k).sort((a, b) => sp.iL[a] - sp.iL[b] || a - b);
  const muStart = new Int32Array(nM + 1);
  for (const k of order) muStart[sp.iL[k] + 1]++;
  for (let mu = 0; mu < nM; mu++) muStart[mu + 1] += muStart[mu];
  return {
    muStart,
    e1: Int32Array.from(order, (k) => sp.i1[k]),
    e2: Int32Array.from(order, (k) => sp.i2[k]),
    ev: Float64Array.from(order, (k) => sp.value[k]),
  };
}

/** The gather form of Block (see there) from the sparse coefficients. */
function gatherForm(sp: SparseCoupling, l: number, l2: number, lambda: number): Pick<Block, 'gatherStart' | 'gatherIndex' | 'gatherValue'> {
  const width = 2 * l + 1;
  const targets = (2 * lambda + 1) * width;
  // Held factor: degree l (index i1) when l = l2, contracted over i2; degree l2 (index i2) otherwise.
  const held = l === l2 ? sp.i1 : sp.i2;
  const free = l === l2 ? sp.i2 : sp.i1;
  const lists: { index: number; value: number }[][] = Array.from({ length: targets }, () => []);
  for (let k = 0; k < sp.value.length; k++) lists[sp.iL[k] * width + free[k]].push({ index: held[k], value: sp.value[k] });
  const gatherStart = new Int32Array(targets + 1);
  const index: number[] = [];
  const value: number[] = [];
  lists.forEach((list, t) => {
    gatherStart[t] = index.length;
    for (const e of list) {
      index.push(e.index);
      value.push(e.value);
    }
  });
  gatherStart[targets] = index.length;
  return { gatherStart, gatherIndex: Int32Array.from(index), gatherValue: Float64Array.from(value) };
}

export interface TensorPlan {
  lambda: 1 | 2;
  n: number;
  blocks: Block[];
}

/** Blocks of the λ > 0 features (the proper-parity (l, l') pairs), in feature order. */
function tensorPairs(lambda: 1 | 2, lmax: number): [number, number][] {
  const out: [number, number][] = [];
  for (let l = 0; l <= lmax; l++) {
    for (let l2 = l; l2 <= lmax; l2++) {
      if (l2 - l > lambda || l + l2 < lambda || (l + l2 + lambda) % 2 !== 0) continue;
      out.push([l, l2]);
    }
  }
  return out;
}

/** Labels of every feature of order λ, in storage order (its length is the feature count). */
export function describeFeatures(s: FeatureSettings, lambda: Lambda): FeatureLabel[] {
  const S = s.species.length;
  const labels: FeatureLabel[] = [];
  if (lambda === 0) {
    const nch = S * s.nmax;
    for (let c1 = 0; c1 < nch; c1++) {
      for (let c2 = c1; c2 < nch; c2++) {
        for (let l = 0; l <= s.lmax; l++) {
          labels.push({ a: Math.floor(c1 / s.nmax), n: c1 % s.nmax, l, b: Math.floor(c2 / s.nmax), n2: c2 % s.nmax, l2: l, weight: c1 === c2 ? 1 : Math.SQRT2 });
        }
      }
    }
    return labels;
  }
  const t = tensorLimits(s);
  const nch = S * t.nmax;
  for (const [l, l2] of tensorPairs(lambda, t.lmax)) {
    for (let c1 = 0; c1 < nch; c1++) {
      for (let c2 = l === l2 ? c1 : 0; c2 < nch; c2++) {
        labels.push({ a: Math.floor(c1 / t.nmax), n: c1 % t.nmax, l, b: Math.floor(c2 / t.nmax), n2: c2 % t.nmax, l2, weight: l === l2 && c1 === c2 ? 1 : Math.SQRT2 });
      }
    }
  }
  return labels;
}

/** Number of features of order λ for these settings (closed form; equals describeFeatures(...).length). */
export function featureCount(s: FeatureSettings, lambda: Lambda): number {
  const S = s.species.length;
  if (lambda === 0) {
    const nch = S * s.nmax;
    return ((nch * (nch + 1)) / 2) * (s.lmax + 1);
  }
  const t = tensorLimits(s);
  const nch = S * t.nmax;
  let count = 0;
  for (const [l, l2] of tensorPairs(lambda, t.lmax)) count += l === l2 ? (nch * (nch + 1)) / 2 : nch * nch;
  return count;
}

/** Time spent (ms, accumulated) in the stages of computeFeatures, filled when passed. */
export interface FeatureTimings {
  neighbours: number;
  expansion: number;
  coupling: number;
}

export interface Plan {
  settings: FeatureSettings;
  lambdas: (1 | 2)[];
  expander: DensityExpander;
  LL: number;
  /** λ = 0 unique channel pairs and their weights. */
  p1: Int32Array;
  p2: Int32Array;
  pw: Float64Array;
  /** (2l+1)^(−1/2). */
  invSqrt: Float64Array;
  n0: number;
  /** Tensor channel k → density channel (a·nmax + n). */
  tensorChannel: Int32Array;
  tensors: TensorPlan[];
  coefficients: Float64Array;
  /** Scratch for the half-coupled H[μ(2l+1) + m]. */
  half: Float64Array;
  /** Number of tensor channels; tensorBase[l][k] = offset of c_{k, l, m=−l} in the coefficient block. */
  tch: number;
  tensorBase: Int32Array[];
  /** 0…tch−1 and √2 for each, for the l < l' blocks (every ordered pair, all off-diagonal). */
  allChannels: Int32Array;
  sqrt2: Float64Array;
}

const planCache = new Map<string, Plan>();
/** Plans kept (a hyperparameter search builds one per setting; the oldest is dropped beyond this). */
const PLAN_CACHE_SIZE = 12;

/** The cached plan of these settings (tables, couplings, scratch) for the given λ > 0 orders. */
export function featurePlan(s: FeatureSettings, lambdas: (1 | 2)[]): Plan {
  const key = JSON.stringify([s.cutoff, s.cutoffWidth, s.sigma, s.nmax, s.lmax, s.species, s.centres, s.nmaxTensor ?? null, s.lmaxTensor ?? null, lambdas]);
  const hit = planCache.get(key);
  if (hit) return hit;
  checkFeatureSettings(s);
  const S = s.species.length;
  const { nmax, lmax } = s;
  const expander = densityExpander({ nmax, lmax, cutoff: s.cutoff, sigma: s.sigma, cutoffWidth: s.cutoffWidth, channels: S });
  const nch = S * nmax;
  const npairs = (nch * (nch + 1)) / 2;
  const p1 = new Int32Array(npairs), p2 = new Int32Array(npairs), pw = new Float64Array(npairs);
  let k = 0;
  for (let c1 = 0; c1 < nch; c1++) {
    for (let c2 = c1; c2 < nch; c2++) {
      p1[k] = c1;
      p2[k] = c2;
      pw[k] = c1 === c2 ? 1 : Math.SQRT2;
      k++;
    }
  }
  const invSqrt = new Float64Array(lmax + 1);
  for (let l = 0; l <= lmax; l++) invSqrt[l] = 1 / Math.sqrt(2 * l + 1);
  const t = tensorLimits(s);
  const tch = S * t.nmax;
  const tensorChannel = new Int32Array(tch);
  for (let a = 0; a < S; a++) for (let n = 0; n < t.nmax; n++) tensorChannel[a * t.nmax + n] = a * nmax + n;
  const tensors: TensorPlan[] = [];
  let halfSize = 1;
  for (const lambda of lambdas) {
    const blocks: Block[] = [];
    let offset = 0;
    for (const [l, l2] of tensorPairs(lambda, t.lmax)) {
      const firstStart = new Int32Array(tch + 1);
      const ch2: number[] = [];
      const weight: number[] = [];
      for (let c1 = 0; c1 < tch; c1++) {
        firstStart[c1] = ch2.length;
        for (let c2 = l === l2 ? c1 : 0; c2 < tch; c2++) {
          ch2.push(c2);
          weight.push(l === l2 && c1 === c2 ? 1 : Math.SQRT2);
        }
      }
      firstStart[tch] = ch2.length;
      const sp = realClebschGordanSparse(l, l2, lambda);
      blocks.push({ l, l2, ...gatherForm(sp, l, l2, lambda), ...byComponent(sp, lambda), firstStart, ch2: Int32Array.from(ch2), weight: Float64Array.from(weight), offset });
      offset += ch2.length;
      halfSize = Math.max(halfSize, (2 * lambda + 1) * (2 * l2 + 1));
    }
    tensors.push({ lambda, n: offset, blocks });
  }
  const p: Plan = {
    settings: { ...s, species: [...s.species], centres: [...s.centres] },
    lambdas,
    expander,
    LL: (lmax + 1) * (lmax + 1),
    p1,
    p2,
    pw,
    invSqrt,
    n0: npairs * (lmax + 1),
    tensorChannel,
    tensors,
    coefficients: new Float64Array(expander.size),
    half: new Float64Array(halfSize),
    tch,
    tensorBase: Array.from({ length: t.lmax + 1 }, (_, l) => Int32Array.from(tensorChannel, (ch) => ch * (lmax + 1) * (lmax + 1) + l * l)),
    allChannels: Int32Array.from({ length: tch }, (_, k) => k),
    sqrt2: new Float64Array(tch).fill(Math.SQRT2),
  };
  if (planCache.size >= PLAN_CACHE_SIZE) planCache.delete(planCache.keys().next().value as string);
  planCache.set(key, p);
  return p;
}

/**
 * The unnormalised λ = 0 row of coefficients c into row slot j of the layout: from the coefficients the expansion
 * left transposed when `justExpanded` (c is what P.expander.expand wrote last) and they are still in place, else
 * from c copied in and transposed.
 */
function rowKernel(L: KernelLayout, P: Plan, c: Float64Array, justExpanded: boolean, j: number): void {
  const nch = P.settings.species.length * P.settings.nmax;
  const row = L.row + j * P.n0 * 8;
  let cT = justExpanded ? P.expander.transposedAt() : -1;
  if (cT < 0) {
    kernelViews(L, P).c.set(c.length === P.expander.size ? c : c.subarray(0, P.expander.size));
    L.kernels.transposeChannels(L.c, L.allBase, nch, P.settings.lmax, L.cTall);
    cT = L.cTall;
  }
  L.kernels.powerSpectrumRow(cT, nch, P.settings.lmax, L.invSqrt, row);
}

/** Scales x[from…to) to unit norm (a zero block stays zero); returns the squared norm before scaling. */
export function normalise(x: Float64Array, from: number, to: number): number {
  let s = 0;
  for (let i = from; i < to; i++) s += x[i] * x[i];
  if (s === 0 || !Number.isFinite(s)) return s;
  const inv = 1 / Math.sqrt(s);
  for (let i = from; i < to; i++) x[i] *= inv;
  return s;
}

/**
 * λ = 0 row of one environment from its coefficients c (layout of density.ts) into out[at…at+n0); returns the
 * squared norm before normalising. For each first channel the partners are taken four at a time (four
 * independent sums sharing the loads of the first channel's coefficients); every sum runs over m in ascending
 * order from zero, so the row is bit-identical to the plain pair-by-pair loop (kept in
 * test/helpers/reference-kernels.ts, which the tests compare against).
 */
export function powerSpectrum(P: Plan, c: Float64Array, out: Float64Array, at: number): number {
  return powerSpectrumFrom(P, c, out, at, false);
}

/**
 * powerSpectrum; `justExpanded`: c is what P.expander.expand wrote last, so that the kernel may read the
 * coefficients the expansion left transposed in its memory (when still there) instead of copying c in and
 * transposing it. The same numbers either way.
 */
function powerSpectrumFrom(P: Plan, c: Float64Array, out: Float64Array, at: number, justExpanded: boolean): number {
  const L = kernelLayout(P);
  if (L !== null) {
    // the WebAssembly kernel: every sum in the same order, then the norm summed in index order, so the same bits
    rowKernel(L, P, c, justExpanded, 0);
    const norm = L.kernels.normalise(L.row, P.n0);
    out.set(kernelViews(L, P).row[0], at);
    return norm;
  }
  return powerSpectrumPlain(P, c, out, at);
}

/** powerSpectrum in JavaScript: the fallback where the WebAssembly kernels are off or missing, and their oracle. */
export function powerSpectrumPlain(P: Plan, c: Float64Array, out: Float64Array, at: number): number {
  const { pw, invSqrt, LL } = P;
  const lmax = P.settings.lmax;
  const L1 = lmax + 1;
  const nch = P.settings.species.length * P.settings.nmax;
  let f = at;
  let k = 0; // index of the pair (c1, c2) in p1/p2/pw
  for (let c1 = 0; c1 < nch; c1++) {
    const A = c1 * LL;
    let c2 = c1;
    for (; c2 + 3 < nch; c2 += 4) {
      const B0 = c2 * LL, B1 = B0 + LL, B2 = B1 + LL, B3 = B2 + LL;
      const w0 = pw[k], w1 = pw[k + 1], w2 = pw[k + 2], w3 = pw[k + 3];
      for (let l = 0; l <= lmax; l++) {
        const lo = l * l, hi = lo + 2 * l + 1;
        let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
        for (let m = lo; m < hi; m++) {
          const x = c[A + m];
          s0 += x * c[B0 + m];
          s1 += x * c[B1 + m];
          s2 += x * c[B2 + m];
          s3 += x * c[B3 + m];
        }
        const v = invSqrt[l];
        out[f + l] = w0 * v * s0;
        out[f + L1 + l] = w1 * v * s1;
        out[f + 2 * L1 + l] = w2 * v * s2;
        out[f + 3 * L1 + l] = w3 * v * s3;
      }
      f += 4 * L1;
      k += 4;
    }
    for (; c2 < nch; c2++) {
      const B = c2 * LL;
      const w = pw[k];
      for (let l = 0; l <= lmax; l++) {
        const lo = l * l, hi = lo + 2 * l + 1;
        let s = 0;
        for (let m = lo; m < hi; m++) s += c[A + m] * c[B + m];
        out[f + l] = w * invSqrt[l] * s;
      }
      f += L1;
      k++;
    }
  }
  return normalise(out, at, at + P.n0);
}

/** Σ_m2 H[μ][m2] c[B + m2] for every partner channel of one first channel: the pair loop of tensorFeatures. */
function contractPartners(
  half: Float64Array, nM: number, width: number, c: Float64Array, partnerBase: Int32Array, from: number, to: number,
  partner: Int32Array, weight: Float64Array, out: Float64Array, f: number, fStep: number, n: number,
): void {
  if (nM === 5) {
    // λ = 2: two partners per pass, ten independent sums sharing the loads of H (each sum in its m order, so the
    // values are those of one partner at a time, bit for bit); then an odd last partner alone.
    let q = from;
    for (; q + 1 < to; q += 2) {
      const B = partnerBase[partner[q]], C = partnerBase[partner[q + 1]];
      let s0 = 0, s1 = 0, s2 = 0, s3 = 0, s4 = 0;
      let t0 = 0, t1 = 0, t2 = 0, t3 = 0, t4 = 0;
      for (let m = 0; m < width; m++) {
        const b = c[B + m], d = c[C + m];
        const h0 = half[m], h1 = half[width + m], h2 = half[2 * width + m], h3 = half[3 * width + m], h4 = half[4 * width + m];
        s0 += h0 * b;
        s1 += h1 * b;
        s2 += h2 * b;
        s3 += h3 * b;
        s4 += h4 * b;
        t0 += h0 * d;
        t1 += h1 * d;
        t2 += h2 * d;
        t3 += h3 * d;
        t4 += h4 * d;
      }
      const w = weight[q], v = weight[q + 1];
      const at = f + (q - from) * fStep, au = at + fStep;
      out[at] = w * s0;
      out[at + n] = w * s1;
      out[at + 2 * n] = w * s2;
      out[at + 3 * n] = w * s3;
      out[at + 4 * n] = w * s4;
      out[au] = v * t0;
      out[au + n] = v * t1;
      out[au + 2 * n] = v * t2;
      out[au + 3 * n] = v * t3;
      out[au + 4 * n] = v * t4;
    }
    for (; q < to; q++) {
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

/** Where a plan's tables and scratch live in the descriptor kernels' memory (byte offsets). */
interface KernelLayout {
  kernels: DescriptorKernels;
  /** Degree-l coefficients transposed, cT_l[m·tch + k], for l ≤ the tensor lmax. */
  cT: number[];
  cTFrom: number;
  cTLength: number;
  half: number;
  /** A copy of one environment's coefficients; channel offsets (Int32) of the tensor channels and of all channels. */
  c: number;
  tensorBase: number;
  allBase: number;
  /**
   * All channels' coefficients transposed (cTall_l at + nch·l² doubles), (2l+1)^(−1/2), the λ = 0 rows of GROUP
   * environments (slot j at row + j·n0 doubles; one environment at a time uses slot 0) and their squared norms.
   */
  cTall: number;
  invSqrt: number;
  row: number;
  sq: number;
  /** Per tensor plan: its output blocks (GROUP slots of nM·n doubles) and per block the gather tables. */
  tensors: { out: number; blocks: { gStart: number; gIdx: number; gVal: number }[] }[];
  /** Views: c, each slot's λ = 0 row, the squared norms, and per tensor plan each slot's block. */
  views: { c: Float64Array; row: Float64Array[]; sq: Float64Array; out: Float64Array[][] } | null;
}

/**
 * Environments featurised side by side (featurise with no `after`): their λ = 0 rows and λ > 0 blocks are
 * normalised together (normaliseMany), whose sums of squares, each a chain of dependent additions in index order,
 * then run side by side. 8 × the λ = 2 block at nmax 8, lmaxTensor 6 is about 0.7 MB of kernel memory.
 */
const GROUP = EXPANSION_SLOTS;

const layouts = new WeakMap<Plan, KernelLayout & { at: number; bytes: number; generation: number; epoch: number }>();

/**
 * The plan's tables placed in the descriptor kernels' memory (a region of its own, filled once per plan and
 * thread), or null when the WebAssembly kernels are off or unavailable.
 */
function kernelLayout(P: Plan): KernelLayout | null {
  const kernels = descriptorKernels();
  if (kernels === null) return null;
  const hit = layouts.get(P);
  if (hit && hit.kernels === kernels) {
    if (kernels.epoch() === hit.epoch) return hit; // nothing placed since it was checked
    const r = kernels.region(P, hit.bytes);
    if (r && r.at === hit.at && r.generation === hit.generation) {
      hit.epoch = kernels.epoch();
      return hit;
    }
  }
  let top = 0;
  const take = (bytes: number): number => {
    const at = top;
    top += align16(bytes);
    return at;
  };
  const lmaxT = P.tensorBase.length - 1;
  const nch = P.settings.species.length * P.settings.nmax;
  const cTBlock = take(P.tch * (lmaxT + 1) * (lmaxT + 1) * 8);
  const cTLength = P.tch * (lmaxT + 1) * (lmaxT + 1);
  const half = take(4 * P.half.length * 8); // four channels' half-couplings (gatherFour)
  const cAt = take(P.expander.size * 8);
  const tensorBase = take(P.tch * 4);
  const allBase = take(nch * 4);
  const cTall = take(nch * P.LL * 8 + 8); // powerSpectrumRow reads one double past its end
  const invSqrt = take(P.invSqrt.length * 8);
  const row = take(GROUP * P.n0 * 8);
  const sq = take(GROUP * 8);
  const tensors = P.tensors.map((T) => ({
    out: take(GROUP * (2 * T.lambda + 1) * T.n * 8),
    blocks: T.blocks.map((b) => ({ gStart: take(b.gatherStart.length * 4), gIdx: take(b.gatherIndex.length * 4), gVal: take(b.gatherValue.length * 8) })),
  }));
  const region = kernels.region(P, top);
  if (region === null) return null;
  const at = region.at;
  const memory = kernels.module.f64(0, 0).buffer;
  P.tensors.forEach((T, k) => {
    T.blocks.forEach((b, j) => {
      const g = tensors[k].blocks[j];
      new Int32Array(memory, at + g.gStart, b.gatherStart.length).set(b.gatherStart);
      new Int32Array(memory, at + g.gIdx, b.gatherIndex.length).set(b.gatherIndex);
      new Float64Array(memory, at + g.gVal, b.gatherValue.length).set(b.gatherValue);
    });
  });
  new Int32Array(memory, at + tensorBase, P.tch).set(P.tensorChannel.map((ch) => ch * P.LL));
  new Int32Array(memory, at + allBase, nch).set(Int32Array.from({ length: nch }, (_, ch) => ch * P.LL));
  new Float64Array(memory, at + invSqrt, P.invSqrt.length).set(P.invSqrt);
  const layout = {
    kernels,
    cT: Array.from({ length: lmaxT + 1 }, (_, l) => at + cTBlock + P.tch * l * l * 8),
    cTFrom: at + cTBlock,
    cTLength,
    half: at + half,
    c: at + cAt,
    tensorBase: at + tensorBase,
    allBase: at + allBase,
    cTall: at + cTall,
    invSqrt: at + invSqrt,
    row: at + row,
    sq: at + sq,
    tensors: tensors.map((t) => ({ out: at + t.out, blocks: t.blocks.map((g) => ({ gStart: at + g.gStart, gIdx: at + g.gIdx, gVal: at + g.gVal })) })),
    views: null,
    at,
    bytes: top,
    generation: region.generation,
    epoch: kernels.epoch(),
  };
  layouts.set(P, layout);
  return layout;
}

/** Views of the layout's buffers (made afresh when growing the memory has detached them). */
function kernelViews(L: KernelLayout, P: Plan): NonNullable<KernelLayout['views']> {
  let views = L.views;
  if (views === null || views.c.length === 0) {
    const m = L.kernels.module;
    const slots = (at: number, length: number) => Array.from({ length: GROUP }, (_, j) => m.f64(at + j * length * 8, length));
    views = {
      c: m.f64(L.c, P.expander.size),
      row: slots(L.row, P.n0),
      sq: m.f64(L.sq, GROUP),
      out: P.tensors.map((U, k) => slots(L.tensors[k].out, (2 * U.lambda + 1) * U.n)),
    };
    L.views = views;
  }
  return views;
}

/** tensorFeatures in the WebAssembly kernels: the same operations in the same order, so the same bits. */
function tensorFeaturesKernel(L: KernelLayout, P: Plan, T: TensorPlan, c: Float64Array, out: Float64Array, e: number): void {
  const k = P.tensors.indexOf(T);
  const nM = 2 * T.lambda + 1;
  tensorBlockKernel(L, P, k, c, 0);
  L.kernels.normalise(L.tensors[k].out, nM * T.n);
  out.set(kernelViews(L, P).out[k][0], e * nM * T.n);
}

/** The unnormalised λ > 0 block of tensor plan k from coefficients c into its slot j of the layout. */
function tensorBlockKernel(L: KernelLayout, P: Plan, k: number, c: Float64Array, j: number): void {
  const kernels = L.kernels;
  const tch = P.tch;
  const T = P.tensors[k];
  kernelViews(L, P).c.set(c.length === P.expander.size ? c : c.subarray(0, P.expander.size));
  kernels.transposeChannels(L.c, L.tensorBase, tch, L.cT.length - 1, L.cTFrom);
  const nM = 2 * T.lambda + 1;
  const n = T.n;
  const region = L.tensors[k];
  const slot = region.out + j * nM * n * 8;
  for (let b = 0; b < T.blocks.length; b++) {
    const blk = T.blocks[b];
    const g = region.blocks[b];
    const at = slot + blk.offset * 8;
    if (blk.l === blk.l2) kernels.coupleSame(L.cT[blk.l], tch, 2 * blk.l + 1, nM, g.gStart, g.gIdx, g.gVal, L.half, at, n);
    else kernels.coupleCross(L.cT[blk.l], L.cT[blk.l2], tch, 2 * blk.l + 1, nM, g.gStart, g.gIdx, g.gVal, L.half, at, n);
  }
}

/**
 * λ > 0 block of one environment into out[(e·(2λ+1) + μ)·n + f]. For each pair block the half-coupling
 * H = C·c runs over the factor of HIGHER degree (once per channel), so the pair loop runs over the shorter m
 * axis: for (l, l') with l < l' the channel of degree l' is held and every channel of degree l is contracted.
 */
export function tensorFeatures(P: Plan, T: TensorPlan, c: Float64Array, out: Float64Array, e: number): void {
  const L = kernelLayout(P);
  if (L !== null) {
    tensorFeaturesKernel(L, P, T, c, out, e);
    return;
  }
  tensorFeaturesPlain(P, T, c, out, e);
}

/** tensorFeatures in JavaScript: the fallback where the WebAssembly kernels are off or missing, and their oracle. */
export function tensorFeaturesPlain(P: Plan, T: TensorPlan, c: Float64Array, out: Float64Array, e: number): void {
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
        contractPartners(half, nM, width, c, A0, from, to, ch2, weight, out, f, 1, n);
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
        contractPartners(half, nM, width, c, A0, 0, tch, P.allChannels, P.sqrt2, out, f0 + c2, tch, n);
      }
    }
  }
  normalise(out, base, base + nM * n);
}

/** Per-species sums of the λ > 0 blocks (computeFeatures' sumsOnly): rows[k] in linearDesignRows' layout. */
interface BlockSums {
  centreSpecies: Int32Array;
  species: number;
  rows: Float64Array[];
}

/** The owner of each plan's region of running sums in the descriptor kernels' memory (tensorSteps with sums). */
const sumOwners = new WeakMap<Plan, object>();

/** rows[μ·species·n + s·n + f] += block[μ·n + f]: one environment's normalised block added to its species' sums. */
function addBlock(rows: Float64Array, block: Float64Array, nM: number, n: number, s: number, species: number): void {
  const cols = species * n;
  for (let mu = 0; mu < nM; mu++) {
    const dst = mu * cols + s * n;
    const src = mu * n;
    for (let f = 0; f < n; f++) rows[dst + f] += block[src + f];
  }
}

/**
 * The λ > 0 step of computeFeatures: every order's block of environment slot k0 into tensors[k], or with `sums`
 * added to its species' sums instead (tensors[k] then holds one block, scratch). Called by featurise with j
 * (environments side by side), it leaves the block unnormalised in the layout's slot j, and `flush(count)`
 * normalises the blocks of slots 0 … count − 1 together and copies them out (or adds them, in environment order, to
 * the sums in the kernels' memory, which are copied out after each group: the sums stay right whatever moves).
 */
function tensorSteps(P: Plan, tensors: Float64Array[], sums?: BlockSums): TensorStep {
  const pending: { e: number; k0: number; c: Float64Array; L: KernelLayout }[] = [];
  /** One environment's blocks by the one-at-a-time path. */
  const put = (e: number, k0: number, c: Float64Array) => {
    for (let k = 0; k < P.tensors.length; k++) {
      const T = P.tensors[k];
      if (!sums) tensorFeatures(P, T, c, tensors[k], k0);
      else {
        tensorFeatures(P, T, c, tensors[k], 0);
        addBlock(sums.rows[k], tensors[k], 2 * T.lambda + 1, T.n, sums.centreSpecies[e], sums.species);
      }
    }
  };
  // the sums' region: where it was placed (its generation) when it last held the sums of `sums.rows`
  let synced = -1;
  const step: TensorStep = (e, k0, c, j) => {
    const L = j === undefined ? null : kernelLayout(P);
    if (L === null || j === undefined) {
      put(e, k0, c);
      return;
    }
    for (let k = 0; k < P.tensors.length; k++) tensorBlockKernel(L, P, k, c, j);
    pending[j] = { e, k0, c, L };
  };
  step.flush = (count) => {
    if (pending.length === 0) return;
    let region: { at: number; generation: number } | null = null;
    if (sums) {
      // asked for before the layout is checked: placing it may move the layout
      let owner = sumOwners.get(P);
      if (!owner) sumOwners.set(P, (owner = {}));
      const bytes = P.tensors.reduce((t, T) => t + (2 * T.lambda + 1) * sums.species * T.n * 8, 0);
      region = descriptorKernels()?.region(owner, bytes) ?? null;
    }
    const L = kernelLayout(P);
    if (L === null || (sums && region === null) || pending.some((x, j) => j < count && x.L !== L)) {
      // the layout moved under the blocks (not expected between the steps of one group): make them again, one by one
      for (let j = 0; j < count; j++) put(pending[j].e, pending[j].k0, pending[j].c);
      synced = -1;
    } else {
      const views = kernelViews(L, P);
      let at = region?.at ?? 0;
      for (let k = 0; k < P.tensors.length; k++) {
        const T = P.tensors[k];
        const nM = 2 * T.lambda + 1;
        const size = nM * T.n;
        if (!sums) {
          L.kernels.normaliseMany(L.tensors[k].out, size, count, size * 8, L.sq);
          for (let j = 0; j < count; j++) tensors[k].set(views.out[k][j], pending[j].k0 * size);
          continue;
        }
        // the squared norms, then each block scaled as normalise scales it while it is added (one pass over it)
        L.kernels.sumSquaresMany(L.tensors[k].out, size, count, size * 8, L.sq);
        const cols = sums.species * T.n;
        const held = L.kernels.module.f64(at, nM * cols);
        if (synced !== region!.generation) held.set(sums.rows[k]);
        for (let j = 0; j < count; j++) {
          const sq = views.sq[j];
          const inv = sq === 0 || !Number.isFinite(sq) ? 1 : 1 / Math.sqrt(sq);
          L.kernels.addRows(at + sums.centreSpecies[pending[j].e] * T.n * 8, cols, L.tensors[k].out + j * size * 8, T.n, nM, inv);
        }
        sums.rows[k].set(L.kernels.module.f64(at, nM * cols));
        at += nM * cols * 8;
      }
      if (region) synced = region.generation;
    }
    pending.length = 0;
  };
  return step;
}

/**
 * featurise's λ > 0 step for environment e (λ = 0 row at slot k0, density coefficients c). `j`: given when
 * environments run side by side (the environment's place in its group); then `flush(count)`, when present, is
 * called once the group's count steps are done, before the next group.
 */
export interface TensorStep {
  (e: number, k0: number, c: Float64Array, j?: number): void;
  flush?: (count: number) => void;
  /**
   * Optional, for environments side by side: environment e's λ > 0 work straight from its coefficients where the
   * expansion left them in the descriptor kernels' memory (each environment of a group has a slot of its own there,
   * P.expander.coefficientsAt(j)), instead of a copy. `at()` gives their byte address (−1 once anything was placed
   * there since); ask it after placing anything. Returns whether it did the work; the step is then not called for e.
   */
  inPlace?: (e: number, at: () => number) => boolean;
}

/** A frame prepared for featurisation: plan, species channels, centre atoms, neighbour pairs. */
export interface Prepared {
  P: Plan;
  channelOf: Int32Array;
  /** Centre atoms in order, and the index of each one's species in settings.centres. */
  centres: Int32Array;
  centreSpecies: Int32Array;
  pairs: NeighbourPairs;
  where: { file?: string; line?: number; frame?: number };
}

export function prepare(frame: Frame, settings: FeatureSettings, lambdas: Lambda[], neighbours: NeighbourPairs | undefined, timings: FeatureTimings | undefined): Prepared {
  for (const l of lambdas) {
    if (l !== 0 && l !== 1 && l !== 2) throw new RangeError(`computeFeatures: λ must be 0, 1 or 2, got ${String(l)}`);
  }
  const P = featurePlan(settings, ([1, 2] as const).filter((l) => lambdas.includes(l)));
  for (const T of P.tensors) {
    if (T.n === 0) {
      throw new InputError(`feature settings: λ = ${T.lambda} features need lmaxTensor ≥ 1 (lmax ${settings.lmax}, lmaxTensor ${tensorLimits(settings).lmax})`, {}, 'raise lmax (and lmaxTensor) to at least 1');
    }
  }
  const s = P.settings;
  const N = frame.species.length;
  const where = { file: frame.source?.file, line: frame.source?.line, frame: frame.source?.index };
  const speciesIndex = new Map(s.species.map((x, i) => [x, i]));
  const centreIndex = new Map(s.centres.map((x, i) => [x, i]));
  const channelOf = new Int32Array(N);
  const centres: number[] = [];
  const centreSpecies: number[] = [];
  for (let i = 0; i < N; i++) {
    const a = speciesIndex.get(frame.species[i]);
    if (a === undefined) {
      throw new InputError(
        `atom ${i + 1} is ${frame.species[i]}, which is not among the feature species (${s.species.join(', ')})`,
        where,
        'use a model trained with this species, or remove those atoms from the structure',
      );
    }
    channelOf[i] = a;
    const ci = centreIndex.get(frame.species[i]);
    if (ci !== undefined) {
      centres.push(i);
      centreSpecies.push(ci);
    }
  }
  const t0 = timings ? performance.now() : 0;
  const pairs = neighbours ?? neighbourList(frame, s.cutoff);
  if (pairs.start.length !== N + 1) {
    throw new RangeError(`computeFeatures: neighbour list has ${pairs.start.length - 1} centres, the frame ${N} atoms`);
  }
  if (timings) timings.neighbours += performance.now() - t0;
  checkSeparation(pairs, where);
  return { P, channelOf, centres: Int32Array.from(centres), centreSpecies: Int32Array.from(centreSpecies), pairs, where };
}

/** Refuse a structure with two atoms closer than MIN_ATOM_DISTANCE_A: features of it would be a confident number from junk. */
function checkSeparation(pairs: NeighbourPairs, where: Where): void {
  const d = pairs.distances;
  for (let p = 0; p < d.length; p++) {
    if (d[p] < MIN_ATOM_DISTANCE_A) {
      let i = 0;
      while (pairs.start[i + 1] <= p) i++;
      throw new InputError(
        `atoms ${i + 1} and ${pairs.neighbour[p] + 1} are ${d[p].toPrecision(3)} Å apart, closer than any two atoms can be (${MIN_ATOM_DISTANCE_A} Å)`,
        where,
        'the structure is damaged (overlapping atoms, wrong units or a wrong cell); fix or remove this frame',
      );
    }
  }
}

/**
 * The per-environment loop shared by computeFeatures, forEachEnvironment and the read-out of
 * tensor-readout.ts: the λ = 0 row of environment e is written to scalar at row slot(e), then
 * `tensorStep(e, slot(e), c)` does the λ > 0 work from the density coefficients c, and `after(e)` runs.
 * With no `after`, the WebAssembly kernels on and slots of their own, up to GROUP environments run side by side:
 * every row of the group is written before the group's λ > 0 steps (in environment order, each with its own
 * coefficients; see TensorStep). The same numbers either way.
 */
export function featurise(
  prep: Prepared,
  scalar: Float64Array,
  slot: (e: number) => number,
  tensorStep: TensorStep,
  after: ((e: number) => void) | null,
  timings: FeatureTimings | undefined,
  norms?: Float64Array,
): void {
  // environments done side by side (all, or those before the kernels' memory could no longer hold a group)
  const done = after === null && prep.centres.length > 1 && slotsIncrease(slot, prep.centres.length) ? featuriseGrouped(prep, scalar, slot, tensorStep, timings, norms) : 0;
  const { P, channelOf, centres, pairs, where } = prep;
  const c = P.coefficients;
  let tExpand = 0, tCouple = 0;
  for (let e = done; e < centres.length; e++) {
    const i = centres[e];
    const ta = timings ? performance.now() : 0;
    P.expander.expand(pairs, i, channelOf[i], channelOf, c);
    const tb = timings ? performance.now() : 0;
    const k0 = slot(e);
    const norm = powerSpectrumFrom(P, c, scalar, k0 * P.n0, true);
    if (!Number.isFinite(norm)) {
      throw new InputError(`features of atom ${i + 1} are not finite (non-finite positions or cell?)`, where, 'check the structure');
    }
    if (norms) norms[e] = Math.sqrt(norm);
    tensorStep(e, k0, c);
    if (timings) {
      tExpand += tb - ta;
      tCouple += performance.now() - tb;
    }
    if (after) after(e);
  }
  if (timings) {
    timings.expansion += tExpand;
    timings.coupling += tCouple;
  }
}

/** Whether slot(e) increases with e (every environment has a row of its own), so that a group may run side by side. */
function slotsIncrease(slot: (e: number) => number, count: number): boolean {
  for (let e = 1; e < count; e++) if (!(slot(e) > slot(e - 1))) return false;
  return true;
}

/** The coefficient buffers of a group (featuriseGrouped), per plan. */
const groupCoefficients = new WeakMap<Plan, Float64Array[]>();

/**
 * featurise for up to GROUP environments at a time (see there); returns how many environments it did: 0 when the
 * kernels are off or unavailable, fewer than all when their memory could no longer hold a group. Each
 * environment's steps are those of the one-at-a-time loop; only the norms of a group's rows (and, through
 * TensorStep.flush, of its λ > 0 blocks) are summed side by side (normaliseMany), each in its own order.
 */
function featuriseGrouped(prep: Prepared, scalar: Float64Array, slot: (e: number) => number, tensorStep: TensorStep, timings: FeatureTimings | undefined, norms?: Float64Array): number {
  const { P, channelOf, centres, pairs, where } = prep;
  if (kernelLayout(P) === null) return 0;
  let cs = groupCoefficients.get(P);
  if (!cs) {
    cs = Array.from({ length: GROUP }, () => new Float64Array(P.expander.size));
    groupCoefficients.set(P, cs);
  }
  const k0s = new Array<number>(GROUP);
  // whether cs[j] holds the coefficients of the group's environment j: where the kernels ran they are left in the
  // kernels' memory (the expander's slot j) and copied out only for a step that needs them as an array
  const held = new Array<boolean>(GROUP).fill(false);
  const coefficientsOf = (g: number, j: number): Float64Array => {
    if (!held[j] && !P.expander.copyCoefficients(j, cs[j])) {
      // no longer there (anything placed in the kernels' memory since): expanded again, the same numbers
      const i = centres[g + j];
      P.expander.expand(pairs, i, channelOf[i], channelOf, cs[j], j);
    }
    held[j] = true;
    return cs[j];
  };
  const early = tensorStep.inPlace;
  let tExpand = 0, tCouple = 0;
  let done = centres.length;
  for (let g = 0; g < centres.length; g += GROUP) {
    const count = Math.min(GROUP, centres.length - g);
    const ta = timings ? performance.now() : 0;
    let L = kernelLayout(P);
    let moved = L === null;
    for (let j = 0; j < count && !moved; j++) {
      const i = centres[g + j];
      const t0 = timings ? performance.now() : 0;
      held[j] = P.expander.expandLeaving(pairs, i, channelOf[i], channelOf, cs[j], j);
      if (timings) tExpand += performance.now() - t0;
      const now = kernelLayout(P);
      if (now !== L) moved = true;
      else {
        // the row from the transposed coefficients the expansion left, else from the coefficients
        if (P.expander.transposedAt() < 0) coefficientsOf(g, j);
        rowKernel(now as KernelLayout, P, cs[j], true, j);
      }
    }
    if (moved) {
      // the layout moved while the group was expanded (the expander's region grew): expand again, then the rows
      // from the coefficients copied in
      for (let j = 0; j < count; j++) {
        const i = centres[g + j];
        P.expander.expand(pairs, i, channelOf[i], channelOf, cs[j], j);
        held[j] = true;
      }
      L = kernelLayout(P);
      if (L === null) {
        // the memory cannot hold the plan's tables any more (the arena's limit, lowered by a test): this group and the
        // rest one at a time (nothing of this group was written yet)
        done = g;
        break;
      }
      for (let j = 0; j < count; j++) rowKernel(L, P, cs[j], false, j);
    }
    const K = L as KernelLayout;
    K.kernels.normaliseMany(K.row, P.n0, count, P.n0 * 8, K.sq);
    const views = kernelViews(K, P);
    for (let j = 0; j < count; j++) {
      const e = g + j;
      const norm = views.sq[j];
      if (!Number.isFinite(norm)) {
        throw new InputError(`features of atom ${centres[e] + 1} are not finite (non-finite positions or cell?)`, where, 'check the structure');
      }
      if (norms) norms[e] = Math.sqrt(norm);
      k0s[j] = slot(e);
      scalar.set(views.row[j], k0s[j] * P.n0);
    }
    for (let j = 0; j < count; j++) {
      if (!(early && early(g + j, () => P.expander.coefficientsAt(j)))) tensorStep(g + j, k0s[j], coefficientsOf(g, j), j);
    }
    tensorStep.flush?.(count);
    // the rest of the group's time (its rows, norms and λ > 0 steps) counts as coupling, as in the loop one at a time
    if (timings) tCouple += performance.now() - ta;
  }
  if (timings) {
    tCouple -= tExpand;
    timings.expansion += tExpand;
    timings.coupling += tCouple;
  }
  return done;
}

/**
 * Features of every centre of `frame` (atoms whose species is in settings.centres, in atom order). λ = 0 is
 * always computed (tensor kernels need it too); `lambdas` adds 1 and/or 2. `neighbours` may be passed when the
 * caller already has a list built with at least settings.cutoff (pairs beyond the cutoff are ignored). `reuse`:
 * an earlier result the caller no longer needs, whose arrays are written over when their sizes fit. `sumsOnly`:
 * the λ > 0 orders only as per-species sums of the blocks (computeFeatureSums).
 */
export function computeFeatures(
  frame: Frame,
  settings: FeatureSettings,
  lambdas: Lambda[] = [0],
  neighbours?: NeighbourPairs,
  timings?: FeatureTimings,
  reuse?: EnvironmentFeatures,
  sumsOnly = false,
): EnvironmentFeatures {
  const prep = prepare(frame, settings, lambdas, neighbours, timings);
  const { P } = prep;
  const count = prep.centres.length;
  if (sumsOnly && P.tensors.length > 0) return computeFeatureSums(prep, timings, reuse);
  // An earlier result's arrays when they have the sizes needed (every number is overwritten): writing into
  // memory already in use saves the operating system's zeroing of fresh pages, a good share of the time at
  // λ = 2 (30 MB of output per 384-atom frame at lmaxTensor 6).
  const fits = (a: Float64Array | undefined, length: number) => (a !== undefined && a.length === length ? a : undefined);
  const scalar = fits(reuse?.scalar, count * P.n0) ?? new Float64Array(count * P.n0);
  const tensorOut = P.tensors.map((T) => fits(reuse?.tensor[T.lambda]?.data, count * (2 * T.lambda + 1) * T.n) ?? new Float64Array(count * (2 * T.lambda + 1) * T.n));
  const norms = fits(reuse?.norms, count) ?? new Float64Array(count);
  featurise(prep, scalar, (e) => e, tensorSteps(P, tensorOut), null, timings, norms);
  const tensor: EnvironmentFeatures['tensor'] = {};
  P.tensors.forEach((T, k) => {
    tensor[T.lambda] = { n: T.n, data: tensorOut[k] };
  });
  return { count, centre: prep.centres, centreSpecies: prep.centreSpecies, frame: new Int32Array(count), n0: P.n0, scalar, tensor, norms };
}

/**
 * computeFeatures with sumsOnly: the λ = 0 rows, and of each λ > 0 order only the per-species sums of the
 * normalised blocks (tensorSums; the same numbers as linearDesignRows of the blocks, each entry summed in
 * environment order), never the blocks themselves (tensor[λ].data is empty): what a linear model's training needs
 * from a frame, without writing and reading back 52 kB of λ = 2 features per environment (nmax 8, lmaxTensor 4).
 */
function computeFeatureSums(prep: Prepared, timings: FeatureTimings | undefined, reuse: EnvironmentFeatures | undefined): EnvironmentFeatures {
  const { P } = prep;
  const count = prep.centres.length;
  const scalar = reuse?.scalar.length === count * P.n0 ? reuse.scalar : new Float64Array(count * P.n0);
  const norms = reuse?.norms?.length === count ? reuse.norms : new Float64Array(count);
  const species = P.settings.centres.length;
  const sums: BlockSums = { centreSpecies: prep.centreSpecies, species, rows: P.tensors.map((T) => new Float64Array((2 * T.lambda + 1) * species * T.n)) };
  featurise(prep, scalar, (e) => e, tensorSteps(P, P.tensors.map((T) => new Float64Array((2 * T.lambda + 1) * T.n)), sums), null, timings, norms);
  const tensor: EnvironmentFeatures['tensor'] = {};
  const tensorSums: NonNullable<EnvironmentFeatures['tensorSums']> = {};
  P.tensors.forEach((T, k) => {
    tensor[T.lambda] = { n: T.n, data: new Float64Array(0) };
    tensorSums[T.lambda] = sums.rows[k];
  });
  return { count, centre: prep.centres, centreSpecies: prep.centreSpecies, frame: new Int32Array(count), n0: P.n0, scalar, tensor, norms, tensorSums };
}

/** One environment's features as handed to forEachEnvironment's visitor (buffers reused: copy what you keep). */
export interface EnvironmentView {
  /** Environment index within the frame, centre atom, and index of its species in settings.centres. */
  index: number;
  centre: number;
  centreSpecies: number;
  /** The λ = 0 row (length n0) and the λ > 0 blocks ((2λ+1)·nλ, row-major in μ), each of unit norm. */
  scalar: Float64Array;
  tensor: Partial<Record<1 | 2, Float64Array>>;
}

/**
 * The same features as computeFeatures, one environment at a time, in a fixed amount of memory: for large
 * frames, or for sums over environments (a linear model's prediction). Returns the number of environments.
 */
export function forEachEnvironment(
  frame: Frame,
  settings: FeatureSettings,
  lambdas: Lambda[],
  visit: (env: EnvironmentView) => void,
  neighbours?: NeighbourPairs,
): number {
  const prep = prepare(frame, settings, lambdas, neighbours, undefined);
  const { P } = prep;
  const scalar = new Float64Array(P.n0);
  const blocks = P.tensors.map((T) => new Float64Array((2 * T.lambda + 1) * T.n));
  const view: EnvironmentView = { index: 0, centre: 0, centreSpecies: 0, scalar, tensor: {} };
  P.tensors.forEach((T, k) => {
    view.tensor[T.lambda] = blocks[k];
  });
  featurise(prep, scalar, () => 0, tensorSteps(P, blocks), (e) => {
    view.index = e;
    view.centre = prep.centres[e];
    view.centreSpecies = prep.centreSpecies[e];
    visit(view);
  }, undefined);
  return prep.centres.length;
}

/** Concatenates per-frame features; environment k of parts[f] gets frame index f. All parts must agree in size. */
export function concatenateFeatures(parts: EnvironmentFeatures[]): EnvironmentFeatures {
  if (parts.length === 0) throw new RangeError('concatenateFeatures: nothing to concatenate');
  const n0 = parts[0].n0;
  const lambdas = Object.keys(parts[0].tensor).map(Number) as (1 | 2)[];
  if (parts.some((p) => p.tensorSums)) throw new RangeError('concatenateFeatures: a part holds only per-species sums of its λ > 0 features');
  for (const p of parts) {
    if (p.n0 !== n0 || Object.keys(p.tensor).length !== lambdas.length || lambdas.some((l) => p.tensor[l]?.n !== parts[0].tensor[l]!.n)) {
      throw new RangeError('concatenateFeatures: parts were computed with different settings');
    }
  }
  const count = parts.reduce((s, p) => s + p.count, 0);
  const out: EnvironmentFeatures = {
    count,
    centre: new Int32Array(count),
    centreSpecies: new Int32Array(count),
    frame: new Int32Array(count),
    n0,
    scalar: new Float64Array(count * n0),
    tensor: {},
  };
  for (const l of lambdas) out.tensor[l] = { n: parts[0].tensor[l]!.n, data: new Float64Array(count * (2 * l + 1) * parts[0].tensor[l]!.n) };
  let at = 0;
  parts.forEach((p, f) => {
    out.centre.set(p.centre, at);
    out.centreSpecies.set(p.centreSpecies, at);
    out.frame.fill(f, at, at + p.count);
    out.scalar.set(p.scalar, at * n0);
    for (const l of lambdas) out.tensor[l]!.data.set(p.tensor[l]!.data, at * (2 * l + 1) * p.tensor[l]!.n);
    at += p.count;
  });
  return out;
}
