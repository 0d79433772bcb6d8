// The arena of the prediction kernels (core/wasm/prediction-kernels.ts): resident regions keep their place and
// contents between calls, a new object or a larger size places a region anew, and past the limit everything
// starts again from the base. On a stand-in module (the arena only asks it for its base and to reserve), so that
// the kernels' own arena in this thread is left alone. The kernels' numbers are tested against their JavaScript
// twins in test/core/learning/tensor-readout.test.ts and nearest-search.test.ts.
import { describe, expect, it } from 'vitest';
import type { KernelModule } from '../../../src-main/core/wasm/load.ts';
import { Arena, ARENA_LIMIT, residentName, type Region } from '../../../src-main/core/wasm/arena.ts';
import { predictKernels } from '../../../src-main/core/wasm/prediction-kernels.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';

function standIn(): { module: KernelModule; reserved: number[] } {
  const reserved: number[] = [];
  const module = {
    heapBase: 1024,
    reserve(bytes: number) {
      reserved.push(bytes);
      return bytes <= 2 ** 31 - 1024;
    },
  } as unknown as KernelModule;
  return { module, reserved };
}

describe('prediction kernels: the arena', () => {
  it('keeps a resident region in place and fills it once while the same object asks for it', () => {
    const { module } = standIn();
    const arena = new Arena(module);
    const model = {};
    let fills = 0;
    const region = (): Region => ({ name: residentName('weights', model), key: model, bytes: 100, fill: () => fills++ });
    const [a] = arena.acquire([region()]) as number[];
    const [b] = arena.acquire([region()]) as number[];
    expect(b).toBe(a);
    expect(fills).toBe(1);
    expect(a % 16).toBe(0);
    expect(a).toBeGreaterThanOrEqual(module.heapBase);
  });

  it('places two objects side by side, and a region asked for under the same name by another object anew', () => {
    const { module } = standIn();
    const arena = new Arena(module);
    const one = {};
    const two = {};
    const [a, b] = arena.acquire([
      { name: residentName('search', one), key: one, bytes: 64 },
      { name: residentName('search', two), key: two, bytes: 64 },
    ]) as number[];
    expect(b).toBeGreaterThanOrEqual(a + 64);
    expect(residentName('search', one)).not.toBe(residentName('search', two));
    // a scratch region (fixed name): the same key reuses it, a larger size moves it
    const key = {};
    const [s1] = arena.acquire([{ name: 'scratch', key, bytes: 32 }]) as number[];
    const [s2] = arena.acquire([{ name: 'scratch', key, bytes: 16 }]) as number[];
    const [s3] = arena.acquire([{ name: 'scratch', key, bytes: 4096 }]) as number[];
    expect(s2).toBe(s1);
    expect(s3).not.toBe(s1);
    const [s4] = arena.acquire([{ name: 'scratch', key: {}, bytes: 16 }]) as number[];
    expect(s4).not.toBe(s3);
  });

  it('starts again from its base past the limit, refilling what the request needs; refuses what cannot fit at all', () => {
    const { module } = standIn();
    const arena = new Arena(module);
    const big = {};
    const other = {};
    let fills = 0;
    const half = Math.floor(ARENA_LIMIT / 2) + 16;
    const [a] = arena.acquire([{ name: 'big', key: big, bytes: half, fill: () => fills++ }]) as number[];
    const [b] = arena.acquire([{ name: 'other', key: other, bytes: half, fill: () => fills++ }]) as number[];
    // the second did not fit beside the first: the arena started again, and the second now sits at the base
    expect(b).toBe(a);
    expect(fills).toBe(2);
    const [c] = arena.acquire([{ name: 'big', key: big, bytes: half, fill: () => fills++ }]) as number[];
    expect(c).toBe(a);
    expect(fills).toBe(3);
    expect(arena.acquire([{ name: 'huge', key: {}, bytes: ARENA_LIMIT + 1 }])).toBeNull();
  });

  it('answers null with the kernels switched off', () => {
    expect(predictKernels()).not.toBeNull();
    setWebAssemblyKernels(false);
    try {
      expect(predictKernels()).toBeNull();
    } finally {
      setWebAssemblyKernels(true);
    }
  });
});

describe('the arena: regions whose owners write them (the descriptor kernels)', () => {
  it('keeps an owner region in place with the same generation, and gives a new generation when placed anew', () => {
    const { module } = standIn();
    const arena = new Arena(module);
    const plan = {};
    const expander = {};
    const a = arena.region(plan, 1000)!;
    expect(a.at % 16).toBe(0);
    expect(arena.region(plan, 800)).toEqual(a); // fits: same place, same generation
    const b = arena.region(expander, 500)!;
    expect(b.at).toBeGreaterThanOrEqual(a.at + 1000); // side by side, no overlap
    expect(arena.region(plan, 1000)).toEqual(a);
    const c = arena.region(plan, 5000)!; // larger: placed anew, to be written again
    expect(c.generation).not.toBe(a.generation);
    expect(c.at).not.toBe(a.at);
    expect(arena.region(expander, 500)).toEqual(b);
  });

  it('past the limit everything starts again, and every owner then sees a new generation', () => {
    const { module } = standIn();
    const arena = new Arena(module);
    const one = {};
    const two = {};
    const first = arena.region(one, 1000)!;
    const big = arena.region(two, ARENA_LIMIT - 500)!; // does not fit above the first: the arena starts again
    expect(big.at).toBe(1024);
    const again = arena.region(one, 1000)!;
    expect(again.generation).not.toBe(first.generation);
    // placed again from the base after another start, never overlapping the big region while both are held
    expect(again.at === 1024 || again.at >= big.at + ARENA_LIMIT - 500).toBe(true);
    expect(arena.region(one, ARENA_LIMIT + 16)).toBeNull();
  });
});
