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
 * Forward substitution L z = b for many right-hand sides at once, in groups of eight interleaved: group g holds
 * b[k] of its eight right-hand sides at bt + ((g·n + k)·8 + r)·8. For each: s = b[i]; s −= L[i][k]·b[k] for
 * k = 0…i−1 in order; b[i] = s / L[i][i] — the operations of forwardSubstitute in cholesky.ts, in its order.
 * L row-major n × n at `l`. Two rows i at a time share the loads of b[k] (eight independent running sums of two
 * lanes each keep the adder busy).
 */
export function forwardRows(l: usize, n: i32, bt: usize, groups: i32): void {
  const rowBytes = <usize>n << 3;
  const groupBytes = <usize>n << 6;
  for (let g = 0; g < groups; g++) {
    const b = bt + <usize>g * groupBytes;
    let i = 0;
    for (; i + 1 < n; i += 2) {
      const li = l + <usize>i * rowBytes;
      const lk = li + rowBytes;
      const bi = b + (<usize>i << 6);
      let s0 = v128.load(bi);
      let s1 = v128.load(bi, 16);
      let s2 = v128.load(bi, 32);
      let s3 = v128.load(bi, 48);
      let t0 = v128.load(bi, 64);
      let t1 = v128.load(bi, 80);
      let t2 = v128.load(bi, 96);
      let t3 = v128.load(bi, 112);
      for (let k = 0; k < i; k++) {
        const bk = b + (<usize>k << 6);
        const x = v128.load64_splat(li + (<usize>k << 3));
        const z = v128.load64_splat(lk + (<usize>k << 3));
        const y0 = v128.load(bk);
        s0 = f64x2.sub(s0, f64x2.mul(x, y0));
        t0 = f64x2.sub(t0, f64x2.mul(z, y0));
        const y1 = v128.load(bk, 16);
        s1 = f64x2.sub(s1, f64x2.mul(x, y1));
        t1 = f64x2.sub(t1, f64x2.mul(z, y1));
        const y2 = v128.load(bk, 32);
        s2 = f64x2.sub(s2, f64x2.mul(x, y2));
        t2 = f64x2.sub(t2, f64x2.mul(z, y2));
        const y3 = v128.load(bk, 48);
        s3 = f64x2.sub(s3, f64x2.mul(x, y3));
        t3 = f64x2.sub(t3, f64x2.mul(z, y3));
      }
      const d = v128.load64_splat(li + (<usize>i << 3));
      s0 = f64x2.div(s0, d);
      s1 = f64x2.div(s1, d);
      s2 = f64x2.div(s2, d);
      s3 = f64x2.div(s3, d);
      v128.store(bi, s0);
      v128.store(bi, s1, 16);
      v128.store(bi, s2, 32);
      v128.store(bi, s3, 48);
      // row i + 1 still owes the term of k = i, now known
      const z = v128.load64_splat(lk + (<usize>i << 3));
      const e = v128.load64_splat(lk + (<usize>(i + 1) << 3));
      v128.store(bi, f64x2.div(f64x2.sub(t0, f64x2.mul(z, s0)), e), 64);
      v128.store(bi, f64x2.div(f64x2.sub(t1, f64x2.mul(z, s1)), e), 80);
      v128.store(bi, f64x2.div(f64x2.sub(t2, f64x2.mul(z, s2)), e), 96);
      v128.store(bi, f64x2.div(f64x2.sub(t3, f64x2.mul(z, s3)), e), 112);
    }
    if (i < n) {
      const li = l + <usize>i * rowBytes;
      const bi = b + (<usize>i << 6);
      let s0 = v128.load(bi);
      let s1 = v128.load(bi, 16);
      let s2 = v128.load(bi, 32);
      let s3 = v128.load(bi, 48);
      for (let k = 0; k < i; k++) {
        const bk = b + (<usize>k << 6);
        const x = v128.load64_splat(li + (<usize>k << 3));
        s0 = f64x2.sub(s0, f64x2.mul(x, v128.load(bk)));
        s1 = f64x2.sub(s1, f64x2.mul(x, v128.load(bk, 16)));
        s2 = f64x2.sub(s2, f64x2.mul(x, v128.load(bk, 32)));
        s3 = f64x2.sub(s3, f64x2.mul(x, v128.load(bk, 48)));
      }
      const d = v128.load64_splat(li + (<usize>i << 3));
      v128.store(bi, f64x2.div(s0, d));
      v128.store(bi, f64x2.div(s1, d), 16);
      v128.store(bi, f64x2.div(s2, d), 32);
      v128.store(bi, f64x2.div(s3, d), 48);
    }
  }
}

/**
 * One entry of K = Φ Φᵀ from a running pair (lane 0 the sum over even columns, lane 1 over odd ones) and the rows'
 * last column when f is odd, added to the even sum: s0 + s1, as gramOfRows in cholesky.ts forms it.
 */
@inline
function finishEntry(acc: v128, tail: bool, xi: usize, xj: usize): f64 {
  let s0 = f64x2.extract_lane(acc, 0);
  if (tail) s0 += f64.load(xi) * f64.load(xj);
  return s0 + f64x2.extract_lane(acc, 1);
}

/**
 * K = Φ Φᵀ (rows × rows, both triangles) of a row-major rows × f matrix at `phi`, into `k`. Each entry sums its even
 * and its odd columns apart (the two lanes of one register: the pair of columns c, c + 1 is one load per row), the
 * last column of an odd f going to the even sum, and adds the two — gramOfRows in cholesky.ts, the same bits.
 * Entries in tiles of two rows i by four rows j below them (eight registers of running pairs); the entries beside
 * the diagonal one by one.
 */
export function gramRows(phi: usize, rows: i32, f: i32, k: usize): void {
  const rowBytes = <usize>f << 3;
  const kRow = <usize>rows << 3;
  const pairs = f >> 1;
  const tail = (f & 1) != 0;
  const tailOff = <usize>(pairs << 1) << 3;
  for (let i = 0; i < rows; i += 2) {
    const two = i + 1 < rows;
    const a0 = phi + <usize>i * rowBytes;
    const a1 = two ? a0 + rowBytes : a0;
    let j = 0;
    for (; j + 3 < i; j += 4) {
      const b0 = phi + <usize>j * rowBytes;
      const b1 = b0 + rowBytes;
      const b2 = b1 + rowBytes;
      const b3 = b2 + rowBytes;
      let p0 = f64x2.splat(0);
      let p1 = f64x2.splat(0);
      let p2 = f64x2.splat(0);
      let p3 = f64x2.splat(0);
      let q0 = f64x2.splat(0);
      let q1 = f64x2.splat(0);
      let q2 = f64x2.splat(0);
      let q3 = f64x2.splat(0);
      for (let c = 0; c < pairs; c++) {
        const o = <usize>c << 4;
        const x = v128.load(a0 + o);
        const u = v128.load(a1 + o);
        const y0 = v128.load(b0 + o);
        p0 = f64x2.add(p0, f64x2.mul(x, y0));
        q0 = f64x2.add(q0, f64x2.mul(u, y0));
        const y1 = v128.load(b1 + o);
        p1 = f64x2.add(p1, f64x2.mul(x, y1));
        q1 = f64x2.add(q1, f64x2.mul(u, y1));
        const y2 = v128.load(b2 + o);
        p2 = f64x2.add(p2, f64x2.mul(x, y2));
        q2 = f64x2.add(q2, f64x2.mul(u, y2));
        const y3 = v128.load(b3 + o);
        p3 = f64x2.add(p3, f64x2.mul(x, y3));
        q3 = f64x2.add(q3, f64x2.mul(u, y3));
      }
      const ki = k + <usize>i * kRow + (<usize>j << 3);
      const kj = k + <usize>j * kRow + (<usize>i << 3);
      const v0 = finishEntry(p0, tail, a0 + tailOff, b0 + tailOff);
      const v1 = finishEntry(p1, tail, a0 + tailOff, b1 + tailOff);
      const v2 = finishEntry(p2, tail, a0 + tailOff, b2 + tailOff);
      const v3 = finishEntry(p3, tail, a0 + tailOff, b3 + tailOff);
      f64.store(ki, v0);
      f64.store(ki, v1, 8);
      f64.store(ki, v2, 16);
      f64.store(ki, v3, 24);
      f64.store(kj, v0);
      f64.store(kj + kRow, v1);
      f64.store(kj + 2 * kRow, v2);
      f64.store(kj + 3 * kRow, v3);
      if (two) {
        const w0 = finishEntry(q0, tail, a1 + tailOff, b0 + tailOff);
        const w1 = finishEntry(q1, tail, a1 + tailOff, b1 + tailOff);
        const w2 = finishEntry(q2, tail, a1 + tailOff, b2 + tailOff);
        const w3 = finishEntry(q3, tail, a1 + tailOff, b3 + tailOff);
        f64.store(ki + kRow, w0);
        f64.store(ki + kRow, w1, 8);
        f64.store(ki + kRow, w2, 16);
        f64.store(ki + kRow, w3, 24);
        f64.store(kj, w0, 8);
        f64.store(kj + kRow, w1, 8);
        f64.store(kj + 2 * kRow, w2, 8);
        f64.store(kj + 3 * kRow, w3, 8);
      }
    }
    // the entries from column j to the diagonal, one at a time (row i + 1 one further)
    const last = two ? i + 1 : i;
    for (let r = i; r <= last; r++) {
      const ar = phi + <usize>r * rowBytes;
      for (let jj = j; jj <= r; jj++) {
        const bj = phi + <usize>jj * rowBytes;
        let acc = f64x2.splat(0);
        for (let c = 0; c < pairs; c++) {
          const o = <usize>c << 4;
          acc = f64x2.add(acc, f64x2.mul(v128.load(ar + o), v128.load(bj + o)));
        }
        const v = finishEntry(acc, tail, ar + tailOff, bj + tailOff);
        f64.store(k + <usize>r * kRow + (<usize>jj << 3), v);
        f64.store(k + <usize>jj * kRow + (<usize>r << 3), v);
      }
    }
  }
}

/**
 * c[i][j] += Σ_r X[i][r]·X[j][r] for the tiles on and below the diagonal (rows in `tiles` groups of four, each
 * group r-major as the panel's tiles are), C row-major with row stride ldc. Each sum continues from the number in
 * C (loaded into the running sums, not added at the end), so calls over consecutive strips of r give the one sum
 * in r order: the Gram matrix of columns G = Φᵀ Φ with X = Φ's columns, as gramOfColumns in cholesky.ts sums it
 * (row after row of Φ). Diagonal tiles are written whole (their upper part holds the mirrored entries' values).
 */
export function gramColumnsAdd(c: usize, ldc: i32, x: usize, count: i32, tiles: i32): void {
  const cs = <usize>ldc << 3;
  const tileBytes = <usize>count << 5;
  for (let ti = 0; ti < tiles; ti++) {
    const xiBase = x + <usize>ti * tileBytes;
    const ri = c + ((<usize>(ti << 2) * <usize>ldc) << 3);
    for (let tj = 0; tj <= ti; tj++) {
      const r0 = ri + (<usize>(tj << 2) << 3);
      const r1 = r0 + cs;
      const r2 = r1 + cs;
      const r3 = r2 + cs;
      let s00 = v128.load(r0);
      let s01 = v128.load(r0, 16);
      let s10 = v128.load(r1);
      let s11 = v128.load(r1, 16);
      let s20 = v128.load(r2);
      let s21 = v128.load(r2, 16);
      let s30 = v128.load(r3);
      let s31 = v128.load(r3, 16);
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
      v128.store(r0, s00);
      v128.store(r0, s01, 16);
      v128.store(r1, s10);
      v128.store(r1, s11, 16);
      v128.store(r2, s20);
      v128.store(r2, s21, 16);
      v128.store(r3, s30);
      v128.store(r3, s31, 16);
    }
  }
}
