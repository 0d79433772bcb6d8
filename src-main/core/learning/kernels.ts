// Kernels between atomic environments and between structures (science.md §5).
//   scalar:    k⁰(i,j) = (p_i·p_j)^ζ
//   tensorial: K^λ_μμ'(i,j) = [Σ_f ξ_fμ(i) ξ_fμ'(j)] · (p_i·p_j)^(ζ−1)
// Environments of different centre species never interact (kernel 0), which is the same as one model per
// centre species. A structure kernel is the sum over the environments of both structures, so every prediction
// is a sum of local contributions. With ζ = 1 the kernel is linear in the features: the model is a weight
// vector per centre species and a prediction is one dot product per environment.
import type { EnvironmentFeatures } from '../descriptors/feature-types.ts';
import { align16, residentName, type Region } from '../wasm/arena.ts';
import { fillFrameRows, frameRowsRegion, predictKernels, type PredictKernels } from '../wasm/prediction-kernels.ts';

/** The irreducible order of a model part: 0 (scalar), 1 (vector), 2 (rank-2 anisotropic part). */
export type Order = 0 | 1 | 2;

/** The (2λ+1) × n feature block of environment e for order λ (for λ = 0 the power spectrum row). */
export interface BlockView {
  data: Float64Array;
  n: number;
  /** 2λ+1 */
  width: number;
}

export function blockView(feat: EnvironmentFeatures, order: Order): BlockView {
  if (order === 0) return { data: feat.scalar, n: feat.n0, width: 1 };
  const t = feat.tensor[order];
  if (!t) throw new RangeError(`features of order λ=${order} were not computed`);
  return { data: t.data, n: t.n, width: 2 * order + 1 };
}

/** p_i · p_j of two λ=0 rows (possibly of different feature sets). */
export function scalarDot(a: Float64Array, ia: number, b: Float64Array, ib: number, n0: number): number {
  let s = 0;
  const oa = ia * n0;
  const ob = ib * n0;
  for (let f = 0; f < n0; f++) s += a[oa + f] * b[ob + f];
  return s;
}

/** (x)^(ζ) for the kernel exponent; x may be slightly negative from round-off for orthogonal environments. */
export function kernelPower(x: number, zeta: number): number {
  if (zeta === 0) return 1;
  if (zeta === 1) return x;
  if (zeta === 2) return x * x;
  return Math.sign(x) * Math.abs(x) ** zeta;
}

/**
 * K^λ(i,j) as a (2λ+1)×(2λ+1) row-major block, environments i of `a` and j of `b`.
 * For λ = 0 this is the 1×1 block (p_i·p_j)^ζ.
 */
export function environmentKernel(a: EnvironmentFeatures, i: number, b: EnvironmentFeatures, j: number, order: Order, zeta: number, out?: Float64Array): Float64Array {
  const w = 2 * order + 1;
  const res = out ?? new Float64Array(w * w);
  res.fill(0);
  if (a.centreSpecies[i] !== b.centreSpecies[j]) return res;
  const pp = scalarDot(a.scalar, i, b.scalar, j, a.n0);
  if (order === 0) {
    res[0] = kernelPower(pp, zeta);
    return res;
  }
  const va = blockView(a, order);
  const vb = blockView(b, order);
  const s = kernelPower(pp, zeta - 1);
  const n = va.n;
  for (let mu = 0; mu < w; mu++) {
    const oa = (i * w + mu) * n;
    for (let nu = 0; nu < w; nu++) {
      const ob = (j * w + nu) * n;
      let d = 0;
      for (let f = 0; f < n; f++) d += va.data[oa + f] * vb.data[ob + f];
      res[mu * w + nu] = d * s;
    }
  }
  return res;
}

/** Structure kernel: Σ over environments of both structures, a (2λ+1)×(2λ+1) block. */
export function structureKernel(a: EnvironmentFeatures, b: EnvironmentFeatures, order: Order, zeta: number): Float64Array {
  const w = 2 * order + 1;
  const sum = new Float64Array(w * w);
  if (order === 0) {
    for (let i = 0; i < a.count; i++) {
      for (let j = 0; j < b.count; j++) {
        if (a.centreSpecies[i] === b.centreSpecies[j]) sum[0] += kernelPower(scalarDot(a.scalar, i, b.scalar, j, a.n0), zeta);
      }
    }
    return sum;
  }
  // Σ_ij s(i,j) ξ_i ξ_jᵀ = Σ_i ξ_i · Y_iᵀ with Y_i = Σ_j s(i,j) ξ_j: one (2λ+1)×n accumulation per pair
  // instead of (2λ+1)² dot products.
  const va = blockView(a, order);
  const vb = blockView(b, order);
  const n = va.n;
  const y = new Float64Array(w * n);
  for (let i = 0; i < a.count; i++) {
    y.fill(0);
    let any = false;
    for (let j = 0; j < b.count; j++) {
      if (a.centreSpecies[i] !== b.centreSpecies[j]) continue;
      const s = kernelPower(scalarDot(a.scalar, i, b.scalar, j, a.n0), zeta - 1);
      if (s === 0) continue;
      any = true;
      const ob = j * w * n;
      for (let q = 0; q < w * n; q++) y[q] += s * vb.data[ob + q];
    }
    if (!any) continue;
    for (let mu = 0; mu < w; mu++) {
      const oa = (i * w + mu) * n;
      for (let nu = 0; nu < w; nu++) {
        let d = 0;
        for (let f = 0; f < n; f++) d += va.data[oa + f] * y[nu * n + f];
        sum[mu * w + nu] += d;
      }
    }
  }
  return sum;
}

/**
 * The ζ = 1 design rows of one structure: for each μ, the sum of its environments' feature rows, placed in
 * the block of the environment's centre species (length species × n). Returns (2λ+1) × (species·n).
 */
export function linearDesignRows(feat: EnvironmentFeatures, order: Order, species: number): Float64Array {
  const v = blockView(feat, order);
  // locals, not the view's fields, in the loop (V8 reloads fields after every typed-array store)
  const { data, n, width } = v;
  const cols = species * n;
  // features computed as these very sums (computeFeatures with sumsOnly: the same additions in the same order)
  const sums = order === 0 ? undefined : feat.tensorSums?.[order];
  if (sums) {
    if (sums.length !== width * cols) throw new RangeError(`linearDesignRows: the features hold sums over ${sums.length / (width * n)} centre species, not ${species}`);
    return sums.slice();
  }
  const rows = new Float64Array(width * cols);
  const centreSpecies = feat.centreSpecies;
  // Each entry is the sum, in environment order, of its species' environments: the environments of a species are
  // taken four at a time and added left to right (((r + x0) + x1) + x2) + x3, the same additions in the same
  // order as one environment after another, with one load and store of the entry instead of four.
  const bySpecies: number[][] = Array.from({ length: species }, () => []);
  for (let e = 0; e < feat.count; e++) bySpecies[centreSpecies[e]].push(e);
  for (let s = 0; s < species; s++) {
    const envs = bySpecies[s];
    for (let mu = 0; mu < width; mu++) {
      const dst = mu * cols + s * n;
      let k = 0;
      for (; k + 3 < envs.length; k += 4) {
        const a0 = (envs[k] * width + mu) * n;
        const a1 = (envs[k + 1] * width + mu) * n;
        const a2 = (envs[k + 2] * width + mu) * n;
        const a3 = (envs[k + 3] * width + mu) * n;
        for (let f = 0; f < n; f++) rows[dst + f] = rows[dst + f] + data[a0 + f] + data[a1 + f] + data[a2 + f] + data[a3 + f];
      }
      for (; k < envs.length; k++) {
        const a0 = (envs[k] * width + mu) * n;
        for (let f = 0; f < n; f++) rows[dst + f] += data[a0 + f];
      }
    }
  }
  return rows;
}

/**
 * A kernel model of one order, reduced for prediction: representative environments m with their λ=0 rows p_m
 * (for the weight (p_i·p_m)^(ζ−1)) and the folded coefficients v_m = Σ_μ' x_mμ' ξ_μ'(m) (length n).
 * Then the local contribution of environment i is T_μ(i) = ξ_μ(i) · Σ_m (p_i·p_m)^(ζ−1) v_m.
 */
export interface KernelExpansion {
  zeta: number;
  n0: number;
  n: number;
  /** Centre-species index of each representative. */
  species: Int32Array;
  /** λ=0 rows of the representatives, M × n0. */
  p: Float64Array;
  /** Folded coefficients, M × n. */
  v: Float64Array;
}

/**
 * The effective linear weights of a kernel model for environment e (λ=0 row e of `scalar`, centre species s):
 * u = Σ_m (p_e·p_m)^(ζ−1) v_m over the representatives of that species, into u (length n).
 */
export function kernelWeights(k: KernelExpansion, scalar: Float64Array, e: number, s: number, u: Float64Array): Float64Array {
  u.fill(0, 0, k.n);
  for (let r = 0; r < k.species.length; r++) {
    if (k.species[r] !== s) continue;
    const c = kernelPower(scalarDot(scalar, e, k.p, r, k.n0), k.zeta - 1);
    if (c === 0) continue;
    const ro = r * k.n;
    for (let f = 0; f < k.n; f++) u[f] += c * k.v[ro + f];
  }
  return u;
}

/**
 * A linear λ=0 part over a frame in one pass over its rows: the local contributions (localContributions(feat, 0,
 * { linear: weights })) and the per-species sums of the rows (linearDesignRows(feat, 0, species)), the same numbers
 * bit for bit — through the WebAssembly kernel (assembly/prediction-kernels.ts linearRows) when it is available,
 * else by the two JavaScript functions. `rowsKey`: the key of the rows' copy in the kernel's memory, shared with
 * the search of the same frame (prediction-kernels.ts fillFrameRows).
 */
export function linearScalarPass(feat: EnvironmentFeatures, weights: Float64Array, species: number, rowsKey?: object): { contributions: Float64Array; sums: Float64Array } {
  const k = predictKernels();
  const done = k ? wasmLinearPass(k, feat, weights, species, rowsKey) : null;
  return done ?? { contributions: localContributions(feat, 0, { linear: weights }), sums: linearDesignRows(feat, 0, species) };
}

/** Rows copied into the kernel's memory at a time when they are not held whole (bounded scratch). */
const LINEAR_CHUNK = 256;
/** The key of linearScalarPass's scratch region in the kernel arena. */
const LINEAR_SCRATCH = {};

function wasmLinearPass(k: PredictKernels, feat: EnvironmentFeatures, weights: Float64Array, species: number, rowsKey?: object): { contributions: Float64Array; sums: Float64Array } | null {
  const n0 = feat.n0;
  const count = feat.count;
  if (weights.length < species * n0) return null;
  for (let e = 0; e < count; e++) if (!(feat.centreSpecies[e] >= 0 && feat.centreSpecies[e] < species)) return null;
  // the rows held whole (shared with the search of the same frame) or copied in chunks into the scratch
  const whole = rowsKey ? frameRowsRegion(count, n0) : null;
  const chunk = whole ? Math.max(1, count) : LINEAR_CHUNK;
  const wBytes = align16(8 * species * n0);
  const rowsAt = 0;
  const speciesAt = rowsAt + (whole ? 0 : 8 * chunk * n0);
  const outAt = speciesAt + align16(4 * chunk);
  const sumsAt = outAt + align16(8 * chunk);
  const regions: Region[] = [
    { name: residentName('linear-weights', weights), key: weights, bytes: wBytes, fill: (m, a) => m.f64(a, species * n0).set(weights.subarray(0, species * n0)) },
    { name: 'linear-scratch', key: LINEAR_SCRATCH, bytes: sumsAt + wBytes },
  ];
  const at = k.arena.acquire(whole ? [...regions, whole] : regions);
  if (!at) return null;
  const [w, scr] = at;
  if (whole && rowsKey) fillFrameRows(k, at[2], feat.scalar, count, n0, rowsKey);
  const contributions = new Float64Array(count);
  k.module.f64(scr + sumsAt, species * n0).fill(0);
  for (let e0 = 0; e0 < count; e0 += chunk) {
    const e1 = Math.min(count, e0 + chunk);
    const rows = whole ? at[2] + 8 * e0 * n0 : scr + rowsAt;
    if (!whole) k.module.f64(rows, (e1 - e0) * n0).set(feat.scalar.subarray(e0 * n0, e1 * n0));
    new Int32Array(k.module.f64(scr, 0).buffer, scr + speciesAt, e1 - e0).set(feat.centreSpecies.subarray(e0, e1));
    k.linearRows(rows, e1 - e0, n0, scr + speciesAt, w, scr + outAt, scr + sumsAt);
    contributions.set(k.module.f64(scr + outAt, e1 - e0), e0);
  }
  return { contributions, sums: k.module.f64(scr + sumsAt, species * n0).slice() };
}

/**
 * Local contributions of every environment: out[e*(2λ+1)+μ]. For a linear model pass `linear` (per species
 * weight blocks, species × n) instead of a kernel expansion.
 */
export function localContributions(feat: EnvironmentFeatures, order: Order, model: { linear: Float64Array } | { kernel: KernelExpansion }): Float64Array {
  const { data, n, width } = blockView(feat, order);
  const count = feat.count;
  const out = new Float64Array(count * width);
  const centreSpecies = feat.centreSpecies;
  if ('linear' in model) {
    // Row r = e·width + μ against its species' weights: four rows per pass, four independent sums (each over f
    // ascending from zero, as the one-row loop sums them), so the values are the same bits.
    const weights = model.linear;
    const rowsCount = count * width;
    const wo = (r: number) => centreSpecies[Math.floor(r / width)] * n;
    let r = 0;
    for (; r + 3 < rowsCount; r += 4) {
      const o0 = r * n, o1 = o0 + n, o2 = o1 + n, o3 = o2 + n;
      const q0 = wo(r), q1 = wo(r + 1), q2 = wo(r + 2), q3 = wo(r + 3);
      let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
      for (let f = 0; f < n; f++) {
        s0 += data[o0 + f] * weights[q0 + f];
        s1 += data[o1 + f] * weights[q1 + f];
        s2 += data[o2 + f] * weights[q2 + f];
        s3 += data[o3 + f] * weights[q3 + f];
      }
      out[r] = s0;
      out[r + 1] = s1;
      out[r + 2] = s2;
      out[r + 3] = s3;
    }
    for (; r < rowsCount; r++) {
      const o = r * n;
      const q = wo(r);
      let d = 0;
      for (let f = 0; f < n; f++) d += data[o + f] * weights[q + f];
      out[r] = d;
    }
    return out;
  }
  const u = new Float64Array(n);
  for (let e = 0; e < count; e++) {
    const weights = kernelWeights(model.kernel, feat.scalar, e, centreSpecies[e], u);
    for (let mu = 0; mu < width; mu++) {
      const src = (e * width + mu) * n;
      let d = 0;
      for (let f = 0; f < n; f++) d += data[src + f] * weights[f];
      out[e * width + mu] = d;
    }
  }
  return out;
}

/** The key of designLeverageKernel's scratch region in the kernel arena. */
const LEVERAGE_SCRATCH = {};

/**
 * The two passes of regression.ts designLeverage over an explicit design (rows × f, row-major) through the
 * WebAssembly kernels, with the design resident in the kernels' memory (copied once per design array and thread):
 * c = Φφ summed as designLeverage sums it, `solve(c)` in place (the triangular solves, in JavaScript), then
 * |φ − Φᵀc|² with every element updated row after row and the squares summed in order — the same bits. Null when
 * the kernels are off or cannot hold the design (designLeverage then takes its JavaScript loops).
 */
export function designLeverageKernel(design: Float64Array, rows: number, f: number, phi: ArrayLike<number>, solve: (c: Float64Array) => void): { c: Float64Array; rr: number } | null {
  const k = predictKernels();
  if (!k || rows <= 0 || f <= 0 || design.length < rows * f || phi.length < f) return null;
  const cAt = align16(8 * f);
  const rAt = cAt + align16(8 * rows);
  const at = k.arena.acquire([
    { name: residentName('leverage-design', design), key: design, bytes: 8 * rows * f, fill: (m, a) => m.f64(a, rows * f).set(design.subarray(0, rows * f)) },
    { name: 'leverage-scratch', key: LEVERAGE_SCRATCH, bytes: rAt + 8 * f },
  ]);
  if (!at) return null;
  const [d, scr] = at;
  const phiView = k.module.f64(scr, f);
  for (let j = 0; j < f; j++) phiView[j] = phi[j];
  k.leverageRows(d, rows, f, scr, scr + cAt);
  const c = k.module.f64(scr + cAt, rows).slice();
  solve(c);
  k.module.f64(scr + cAt, rows).set(c);
  k.module.f64(scr + rAt, f).set(k.module.f64(scr, f));
  const rr = k.leverageResidual(d, rows, f, scr + cAt, scr + rAt);
  return { c, rr };
}
