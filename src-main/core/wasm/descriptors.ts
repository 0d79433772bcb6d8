// The descriptor kernels (./assembly/descriptors.ts) with their signatures. Used by core/descriptors/features.ts,
// which lays out each feature plan's tables in the module's memory.
import { WASM_BASE64 } from './generated/descriptors.ts';
import { Arena } from './arena.ts';
import { kernelModule, type KernelModule } from './load.ts';

export interface DescriptorKernels {
  module: KernelModule;
  /** The module's one allocator (./arena.ts): `region` below, and `acquire` for callers that place several regions together. */
  arena: Arena;
  /**
   * Block (l, l) of λ > 0 features of one environment: cT the degree-l coefficients transposed (m·tch + k),
   * w = 2l + 1, nM = 2λ + 1, the block's gather tables (Int32 gStart, Int32 gIdx, Float64 gVal), `half` scratch of
   * nM·w doubles, out the block's first feature, n the row stride of μ. Byte offsets into module memory.
   */
  coupleSame(cT: number, tch: number, w: number, nM: number, gStart: number, gIdx: number, gVal: number, half: number, out: number, n: number): void;
  /** Block (l, l2), l < l2: cT of degree l (w = 2l + 1), cT2 of degree l2 (held), otherwise as coupleSame. */
  coupleCross(cT: number, cT2: number, tch: number, w: number, nM: number, gStart: number, gIdx: number, gVal: number, half: number, out: number, n: number): void;
  /** Scales `len` doubles at x to unit norm; returns the squared norm before (features.ts normalise). */
  normalise(x: number, len: number): number;
  /**
   * The density expansion's sums for one centre from pairTerms' output (harmonics Y, LL per pair; radial integrals
   * R, NLp per pair, l·nmax + n; pairs sorted by channel, chanStart: channels + 1 Int32 first positions) into out
   * (public layout, selfTerm added to the centre's channel), and the same numbers transposed into cT[lm·nch + ch].
   */
  expandAccumulate(Y: number, R: number, chanStart: number, NLp: number, nmax: number, lmax: number, channels: number, out: number, selfTerm: number, centreChannel: number, cT: number): void;
  /**
   * Every pair's harmonics Y and weighted radial integrals R for expandAccumulate from its parameters (8 doubles per
   * pair: x, y, z, r, w, interval, t) and channel (chan: Int32, < 0: left out), the pairs sorted by channel into
   * order (count Int32 scratch) and chanStart (channels + 1 Int32); the harmonics' recurrence tables and the radial
   * table in pairs of integrals (coef; NLp = NL rounded up to even).
   */
  pairTerms(par: number, chan: number, count: number, channels: number, lmax: number, NLp: number, a: number, b: number, diag: number, y00: number, coef: number, Y: number, R: number, order: number, chanStart: number): void;
  /** |(x, y, z)| by the operations of Math.hypot (the same bits; what pairTerms uses for each pair's length). */
  hypot3(x: number, y: number, z: number): number;
  /** dst_l[m·K + k] = c[base[k] + l² + m] for l ≤ lmax (dst_l = dst + K·l² doubles; base: K Int32 offsets). */
  transposeChannels(c: number, base: number, K: number, lmax: number, dst: number): void;
  /** The λ = 0 row of one environment, unnormalised, from cT of all nch channels (transposeChannels; readable one double past its end). */
  powerSpectrumRow(cT: number, nch: number, lmax: number, invSqrt: number, out: number): void;
  /**
   * A region of at least `bytes` bytes of the module's memory for `owner` (byte offset, 16-byte aligned; the
   * module's Arena, ./arena.ts), the same one on later calls while it is large enough. `generation` changes when the
   * region is placed anew (its contents must then be written again); null when the memory cannot grow that far.
   */
  region(owner: object, bytes: number): { at: number; generation: number } | null;
  /** The arena's epoch (./arena.ts): unchanged means every region is still where it was. */
  epoch(): number;
  /**
   * normalise for count blocks of len doubles, block j at x + j·stride bytes, their sums of squares side by side
   * (each in its order); the squared norms to sq (count doubles).
   */
  normaliseMany(x: number, len: number, count: number, stride: number, sq: number): void;
  /**
   * The λ > 0 read-out of one environment (core/learning/tensor-readout.ts readOne, the same bits): byte addresses
   * of its plan (tensor-readout.ts layoutPlan), the density coefficients c, the weight matrices W and the output y.
   */
  readOut(plan: number, c: number, W: number, y: number): void;
  /** normaliseMany's squared norms alone (sq), the blocks left unscaled. */
  sumSquaresMany(x: number, len: number, count: number, stride: number, sq: number): void;
  /** acc[r·accRow + f] += x[r·n + f] · inv for r < rows, f < n (accRow in doubles): a block added to running sums. */
  addRows(acc: number, accRow: number, x: number, n: number, rows: number, inv: number): void;
}

let cached: DescriptorKernels | null | undefined;
let cachedFor: KernelModule | null | undefined;

/** The descriptor kernels, or null when WebAssembly kernels are off or unavailable (take the JavaScript path). */
export function descriptorKernels(): DescriptorKernels | null {
  const module = kernelModule('descriptors', WASM_BASE64);
  if (module === null) return null;
  if (cachedFor !== module) {
    cachedFor = module;
    const e = module.exports;
    const arena = new Arena(module);
    const region = (owner: object, bytes: number) => arena.region(owner, bytes);
    cached = {
      module,
      arena,
      region,
      epoch: () => arena.epoch,
      normaliseMany: e.normaliseMany as DescriptorKernels['normaliseMany'],
      expandAccumulate: e.expandAccumulate as DescriptorKernels['expandAccumulate'],
      pairTerms: e.pairTerms as DescriptorKernels['pairTerms'],
      hypot3: e.hypot3 as DescriptorKernels['hypot3'],
      transposeChannels: e.transposeChannels as DescriptorKernels['transposeChannels'],
      powerSpectrumRow: e.powerSpectrumRow as DescriptorKernels['powerSpectrumRow'],
      coupleSame: e.coupleSame as DescriptorKernels['coupleSame'],
      coupleCross: e.coupleCross as DescriptorKernels['coupleCross'],
      normalise: e.normalise as DescriptorKernels['normalise'],
      readOut: e.readOut as DescriptorKernels['readOut'],
      addRows: e.addRows as DescriptorKernels['addRows'],
      sumSquaresMany: e.sumSquaresMany as DescriptorKernels['sumSquaresMany'],
    };
  }
  return cached ?? null;
}
