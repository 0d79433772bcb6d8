// The dense-algebra kernels (./assembly/dense.ts) with their signatures. Used by core/numerics/cholesky.ts.
import { WASM_BASE64 } from './generated/dense.ts';
import { kernelModule, type KernelModule } from './load.ts';

export interface DenseKernels {
  module: KernelModule;
  /**
   * c[i][j] −= Σ_p x[p][i]·x[p][j] in 4 × 4 tiles (m a multiple of 4); C row-major with row stride `ldc`, X p-major
   * (kb rows of m). With lowerOnly = 1 only the lower triangle (j ≤ i) is updated. Byte offsets into module memory.
   */
  syrkLowerSub(c: number, ldc: number, x: number, m: number, kb: number, lowerOnly: number): void;
}

let cached: DenseKernels | null | undefined;
let cachedFor: KernelModule | null | undefined;

/** The dense kernels, or null when WebAssembly kernels are off or unavailable (take the JavaScript path). */
export function denseKernels(): DenseKernels | null {
  const module = kernelModule('dense', WASM_BASE64);
  if (module === null) return null;
  if (cachedFor !== module) {
    cachedFor = module;
    cached = { module, syrkLowerSub: module.exports.syrkLowerSub as DenseKernels['syrkLowerSub'] };
  }
  return cached ?? null;
}
