// The prediction kernels (./assembly/prediction-kernels.ts) with their signatures, and the arena that keeps a job's large
// operands (a model's representatives, its read-out weights and tables) resident in the module's memory between
// calls. Used by core/learning/tensor-readout.ts and core/learning/nearest-search.ts.
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
}

/**
 * What a caller asks the arena for: a region named `name` made for `key` (an object whose contents it holds).
 * Name a resident region by residentName(prefix, key), so that several (two models' searches) can stay side by
 * side; a scratch region by a fixed name.
 */
export interface Region {
  name: string;
  key: object;
  bytes: number;
  /** Writes the contents at byte address `at` (memory reserved, views fresh); omitted for scratch. */
  fill?: (module: KernelModule, at: number) => void;
}

/** The most bytes the arena places before it starts again from its base (the rest is for the module's growth). */
export const ARENA_LIMIT = 256 * 2 ** 20;

/**
 * Regions of a kernel module's memory that stay where they are between calls. A region keeps its place and
 * contents while it is asked for under the same name with the same key (and fits); a new key or a larger size
 * places it anew at the top. When the top would pass ARENA_LIMIT everything is dropped and the regions of the
 * current request are placed from the base again (the module's memory never shrinks, so this bounds it).
 */
export class Arena {
  private top: number;
  // keys are held weakly: a region never keeps a model alive (its place is reused when the arena starts again)
  private readonly slots = new Map<string, { key: WeakRef<object>; at: number; bytes: number }>();
  constructor(private readonly module: KernelModule) {
    this.top = module.heapBase;
  }

  /** Byte addresses of the requested regions, in order; null when they cannot be held at all. */
  acquire(requests: Region[]): number[] | null {
    const total = requests.reduce((s, r) => s + align(r.bytes), 0);
    if (!(total <= ARENA_LIMIT)) return null;
    const missing = requests.filter((r) => {
      const s = this.slots.get(r.name);
      return !s || s.key.deref() !== r.key || s.bytes < r.bytes;
    });
    if (missing.length) {
      const extra = missing.reduce((s, r) => s + align(r.bytes), 0);
      if (this.top + extra - this.module.heapBase > ARENA_LIMIT) {
        this.slots.clear();
        this.top = this.module.heapBase;
        return this.acquire(requests);
      }
      if (!this.module.reserve(this.top + extra - this.module.heapBase)) return null;
      for (const r of missing) {
        const at = this.top;
        this.top += align(r.bytes);
        this.slots.set(r.name, { key: new WeakRef(r.key), at, bytes: align(r.bytes) });
        r.fill?.(this.module, at);
      }
    }
    return requests.map((r) => (this.slots.get(r.name) as { at: number }).at);
  }
}

const ids = new WeakMap<object, number>();
let nextId = 0;

/** A region name of its own for `key` (prefix and a number given to the object on first use). */
export function residentName(prefix: string, key: object): string {
  let id = ids.get(key);
  if (id === undefined) {
    id = nextId++;
    ids.set(key, id);
  }
  return `${prefix}:${id}`;
}

function align(bytes: number): number {
  return Math.ceil(bytes / 16) * 16;
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
    };
  }
  return cached;
}
