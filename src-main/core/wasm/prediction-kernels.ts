// The prediction kernels (./assembly/prediction-kernels.ts) with their signatures, and the arena (./arena.ts) that
// keeps a job's large operands (a model's representatives) resident in the module's memory between calls. Used by
// core/learning/nearest-search.ts and core/learning/kernels.ts (which regression.ts designLeverage calls).
import { Arena, arenaRestarts, type Region } from './arena.ts';
import { WASM_BASE64 } from './generated/prediction-kernels.ts';
import { kernelModule, type KernelModule } from './load.ts';

export interface PredictKernels {
  module: KernelModule;
  arena: Arena;
  /** Exact nearest distances of queries of one species (nearest-search.ts nearestOf); byte addresses. */
  searchSpecies(species: number, reps: number, scratch: number, queries: number, idx: number, nq: number, out: number): void;
  /** The plain scan (sparse.ts nearestDistance) of queries over one species' m representatives; byte addresses. */
  scanSpecies(reps: number, m: number, n0: number, queries: number, idx: number, nq: number, out: number): void;
  /** A linear λ=0 part's contributions and per-species row sums of count rows (kernels.ts linearScalarPass); byte addresses. */
  linearRows(rows: number, count: number, n0: number, species: number, weights: number, out: number, sums: number): void;
  /** The prepared search of one species (nearest-search.ts prepareSpeciesJs, the same bits); returns its basis size. */
  prepareSpecies(reps: number, m: number, n0: number, limit: number, steps: number, work: number): number;
  /** A design's rows dotted with a row (regression.ts designLeverage's first pass); byte addresses. */
  leverageRows(design: number, rows: number, f: number, phi: number, c: number): void;
  /** The row less the design's rows weighted by c, and its squared norm (designLeverage's second pass); byte addresses. */
  leverageResidual(design: number, rows: number, f: number, c: number, r: number): number;
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
      linearRows: module.exports.linearRows as PredictKernels['linearRows'],
      leverageRows: module.exports.leverageRows as PredictKernels['leverageRows'],
      leverageResidual: module.exports.leverageResidual as PredictKernels['leverageResidual'],
    };
  }
  return cached;
}

/** The largest frame whose λ=0 rows are held whole in the kernel's memory (frameRowsRegion); larger ones go in chunks. */
export const FRAME_ROWS_LIMIT = 32 * 2 ** 20;
/** The key of the frame rows' region (one region, reused frame after frame: it grows, never moves per frame). */
const FRAME_ROWS = {};
/** What the frame rows' region holds: the rows of `key`, written at `at` when the arenas had started again `restarts` times. */
let held: { key: WeakRef<object>; at: number; restarts: number } | null = null;

/**
 * The region for a frame's λ=0 rows (count rows of n0 doubles) in the prediction kernels' memory, or null when
 * they are larger than FRAME_ROWS_LIMIT (the caller copies them in chunks instead). Ask for it in the same acquire
 * as the call's other regions, then call fillFrameRows with its address.
 */
export function frameRowsRegion(count: number, n0: number): Region | null {
  const bytes = 8 * count * n0;
  if (!(bytes <= FRAME_ROWS_LIMIT) || bytes === 0) return null;
  return { name: 'frame-rows', key: FRAME_ROWS, bytes };
}

/**
 * Copies the rows into the frame rows' region at `at` unless they are there already: copied once for every caller
 * that passes the same `key` (the search and the linear part of one frame: core/learning/model.ts predictFromParts
 * makes one key per frame; the rows must not change while it is in use). The region keeps its contents until
 * the arena starts again (counted by arenaRestarts) or places it elsewhere.
 */
export function fillFrameRows(k: PredictKernels, at: number, rows: Float64Array, count: number, n0: number, key: object): void {
  if (held && held.key.deref() === key && held.at === at && held.restarts === arenaRestarts()) return;
  k.module.f64(at, count * n0).set(rows.subarray(0, count * n0));
  held = { key: new WeakRef(key), at, restarts: arenaRestarts() };
}
