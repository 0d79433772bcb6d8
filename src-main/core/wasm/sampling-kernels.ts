// The sampling kernels (./assembly/sampling-kernels.ts) with their signatures. Used by core/learning/sampling.ts, which lays
// out the module's memory; core/learning/sparse.ts keeps the JavaScript loops (fallback and tests' oracle).
import { WASM_BASE64 } from './generated/sampling-kernels.ts';
import { kernelModule, type KernelModule } from './load.ts';

/** Byte offsets into the module's memory; counts in rows or numbers. */
export interface SamplingKernels {
  module: KernelModule;
  /**
   * Coordinates of n rows (n0 doubles each) on the d basis rows at `basis` about the mean at `mean`, zero-padded to
   * d2, then the bounds lo and hi of the residual norm (widened by allowance × the centred row's squared norm); d2 + 2
   * numbers per row into `coords`; `scratch` holds n0 doubles.
   */
  project(rows: number, n: number, n0: number, mean: number, basis: number, d: number, d2: number, coords: number, allowance: number, scratch: number): void;
  /**
   * Steps from … to − 1 of the farthest-point sampling of the n rows at `rows`, `first` the row chosen at step `from`,
   * with their coordinates; dist, dist2 (n doubles, +∞), nearest (n integers, −1), toNew (a double per step), stamp
   * (an integer per step, −1), chosen (an integer per step). Returns the row to choose at step `to`, or −(count + 1)
   * when the sampling ended after count choices.
   */
  farthestPoints(rows: number, coords: number, n: number, n0: number, d2: number, from: number, to: number, first: number, dist: number, dist2: number, nearest: number, toNew: number, stamp: number, chosen: number): number;
  /**
   * For rows from … to − 1, the distance to the nearest of the r representatives `reps` of its species other than its
   * own entry (`own`) and, when `frame` is not 0, from another frame; `bounds` holds r doubles, `out` a double per row.
   */
  nearestOthers(rows: number, coords: number, d2: number, n0: number, from: number, to: number, species: number, frame: number, own: number, reps: number, r: number, bounds: number, out: number): void;
}

let cached: SamplingKernels | null = null;

/** The sampling kernels, or null when WebAssembly kernels are off or unavailable (take the JavaScript path). */
export function samplingKernels(): SamplingKernels | null {
  const module = kernelModule('sampling-kernels', WASM_BASE64);
  if (module === null) return null;
  if (cached?.module !== module) {
    const e = module.exports;
    cached = {
      module,
      project: e.project as SamplingKernels['project'],
      farthestPoints: e.farthestPoints as SamplingKernels['farthestPoints'],
      nearestOthers: e.nearestOthers as SamplingKernels['nearestOthers'],
    };
  }
  return cached;
}
