// Dense-algebra kernels in AssemblyScript, compiled to WebAssembly with 128-bit SIMD (two doubles per lane pair).
// Compiled by scripts/build-wasm.mjs into ../generated/dense.ts; loaded through ../dense.ts. Every kernel keeps
// each sum in the same order as its JavaScript twin, so the results are the same bits (vectorised across
// independent outputs, never within one sum).

/** Where the caller's buffers may start: the first byte after this module's static data. */
export function heapBase(): usize {
  return __heap_base;
}

/**
 * c[i][j] −= Σ_p x[p][i] · x[p][j] for 0 ≤ i, j < m in 4 × 4 tiles, i.e. C −= Xᵀ X with X stored p-major (kb rows
 * of m numbers, contiguous in i). C is row-major with row stride `ldc` doubles. m must be a multiple of 4; only
 * tiles with j ≤ i (tile indices) are updated when `lowerOnly` is 1, and then a diagonal tile's strict upper part
 * is left as it was. Each c[i][j]'s sum runs over p = 0…kb−1 in order, as the JavaScript tile loop does.
 */
export function syrkLowerSub(c: usize, ldc: i32, x: usize, m: i32, kb: i32, lowerOnly: i32): void {
  const rowBytes = <usize>m << 3;
  const cs = <usize>ldc << 3;
  for (let i = 0; i < m; i += 4) {
    const jEnd = lowerOnly ? i + 4 : m;
    for (let j = 0; j < jEnd; j += 4) {
      let s00 = f64x2.splat(0);
      let s01 = f64x2.splat(0);
      let s10 = f64x2.splat(0);
      let s11 = f64x2.splat(0);
      let s20 = f64x2.splat(0);
      let s21 = f64x2.splat(0);
      let s30 = f64x2.splat(0);
      let s31 = f64x2.splat(0);
      let xi = x + (<usize>i << 3);
      let xj = x + (<usize>j << 3);
      for (let p = 0; p < kb; p++) {
        const xa = v128.load(xi);
        const xb = v128.load(xi, 16);
        const y0 = v128.load(xj);
        const y1 = v128.load(xj, 16);
        const x0 = v128.shuffle<f64>(xa, xa, 0, 0);
        const x1 = v128.shuffle<f64>(xa, xa, 1, 1);
        const x2 = v128.shuffle<f64>(xb, xb, 0, 0);
        const x3 = v128.shuffle<f64>(xb, xb, 1, 1);
        s00 = f64x2.add(s00, f64x2.mul(x0, y0));
        s01 = f64x2.add(s01, f64x2.mul(x0, y1));
        s10 = f64x2.add(s10, f64x2.mul(x1, y0));
        s11 = f64x2.add(s11, f64x2.mul(x1, y1));
        s20 = f64x2.add(s20, f64x2.mul(x2, y0));
        s21 = f64x2.add(s21, f64x2.mul(x2, y1));
        s30 = f64x2.add(s30, f64x2.mul(x3, y0));
        s31 = f64x2.add(s31, f64x2.mul(x3, y1));
        xi += rowBytes;
        xj += rowBytes;
      }
      const r0 = c + ((<usize>i * <usize>ldc + <usize>j) << 3);
      const r1 = r0 + cs;
      const r2 = r1 + cs;
      const r3 = r2 + cs;
      if (lowerOnly && j == i) {
        // a diagonal tile: only its lower triangle (row q keeps columns ≤ q)
        f64.store(r0, f64.load(r0) - f64x2.extract_lane(s00, 0));
        v128.store(r1, f64x2.sub(v128.load(r1), s10));
        v128.store(r2, f64x2.sub(v128.load(r2), s20));
        f64.store(r2, f64.load(r2, 16) - f64x2.extract_lane(s21, 0), 16);
        v128.store(r3, f64x2.sub(v128.load(r3), s30));
        v128.store(r3, f64x2.sub(v128.load(r3, 16), s31), 16);
      } else {
        v128.store(r0, f64x2.sub(v128.load(r0), s00));
        v128.store(r0, f64x2.sub(v128.load(r0, 16), s01), 16);
        v128.store(r1, f64x2.sub(v128.load(r1), s10));
        v128.store(r1, f64x2.sub(v128.load(r1, 16), s11), 16);
        v128.store(r2, f64x2.sub(v128.load(r2), s20));
        v128.store(r2, f64x2.sub(v128.load(r2, 16), s21), 16);
        v128.store(r3, f64x2.sub(v128.load(r3), s30));
        v128.store(r3, f64x2.sub(v128.load(r3, 16), s31), 16);
      }
    }
  }
}
