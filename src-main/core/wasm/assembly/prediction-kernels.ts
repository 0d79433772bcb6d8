// Prediction kernels in AssemblyScript, compiled to WebAssembly with 128-bit SIMD (two doubles per lane pair):
// the exact nearest-representative search of the applicability check with its one-off preparation
// (core/learning/nearest-search.ts), and a linear λ=0 part's contributions and row sums (core/learning/kernels.ts
// linearScalarPass); the λ > 0 read-out is in descriptors.ts, beside the expansion. Compiled by
// scripts/build-wasm.mjs into ../generated/prediction-kernels.ts; loaded through ../prediction-kernels.ts. Every number a caller
// keeps is summed in the same order as in its JavaScript twin (vectorised across independent outputs, never
// within one sum), so the results are the same bits; only the search's lower bounds and its screening sums
// (float32), which merely decide what to skip (with a margin above their round-off), are summed otherwise.

/** Where the caller's buffers may start: the first byte after this module's static data. */
export function heapBase(): usize {
  return __heap_base;
}

// ---------------------------------------------------------------------------------------------------------------
// Nearest-representative search

// Pruning margins, the allowance on ρ_x and the float32 screening's terms (the same constants as
// nearest-search.ts, which explains them).
const MARGIN_RELATIVE: f64 = 1e-8;
const MARGIN_ABSOLUTE: f64 = 1e-10;
const RHO_ALLOWANCE: f64 = 1e-10;
const NARROW_UNIT: f64 = 1.0 / 8388608.0; // 2^-23
const NARROW_TINY: f64 = 1.401298464324817e-45; // 2^-149
const NARROW_QUERY_NORM: f64 = 316912650057057350374175801344.0; // 2^98

/** Horizontal sum of a lane pair (for numbers whose summation order is free). */
// @ts-ignore: decorator
@inline function hsum(v: v128): f64 {
  return f64x2.extract_lane(v, 0) + f64x2.extract_lane(v, 1);
}

/** Σ_f x_f y_f in any order (bounds only). */
function dot(x: usize, y: usize, n0: i32): f64 {
  let s0 = f64x2.splat(0);
  let s1 = f64x2.splat(0);
  let f = 0;
  for (; f + 3 < n0; f += 4) {
    const o = <usize>f << 3;
    s0 = f64x2.add(s0, f64x2.mul(v128.load(x + o), v128.load(y + o)));
    s1 = f64x2.add(s1, f64x2.mul(v128.load(x + o, 16), v128.load(y + o, 16)));
  }
  let s = hsum(f64x2.add(s0, s1));
  for (; f < n0; f++) s += f64.load(x + (<usize>f << 3)) * f64.load(y + (<usize>f << 3));
  return s;
}

/**
 * q[g·d + j] = Σ_f basis[j][f] · xc[g][f] for the four centred queries xc (rows of n0) and the d basis vectors, two
 * basis vectors by four queries per pass over f (any summation order: bounds only).
 */
function project(basis: usize, d: i32, xc: usize, n0: i32, q: usize): void {
  const rowBytes = <usize>n0 << 3;
  const x0 = xc;
  const x1 = x0 + rowBytes;
  const x2 = x1 + rowBytes;
  const x3 = x2 + rowBytes;
  const dBytes = <usize>d << 3;
  let j = 0;
  for (; j + 1 < d; j += 2) {
    const u = basis + <usize>j * rowBytes;
    const v = u + rowBytes;
    let a0 = f64x2.splat(0), a1 = a0, a2 = a0, a3 = a0, b0 = a0, b1 = a0, b2 = a0, b3 = a0;
    let f = 0;
    for (; f + 1 < n0; f += 2) {
      const o = <usize>f << 3;
      const bu = v128.load(u + o);
      const bv = v128.load(v + o);
      const y0 = v128.load(x0 + o);
      const y1 = v128.load(x1 + o);
      const y2 = v128.load(x2 + o);
      const y3 = v128.load(x3 + o);
      a0 = f64x2.add(a0, f64x2.mul(bu, y0));
      a1 = f64x2.add(a1, f64x2.mul(bu, y1));
      a2 = f64x2.add(a2, f64x2.mul(bu, y2));
      a3 = f64x2.add(a3, f64x2.mul(bu, y3));
      b0 = f64x2.add(b0, f64x2.mul(bv, y0));
      b1 = f64x2.add(b1, f64x2.mul(bv, y1));
      b2 = f64x2.add(b2, f64x2.mul(bv, y2));
      b3 = f64x2.add(b3, f64x2.mul(bv, y3));
    }
    let s0 = hsum(a0), s1 = hsum(a1), s2 = hsum(a2), s3 = hsum(a3);
    let t0 = hsum(b0), t1 = hsum(b1), t2 = hsum(b2), t3 = hsum(b3);
    if (f < n0) {
      const o = <usize>f << 3;
      const bu = f64.load(u + o);
      const bv = f64.load(v + o);
      s0 += bu * f64.load(x0 + o);
      s1 += bu * f64.load(x1 + o);
      s2 += bu * f64.load(x2 + o);
      s3 += bu * f64.load(x3 + o);
      t0 += bv * f64.load(x0 + o);
      t1 += bv * f64.load(x1 + o);
      t2 += bv * f64.load(x2 + o);
      t3 += bv * f64.load(x3 + o);
    }
    const p = q + (<usize>j << 3);
    f64.store(p, s0);
    f64.store(p, t0, 8);
    f64.store(p + dBytes, s1);
    f64.store(p + dBytes, t1, 8);
    f64.store(p + 2 * dBytes, s2);
    f64.store(p + 2 * dBytes, t2, 8);
    f64.store(p + 3 * dBytes, s3);
    f64.store(p + 3 * dBytes, t3, 8);
  }
  if (j < d) {
    const u = basis + <usize>j * rowBytes;
    for (let g = 0; g < 4; g++) f64.store(q + <usize>g * dBytes + (<usize>j << 3), dot(u, xc + <usize>g * rowBytes, n0));
  }
}

/**
 * Squared distances from the query x to the representatives at r0 … r3 (rows of n0), each lane summing its own
 * (x_f − r_f)² over f in order, exactly as nearestDistance does, with its check every 16 features: stop once all
 * four partial sums reach `best` (a stopped sum is then ≥ best and cannot win). Writes the four sums to out and
 * returns the features summed.
 */
function sumFour(x: usize, r0: usize, r1: usize, r2: usize, r3: usize, n0: i32, best: f64, out: usize): i32 {
  let s01 = f64x2.splat(0);
  let s23 = f64x2.splat(0);
  const bv = f64x2.splat(best);
  let f = 0;
  while (f < n0) {
    if (!v128.any_true(v128.or(f64x2.lt(s01, bv), f64x2.lt(s23, bv)))) break;
    const end = min(n0, f + 16);
    for (; f + 1 < end; f += 2) {
      const o = <usize>f << 3;
      const xv = v128.load(x + o);
      const x0 = v128.shuffle<f64>(xv, xv, 0, 0);
      const x1 = v128.shuffle<f64>(xv, xv, 1, 1);
      const a = v128.load(r0 + o);
      const b = v128.load(r1 + o);
      const c = v128.load(r2 + o);
      const e = v128.load(r3 + o);
      const d01 = f64x2.sub(x0, v128.shuffle<f64>(a, b, 0, 2));
      const d23 = f64x2.sub(x0, v128.shuffle<f64>(c, e, 0, 2));
      s01 = f64x2.add(s01, f64x2.mul(d01, d01));
      s23 = f64x2.add(s23, f64x2.mul(d23, d23));
      const h01 = f64x2.sub(x1, v128.shuffle<f64>(a, b, 1, 3));
      const h23 = f64x2.sub(x1, v128.shuffle<f64>(c, e, 1, 3));
      s01 = f64x2.add(s01, f64x2.mul(h01, h01));
      s23 = f64x2.add(s23, f64x2.mul(h23, h23));
    }
    if (f < end) {
      const o = <usize>f << 3;
      const xs = f64x2.splat(f64.load(x + o));
      const d01 = f64x2.sub(xs, f64x2.replace_lane(f64x2.splat(f64.load(r0 + o)), 1, f64.load(r1 + o)));
      const d23 = f64x2.sub(xs, f64x2.replace_lane(f64x2.splat(f64.load(r2 + o)), 1, f64.load(r3 + o)));
      s01 = f64x2.add(s01, f64x2.mul(d01, d01));
      s23 = f64x2.add(s23, f64x2.mul(d23, d23));
      f++;
    }
  }
  v128.store(out, s01);
  v128.store(out, s23, 16);
  return f;
}

/** Feature differences summed by screen since searchSpecies last read them (for the statistics). */
let screenedFeatures: i32 = 0;

/**
 * Σ (x_f − r_f)² over f < n0 in any order (the float64 screening, in feature order, where the float32 one cannot
 * be used), checked after every 16 features: returns the sum so far as soon as it exceeds `limit` (the
 * representative is then ruled out), else the full sum. Eight lane pairs per block; the order of this sum decides
 * nothing a caller keeps (nearest-search.ts nearestOf explains the margin).
 */
function screen(x: usize, r: usize, n0: i32, limit: f64): f64 {
  let a0 = f64x2.splat(0);
  let a1 = a0;
  let a2 = a0;
  let a3 = a0;
  let f = 0;
  for (; f + 15 < n0; f += 16) {
    const xo = x + (<usize>f << 3);
    const ro = r + (<usize>f << 3);
    let d = f64x2.sub(v128.load(xo), v128.load(ro));
    a0 = f64x2.add(a0, f64x2.mul(d, d));
    d = f64x2.sub(v128.load(xo, 16), v128.load(ro, 16));
    a1 = f64x2.add(a1, f64x2.mul(d, d));
    d = f64x2.sub(v128.load(xo, 32), v128.load(ro, 32));
    a2 = f64x2.add(a2, f64x2.mul(d, d));
    d = f64x2.sub(v128.load(xo, 48), v128.load(ro, 48));
    a3 = f64x2.add(a3, f64x2.mul(d, d));
    d = f64x2.sub(v128.load(xo, 64), v128.load(ro, 64));
    a0 = f64x2.add(a0, f64x2.mul(d, d));
    d = f64x2.sub(v128.load(xo, 80), v128.load(ro, 80));
    a1 = f64x2.add(a1, f64x2.mul(d, d));
    d = f64x2.sub(v128.load(xo, 96), v128.load(ro, 96));
    a2 = f64x2.add(a2, f64x2.mul(d, d));
    d = f64x2.sub(v128.load(xo, 112), v128.load(ro, 112));
    a3 = f64x2.add(a3, f64x2.mul(d, d));
    const s = hsum(f64x2.add(f64x2.add(a0, a1), f64x2.add(a2, a3)));
    if (s > limit) {
      screenedFeatures += f + 16;
      return s;
    }
  }
  screenedFeatures += n0;
  let s = hsum(f64x2.add(f64x2.add(a0, a1), f64x2.add(a2, a3)));
  for (; f < n0; f++) {
    const d = f64.load(x + (<usize>f << 3)) - f64.load(r + (<usize>f << 3));
    s += d * d;
  }
  return s;
}

/**
 * Σ (x_f − r_f)² over f < n0 in float32 (x and r: float32 rows, here the centred query and representative in a
 * species' screening order), each of the sixteen lanes summing the features f ≡ lane (mod 16) in order; after
 * every 32 features, and after a last block of 16, the lanes are added ((a0 + a1) + (a2 + a3), then lane
 * (0 + 1) + (2 + 3)) and the sum so far returned as soon as it exceeds `limit`; else the full sum, the last
 * n0 mod 16 features added to it one by one. nearest-search.ts screenNarrow does the same float32 operations in
 * the same order (the same bits); the margin that makes these sums safe to rule out with is nearest-search.ts
 * limitNarrow.
 */
function screen32(x: usize, r: usize, n0: i32, limit: f64): f64 {
  let a0 = f32x4.splat(0);
  let a1 = a0;
  let a2 = a0;
  let a3 = a0;
  let f = 0;
  while (f + 15 < n0) {
    const xo = x + (<usize>f << 2);
    const ro = r + (<usize>f << 2);
    let d = f32x4.sub(v128.load(xo), v128.load(ro));
    a0 = f32x4.add(a0, f32x4.mul(d, d));
    d = f32x4.sub(v128.load(xo, 16), v128.load(ro, 16));
    a1 = f32x4.add(a1, f32x4.mul(d, d));
    d = f32x4.sub(v128.load(xo, 32), v128.load(ro, 32));
    a2 = f32x4.add(a2, f32x4.mul(d, d));
    d = f32x4.sub(v128.load(xo, 48), v128.load(ro, 48));
    a3 = f32x4.add(a3, f32x4.mul(d, d));
    if (f + 31 < n0) {
      // the second half of a block of 32
      d = f32x4.sub(v128.load(xo, 64), v128.load(ro, 64));
      a0 = f32x4.add(a0, f32x4.mul(d, d));
      d = f32x4.sub(v128.load(xo, 80), v128.load(ro, 80));
      a1 = f32x4.add(a1, f32x4.mul(d, d));
      d = f32x4.sub(v128.load(xo, 96), v128.load(ro, 96));
      a2 = f32x4.add(a2, f32x4.mul(d, d));
      d = f32x4.sub(v128.load(xo, 112), v128.load(ro, 112));
      a3 = f32x4.add(a3, f32x4.mul(d, d));
      f += 32;
    } else f += 16;
    const v = f32x4.add(f32x4.add(a0, a1), f32x4.add(a2, a3));
    const s: f32 = (f32x4.extract_lane(v, 0) + f32x4.extract_lane(v, 1)) + (f32x4.extract_lane(v, 2) + f32x4.extract_lane(v, 3));
    if (<f64>s > limit) {
      screenedFeatures += f;
      return <f64>s;
    }
  }
  screenedFeatures += n0;
  const v = f32x4.add(f32x4.add(a0, a1), f32x4.add(a2, a3));
  let s: f32 = (f32x4.extract_lane(v, 0) + f32x4.extract_lane(v, 1)) + (f32x4.extract_lane(v, 2) + f32x4.extract_lane(v, 3));
  for (; f < n0; f++) {
    const d: f32 = f32.load(x + (<usize>f << 2)) - f32.load(r + (<usize>f << 2));
    s += d * d;
  }
  return <f64>s;
}

/**
 * Full squared distances |x_g − r_g|² of four (query, representative) pairs, each lane summing its own
 * (x_f − r_f)² over f in order from zero, as nearestDistance sums a distance it does not leave early: the same
 * bits. Writes the four sums to out.
 */
function exactFour(x0: usize, r0: usize, x1: usize, r1: usize, x2: usize, r2: usize, x3: usize, r3: usize, n0: i32, out: usize): void {
  let s01 = f64x2.splat(0);
  let s23 = f64x2.splat(0);
  let f = 0;
  for (; f + 1 < n0; f += 2) {
    // each pair's two differences squared in place (the same operations per element), then regrouped by feature
    const o = <usize>f << 3;
    const e0 = f64x2.sub(v128.load(x0 + o), v128.load(r0 + o));
    const e1 = f64x2.sub(v128.load(x1 + o), v128.load(r1 + o));
    const e2 = f64x2.sub(v128.load(x2 + o), v128.load(r2 + o));
    const e3 = f64x2.sub(v128.load(x3 + o), v128.load(r3 + o));
    const q0 = f64x2.mul(e0, e0);
    const q1 = f64x2.mul(e1, e1);
    const q2 = f64x2.mul(e2, e2);
    const q3 = f64x2.mul(e3, e3);
    s01 = f64x2.add(s01, v128.shuffle<f64>(q0, q1, 0, 2));
    s23 = f64x2.add(s23, v128.shuffle<f64>(q2, q3, 0, 2));
    s01 = f64x2.add(s01, v128.shuffle<f64>(q0, q1, 1, 3));
    s23 = f64x2.add(s23, v128.shuffle<f64>(q2, q3, 1, 3));
  }
  if (f < n0) {
    const o = <usize>f << 3;
    const d01 = f64x2.sub(f64x2.replace_lane(f64x2.splat(f64.load(x0 + o)), 1, f64.load(x1 + o)), f64x2.replace_lane(f64x2.splat(f64.load(r0 + o)), 1, f64.load(r1 + o)));
    const d23 = f64x2.sub(f64x2.replace_lane(f64x2.splat(f64.load(x2 + o)), 1, f64.load(x3 + o)), f64x2.replace_lane(f64x2.splat(f64.load(r2 + o)), 1, f64.load(r3 + o)));
    s01 = f64x2.add(s01, f64x2.mul(d01, d01));
    s23 = f64x2.add(s23, f64x2.mul(d23, d23));
  }
  v128.store(out, s01);
  v128.store(out, s23, 16);
}

/**
 * bound[k] = (gap between ρ_x and ρ_k)² + |q − coordinates of k|² for every representative k < m: the lower bound
 * of nearest-search.ts nearestOf (any summation order), two representatives per lane pair; where ρ_x is unknown
 * (NaN) the bound is NaN and rules nothing out.
 */
function bounds(m: i32, d: i32, coordsT: usize, residual: usize, bound: usize, q: usize, xx: f64): void {
  let qq: f64 = 0;
  for (let j = 0; j < d; j++) {
    const v = f64.load(q + (<usize>j << 3));
    qq += v * v;
  }
  const t = xx - qq;
  const allowance = RHO_ALLOWANCE * xx;
  const lo = Math.sqrt(Math.max(0, t - allowance));
  const hi = Math.sqrt(Math.max(0, t + allowance));
  // bound = gap² + |q − coordinates|², two representatives per lane pair; where ρ_x is unknown (NaN) the bound
  // is NaN and rules nothing out
  const lov = f64x2.splat(lo);
  const hiv = f64x2.splat(hi);
  const zero = f64x2.splat(0);
  const rowM = <usize>m << 3;
  let k = 0;
  if (d == 8) {
    // the basis size prediction uses: the query's coordinates held in registers, four representatives per pass
    const q0 = f64x2.splat(f64.load(q)), q1 = f64x2.splat(f64.load(q, 8)), q2 = f64x2.splat(f64.load(q, 16)), q3 = f64x2.splat(f64.load(q, 24));
    const q4 = f64x2.splat(f64.load(q, 32)), q5 = f64x2.splat(f64.load(q, 40)), q6 = f64x2.splat(f64.load(q, 48)), q7 = f64x2.splat(f64.load(q, 56));
    for (; k + 3 < m; k += 4) {
      const o = <usize>k << 3;
      const ra = v128.load(residual + o);
      const rb = v128.load(residual + o, 16);
      const ga = f64x2.max(f64x2.max(f64x2.sub(ra, hiv), f64x2.sub(lov, ra)), zero);
      const gb = f64x2.max(f64x2.max(f64x2.sub(rb, hiv), f64x2.sub(lov, rb)), zero);
      const c = coordsT + o;
      let e0 = f64x2.sub(q0, v128.load(c));
      let e1 = f64x2.sub(q0, v128.load(c, 16));
      let a = f64x2.add(f64x2.mul(ga, ga), f64x2.mul(e0, e0));
      let b = f64x2.add(f64x2.mul(gb, gb), f64x2.mul(e1, e1));
      e0 = f64x2.sub(q1, v128.load(c + rowM));
      e1 = f64x2.sub(q1, v128.load(c + rowM, 16));
      let a2 = f64x2.mul(e0, e0);
      let b2 = f64x2.mul(e1, e1);
      e0 = f64x2.sub(q2, v128.load(c + 2 * rowM));
      e1 = f64x2.sub(q2, v128.load(c + 2 * rowM, 16));
      a = f64x2.add(a, f64x2.mul(e0, e0));
      b = f64x2.add(b, f64x2.mul(e1, e1));
      e0 = f64x2.sub(q3, v128.load(c + 3 * rowM));
      e1 = f64x2.sub(q3, v128.load(c + 3 * rowM, 16));
      a2 = f64x2.add(a2, f64x2.mul(e0, e0));
      b2 = f64x2.add(b2, f64x2.mul(e1, e1));
      e0 = f64x2.sub(q4, v128.load(c + 4 * rowM));
      e1 = f64x2.sub(q4, v128.load(c + 4 * rowM, 16));
      a = f64x2.add(a, f64x2.mul(e0, e0));
      b = f64x2.add(b, f64x2.mul(e1, e1));
      e0 = f64x2.sub(q5, v128.load(c + 5 * rowM));
      e1 = f64x2.sub(q5, v128.load(c + 5 * rowM, 16));
      a2 = f64x2.add(a2, f64x2.mul(e0, e0));
      b2 = f64x2.add(b2, f64x2.mul(e1, e1));
      e0 = f64x2.sub(q6, v128.load(c + 6 * rowM));
      e1 = f64x2.sub(q6, v128.load(c + 6 * rowM, 16));
      a = f64x2.add(a, f64x2.mul(e0, e0));
      b = f64x2.add(b, f64x2.mul(e1, e1));
      e0 = f64x2.sub(q7, v128.load(c + 7 * rowM));
      e1 = f64x2.sub(q7, v128.load(c + 7 * rowM, 16));
      a2 = f64x2.add(a2, f64x2.mul(e0, e0));
      b2 = f64x2.add(b2, f64x2.mul(e1, e1));
      v128.store(bound + o, f64x2.add(a, a2));
      v128.store(bound + o, f64x2.add(b, b2), 16);
    }
  }
  for (; k + 1 < m; k += 2) {
    const o = <usize>k << 3;
    const rk = v128.load(residual + o);
    const gap = f64x2.max(f64x2.max(f64x2.sub(rk, hiv), f64x2.sub(lov, rk)), zero);
    let b = f64x2.mul(gap, gap);
    let c = coordsT + o;
    for (let j = 0; j < d; j++) {
      const g = f64x2.sub(f64x2.splat(f64.load(q + (<usize>j << 3))), v128.load(c));
      b = f64x2.add(b, f64x2.mul(g, g));
      c += rowM;
    }
    v128.store(bound + o, b);
  }
  if (k < m) {
    const o = <usize>k << 3;
    const rk = f64.load(residual + o);
    const gap = Math.max(Math.max(rk - hi, lo - rk), 0);
    let b = gap * gap;
    for (let j = 0; j < d; j++) {
      const g = f64.load(q + (<usize>j << 3)) - f64.load(coordsT + <usize>j * rowM + o);
      b += g * g;
    }
    f64.store(bound + o, b);
  }
}

/** The index of the smallest bound[k], k < m (a NaN bound never counts; −1 when every bound is NaN). */
function smallestBound(bound: usize, m: i32): i32 {
  let best: f64 = Infinity;
  let at = -1;
  let k = 0;
  // pairs first: a pair is looked at one by one only when one of its bounds is below the smallest so far
  for (; k + 1 < m; k += 2) {
    if (!v128.any_true(f64x2.lt(v128.load(bound + (<usize>k << 3)), f64x2.splat(best)))) continue;
    const b0 = f64.load(bound + (<usize>k << 3));
    const b1 = f64.load(bound + (<usize>k << 3), 8);
    if (b0 < best) {
      best = b0;
      at = k;
    }
    if (b1 < best) {
      best = b1;
      at = k + 1;
    }
  }
  if (k < m && f64.load(bound + (<usize>k << 3)) < best) at = k;
  return at;
}

/** The float32 screening's limit for the float64 limit `limit` (nearest-search.ts limitNarrow, the same operations). */
// @ts-ignore: decorator
@inline function limitNarrow(limit: f64, e: f64, wide: f64, tiny: f64): f64 {
  const a = Math.sqrt(limit) + e;
  return wide * (a * a) + tiny;
}

/** An upper bound on the exact squared distance of a float32 screened sum s (nearest-search.ts upperNarrow, the same operations). */
// @ts-ignore: decorator
@inline function upperNarrow(s: f64, e: f64, narrow: f64, tiny: f64): f64 {
  const a = Math.sqrt((s + tiny) / narrow) + e;
  return a * a;
}

/**
 * The candidates of one query (nearest-search.ts nearestOf, the same rules): the bounds; the representative of the
 * smallest bound screened in full; every other representative its bound does not rule out screened against the
 * smallest distance t so far. With `xp` ≠ 0 the screening is in float32 (screen32: `xp` the centred query and
 * `ordered` the centred representatives, float32, in the screening order; `e` the rounding term of
 * nearest-search.ts NARROW_UNIT) and t is the upper bound upperNarrow of a screened sum; with `xp` = 0 in
 * float64 in feature order (screen: `x` the query, `reps` the representatives) and t is a screened sum. The
 * screened sums not beyond t's margin at the end are appended to `pending` as pairs (slot, representative).
 * `kept` holds (representative, screened sum) records of 16 bytes. Returns the new length of `pending`.
 */
function candidates(m: i32, d: i32, n0: i32, reps: usize, x: usize, ordered: usize, xp: usize, e: f64, coordsT: usize, residual: usize, bound: usize, q: usize, xx: f64, kept: usize, stats: usize, slot: i32, pending: usize, np: i32): i32 {
  bounds(m, d, coordsT, residual, bound, q, xx);
  const narrowRows = xp != 0;
  const rowBytes: usize = narrowRows ? <usize>n0 << 2 : <usize>n0 << 3;
  const rows = narrowRows ? ordered : reps;
  const from = narrowRows ? xp : x;
  const g = <f64>n0 * NARROW_UNIT / (1 - <f64>n0 * NARROW_UNIT);
  const wide = (1 + g) * ((1 + NARROW_UNIT) * (1 + NARROW_UNIT) * (1 + NARROW_UNIT));
  const narrow = (1 - g) * ((1 - NARROW_UNIT) * (1 - NARROW_UNIT) * (1 - NARROW_UNIT));
  const tiny = (1 + g) * <f64>n0 * NARROW_TINY;
  const first = smallestBound(bound, m);
  let t: f64 = Infinity;
  let nk = 0;
  let looked = 0;
  if (first >= 0) {
    looked++;
    const s = narrowRows ? screen32(from, rows + <usize>first * rowBytes, n0, Infinity) : screen(from, rows + <usize>first * rowBytes, n0, Infinity);
    t = narrowRows ? upperNarrow(s, e, narrow, tiny) : s;
    store<i32>(kept, first);
    f64.store(kept, s, 8);
    nk = 1;
  }
  let limit = t + MARGIN_RELATIVE * t + MARGIN_ABSOLUTE;
  let cut = narrowRows ? limitNarrow(limit, e, wide, tiny) : limit;
  // 64 representatives at a time: a bit for each whose bound is not beyond the limit (a NaN bound counts), taken
  // in ascending order and tested again against the limit of the moment (it only shrinks as t does, or was NaN
  // and ruled nothing out): the same decisions as a test one by one, with fewer unpredictable branches
  for (let k0 = 0; k0 < m; k0 += 64) {
    const n = min(64, m - k0);
    const l = f64x2.splat(limit);
    const b0 = bound + (<usize>k0 << 3);
    let bits: u64 = 0;
    let j = 0;
    for (; j + 1 < n; j += 2) bits |= <u64>i64x2.bitmask(v128.not(f64x2.gt(v128.load(b0 + (<usize>j << 3)), l))) << <u64>j;
    if (j < n && !(f64.load(b0 + (<usize>j << 3)) > limit)) bits |= (<u64>1) << <u64>j;
    while (bits != 0) {
      const k = k0 + <i32>ctz(bits);
      bits &= bits - 1;
      if (k == first || f64.load(bound + (<usize>k << 3)) > limit) continue;
      looked++;
      const s = narrowRows ? screen32(from, rows + <usize>k * rowBytes, n0, cut) : screen(from, rows + <usize>k * rowBytes, n0, cut);
      if (!(s > cut)) {
        const r = kept + (<usize>nk << 4);
        store<i32>(r, k);
        f64.store(r, s, 8);
        nk++;
        // the smallest distance (a NaN sum, from a representative with NaN features, is passed over)
        const u = narrowRows ? upperNarrow(s, e, narrow, tiny) : s;
        if (u < t || (t != t && u == u)) {
          t = u;
          limit = t + MARGIN_RELATIVE * t + MARGIN_ABSOLUTE;
          cut = narrowRows ? limitNarrow(limit, e, wide, tiny) : limit;
        }
      }
    }
  }
  f64.store(stats, f64.load(stats) + <f64>looked);
  // the candidates left: not beyond the final margin (a NaN sum stays; its exact distance never wins)
  for (let j = 0; j < nk; j++) {
    const r = kept + (<usize>j << 4);
    if (f64.load(r, 8) > cut) continue;
    const p = pending + (<usize>np << 3);
    store<i32>(p, slot);
    store<i32>(p, load<i32>(r), 4);
    np++;
  }
  return np;
}

/**
 * A query x centred in the screening order: v_i = x[order[i]] − meanOrdered[i] for i < n0 (float64), written as
 * float32 to xp (the query screen32 reads) and, for i < width, as float64 to xk (the features the basis is made
 * from); returns Σ v_i² (any summation order: it only feeds the bound and the float32 screening's margin). Four
 * features per pass.
 */
function centreOrdered(x: usize, order: usize, meanOrdered: usize, n0: i32, xp: usize, xk: usize, width: i32): f64 {
  let s0 = f64x2.splat(0);
  let s1 = s0;
  let i = 0;
  for (; i + 3 < n0; i += 4) {
    const o = v128.load(order + (<usize>i << 2));
    const a = f64x2.replace_lane(f64x2.splat(f64.load(x + (<usize>i32x4.extract_lane(o, 0) << 3))), 1, f64.load(x + (<usize>i32x4.extract_lane(o, 1) << 3)));
    const b = f64x2.replace_lane(f64x2.splat(f64.load(x + (<usize>i32x4.extract_lane(o, 2) << 3))), 1, f64.load(x + (<usize>i32x4.extract_lane(o, 3) << 3)));
    const m = meanOrdered + (<usize>i << 3);
    const u = f64x2.sub(a, v128.load(m));
    const v = f64x2.sub(b, v128.load(m, 16));
    s0 = f64x2.add(s0, f64x2.mul(u, u));
    s1 = f64x2.add(s1, f64x2.mul(v, v));
    v128.store(xp + (<usize>i << 2), v128.shuffle<i32>(f32x4.demote_f64x2_zero(u), f32x4.demote_f64x2_zero(v), 0, 1, 4, 5));
    const k = xk + (<usize>i << 3);
    if (i + 3 < width) {
      v128.store(k, u);
      v128.store(k, v, 16);
    } else if (i < width) {
      f64.store(k, f64x2.extract_lane(u, 0));
      if (i + 1 < width) f64.store(k, f64x2.extract_lane(u, 1), 8);
      if (i + 2 < width) f64.store(k, f64x2.extract_lane(v, 0), 16);
    }
  }
  let s = hsum(f64x2.add(s0, s1));
  for (; i < n0; i++) {
    const v = f64.load(x + (<usize>load<i32>(order + (<usize>i << 2)) << 3)) - f64.load(meanOrdered + (<usize>i << 3));
    s += v * v;
    f32.store(xp + (<usize>i << 2), <f32>v);
    if (i < width) f64.store(xk + (<usize>i << 3), v);
  }
  return s;
}

/** The byte address of query row idx[k] of `queries`. */
// @ts-ignore: decorator
@inline function queryRow(queries: usize, idx: usize, k: i32, rowBytes: usize): usize {
  return queries + <usize>load<i32>(idx + (<usize>k << 2)) * rowBytes;
}

/**
 * The exact nearest distances of queries of one species, as nearest-search.ts searchNearestAll computes them:
 * the same numbers bit for bit. `reps` holds the species' representatives (m rows of n0, contiguous); `sp` is
 * the species' record written by the wrapper (i32 words m, d, n0, 1 when its rows may be screened in float32 (else
 * 0), then byte addresses of its mean (n0, in the screening order), basis (d × width: on the first `width` features of the screening order),
 * coordinates (d × m), residual norms (m), screening order (n0 i32) and the centred representatives in float32
 * with their features in that order (m × n0 f32; none when the flag is 0), then at byte 40 the largest centred row
 * norm (f64) and at byte 48 the width (i32)); `scr` the scratch record (addresses of
 * bound (m), the four queries centred in the screening order in float32 (4 × n0 f32), coordinates (4 × d), squared
 * norms (4), a statistics triple added to (representatives screened, full distances in order, feature differences
 * summed), an unused slot, the kept records (16 bytes × m), the pending pairs (8 bytes × 4m) and their sums
 * (8 bytes × (4m + 3)), the basis's features of the four centred queries (4 × width)). For the query rows
 * idx[0…nq) of `queries` (rows of n0) writes out[k] for k < nq.
 */
export function searchSpecies(sp: usize, reps: usize, scr: usize, queries: usize, idx: usize, nq: i32, out: usize): void {
  const m = load<i32>(sp);
  const d = load<i32>(sp, 4);
  const n0 = load<i32>(sp, 8);
  const mean = <usize>load<u32>(sp, 16);
  const basis = <usize>load<u32>(sp, 20);
  const coordsT = <usize>load<u32>(sp, 24);
  const residual = <usize>load<u32>(sp, 28);
  const order = <usize>load<u32>(sp, 32);
  const ordered = <usize>load<u32>(sp, 36);
  const narrowRows = load<i32>(sp, 12);
  const largestRow = f64.load(sp, 40);
  const width = load<i32>(sp, 48);
  const xk = <usize>load<u32>(scr, 36);
  const bound = <usize>load<u32>(scr);
  const xc = <usize>load<u32>(scr, 4);
  const q = <usize>load<u32>(scr, 8);
  const xx = <usize>load<u32>(scr, 12);
  const stats = <usize>load<u32>(scr, 16);
  const kept = <usize>load<u32>(scr, 24);
  const pending = <usize>load<u32>(scr, 28);
  const pendingSums = <usize>load<u32>(scr, 32);
  const rowBytes = <usize>n0 << 3;
  for (let g0 = 0; g0 < nq; g0 += 4) {
    const count = min(4, nq - g0);
    // centred queries, their squared norms and coordinates (free summation order: they only feed the bound)
    // (the four queries centred in the screening order: float32 for the screening, the basis's features in float64)
    for (let g = 0; g < 4; g++) {
      const x = queryRow(queries, idx, g0 + (g < count ? g : 0), rowBytes);
      f64.store(xx + (<usize>g << 3), centreOrdered(x, order, mean, n0, xc + <usize>g * (rowBytes >> 1), xk + (<usize>(g * width) << 3), width));
    }
    project(basis, d, xk, width, q);
    // each query's candidates (pairs: group slot, representative), then their distances in order, four at a time
    let np = 0;
    for (let g = 0; g < count; g++) {
      const x = queryRow(queries, idx, g0 + g, rowBytes);
      const xxg = f64.load(xx + (<usize>g << 3));
      // float32 screening when the species' rows allow it and the centred query's features are finite and not huge
      const narrowQuery = narrowRows != 0 && xxg <= NARROW_QUERY_NORM;
      const xp = xc + <usize>g * (rowBytes >> 1);
      const e = NARROW_UNIT * (Math.sqrt(xxg) + largestRow) + 2 * Math.sqrt(<f64>n0) * NARROW_TINY;
      np = candidates(m, d, n0, reps, x, ordered, narrowQuery ? xp : 0, e, coordsT, residual, bound, q + (<usize>(g * d) << 3), xxg, kept, stats, g, pending, np);
    }
    for (let k = 0; k < np; k += 4) {
      // a short last quad repeats its first pair (computed again, changes nothing)
      const p0 = pending + (<usize>k << 3);
      const p1 = k + 1 < np ? p0 + 8 : p0;
      const p2 = k + 2 < np ? p0 + 16 : p0;
      const p3 = k + 3 < np ? p0 + 24 : p0;
      exactFour(
        queryRow(queries, idx, g0 + load<i32>(p0), rowBytes),
        reps + <usize>load<i32>(p0, 4) * rowBytes,
        queryRow(queries, idx, g0 + load<i32>(p1), rowBytes),
        reps + <usize>load<i32>(p1, 4) * rowBytes,
        queryRow(queries, idx, g0 + load<i32>(p2), rowBytes),
        reps + <usize>load<i32>(p2, 4) * rowBytes,
        queryRow(queries, idx, g0 + load<i32>(p3), rowBytes),
        reps + <usize>load<i32>(p3, 4) * rowBytes,
        n0,
        pendingSums + (<usize>k << 3),
      );
    }
    f64.store(stats, f64.load(stats, 8) + <f64>np, 8);
    f64.store(stats, f64.load(stats, 16) + <f64>screenedFeatures + <f64>np * <f64>n0, 16);
    screenedFeatures = 0;
    for (let g = 0; g < count; g++) {
      let best: f64 = Infinity;
      for (let k = 0; k < np; k++) {
        if (load<i32>(pending + (<usize>k << 3)) != g) continue;
        const s = f64.load(pendingSums + (<usize>k << 3));
        if (s < best) best = s;
      }
      f64.store(out + (<usize>(g0 + g) << 3), Math.sqrt(best));
    }
  }
}

// the sums of a group of four (fixed scratch: the module runs one search at a time)
const sums = memory.data(32);

/**
 * The plain scan (sparse.ts nearestDistance) of the query rows idx[0…nq) of `queries` (rows of n0) over the m
 * representatives at `reps` (rows of n0, contiguous): out[k] = the square root of the smallest full squared
 * distance, Infinity when m = 0. Four representatives per pass (eight per pass measured slower), each summed in
 * nearestDistance's order; a sum left early has passed the best so far and cannot be the minimum, so the result
 * is its number bit for bit.
 */
export function scanSpecies(reps: usize, m: i32, n0: i32, queries: usize, idx: usize, nq: i32, out: usize): void {
  const rowBytes = <usize>n0 << 3;
  for (let k = 0; k < nq; k++) {
    const x = queryRow(queries, idx, k, rowBytes);
    let best: f64 = Infinity;
    for (let r = 0; r < m; r += 4) {
      // a short last group repeats its first member (its sum is computed again and changes nothing)
      const r0 = reps + <usize>r * rowBytes;
      sumFour(x, r0, r + 1 < m ? r0 + rowBytes : r0, r + 2 < m ? r0 + 2 * rowBytes : r0, r + 3 < m ? r0 + 3 * rowBytes : r0, n0, best, sums);
      for (let g = 0; g < 4; g++) {
        const s = f64.load(sums + (<usize>g << 3));
        if (s < best) best = s;
      }
    }
    f64.store(out + (<usize>k << 3), Math.sqrt(best));
  }
}

// ---------------------------------------------------------------------------------------------------------------
// A linear λ=0 part over a frame's rows (core/learning/kernels.ts linearScalarPass)

/**
 * For the rows e < count of `rows` (n0 doubles each; species[e] an i32 per row): out[e] = Σ_f rows[e][f] ·
 * weights[species[e]][f], summed over f ascending from zero as localContributions sums it (two rows per lane pair),
 * and each row added, feature by feature and row after row, to sums[species[e]] (n0 doubles per species) as
 * linearDesignRows adds them: the same bits. `sums` is added to, so a frame may come in several calls.
 */
export function linearRows(rows: usize, count: i32, n0: i32, species: usize, weights: usize, out: usize, sums: usize): void {
  const rowBytes = <usize>n0 << 3;
  let e = 0;
  for (; e + 1 < count; e += 2) {
    const r0 = rows + <usize>e * rowBytes;
    const r1 = r0 + rowBytes;
    const s0 = <usize>load<i32>(species + (<usize>e << 2));
    const s1 = <usize>load<i32>(species + (<usize>e << 2), 4);
    const w0 = weights + s0 * rowBytes;
    const w1 = weights + s1 * rowBytes;
    const a0 = sums + s0 * rowBytes;
    const a1 = sums + s1 * rowBytes;
    let acc = f64x2.splat(0);
    let f = 0;
    for (; f + 1 < n0; f += 2) {
      const o = <usize>f << 3;
      const x0 = v128.load(r0 + o);
      const x1 = v128.load(r1 + o);
      const u0 = v128.load(w0 + o);
      const u1 = v128.load(w1 + o);
      acc = f64x2.add(acc, f64x2.mul(v128.shuffle<f64>(x0, x1, 0, 2), v128.shuffle<f64>(u0, u1, 0, 2)));
      acc = f64x2.add(acc, f64x2.mul(v128.shuffle<f64>(x0, x1, 1, 3), v128.shuffle<f64>(u0, u1, 1, 3)));
      // row e before row e + 1 (the same sums when both rows are of one species)
      v128.store(a0 + o, f64x2.add(v128.load(a0 + o), x0));
      v128.store(a1 + o, f64x2.add(v128.load(a1 + o), x1));
    }
    let c0 = f64x2.extract_lane(acc, 0);
    let c1 = f64x2.extract_lane(acc, 1);
    if (f < n0) {
      const o = <usize>f << 3;
      const x0 = f64.load(r0 + o);
      const x1 = f64.load(r1 + o);
      c0 += x0 * f64.load(w0 + o);
      c1 += x1 * f64.load(w1 + o);
      f64.store(a0 + o, f64.load(a0 + o) + x0);
      f64.store(a1 + o, f64.load(a1 + o) + x1);
    }
    f64.store(out + (<usize>e << 3), c0);
    f64.store(out + (<usize>e << 3), c1, 8);
  }
  if (e < count) {
    const r0 = rows + <usize>e * rowBytes;
    const s0 = <usize>load<i32>(species + (<usize>e << 2));
    const w0 = weights + s0 * rowBytes;
    const a0 = sums + s0 * rowBytes;
    let c0: f64 = 0;
    for (let f = 0; f < n0; f++) {
      const o = <usize>f << 3;
      const x0 = f64.load(r0 + o);
      c0 += x0 * f64.load(w0 + o);
      f64.store(a0 + o, f64.load(a0 + o) + x0);
    }
    f64.store(out + (<usize>e << 3), c0);
  }
}

// ---------------------------------------------------------------------------------------------------------------
// Preparing the search (nearest-search.ts prepareSpeciesJs, operation for operation: the same bits)

/** Gram–Schmidt stops when the largest remaining residual is below this fraction of the largest row norm. */
const RANK_TOLERANCE: f64 = 1e-9;
/** Below this many representatives a basis does not pay (nearest-search.ts MIN_ROWS_FOR_BASIS). */
const MIN_ROWS_FOR_BASIS: i32 = 8;

/**
 * Σ_f x_f y_f in the order of nearest-search.ts dotRows: four partial sums s0…s3 over f ≡ 0…3 (mod 4) — lanes
 * (s0, s1) and (s2, s3) — the tail added to s0, then ((s0 + s1) + s2) + s3.
 */
function dot4(x: usize, y: usize, n0: i32): f64 {
  let a = f64x2.splat(0);
  let b = f64x2.splat(0);
  let f = 0;
  for (; f + 3 < n0; f += 4) {
    const o = <usize>f << 3;
    a = f64x2.add(a, f64x2.mul(v128.load(x + o), v128.load(y + o)));
    b = f64x2.add(b, f64x2.mul(v128.load(x + o, 16), v128.load(y + o, 16)));
  }
  let s0 = f64x2.extract_lane(a, 0);
  for (; f < n0; f++) s0 += f64.load(x + (<usize>f << 3)) * f64.load(y + (<usize>f << 3));
  return s0 + f64x2.extract_lane(a, 1) + f64x2.extract_lane(b, 0) + f64x2.extract_lane(b, 1);
}

/** v_f −= c · u_f for f < n0. */
function subScaled(v: usize, c: f64, u: usize, n0: i32): void {
  const cv = f64x2.splat(c);
  let f = 0;
  for (; f + 1 < n0; f += 2) {
    const o = <usize>f << 3;
    v128.store(v + o, f64x2.sub(v128.load(v + o), f64x2.mul(cv, v128.load(u + o))));
  }
  if (f < n0) {
    const o = <usize>f << 3;
    f64.store(v + o, f64.load(v + o) - c * f64.load(u + o));
  }
}

/** v_f += c · u_f for f < n0. */
function addScaled(v: usize, c: f64, u: usize, n0: i32): void {
  const cv = f64x2.splat(c);
  let f = 0;
  for (; f + 1 < n0; f += 2) {
    const o = <usize>f << 3;
    v128.store(v + o, f64x2.add(v128.load(v + o), f64x2.mul(cv, v128.load(u + o))));
  }
  if (f < n0) {
    const o = <usize>f << 3;
    f64.store(v + o, f64.load(v + o) + c * f64.load(u + o));
  }
}

/** Row j of v (rows of n0) orthonormalised against rows 0…j−1 (nearest-search.ts orthonormaliseRow). */
function orthonormaliseRow(v: usize, j: i32, n0: i32): bool {
  const rowBytes = <usize>n0 << 3;
  const vj = v + <usize>j * rowBytes;
  const before = Math.sqrt(dot4(vj, vj, n0));
  for (let pass = 0; pass < 2; pass++) {
    for (let i = 0; i < j; i++) {
      const vi = v + <usize>i * rowBytes;
      subScaled(vj, dot4(vj, vi, n0), vi, n0);
    }
  }
  const nv = Math.sqrt(dot4(vj, vj, n0));
  if (!(nv > RANK_TOLERANCE * before) || !(nv > 0)) return false;
  const inv = f64x2.splat(nv);
  let f = 0;
  for (; f + 1 < n0; f += 2) {
    const o = <usize>f << 3;
    v128.store(vj + o, f64x2.div(v128.load(vj + o), inv));
  }
  if (f < n0) {
    const o = <usize>f << 3;
    f64.store(vj + o, f64.load(vj + o) / nv);
  }
  return true;
}

/**
 * The prepared search of one species (nearest-search.ts prepareSpeciesJs, the same bits): its m representatives
 * at `reps` (rows of n0, contiguous), at most `limit` basis vectors, `steps` subspace-iteration steps. `work` is
 * a record of byte addresses (i32 words) of mean (n0), centred rows (m × n0), left (m), components (m × limit),
 * basis (limit × n0), next (limit × n0), a row (n0), coordinates (limit × m, one basis direction per row of m) and
 * residual norms (m). Returns the basis size d; mean, the first d basis rows, d × m coordinates and the residual
 * norms are the results.
 */
export function prepareSpecies(reps: usize, m: i32, n0: i32, limit: i32, steps: i32, work: usize): i32 {
  const mean = <usize>load<u32>(work);
  const centred = <usize>load<u32>(work, 4);
  const left = <usize>load<u32>(work, 8);
  const coef = <usize>load<u32>(work, 12);
  const basis = <usize>load<u32>(work, 16);
  const next = <usize>load<u32>(work, 20);
  const r = <usize>load<u32>(work, 24);
  const coordsT = <usize>load<u32>(work, 28);
  const residual = <usize>load<u32>(work, 32);
  const rowBytes = <usize>n0 << 3;
  // mean of the rows (summed in row order), centred rows
  for (let f = 0; f < n0; f++) f64.store(mean + (<usize>f << 3), 0);
  for (let k = 0; k < m; k++) addScaled(mean, 1, reps + <usize>k * rowBytes, n0);
  const mv = f64x2.splat(<f64>m);
  let f = 0;
  for (; f + 1 < n0; f += 2) v128.store(mean + (<usize>f << 3), f64x2.div(v128.load(mean + (<usize>f << 3)), mv));
  if (f < n0) f64.store(mean + (<usize>f << 3), f64.load(mean + (<usize>f << 3)) / <f64>m);
  for (let k = 0; k < m; k++) {
    const src = reps + <usize>k * rowBytes;
    const dst = centred + <usize>k * rowBytes;
    let g = 0;
    for (; g + 1 < n0; g += 2) {
      const o = <usize>g << 3;
      v128.store(dst + o, f64x2.sub(v128.load(src + o), v128.load(mean + o)));
    }
    if (g < n0) f64.store(dst + (<usize>g << 3), f64.load(src + (<usize>g << 3)) - f64.load(mean + (<usize>g << 3)));
  }
  const lim = m < MIN_ROWS_FOR_BASIS ? 0 : min(limit, min(n0, m));
  let first: f64 = 0;
  for (let k = 0; k < m; k++) {
    const c = centred + <usize>k * rowBytes;
    f64.store(left + (<usize>k << 3), dot4(c, c, n0));
    const p = reps + <usize>k * rowBytes;
    first = Math.max(first, dot4(p, p, n0));
  }
  // greedy pivoted Gram–Schmidt
  let d = 0;
  while (d < lim) {
    let pivot = -1;
    let largest: f64 = 0;
    for (let k = 0; k < m; k++) {
      const v = f64.load(left + (<usize>k << 3));
      if (v > largest) {
        largest = v;
        pivot = k;
      }
    }
    if (pivot < 0 || largest <= RANK_TOLERANCE * RANK_TOLERANCE * first) break;
    const bd = basis + <usize>d * rowBytes;
    memory.copy(bd, centred + <usize>pivot * rowBytes, rowBytes);
    for (let i = 0; i < d; i++) subScaled(bd, f64.load(coef + (<usize>(pivot * lim + i) << 3)), basis + <usize>i * rowBytes, n0);
    if (!orthonormaliseRow(basis, d, n0)) break;
    for (let k = 0; k < m; k++) {
      const c = dot4(centred + <usize>k * rowBytes, bd, n0);
      f64.store(coef + (<usize>(k * lim + d) << 3), c);
      const lk = left + (<usize>k << 3);
      f64.store(lk, k == pivot ? 0 : f64.load(lk) - c * c);
    }
    d++;
  }
  // subspace iteration Q ← orth(CᵀC Q); the first step's projections are the Gram–Schmidt components
  for (let step = 0; step < steps && d > 0; step++) {
    if (step > 0) {
      for (let k = 0; k < m; k++) {
        const ck = centred + <usize>k * rowBytes;
        for (let j = 0; j < d; j++) f64.store(coef + (<usize>(k * lim + j) << 3), dot4(ck, basis + <usize>j * rowBytes, n0));
      }
    }
    const nextBytes = <usize>d * rowBytes;
    for (let o: usize = 0; o < nextBytes; o += 8) f64.store(next + o, 0);
    for (let k = 0; k < m; k++) {
      const ck = centred + <usize>k * rowBytes;
      for (let j = 0; j < d; j++) addScaled(next + <usize>j * rowBytes, f64.load(coef + (<usize>(k * lim + j) << 3)), ck, n0);
    }
    let ok = true;
    for (let j = 0; j < d && ok; j++) ok = orthonormaliseRow(next, j, n0);
    if (!ok) break; // keep the last good basis
    memory.copy(basis, next, nextBytes);
  }
  // coordinates and residual norms, explicitly
  const rowM = <usize>m << 3;
  for (let k = 0; k < m; k++) {
    const ck = centred + <usize>k * rowBytes;
    memory.copy(r, ck, rowBytes);
    for (let j = 0; j < d; j++) {
      const bj = basis + <usize>j * rowBytes;
      const c = dot4(ck, bj, n0);
      f64.store(coordsT + <usize>j * rowM + (<usize>k << 3), c);
      subScaled(r, c, bj, n0);
    }
    f64.store(residual + (<usize>k << 3), Math.sqrt(dot4(r, r, n0)));
  }
  return d;
}

// ---------------------------------------------------------------------------------------------------------------
// The leverage of a row against an explicit design (core/learning/regression.ts designLeverage, through
// core/learning/kernels.ts designLeverageKernel): its two passes over the design, the same bits

/**
 * c[a] = Σ_j design[a][j] · phi[j] for the rows a < rows of `design` (rows of f doubles), summed as designLeverage
 * sums it: even j into one sum and odd j into another (a lane pair), ascending, the last j of an odd f into the even
 * one, then even + odd. Four rows per pass share the loads of phi.
 */
export function leverageRows(design: usize, rows: i32, f: i32, phi: usize, c: usize): void {
  const rowBytes = <usize>f << 3;
  let a = 0;
  for (; a + 3 < rows; a += 4) {
    const d0 = design + <usize>a * rowBytes;
    const d1 = d0 + rowBytes;
    const d2 = d1 + rowBytes;
    const d3 = d2 + rowBytes;
    let s0 = f64x2.splat(0), s1 = s0, s2 = s0, s3 = s0;
    let j = 0;
    for (; j + 1 < f; j += 2) {
      const o = <usize>j << 3;
      const p = v128.load(phi + o);
      s0 = f64x2.add(s0, f64x2.mul(v128.load(d0 + o), p));
      s1 = f64x2.add(s1, f64x2.mul(v128.load(d1 + o), p));
      s2 = f64x2.add(s2, f64x2.mul(v128.load(d2 + o), p));
      s3 = f64x2.add(s3, f64x2.mul(v128.load(d3 + o), p));
    }
    let e0 = f64x2.extract_lane(s0, 0), e1 = f64x2.extract_lane(s1, 0), e2 = f64x2.extract_lane(s2, 0), e3 = f64x2.extract_lane(s3, 0);
    if (j < f) {
      const o = <usize>j << 3;
      const p = f64.load(phi + o);
      e0 += f64.load(d0 + o) * p;
      e1 += f64.load(d1 + o) * p;
      e2 += f64.load(d2 + o) * p;
      e3 += f64.load(d3 + o) * p;
    }
    const out = c + (<usize>a << 3);
    f64.store(out, e0 + f64x2.extract_lane(s0, 1));
    f64.store(out, e1 + f64x2.extract_lane(s1, 1), 8);
    f64.store(out, e2 + f64x2.extract_lane(s2, 1), 16);
    f64.store(out, e3 + f64x2.extract_lane(s3, 1), 24);
  }
  for (; a < rows; a++) {
    const d0 = design + <usize>a * rowBytes;
    let s0 = f64x2.splat(0);
    let j = 0;
    for (; j + 1 < f; j += 2) {
      const o = <usize>j << 3;
      s0 = f64x2.add(s0, f64x2.mul(v128.load(d0 + o), v128.load(phi + o)));
    }
    let e0 = f64x2.extract_lane(s0, 0);
    if (j < f) e0 += f64.load(d0 + (<usize>j << 3)) * f64.load(phi + (<usize>j << 3));
    f64.store(c + (<usize>a << 3), e0 + f64x2.extract_lane(s0, 1));
  }
}

/**
 * r[j] −= design[a][j] · c[a] for the rows a < rows in ascending order (four rows per pass over r, each element
 * updated row after row as designLeverage updates it), then returns Σ_j r[j]² summed over j ascending.
 */
export function leverageResidual(design: usize, rows: i32, f: i32, c: usize, r: usize): f64 {
  const rowBytes = <usize>f << 3;
  let a = 0;
  for (; a + 3 < rows; a += 4) {
    const d0 = design + <usize>a * rowBytes;
    const d1 = d0 + rowBytes;
    const d2 = d1 + rowBytes;
    const d3 = d2 + rowBytes;
    const ca = c + (<usize>a << 3);
    const c0 = f64.load(ca), c1 = f64.load(ca, 8), c2 = f64.load(ca, 16), c3 = f64.load(ca, 24);
    const v0 = f64x2.splat(c0), v1 = f64x2.splat(c1), v2 = f64x2.splat(c2), v3 = f64x2.splat(c3);
    let j = 0;
    for (; j + 1 < f; j += 2) {
      const o = <usize>j << 3;
      let v = v128.load(r + o);
      v = f64x2.sub(v, f64x2.mul(v128.load(d0 + o), v0));
      v = f64x2.sub(v, f64x2.mul(v128.load(d1 + o), v1));
      v = f64x2.sub(v, f64x2.mul(v128.load(d2 + o), v2));
      v = f64x2.sub(v, f64x2.mul(v128.load(d3 + o), v3));
      v128.store(r + o, v);
    }
    if (j < f) {
      const o = <usize>j << 3;
      let v = f64.load(r + o);
      v -= f64.load(d0 + o) * c0;
      v -= f64.load(d1 + o) * c1;
      v -= f64.load(d2 + o) * c2;
      v -= f64.load(d3 + o) * c3;
      f64.store(r + o, v);
    }
  }
  for (; a < rows; a++) {
    const d0 = design + <usize>a * rowBytes;
    const c0 = f64.load(c + (<usize>a << 3));
    const v0 = f64x2.splat(c0);
    let j = 0;
    for (; j + 1 < f; j += 2) {
      const o = <usize>j << 3;
      v128.store(r + o, f64x2.sub(v128.load(r + o), f64x2.mul(v128.load(d0 + o), v0)));
    }
    if (j < f) f64.store(r + (<usize>j << 3), f64.load(r + (<usize>j << 3)) - f64.load(d0 + (<usize>j << 3)) * c0);
  }
  let rr: f64 = 0;
  for (let j = 0; j < f; j++) {
    const v = f64.load(r + (<usize>j << 3));
    rr += v * v;
  }
  return rr;
}
