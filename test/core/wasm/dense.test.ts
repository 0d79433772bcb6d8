// The dense kernels against plain loops with the same order of summation: the same bits. (Through the Cholesky
// factorisation and the solves that use them, test/core/numerics/cholesky.test.ts compares them with the
// JavaScript path bit for bit and with ml-matrix.)
import { afterEach, describe, expect, it } from 'vitest';
import { denseKernels } from '../../../src-main/core/wasm/dense.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';

afterEach(() => setWebAssemblyKernels(true));

/** Offset of panel row i, column p in the tiles (rows in groups of four, each group p-major). */
const tileAt = (i: number, p: number, kb: number) => ((i >> 2) * kb + p) * 4 + (i & 3);

/** Deterministic numbers of varied size and sign. */
const fill = (v: Float64Array, seed: number) => {
  for (let i = 0; i < v.length; i++) v[i] = Math.sin(1.3 * i + seed) / (1 + (i % 5));
};

describe('dense WebAssembly kernels', () => {
  it('loads here (Node 20 runs WebAssembly SIMD)', () => {
    expect(denseKernels()).not.toBeNull();
  });

  it('trailingUpdate: c[i][j] −= Σ_p X[i][p]·X[j][p] on the lower triangle, each sum from zero in p order, the bits of the plain loop', () => {
    const k = denseKernels()!;
    for (const [rows, kb, ldc] of [[4, 1, 4], [8, 3, 11], [32, 64, 40], [20, 7, 20]] as const) {
      const nc = rows * ldc;
      const nx = rows * kb;
      expect(k.module.reserve((nc + nx) * 8)).toBe(true);
      const cAt = k.module.heapBase;
      const xAt = cAt + nc * 8;
      const c = k.module.f64(cAt, nc);
      const x = k.module.f64(xAt, nx);
      fill(c, 1);
      fill(x, rows);
      const want = Float64Array.from(c);
      for (let i = 0; i < rows; i++) {
        for (let j = 0; j <= i; j++) {
          let s = 0;
          for (let p = 0; p < kb; p++) s += x[tileAt(i, p, kb)] * x[tileAt(j, p, kb)];
          want[i * ldc + j] -= s;
        }
      }
      k.trailingUpdate(cAt, ldc, xAt, rows, kb);
      // every entry bit for bit, including the untouched upper part and the columns past `rows`
      expect(Array.from(k.module.f64(cAt, nc))).toEqual(Array.from(want));
    }
  });

  it('panelSolve: the panel rows against the diagonal block in four running sums, into the matrix and the tiles', () => {
    const k = denseKernels()!;
    for (const [n, k0, kb] of [[12, 0, 4], [23, 5, 9], [80, 0, 64]] as const) {
      const rows = Math.ceil((n - k0 - kb) / 4) * 4;
      const na = (n + 4) * n;
      expect(k.module.reserve((na + rows * kb) * 8)).toBe(true);
      const aAt = k.module.heapBase;
      const xAt = aAt + na * 8;
      const a = k.module.f64(aAt, na);
      fill(a, n);
      a.fill(0, n * n);
      for (let j = 0; j < kb; j++) a[(k0 + j) * n + k0 + j] = 2 + j / 7; // the block's pivots
      const want = Float64Array.from(a);
      const wantX = new Float64Array(rows * kb);
      for (let r = 0; r < rows; r++) {
        const ri = (k0 + kb + r) * n + k0;
        for (let j = 0; j < kb; j++) {
          const rj = (k0 + j) * n + k0;
          const s = [0, 0, 0, 0];
          let p = 0;
          for (; p + 3 < j; p += 4) for (let q = 0; q < 4; q++) s[q] += want[ri + p + q] * want[rj + p + q];
          for (; p < j; p++) s[0] += want[ri + p] * want[rj + p];
          const v = (want[ri + j] - (s[0] + s[1] + s[2] + s[3])) / want[rj + j];
          want[ri + j] = v;
          wantX[tileAt(r, j, kb)] = v;
        }
      }
      k.panelSolve(aAt, n, k0, kb, rows, xAt);
      expect(Array.from(k.module.f64(aAt, na))).toEqual(Array.from(want));
      expect(Array.from(k.module.f64(xAt, rows * kb))).toEqual(Array.from(wantX));
    }
  });

  it('forwardRows: L z = b for groups of four interleaved right-hand sides, the bits of one substitution each', () => {
    const k = denseKernels()!;
    for (const [n, groups] of [[1, 1], [2, 1], [7, 2], [40, 3]] as const) {
      const nb = groups * 4 * n;
      expect(k.module.reserve((n * n + nb) * 8)).toBe(true);
      const lAt = k.module.heapBase;
      const bAt = lAt + n * n * 8;
      const l = k.module.f64(lAt, n * n);
      fill(l, 3);
      for (let i = 0; i < n; i++) l[i * n + i] = 1.5 + (i % 3);
      const b = k.module.f64(bAt, nb);
      fill(b, n);
      const want = Float64Array.from(b);
      for (let g = 0; g < groups; g++) {
        for (let r = 0; r < 4; r++) {
          const at = (i: number) => (g * n + i) * 4 + r;
          for (let i = 0; i < n; i++) {
            let s = want[at(i)];
            for (let c = 0; c < i; c++) s -= l[i * n + c] * want[at(c)];
            want[at(i)] = s / l[i * n + i];
          }
        }
      }
      k.forwardRows(lAt, n, bAt, groups);
      expect(Array.from(k.module.f64(bAt, nb))).toEqual(Array.from(want));
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
