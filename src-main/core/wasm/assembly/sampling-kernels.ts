// The sampling of training environments in AssemblyScript, compiled to WebAssembly with 128-bit SIMD: farthest-point
// sampling of representatives and each environment's distance to the nearest representative of another frame.
// Compiled by scripts/build-wasm.mjs into ../generated/sampling-kernels.ts; loaded through ../sampling-kernels.ts; used by
// core/learning/sampling.ts; core/learning/sparse.ts (farthestPointSample, nearestOtherDistances) keeps the
// JavaScript loops as fallback and oracle.
//
// Every distance kept is summed as sparse.ts squaredDistanceBelow sums it: four running sums over the features
// f mod 4 (lanes 0 and 1 of one register and of another), the tail into the first, combined as ((s0 + s1) + s2) + s3,
// so the choices and distances are sparse.ts's, bit for bit. What is new here only decides which rows need no sum:
// a lower bound from a few coordinates per row (below), with a margin far above its round-off.
//
// Coordinates: each row x has w numbers, a_0…a_{d2−1} = Qᵀ(x − μ) for an orthonormal basis Q (d rows, zeros up
// to d2, an even number), then lo ≤ ρ_x ≤ hi, ρ_x = |(I − QQᵀ)(x − μ)|. For any orthonormal Q (Pythagoras, then the
// triangle inequality)
//   |x − y|² = |Qᵀ(x − y)|² + |(I − QQᵀ)(x − y)|²  ≥  |a_x − a_y|² + (ρ_x − ρ_y)²,
// so a row whose bound passes a squared distance t by the margin (t·(1 + 1e-8) + 1e-10) is strictly farther than t:
// the bound and an exact sum each carry round-off of order n0·2⁻⁵³ ≈ 1e-13 (features of unit rows, n0 ≈ 1,000),
// and Q is orthonormal to about 1e-15 (two passes of Gram–Schmidt), orders of magnitude inside that margin (the
// margins of core/learning/nearest-search.ts, which bounds its search the same way). A NaN rules nothing out.

/** Where the caller's buffers may start: the first byte after this module's static data. */
export function heapBase(): usize {
  return __heap_base;
}

const MARGIN_RELATIVE: f64 = 1e-8;
const MARGIN_ABSOLUTE: f64 = 1e-10;

/**
 * The squared distance between the rows at `a` and `b` (n0 doubles each), or, as soon as the combined partial sums
 * reach `bound` (checked every 32 features, as squaredDistanceBelow in sparse.ts), a value ≥ `bound`.
 */
@inline
function squaredBelow(a: usize, b: usize, n0: i32, bound: f64): f64 {
  let s01 = f64x2.splat(0);
  let s23 = f64x2.splat(0);
  let f = 0;
  while (f + 3 < n0) {
    const stop = min(n0 - 3, f + 32);
    for (; f < stop; f += 4) {
      const o = <usize>f << 3;
      const d01 = f64x2.sub(v128.load(a + o), v128.load(b + o));
      const d23 = f64x2.sub(v128.load(a + o, 16), v128.load(b + o, 16));
      s01 = f64x2.add(s01, f64x2.mul(d01, d01));
      s23 = f64x2.add(s23, f64x2.mul(d23, d23));
    }
    const s = f64x2.extract_lane(s01, 0) + f64x2.extract_lane(s01, 1) + f64x2.extract_lane(s23, 0) + f64x2.extract_lane(s23, 1);
    if (s >= bound) return s;
  }
  let s0 = f64x2.extract_lane(s01, 0);
  for (; f < n0; f++) {
    const o = <usize>f << 3;
    const d = f64.load(a + o) - f64.load(b + o);
    s0 += d * d;
  }
  return s0 + f64x2.extract_lane(s01, 1) + f64x2.extract_lane(s23, 0) + f64x2.extract_lane(s23, 1);
}

/** The lower bound of |x − y|² from the coordinates of x and y (at `a` and `b`, d2 of them, then lo and hi). */
@inline
function lowerBound(a: usize, b: usize, d2: i32): f64 {
  let s = f64x2.splat(0);
  for (let j = 0; j < d2; j += 2) {
    const o = <usize>j << 3;
    const g = f64x2.sub(v128.load(a + o), v128.load(b + o));
    s = f64x2.add(s, f64x2.mul(g, g));
  }
  const e = <usize>d2 << 3;
  const loA = f64.load(a + e);
  const hiA = f64.load(a + e, 8);
  const loB = f64.load(b + e);
  const hiB = f64.load(b + e, 8);
  const gap = loA > hiB ? loA - hiB : loB > hiA ? loB - hiA : 0;
  return f64x2.extract_lane(s, 0) + f64x2.extract_lane(s, 1) + gap * gap;
}

/** Whether a bound rules out a row against the squared distance t (false for a NaN bound or t = +∞). */
@inline
function ruledOut(bound: f64, t: f64): bool {
  return bound > t + MARGIN_RELATIVE * t + MARGIN_ABSOLUTE;
}

/**
 * The coordinates of n rows (at `rows`, n0 doubles each) into `coords` (w = d2 + 2 numbers per row): a_j = Qᵀ(x − μ)
 * for the d basis rows at `basis` (n0 doubles each) and mean μ at `mean`, zeros up to d2, then lo and hi of ρ from
 * ρ² = |x − μ|² − |a|², widened by `allowance`·|x − μ|² for the cancellation in that difference. `scratch` holds n0
 * doubles (the centred row). These numbers only feed the bound: their summation order is free.
 */
export function project(rows: usize, n: i32, n0: i32, mean: usize, basis: usize, d: i32, d2: i32, coords: usize, allowance: f64, scratch: usize): void {
  const rowBytes = <usize>n0 << 3;
  const w = d2 + 2;
  const pairs = n0 >> 1;
  for (let c = 0; c < n; c++) {
    const x = rows + <usize>c * rowBytes;
    let sx = f64x2.splat(0);
    for (let p = 0; p < pairs; p++) {
      const o = <usize>p << 4;
      const v = f64x2.sub(v128.load(x + o), v128.load(mean + o));
      v128.store(scratch + o, v);
      sx = f64x2.add(sx, f64x2.mul(v, v));
    }
    let xx = f64x2.extract_lane(sx, 0) + f64x2.extract_lane(sx, 1);
    if ((n0 & 1) != 0) {
      const o = <usize>(n0 - 1) << 3;
      const v = f64.load(x + o) - f64.load(mean + o);
      f64.store(scratch + o, v);
      xx += v * v;
    }
    const out = coords + ((<usize>c * <usize>w) << 3);
    let aa: f64 = 0;
    // four basis rows per pass over the centred row (four independent sums), then one at a time
    let j = 0;
    for (; j + 3 < d; j += 4) {
      const q0 = basis + <usize>j * rowBytes;
      const q1 = q0 + rowBytes;
      const q2 = q1 + rowBytes;
      const q3 = q2 + rowBytes;
      let s0 = f64x2.splat(0);
      let s1 = f64x2.splat(0);
      let s2 = f64x2.splat(0);
      let s3 = f64x2.splat(0);
      for (let p = 0; p < pairs; p++) {
        const o = <usize>p << 4;
        const v = v128.load(scratch + o);
        s0 = f64x2.add(s0, f64x2.mul(v, v128.load(q0 + o)));
        s1 = f64x2.add(s1, f64x2.mul(v, v128.load(q1 + o)));
        s2 = f64x2.add(s2, f64x2.mul(v, v128.load(q2 + o)));
        s3 = f64x2.add(s3, f64x2.mul(v, v128.load(q3 + o)));
      }
      let a0 = f64x2.extract_lane(s0, 0) + f64x2.extract_lane(s0, 1);
      let a1 = f64x2.extract_lane(s1, 0) + f64x2.extract_lane(s1, 1);
      let a2 = f64x2.extract_lane(s2, 0) + f64x2.extract_lane(s2, 1);
      let a3 = f64x2.extract_lane(s3, 0) + f64x2.extract_lane(s3, 1);
      if ((n0 & 1) != 0) {
        const o = <usize>(n0 - 1) << 3;
        const v = f64.load(scratch + o);
        a0 += v * f64.load(q0 + o);
        a1 += v * f64.load(q1 + o);
        a2 += v * f64.load(q2 + o);
        a3 += v * f64.load(q3 + o);
      }
      const at = out + (<usize>j << 3);
      f64.store(at, a0);
      f64.store(at, a1, 8);
      f64.store(at, a2, 16);
      f64.store(at, a3, 24);
      aa += a0 * a0 + a1 * a1 + a2 * a2 + a3 * a3;
    }
    for (; j < d; j++) {
      const q = basis + <usize>j * rowBytes;
      let s = f64x2.splat(0);
      for (let p = 0; p < pairs; p++) {
        const o = <usize>p << 4;
        s = f64x2.add(s, f64x2.mul(v128.load(scratch + o), v128.load(q + o)));
      }
      let a = f64x2.extract_lane(s, 0) + f64x2.extract_lane(s, 1);
      if ((n0 & 1) != 0) {
        const o = <usize>(n0 - 1) << 3;
        a += f64.load(scratch + o) * f64.load(q + o);
      }
      f64.store(out + (<usize>j << 3), a);
      aa += a * a;
    }
    for (let j = d; j < d2; j++) f64.store(out + (<usize>j << 3), 0);
    const t0 = xx - aa;
    const widen = allowance * xx;
    f64.store(out + (<usize>d2 << 3), Math.sqrt(max(0, t0 - widen)));
    f64.store(out + (<usize>d2 << 3), Math.sqrt(max(0, t0 + widen)), 8);
  }
}

/**
 * Steps from … to − 1 of the farthest-point sampling of the n rows at `rows` (n0 doubles each, row c at
 * rows + c·n0·8), the row chosen at step `from` being `first`: farthestPointSample of sparse.ts, step for step. The
 * caller runs the steps in several calls, so that the engine optimises this function after its first ones. `coords`
 * holds each row's coordinates (w = d2 + 2 numbers, see the top of this file). The caller fills dist and dist2 (n
 * doubles each) with +∞, nearest (n 32-bit integers) with −1 and stamp (one integer per step) with −1; toNew holds
 * one double per step. After the last step chosen (one integer per step) holds the rows chosen, in order, dist each
 * row's distance to the chosen set, nearest the chosen row nearest it (an index into chosen). The result is the row
 * to choose at step `to`, or −(count + 1) when every remaining row duplicates a chosen one after count choices. A
 * row that neither the triangle inequality (as in sparse.ts) nor the bound rules out gets its squared distance to
 * the new row, left early once it reaches the row's squared distance so far.
 */
export function farthestPoints(rows: usize, coords: usize, n: i32, n0: i32, d2: i32, from: i32, to: i32, first: i32, dist: usize, dist2: usize, nearest: usize, toNew: usize, stamp: usize, chosen: usize): i32 {
  const rowBytes = <usize>n0 << 3;
  const coordBytes = <usize>(d2 + 2) << 3;
  const SAFE: f64 = 1 + 1e-9;
  let next = first;
  for (let k = from; k < to; k++) {
    const q = rows + <usize>next * rowBytes;
    const qc = coords + <usize>next * coordBytes;
    store<i32>(chosen + (<usize>k << 2), next);
    store<f64>(dist + (<usize>next << 3), 0);
    store<f64>(dist2 + (<usize>next << 3), 0);
    store<i32>(nearest + (<usize>next << 2), k);
    let best: f64 = -1;
    let bestAt = 0;
    for (let c = 0; c < n; c++) {
      const dAt = dist + (<usize>c << 3);
      let dc = load<f64>(dAt);
      if (dc > 0) {
        const near = load<i32>(nearest + (<usize>c << 2));
        let far = true;
        if (near >= 0) {
          const sAt = stamp + (<usize>near << 2);
          const tAt = toNew + (<usize>near << 3);
          if (load<i32>(sAt) != k) {
            const from = rows + <usize>load<i32>(chosen + (<usize>near << 2)) * rowBytes;
            store<f64>(tAt, Math.sqrt(squaredBelow(from, q, n0, Infinity)));
            store<i32>(sAt, k);
          }
          // d(c, q) ≥ d(near, q) − d(c, near) ≥ d(c, near) when d(near, q) ≥ 2 d(c, near)
          far = load<f64>(tAt) < 2 * dc * SAFE;
        }
        const d2At = dist2 + (<usize>c << 3);
        const bound = load<f64>(d2At);
        if (far && !ruledOut(lowerBound(coords + <usize>c * coordBytes, qc, d2), bound)) {
          const s = squaredBelow(rows + <usize>c * rowBytes, q, n0, bound);
          if (s < bound) {
            const d = Math.sqrt(s);
            if (d < dc) {
              store<f64>(dAt, d);
              store<f64>(d2At, s);
              store<i32>(nearest + (<usize>c << 2), k);
              dc = d;
            }
          }
        }
      }
      if (dc > best) {
        best = dc;
        bestAt = c;
      }
    }
    next = bestAt;
    if (best <= 0) return -(k + 2);
  }
  return next;
}

/**
 * For each of the rows from … to − 1 of those at `rows` (n0 doubles each, with their coordinates at `coords`,
 * w = d2 + 2 numbers each), the distance to the nearest of the R representatives `reps` (row numbers, 32-bit) of its
 * own species (`species`, one integer per row), other than its own entry `own[i]` (an index into reps, or −1) and,
 * when `frame` is not 0, from another frame (`frame`, one integer per row); +∞ when there is none.
 * nearestOtherDistances of sparse.ts: the smallest of the same squared sums, so the same numbers. The representative
 * of the smallest bound is summed first, then every other one its bound does not rule out against the smallest sum
 * so far (left early once it reaches it). `bounds` holds R doubles.
 */
export function nearestOthers(rows: usize, coords: usize, d2: i32, n0: i32, from: i32, to: i32, species: usize, frame: usize, own: usize, reps: usize, r: i32, bounds: usize, out: usize): void {
  const rowBytes = <usize>n0 << 3;
  const coordBytes = <usize>(d2 + 2) << 3;
  for (let i = from; i < to; i++) {
    const si = load<i32>(species + (<usize>i << 2));
    const fi = frame != 0 ? load<i32>(frame + (<usize>i << 2)) : 0;
    const self = load<i32>(own + (<usize>i << 2));
    const x = rows + <usize>i * rowBytes;
    const xc = coords + <usize>i * coordBytes;
    let first = -1;
    let smallest: f64 = Infinity;
    for (let t = 0; t < r; t++) {
      const k = load<i32>(reps + (<usize>t << 2));
      const bAt = bounds + (<usize>t << 3);
      if (t == self || load<i32>(species + (<usize>k << 2)) != si || (frame != 0 && load<i32>(frame + (<usize>k << 2)) == fi)) {
        store<f64>(bAt, NaN);
        continue;
      }
      const b = lowerBound(xc, coords + <usize>k * coordBytes, d2);
      // a NaN bound rules nothing out: kept as −∞, so that it is summed
      store<f64>(bAt, b == b ? b : -Infinity);
      if (first < 0 || b < smallest) {
        smallest = b;
        first = t;
      }
    }
    let best2: f64 = Infinity;
    if (first >= 0) {
      const s = squaredBelow(x, rows + <usize>load<i32>(reps + (<usize>first << 2)) * rowBytes, n0, Infinity);
      if (s < best2) best2 = s;
    }
    for (let t = 0; t < r; t++) {
      if (t == first) continue;
      const b = load<f64>(bounds + (<usize>t << 3));
      // NaN: not eligible
      if (b != b || ruledOut(b, best2)) continue;
      const s = squaredBelow(x, rows + <usize>load<i32>(reps + (<usize>t << 2)) * rowBytes, n0, best2);
      if (s < best2) best2 = s;
    }
    f64.store(out + (<usize>i << 3), Math.sqrt(best2));
  }
}
