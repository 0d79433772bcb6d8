// Dense-algebra kernels in AssemblyScript, compiled to WebAssembly with 128-bit SIMD (two doubles per lane pair).
// Compiled by scripts/build-wasm.mjs into ../generated/dense.ts; loaded through ../dense.ts; used by
// core/numerics/cholesky.ts. Every kernel keeps each sum in the same order as its JavaScript twin in cholesky.ts,
// so the results are the same bits (vectorised across independent outputs, never within one sum).
//
// The panel of the blocked Cholesky is kept in "tiles": the panel's rows in groups of four, each group stored
// p-major (kb steps of four numbers, 32 bytes each), so that both operands of a 4 × 4 tile of the trailing update
// stream through contiguous memory. Row i of the panel (counted from its first row), column p, is at
// x + ((⌊i/4⌋·kb + p)·4 + i mod 4)·8.

/** Where the caller's buffers may start: the first byte after this module's static data. */
export function heapBase(): usize {
  return __heap_base;
}

/**
 * The panel solve of the blocked Cholesky: rows r0 = k0 + kb … of the block's columns, a[i][k0 + j] ←
 * (a[i][k0 + j] − Σ_{p<j} a[i][k0 + p]·L[k0 + j][k0 + p]) / L[k0 + j][k0 + j], each sum in four running sums
 * (p mod 4, the last p < j past a multiple of four going to the first), added as ((s0 + s1) + s2) + s3 — as
 * solvePanel in cholesky.ts does. Also writes the results into the tiles at `x`. Four rows per pass, two in each
 * SIMD register; `rows` is the number of rows rounded up to a multiple of four, the matrix in memory having the
 * rows past n (up to three) as padding, whose results are never read for the rows that exist.
 */
export function panelSolve(a: usize, n: i32, k0: i32, kb: i32, rows: i32, x: usize): void {
  const rowBytes = <usize>n << 3;
  const tileBytes = <usize>kb << 5;
  const r0 = k0 + kb;
  for (let t = 0; t < rows; t += 4) {
    const xt = x + (<usize>(t >> 2)) * tileBytes;
    const a0 = a + ((<usize>(r0 + t) * <usize>n + <usize>k0) << 3);
    const a1 = a0 + rowBytes;
    const a2 = a1 + rowBytes;
    const a3 = a2 + rowBytes;
    for (let j = 0; j < kb; j++) {
      const lj = a + ((<usize>(k0 + j) * <usize>n + <usize>k0) << 3);
      let s0a = f64x2.splat(0);
      let s0b = f64x2.splat(0);
      let s1a = f64x2.splat(0);
      let s1b = f64x2.splat(0);
      let s2a = f64x2.splat(0);
      let s2b = f64x2.splat(0);
      let s3a = f64x2.splat(0);
      let s3b = f64x2.splat(0);
      let p = 0;
      for (; p + 3 < j; p += 4) {
        const xp = xt + (<usize>p << 5);
        const lp = lj + (<usize>p << 3);
        const l0 = v128.load64_splat(lp);
        s0a = f64x2.add(s0a, f64x2.mul(v128.load(xp), l0));
        s0b = f64x2.add(s0b, f64x2.mul(v128.load(xp, 16), l0));
        const l1 = v128.load64_splat(lp, 8);
        s1a = f64x2.add(s1a, f64x2.mul(v128.load(xp, 32), l1));
        s1b = f64x2.add(s1b, f64x2.mul(v128.load(xp, 48), l1));
        const l2 = v128.load64_splat(lp, 16);
        s2a = f64x2.add(s2a, f64x2.mul(v128.load(xp, 64), l2));
        s2b = f64x2.add(s2b, f64x2.mul(v128.load(xp, 80), l2));
        const l3 = v128.load64_splat(lp, 24);
        s3a = f64x2.add(s3a, f64x2.mul(v128.load(xp, 96), l3));
        s3b = f64x2.add(s3b, f64x2.mul(v128.load(xp, 112), l3));
      }
      for (; p < j; p++) {
        const xp = xt + (<usize>p << 5);
        const l0 = v128.load64_splat(lj + (<usize>p << 3));
        s0a = f64x2.add(s0a, f64x2.mul(v128.load(xp), l0));
        s0b = f64x2.add(s0b, f64x2.mul(v128.load(xp, 16), l0));
      }
      const sa = f64x2.add(f64x2.add(f64x2.add(s0a, s1a), s2a), s3a);
      const sb = f64x2.add(f64x2.add(f64x2.add(s0b, s1b), s2b), s3b);
      const off = <usize>j << 3;
      const va = v128.load64_lane(a1 + off, v128.load64_zero(a0 + off), 1);
      const vb = v128.load64_lane(a3 + off, v128.load64_zero(a2 + off), 1);
      const d = v128.load64_splat(lj + off);
      const xa = f64x2.div(f64x2.sub(va, sa), d);
      const xb = f64x2.div(f64x2.sub(vb, sb), d);
      const xj = xt + (<usize>j << 5);
      v128.store(xj, xa);
      v128.store(xj, xb, 16);
      v128.store64_lane(a0 + off, xa, 0);
      v128.store64_lane(a1 + off, xa, 1);
      v128.store64_lane(a2 + off, xb, 0);
      v128.store64_lane(a3 + off, xb, 1);
    }
  }
}

/**
 * The trailing update of the blocked Cholesky: c[i][j] −= Σ_p X[i][p]·X[j][p] for j ≤ i < rows, X the panel in
 * tiles (kb columns), C from row and column r0 of the matrix (row stride ldc doubles). Each sum starts at zero and
 * runs over p = 0…kb−1 in order, then is subtracted, as subtractPanelProduct in cholesky.ts does. Works in 4 × 4
 * tiles (16 running sums in eight registers, the four numbers of X[i] loaded as splats); a tile on the diagonal
 * writes only its lower triangle. `rows` is a multiple of four; past the matrix's last row the tiles write only
 * into the padding rows below it.
 */
export function trailingUpdate(c: usize, ldc: i32, x: usize, rows: i32, kb: i32): void {
  const cs = <usize>ldc << 3;
  const tileBytes = <usize>kb << 5;
  const tiles = rows >> 2;
  for (let ti = 0; ti < tiles; ti++) {
    const xiBase = x + <usize>ti * tileBytes;
    const ri = c + ((<usize>(ti << 2) * <usize>ldc) << 3);
    for (let tj = 0; tj <= ti; tj++) {
      let s00 = f64x2.splat(0);
      let s01 = f64x2.splat(0);
      let s10 = f64x2.splat(0);
      let s11 = f64x2.splat(0);
      let s20 = f64x2.splat(0);
      let s21 = f64x2.splat(0);
      let s30 = f64x2.splat(0);
      let s31 = f64x2.splat(0);
      let xi = xiBase;
      let xj = x + <usize>tj * tileBytes;
      const end = xi + tileBytes;
      while (xi < end) {
        const y0 = v128.load(xj);
        const y1 = v128.load(xj, 16);
        const x0 = v128.load64_splat(xi);
        s00 = f64x2.add(s00, f64x2.mul(x0, y0));
        s01 = f64x2.add(s01, f64x2.mul(x0, y1));
        const x1 = v128.load64_splat(xi, 8);
        s10 = f64x2.add(s10, f64x2.mul(x1, y0));
        s11 = f64x2.add(s11, f64x2.mul(x1, y1));
        const x2 = v128.load64_splat(xi, 16);
        s20 = f64x2.add(s20, f64x2.mul(x2, y0));
        s21 = f64x2.add(s21, f64x2.mul(x2, y1));
        const x3 = v128.load64_splat(xi, 24);
        s30 = f64x2.add(s30, f64x2.mul(x3, y0));
        s31 = f64x2.add(s31, f64x2.mul(x3, y1));
        xi += 32;
        xj += 32;
      }
      const r0 = ri + (<usize>(tj << 2) << 3);
      const r1 = r0 + cs;
      const r2 = r1 + cs;
      const r3 = r2 + cs;
      if (tj == ti) {
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

/**
 * Forward substitution L z = b for many right-hand sides at once, in groups of four interleaved: group g holds
 * b[k] of its four right-hand sides at bt + ((g·n + k)·4 + r)·8. For each: s = b[i]; s −= L[i][k]·b[k] for
 * k = 0…i−1 in order; b[i] = s / L[i][i] — the operations of forwardSubstitute in cholesky.ts, in its order.
 * L row-major n × n at `l`. Two rows i at a time share the loads of b[k].
 */
export function forwardRows(l: usize, n: i32, bt: usize, groups: i32): void {
  const rowBytes = <usize>n << 3;
  const groupBytes = <usize>n << 5;
  for (let g = 0; g < groups; g++) {
    const b = bt + <usize>g * groupBytes;
    let i = 0;
    for (; i + 1 < n; i += 2) {
      const li = l + <usize>i * rowBytes;
      const lk = li + rowBytes;
      const bi = b + (<usize>i << 5);
      let sa = v128.load(bi);
      let sb = v128.load(bi, 16);
      let ta = v128.load(bi, 32);
      let tb = v128.load(bi, 48);
      for (let k = 0; k < i; k++) {
        const bk = b + (<usize>k << 5);
        const y0 = v128.load(bk);
        const y1 = v128.load(bk, 16);
        const x = v128.load64_splat(li + (<usize>k << 3));
        const z = v128.load64_splat(lk + (<usize>k << 3));
        sa = f64x2.sub(sa, f64x2.mul(x, y0));
        sb = f64x2.sub(sb, f64x2.mul(x, y1));
        ta = f64x2.sub(ta, f64x2.mul(z, y0));
        tb = f64x2.sub(tb, f64x2.mul(z, y1));
      }
      const d = v128.load64_splat(li + (<usize>i << 3));
      sa = f64x2.div(sa, d);
      sb = f64x2.div(sb, d);
      v128.store(bi, sa);
      v128.store(bi, sb, 16);
      // row i + 1 still owes the term of k = i, now known
      const z = v128.load64_splat(lk + (<usize>i << 3));
      ta = f64x2.sub(ta, f64x2.mul(z, sa));
      tb = f64x2.sub(tb, f64x2.mul(z, sb));
      const e = v128.load64_splat(lk + (<usize>(i + 1) << 3));
      v128.store(bi, f64x2.div(ta, e), 32);
      v128.store(bi, f64x2.div(tb, e), 48);
    }
    if (i < n) {
      const li = l + <usize>i * rowBytes;
      const bi = b + (<usize>i << 5);
      let sa = v128.load(bi);
      let sb = v128.load(bi, 16);
      for (let k = 0; k < i; k++) {
        const bk = b + (<usize>k << 5);
        const x = v128.load64_splat(li + (<usize>k << 3));
        sa = f64x2.sub(sa, f64x2.mul(x, v128.load(bk)));
        sb = f64x2.sub(sb, f64x2.mul(x, v128.load(bk, 16)));
      }
      const d = v128.load64_splat(li + (<usize>i << 3));
      v128.store(bi, f64x2.div(sa, d));
      v128.store(bi, f64x2.div(sb, d), 16);
    }
  }
}
