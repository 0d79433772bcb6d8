// The neighbour list's pair search (./assembly/neighbour-search.ts) with its signature. Used by core/geometry/neighbours.ts,
// which lays out each call's arrays in the module's memory from heapBase (nothing stays between calls).
import { WASM_BASE64 } from './generated/neighbour-search.ts';
import { kernelModule, type KernelModule } from './load.ts';

export interface NeighbourKernels {
  module: KernelModule;
  /**
   * The pairs of the centres from ip[8] on, into the chunk, until done or out of room (byte addresses of the Int32
   * and Float64 description blocks; ./assembly/neighbour-search.ts lays them out).
   */
  pairs(ip: number, fp: number): void;
}

let cached: NeighbourKernels | null = null;

/** The neighbour kernel, or null when WebAssembly kernels are off or unavailable (take the JavaScript path). */
export function neighbourKernels(): NeighbourKernels | null {
  const module = kernelModule('neighbour-search', WASM_BASE64);
  if (module === null) return null;
  if (cached?.module !== module) cached = { module, pairs: module.exports.pairs as NeighbourKernels['pairs'] };
  return cached;
}
