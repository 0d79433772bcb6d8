// The dense kernels against plain loops with the same order of summation: the same bits.
import { afterEach, describe, expect, it } from 'vitest';
import { denseKernels } from '../../../src-main/core/wasm/dense.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';

afterEach(() => setWebAssemblyKernels(true));

/** C −= XᵀX on the chosen entries, each sum over p in order (as the kernel promises). */
function plain(c: Float64Array, ldc: number, x: Float64Array, m: number, kb: number, lowerOnly: boolean): void {
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < m; j++) {
      if (lowerOnly && j > i) continue;
      let s = 0;
      for (let p = 0; p < kb; p++) s += x[p * m + i] * x[p * m + j];
      c[i * ldc + j] -= s;
    }
  }
}

describe('dense WebAssembly kernels', () => {
  it('loads here (Node 20 runs WebAssembly SIMD)', () => {
    expect(denseKernels()).not.toBeNull();
  });

  it('syrkLowerSub gives the same bits as the plain loop, full and lower-only, with a row stride', () => {
    const k = denseKernels()!;
    for (const [m, kb, ldc] of [[4, 1, 4], [8, 3, 11], [32, 64, 40], [20, 7, 20]] as const) {
      for (const lowerOnly of [0, 1]) {
        const nc = m * ldc;
        const nx = kb * m;
        expect(k.module.reserve((nc + nx) * 8)).toBe(true);
        const cAt = k.module.heapBase;
        const xAt = cAt + nc * 8;
        const c = k.module.f64(cAt, nc);
        const x = k.module.f64(xAt, nx);
        for (let i = 0; i < nc; i++) c[i] = Math.cos(0.7 * i) * 3;
        for (let i = 0; i < nx; i++) x[i] = Math.sin(1.3 * i + m) / (1 + (i % 5));
        const want = Float64Array.from(c);
        plain(want, ldc, x, m, kb, lowerOnly === 1);
        k.syrkLowerSub(cAt, ldc, xAt, m, kb, lowerOnly);
        const got = k.module.f64(cAt, nc);
        // every entry bit for bit, including the untouched upper part and the padding columns past m
        expect(Array.from(got)).toEqual(Array.from(want));
      }
    }
  });

  it('switched off, the loader answers null so callers take their JavaScript path', () => {
    setWebAssemblyKernels(false);
    expect(denseKernels()).toBeNull();
    setWebAssemblyKernels(true);
    expect(denseKernels()).not.toBeNull();
  });

  it('refuses a reservation beyond what a module may hold, leaving the memory as it was', () => {
    const k = denseKernels()!;
    expect(k.module.reserve(2 ** 32)).toBe(false);
    expect(k.module.reserve(1024)).toBe(true);
  });
});
