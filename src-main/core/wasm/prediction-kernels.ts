// The prediction kernels (./assembly/prediction-kernels.ts) with their signatures, and the arena (./arena.ts) that
// keeps a job's large operands (a model's representatives, its read-out weights and tables) resident in the
// module's memory between calls. Used by core/learning/tensor-readout.ts, core/learning/nearest-search.ts and
// core/learning/kernels.ts.
import { Arena } from './arena.ts';
import { WASM_BASE64 } from './generated/prediction-kernels.ts';
import { kernelModule, type KernelModule } from './load.ts';

export interface PredictKernels {
  module: KernelModule;
  arena: Arena;
  /** The read-out of one environment (tensor-readout.ts readOne); byte addresses of the plan, c, W and y. */
  readOne(plan: number, c: number, W: number, y: number): void;
  /** Exact nearest distances of queries of one species (nearest-search.ts nearestOf); byte addresses. */
  searchSpecies(species: number, reps: number, scratch: number, queries: number, idx: number, nq: number, out: number): void;
  /** The plain scan (sparse.ts nearestDistance) of queries over one species' m representatives; byte addresses. */
  scanSpecies(reps: number, m: number, n0: number, queries: number, idx: number, nq: number, out: number): void;
  /** A linear λ=0 part's contributions and per-species row sums of count rows (kernels.ts linearScalarPass); byte addresses. */
  linearRows(rows: number, count: number, n0: number, species: number, weights: number, out: number, sums: number): void;
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
      readOne: module.exports.readOne as PredictKernels['readOne'],
      searchSpecies: module.exports.searchSpecies as PredictKernels['searchSpecies'],
      scanSpecies: module.exports.scanSpecies as PredictKernels['scanSpecies'],
      prepareSpecies: module.exports.prepareSpecies as PredictKernels['prepareSpecies'],
      linearRows: module.exports.linearRows as PredictKernels['linearRows'],
    };
  }
  return cached;
}
