// The dense-algebra kernels (./assembly/dense.ts) with their signatures. Used by core/numerics/cholesky.ts, which
// lays out the module's memory and keeps the JavaScript twin of every kernel (fallback and tests' oracle).
import { WASM_BASE64 } from './generated/dense.ts';
import { kernelModule, type KernelModule } from './load.ts';

/** Byte offsets into the module's memory; counts in numbers (doubles) or rows. */
export interface DenseKernels {
  module: KernelModule;
  /**
   * Panel solve of the blocked Cholesky for the kb columns from k0, rows k0 + kb onwards (`rows` of them, a
   * multiple of four, padding rows past n included), into the matrix (row stride n) and into the panel's tiles at x
   * (rows in groups of four, each group p-major).
   */
  panelSolve(a: number, n: number, k0: number, kb: number, rows: number, x: number): void;
  /** c[i][j] −= Σ_p X[i][p]·X[j][p] for j ≤ i < rows (a multiple of four), X the panel's tiles, C row stride ldc. */
  trailingUpdate(c: number, ldc: number, x: number, rows: number, kb: number): void;
  /** Forward substitution with L (row-major n × n) for `groups` groups of four right-hand sides, interleaved k-major. */
  forwardRows(l: number, n: number, bt: number, groups: number): void;
}

let cached: DenseKernels | null = null;

/** The dense kernels, or null when WebAssembly kernels are off or unavailable (take the JavaScript path). */
export function denseKernels(): DenseKernels | null {
  const module = kernelModule('dense', WASM_BASE64);
  if (module === null) return null;
  if (cached?.module !== module) {
    const e = module.exports;
    cached = {
      module,
      panelSolve: e.panelSolve as DenseKernels['panelSolve'],
      trailingUpdate: e.trailingUpdate as DenseKernels['trailingUpdate'],
      forwardRows: e.forwardRows as DenseKernels['forwardRows'],
    };
  }
  return cached;
}
