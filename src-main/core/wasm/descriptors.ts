// The descriptor kernels (./assembly/descriptors.ts) with their signatures. Used by core/descriptors/features.ts,
// which lays out each feature plan's tables in the module's memory.
import { WASM_BASE64 } from './generated/descriptors.ts';
import { kernelModule, type KernelModule } from './load.ts';

export interface DescriptorKernels {
  module: KernelModule;
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
    cached = {
      module,
      coupleSame: e.coupleSame as DescriptorKernels['coupleSame'],
      coupleCross: e.coupleCross as DescriptorKernels['coupleCross'],
      normalise: e.normalise as DescriptorKernels['normalise'],
    };
  }
  return cached ?? null;
}
