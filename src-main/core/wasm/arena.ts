// The one allocator of a kernel module's memory: regions that keep their place and contents between calls, so
// that a job's large operands (a model's representatives and weights, a feature plan's tables) are copied in once
// per thread. Each kernel module has one Arena over its own memory (core/wasm/prediction-kernels.ts,
// core/wasm/descriptors.ts). Past ARENA_LIMIT everything starts again from the base, which bounds the memory a
// module ever holds (WebAssembly memory never shrinks).
import type { KernelModule } from './load.ts';

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

let limit = ARENA_LIMIT;
let restarts = 0;
/**
 * Sets the arena's limit for every module (null: ARENA_LIMIT again). Tests lower it so that the arena starts again
 * in the middle of a job, to check that every caller still gets the same numbers.
 */
export function setArenaLimit(bytes: number | null): void {
  limit = bytes ?? ARENA_LIMIT;
}
/** How many times an arena has started again from its base (in this thread, since it started). */
export function arenaRestarts(): number {
  return restarts;
}

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
    const total = requests.reduce((s, r) => s + align16(r.bytes), 0);
    if (!(total <= limit)) return null;
    const missing = requests.filter((r) => {
      const s = this.slots.get(r.name);
      return !s || s.key.deref() !== r.key || s.bytes < r.bytes;
    });
    if (missing.length) {
      const extra = missing.reduce((s, r) => s + align16(r.bytes), 0);
      if (this.top + extra - this.module.heapBase > limit) {
        restarts++;
        this.slots.clear();
        this.top = this.module.heapBase;
        return this.acquire(requests);
      }
      if (!this.module.reserve(this.top + extra - this.module.heapBase)) return null;
      this.placedCount++;
      for (const r of missing) {
        const at = this.top;
        this.top += align16(r.bytes);
        this.slots.set(r.name, { key: new WeakRef(r.key), at, bytes: align16(r.bytes) });
        r.fill?.(this.module, at);
      }
    }
    return requests.map((r) => (this.slots.get(r.name) as { at: number }).at);
  }

  private placedCount = 0;
  /**
   * Changes whenever a region is placed (anything else may then have been dropped or written over); while it
   * stays the same, every region is where it was, so a caller may skip asking again.
   */
  get epoch(): number {
    return this.placedCount;
  }

  private readonly owners = new WeakMap<object, { name: string; generation: number }>();
  private placements = 0;

  /**
   * One region of at least `bytes` bytes for `owner`, which writes its contents itself: the same place on later
   * calls while it fits and nothing else moved it. `generation` changes whenever the region is placed anew (its
   * contents must then be written again), e.g. after the arena started again for another owner; null when the
   * memory cannot hold it. Called once per environment by the descriptor kernels, so the usual answer (still in
   * place) allocates nothing.
   */
  region(owner: object, bytes: number): { at: number; generation: number } | null {
    let own = this.owners.get(owner);
    if (own) {
      const s = this.slots.get(own.name);
      if (s && s.key.deref() === owner && s.bytes >= bytes) return { at: s.at, generation: own.generation };
    } else {
      own = { name: residentName('region', owner), generation: 0 };
      this.owners.set(owner, own);
    }
    const at = this.acquire([{ name: own.name, key: owner, bytes }]);
    if (at === null) return null;
    // not found in place above, so acquire placed it anew
    own.generation = ++this.placements;
    return { at: at[0], generation: own.generation };
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

/** `bytes` rounded up to a multiple of 16: every region of a kernel module's memory starts 16-byte aligned (vector loads). */
export function align16(bytes: number): number {
  return Math.ceil(bytes / 16) * 16;
}
