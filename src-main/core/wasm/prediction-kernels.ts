// The prediction kernels (./assembly/prediction-kernels.ts) with their signatures, and the arena (./arena.ts) that
// keeps a job's large operands (a model's representatives) resident in the
// module's memory between calls. Used by core/learning/nearest-search.ts.
import { Arena } from './arena.ts';
import { WASM_BASE64 } from './generated/prediction-kernels.ts';
import { kernelModule, type KernelModule } from './load.ts';

export interface PredictKernels {
  module: KernelModule;
  arena: Arena;
  /** Exact nearest distances of queries of one species (nearest-search.ts nearestOf); byte addresses. */
  searchSpecies(species: number, reps: number, scratch: number, queries: number, idx: number, nq: number, out: number): void;
  /** The plain scan (sparse.ts nearestDistance) of queries over one species' m representatives; byte addresses. */
  scanSpecies(reps: number, m: number, n0: number, queries: number, idx: number, nq: number, out: number): void;
  /** The prepared search of one species (nearest-search.ts prepareSpeciesJs, the same bits); returns its basis size. */
  prepareSpecies(reps: number, m: number, n0: number, limit: number, steps: number, work: number): number;
}

let cached: PredictKernels | null = null;

/** The prediction kernels, or null when WebAssembly kernels are off or unavailable (take the JavaScript path). */
export function predictKernels(): PredictKernels | null {
  const module = kernelModule('prediction-kernels', WASM_BASE64);
  if (module === null) return null;
  if (cached?.module !== module) {
    cached = {
      module,
      arena: new Arena(module),
      searchSpecies: module.exports.searchSpecies as PredictKernels['searchSpecies'],
      scanSpecies: module.exports.scanSpecies as PredictKernels['scanSpecies'],
      prepareSpecies: module.exports.prepareSpecies as PredictKernels['prepareSpecies'],
    };
  }
  return cached;
}
