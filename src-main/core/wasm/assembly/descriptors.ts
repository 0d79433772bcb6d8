// Descriptor kernels in AssemblyScript, compiled to WebAssembly with 128-bit SIMD (two doubles per lane pair):
// the λ > 0 couplings of one environment's density coefficients (core/descriptors/features.ts tensorFeatures).
// Compiled by scripts/build-wasm.mjs into ../generated/descriptors.ts; loaded through ../descriptors.ts. Every
// number is computed with the operations of the JavaScript loop in the same order (vectorised across partner
// channels, never within one sum), so the features are the same bits.
//
// Layout: the coefficients of degree l are held transposed, cT_l[m·tch + k] = c_{k, l, m} (channel k contiguous),
// so that two partner channels sit side by side in one vector.

/** Where the caller's buffers may start: the first byte after this module's static data. */
export function heapBase(): usize {
  return __heap_base;
}

/**
 * The half-coupling of channel `ch`: half[t] = Σ_k gVal[k] · cT[gIdx[k]·tch + ch] over k = gStart[t] … gStart[t+1]−1,
 * each sum from zero in k order (features.ts gatherForm).
 */
@inline
function gather(cT: usize, tch: i32, ch: i32, targets: i32, gStart: usize, gIdx: usize, gVal: usize, half: usize): void {
  for (let t = 0; t < targets; t++) {
    let h: f64 = 0;
    const k1 = load<i32>(gStart + ((<usize>t + 1) << 2));
    for (let k = load<i32>(gStart + (<usize>t << 2)); k < k1; k++) {
      const at = <usize>(load<i32>(gIdx + (<usize>k << 2)) * tch + ch);
      h += load<f64>(gVal + (<usize>k << 3)) * load<f64>(cT + (at << 3));
    }
    store<f64>(half + (<usize>t << 3), h);
  }
}

/**
 * gather for channels ch and ch + 1 at once (they sit side by side in cT): half[2t] for ch, half[2t + 1] for
 * ch + 1, each sum as in gather.
 */
@inline
function gatherTwo(cT: usize, tch: i32, ch: i32, targets: i32, gStart: usize, gIdx: usize, gVal: usize, half: usize): void {
  for (let t = 0; t < targets; t++) {
    let h = f64x2.splat(0);
    const k1 = load<i32>(gStart + ((<usize>t + 1) << 2));
    for (let k = load<i32>(gStart + (<usize>t << 2)); k < k1; k++) {
      const at = <usize>(load<i32>(gIdx + (<usize>k << 2)) * tch + ch);
      h = f64x2.add(h, f64x2.mul(v128.load64_splat(gVal + (<usize>k << 3)), v128.load(cT + (at << 3))));
    }
    v128.store(half + (<usize>t << 4), h);
  }
}

/** gather for channels ch … ch + 3 at once: half[4t + i] for ch + i (two vectors, two chains per target). */
@inline
function gatherFour(cT: usize, tch: i32, ch: i32, targets: i32, gStart: usize, gIdx: usize, gVal: usize, half: usize): void {
  for (let t = 0; t < targets; t++) {
    let h0 = f64x2.splat(0), h1 = f64x2.splat(0);
    const k1 = load<i32>(gStart + ((<usize>t + 1) << 2));
    for (let k = load<i32>(gStart + (<usize>t << 2)); k < k1; k++) {
      const at = cT + (<usize>(load<i32>(gIdx + (<usize>k << 2)) * tch + ch) << 3);
      const g = v128.load64_splat(gVal + (<usize>k << 3));
      h0 = f64x2.add(h0, f64x2.mul(g, v128.load(at)));
      h1 = f64x2.add(h1, f64x2.mul(g, v128.load(at, 16)));
    }
    v128.store(half + (<usize>t << 5), h0);
    v128.store(half + (<usize>t << 5), h1, 16);
  }
}

/**
 * out[μ·n + j·stride] = weight_j · Σ_{m < w} half[μ·w + m] · cT[m·tch + p0 + j] for j < count and μ < nM, each sum
 * from zero in m order; weight_0 = wFirst, the others wRest. hs: bytes from one half entry to the next (8, or 16
 * when two channels' halves are interleaved by gatherTwo).
 */
@inline
function contract(half: usize, hs: usize, nM: i32, w: i32, cT: usize, tch: i32, p0: i32, count: i32, out: usize, n: i32, stride: i32, wFirst: f64, wRest: f64): void {
  if (nM == 5) contractFive(half, hs, w, cT, tch, p0, count, out, n, stride, wFirst, wRest);
  else contractAny(half, hs, nM, w, cT, tch, p0, count, out, n, stride, wFirst, wRest);
}

/** out[μ·n + j·stride] = weight_j · result: two partners j, j + 1 in the lanes of r (or one when single). */
@inline
function putPartners(o: usize, step: usize, stride: i32, j: i32, r: v128, wFirst: f64, rest: v128): void {
  let x = f64x2.mul(rest, r);
  if (j == 0) x = f64x2.replace_lane(x, 0, wFirst * f64x2.extract_lane(r, 0));
  if (stride == 1) {
    v128.store(o + (<usize>j << 3), x);
  } else {
    const at = o + <usize>j * step;
    v128.store64_lane(at, x, 0);
    v128.store64_lane(at + step, x, 1);
  }
}

/**
 * contract for λ = 2 (five μ): two partners per vector and all five μ in one pass over m, so that five sums run
 * side by side whatever the number of partners (eight partners of one μ at a time left the last partners of a
 * channel, up to seven, to one or two chains of dependent additions). Every sum as in contractAny.
 */
function contractFive(half: usize, hs: usize, w: i32, cT: usize, tch: i32, p0: i32, count: i32, out: usize, n: i32, stride: i32, wFirst: f64, wRest: f64): void {
  const rowBytes = <usize>tch << 3;
  const rest = f64x2.splat(wRest);
  const step = <usize>stride << 3;
  const hw = <usize>w * hs;
  const nb = <usize>n << 3;
  let j = 0;
  for (; j + 3 < count; j += 4) {
    // four partners: two vectors sharing each loaded half-coupling, ten sums side by side
    let s0 = f64x2.splat(0), s1 = f64x2.splat(0), s2 = f64x2.splat(0), s3 = f64x2.splat(0), s4 = f64x2.splat(0);
    let t0 = f64x2.splat(0), t1 = f64x2.splat(0), t2 = f64x2.splat(0), t3 = f64x2.splat(0), t4 = f64x2.splat(0);
    let col = cT + (<usize>(p0 + j) << 3);
    let h = half;
    for (let m = 0; m < w; m++) {
      const c = v128.load(col), d = v128.load(col, 16);
      const h0 = v128.load64_splat(h), h1 = v128.load64_splat(h + hw), h2 = v128.load64_splat(h + 2 * hw), h3 = v128.load64_splat(h + 3 * hw), h4 = v128.load64_splat(h + 4 * hw);
      s0 = f64x2.add(s0, f64x2.mul(h0, c));
      t0 = f64x2.add(t0, f64x2.mul(h0, d));
      s1 = f64x2.add(s1, f64x2.mul(h1, c));
      t1 = f64x2.add(t1, f64x2.mul(h1, d));
      s2 = f64x2.add(s2, f64x2.mul(h2, c));
      t2 = f64x2.add(t2, f64x2.mul(h2, d));
      s3 = f64x2.add(s3, f64x2.mul(h3, c));
      t3 = f64x2.add(t3, f64x2.mul(h3, d));
      s4 = f64x2.add(s4, f64x2.mul(h4, c));
      t4 = f64x2.add(t4, f64x2.mul(h4, d));
      col += rowBytes;
      h += hs;
    }
    putPartners(out, step, stride, j, s0, wFirst, rest);
    putPartners(out + nb, step, stride, j, s1, wFirst, rest);
    putPartners(out + 2 * nb, step, stride, j, s2, wFirst, rest);
    putPartners(out + 3 * nb, step, stride, j, s3, wFirst, rest);
    putPartners(out + 4 * nb, step, stride, j, s4, wFirst, rest);
    putPartners(out, step, stride, j + 2, t0, wFirst, rest);
    putPartners(out + nb, step, stride, j + 2, t1, wFirst, rest);
    putPartners(out + 2 * nb, step, stride, j + 2, t2, wFirst, rest);
    putPartners(out + 3 * nb, step, stride, j + 2, t3, wFirst, rest);
    putPartners(out + 4 * nb, step, stride, j + 2, t4, wFirst, rest);
  }
  for (; j + 1 < count; j += 2) {
    let s0 = f64x2.splat(0), s1 = f64x2.splat(0), s2 = f64x2.splat(0), s3 = f64x2.splat(0), s4 = f64x2.splat(0);
    let col = cT + (<usize>(p0 + j) << 3);
    let h = half;
    for (let m = 0; m < w; m++) {
      const c = v128.load(col);
      s0 = f64x2.add(s0, f64x2.mul(v128.load64_splat(h), c));
      s1 = f64x2.add(s1, f64x2.mul(v128.load64_splat(h + hw), c));
      s2 = f64x2.add(s2, f64x2.mul(v128.load64_splat(h + 2 * hw), c));
      s3 = f64x2.add(s3, f64x2.mul(v128.load64_splat(h + 3 * hw), c));
      s4 = f64x2.add(s4, f64x2.mul(v128.load64_splat(h + 4 * hw), c));
      col += rowBytes;
      h += hs;
    }
    putPartners(out, step, stride, j, s0, wFirst, rest);
    putPartners(out + nb, step, stride, j, s1, wFirst, rest);
    putPartners(out + 2 * nb, step, stride, j, s2, wFirst, rest);
    putPartners(out + 3 * nb, step, stride, j, s3, wFirst, rest);
    putPartners(out + 4 * nb, step, stride, j, s4, wFirst, rest);
  }
  if (j < count) {
    let s0: f64 = 0, s1: f64 = 0, s2: f64 = 0, s3: f64 = 0, s4: f64 = 0;
    let col = cT + (<usize>(p0 + j) << 3);
    let h = half;
    for (let m = 0; m < w; m++) {
      const c = load<f64>(col);
      s0 += load<f64>(h) * c;
      s1 += load<f64>(h + hw) * c;
      s2 += load<f64>(h + 2 * hw) * c;
      s3 += load<f64>(h + 3 * hw) * c;
      s4 += load<f64>(h + 4 * hw) * c;
      col += rowBytes;
      h += hs;
    }
    const wj = j == 0 ? wFirst : wRest;
    const o = out + <usize>j * step;
    store<f64>(o, wj * s0);
    store<f64>(o + nb, wj * s1);
    store<f64>(o + 2 * nb, wj * s2);
    store<f64>(o + 3 * nb, wj * s3);
    store<f64>(o + 4 * nb, wj * s4);
  }
}

/** contract for any number of μ: eight partners of one μ per pass over m, then two, then one. */
function contractAny(half: usize, hs: usize, nM: i32, w: i32, cT: usize, tch: i32, p0: i32, count: i32, out: usize, n: i32, stride: i32, wFirst: f64, wRest: f64): void {
  const rowBytes = <usize>tch << 3;
  const rest = f64x2.splat(wRest);
  const step = <usize>stride << 3;
  for (let mu = 0; mu < nM; mu++) {
    const hb = half + <usize>(mu * w) * hs;
    const ob = out + (<usize>(mu * n) << 3);
    let j = 0;
    for (; j + 7 < count; j += 8) {
      let s0 = f64x2.splat(0);
      let s1 = f64x2.splat(0);
      let s2 = f64x2.splat(0);
      let s3 = f64x2.splat(0);
      let col = cT + (<usize>(p0 + j) << 3);
      for (let m = 0; m < w; m++) {
        const h = v128.load64_splat(hb + <usize>m * hs);
        s0 = f64x2.add(s0, f64x2.mul(h, v128.load(col)));
        s1 = f64x2.add(s1, f64x2.mul(h, v128.load(col, 16)));
        s2 = f64x2.add(s2, f64x2.mul(h, v128.load(col, 32)));
        s3 = f64x2.add(s3, f64x2.mul(h, v128.load(col, 48)));
        col += rowBytes;
      }
      let r0 = f64x2.mul(rest, s0);
      if (j == 0) r0 = f64x2.replace_lane(r0, 0, wFirst * f64x2.extract_lane(s0, 0));
      const r1 = f64x2.mul(rest, s1);
      const r2 = f64x2.mul(rest, s2);
      const r3 = f64x2.mul(rest, s3);
      if (stride == 1) {
        const o = ob + (<usize>j << 3);
        v128.store(o, r0);
        v128.store(o, r1, 16);
        v128.store(o, r2, 32);
        v128.store(o, r3, 48);
      } else {
        let o = ob + <usize>j * step;
        store<f64>(o, f64x2.extract_lane(r0, 0));
        o += step;
        store<f64>(o, f64x2.extract_lane(r0, 1));
        o += step;
        store<f64>(o, f64x2.extract_lane(r1, 0));
        o += step;
        store<f64>(o, f64x2.extract_lane(r1, 1));
        o += step;
        store<f64>(o, f64x2.extract_lane(r2, 0));
        o += step;
        store<f64>(o, f64x2.extract_lane(r2, 1));
        o += step;
        store<f64>(o, f64x2.extract_lane(r3, 0));
        o += step;
        store<f64>(o, f64x2.extract_lane(r3, 1));
      }
    }
    for (; j + 1 < count; j += 2) {
      let s0 = f64x2.splat(0);
      let col = cT + (<usize>(p0 + j) << 3);
      for (let m = 0; m < w; m++) {
        s0 = f64x2.add(s0, f64x2.mul(v128.load64_splat(hb + <usize>m * hs), v128.load(col)));
        col += rowBytes;
      }
      putPartners(ob, step, stride, j, s0, wFirst, rest);
    }
    if (j < count) {
      let s: f64 = 0;
      let col = cT + (<usize>(p0 + j) << 3);
      for (let m = 0; m < w; m++) {
        s += load<f64>(hb + <usize>m * hs) * load<f64>(col);
        col += rowBytes;
      }
      store<f64>(ob + <usize>j * step, (j == 0 ? wFirst : wRest) * s);
    }
  }
}

/**
 * A block (l, l) of one environment: for each first channel c1 the half-coupling over its degree-l coefficients,
 * then the partners c2 = c1 … tch−1 (weight 1 for c2 = c1, √2 otherwise) into out[μ·n + f], f running on from
 * the block's first feature. cT: the degree-l coefficients transposed; w = 2l + 1; half: scratch of 4·nM·w
 * doubles (four channels' half-couplings at a time).
 */
export function coupleSame(cT: usize, tch: i32, w: i32, nM: i32, gStart: usize, gIdx: usize, gVal: usize, half: usize, out: usize, n: i32): void {
  const targets = nM * w;
  let f = out;
  let c1 = 0;
  for (; c1 + 3 < tch; c1 += 4) {
    // the half-couplings of c1 … c1 + 3 together (half: 4·targets doubles), then each one's partners
    gatherFour(cT, tch, c1, targets, gStart, gIdx, gVal, half);
    for (let i = 0; i < 4; i++) {
      contract(half + (<usize>i << 3), 32, nM, w, cT, tch, c1 + i, tch - c1 - i, f, n, 1, 1.0, Math.SQRT2);
      f += <usize>(tch - c1 - i) << 3;
    }
  }
  for (; c1 + 1 < tch; c1 += 2) {
    // the half-couplings of c1 and c1 + 1 together (half: 2·targets doubles), then each one's partners
    gatherTwo(cT, tch, c1, targets, gStart, gIdx, gVal, half);
    contract(half, 16, nM, w, cT, tch, c1, tch - c1, f, n, 1, 1.0, Math.SQRT2);
    f += <usize>(tch - c1) << 3;
    contract(half + 8, 16, nM, w, cT, tch, c1 + 1, tch - c1 - 1, f, n, 1, 1.0, Math.SQRT2);
    f += <usize>(tch - c1 - 1) << 3;
  }
  if (c1 < tch) {
    gather(cT, tch, c1, targets, gStart, gIdx, gVal, half);
    contract(half, 8, nM, w, cT, tch, c1, tch - c1, f, n, 1, 1.0, Math.SQRT2);
  }
}

/**
 * A block (l, l2), l < l2, of one environment: for each channel c2 of degree l2 (held: the half-coupling over its
 * coefficients cT2) every channel c1 of degree l (cT, w = 2l + 1) into out[μ·n + c1·tch + c2], weight √2.
 */
export function coupleCross(cT: usize, cT2: usize, tch: i32, w: i32, nM: i32, gStart: usize, gIdx: usize, gVal: usize, half: usize, out: usize, n: i32): void {
  const targets = nM * w;
  let c2 = 0;
  for (; c2 + 3 < tch; c2 += 4) {
    gatherFour(cT2, tch, c2, targets, gStart, gIdx, gVal, half);
    if (nM == 5) crossFive(half, w, cT, tch, out + (<usize>c2 << 3), n);
    else for (let i = 0; i < 4; i++) contract(half + (<usize>i << 3), 32, nM, w, cT, tch, 0, tch, out + (<usize>(c2 + i) << 3), n, tch, Math.SQRT2, Math.SQRT2);
  }
  for (; c2 + 1 < tch; c2 += 2) {
    gatherTwo(cT2, tch, c2, targets, gStart, gIdx, gVal, half);
    contract(half, 16, nM, w, cT, tch, 0, tch, out + (<usize>c2 << 3), n, tch, Math.SQRT2, Math.SQRT2);
    contract(half + 8, 16, nM, w, cT, tch, 0, tch, out + (<usize>(c2 + 1) << 3), n, tch, Math.SQRT2, Math.SQRT2);
  }
  if (c2 < tch) {
    gather(cT2, tch, c2, targets, gStart, gIdx, gVal, half);
    contract(half, 8, nM, w, cT, tch, 0, tch, out + (<usize>c2 << 3), n, tch, Math.SQRT2, Math.SQRT2);
  }
}

/**
 * contract of four held channels c2 … c2 + 3 at once for λ = 2 in a block (l, l2), l < l2 (half: their
 * half-couplings as gatherFour leaves them, side by side): for every channel c1 of degree l, out[μ·n + c1·tch + c2
 * + i] = √2 · Σ_m half_i[μ·w + m] · cT[m·tch + c1], each sum from zero in m order, as contract computes it. The
 * four held channels sit in two vectors, so that the four features of (μ, c1), next to each other in out, are
 * stored as two vectors (contract, two partners per vector, stores them one by one, tch doubles apart).
 */
function crossFive(half: usize, w: i32, cT: usize, tch: i32, out: usize, n: i32): void {
  const rowBytes = <usize>tch << 3;
  const hw = <usize>w << 5; // from μ to μ + 1 in half
  const nb = <usize>n << 3;
  const rt2 = f64x2.splat(Math.SQRT2);
  for (let c1 = 0; c1 < tch; c1++) {
    let a0 = f64x2.splat(0), a1 = f64x2.splat(0), a2 = f64x2.splat(0), a3 = f64x2.splat(0), a4 = f64x2.splat(0);
    let b0 = f64x2.splat(0), b1 = f64x2.splat(0), b2 = f64x2.splat(0), b3 = f64x2.splat(0), b4 = f64x2.splat(0);
    let col = cT + (<usize>c1 << 3);
    let h = half;
    for (let m = 0; m < w; m++) {
      const x = v128.load64_splat(col);
      a0 = f64x2.add(a0, f64x2.mul(v128.load(h), x));
      b0 = f64x2.add(b0, f64x2.mul(v128.load(h, 16), x));
      a1 = f64x2.add(a1, f64x2.mul(v128.load(h + hw), x));
      b1 = f64x2.add(b1, f64x2.mul(v128.load(h + hw, 16), x));
      a2 = f64x2.add(a2, f64x2.mul(v128.load(h + 2 * hw), x));
      b2 = f64x2.add(b2, f64x2.mul(v128.load(h + 2 * hw, 16), x));
      a3 = f64x2.add(a3, f64x2.mul(v128.load(h + 3 * hw), x));
      b3 = f64x2.add(b3, f64x2.mul(v128.load(h + 3 * hw, 16), x));
      a4 = f64x2.add(a4, f64x2.mul(v128.load(h + 4 * hw), x));
      b4 = f64x2.add(b4, f64x2.mul(v128.load(h + 4 * hw, 16), x));
      col += rowBytes;
      h += 32;
    }
    const o = out + <usize>c1 * rowBytes;
    v128.store(o, f64x2.mul(rt2, a0));
    v128.store(o, f64x2.mul(rt2, b0), 16);
    v128.store(o + nb, f64x2.mul(rt2, a1));
    v128.store(o + nb, f64x2.mul(rt2, b1), 16);
    v128.store(o + 2 * nb, f64x2.mul(rt2, a2));
    v128.store(o + 2 * nb, f64x2.mul(rt2, b2), 16);
    v128.store(o + 3 * nb, f64x2.mul(rt2, a3));
    v128.store(o + 3 * nb, f64x2.mul(rt2, b3), 16);
    v128.store(o + 4 * nb, f64x2.mul(rt2, a4));
    v128.store(o + 4 * nb, f64x2.mul(rt2, b4), 16);
  }
}

/**
 * Scales x[0 … len) to unit norm (a zero or non-finite norm leaves it as it is); returns the squared norm before
 * scaling, summed in index order (features.ts normalise).
 */
export function normalise(x: usize, len: i32): f64 {
  let s: f64 = 0;
  for (let i = 0; i < len; i++) {
    const v = load<f64>(x + (<usize>i << 3));
    s += v * v;
  }
  if (s == 0 || !isFinite<f64>(s)) return s;
  scale(x, len, 1 / Math.sqrt(s));
  return s;
}

/**
 * normalise for `count` blocks of `len` doubles, block j at x + j·stride bytes: sq[j] = Σ_i x_j[i]² summed in index
 * order from zero (the very sum of normalise), then block j scaled by 1/√sq[j] unless that is zero or not finite.
 * The sums of four blocks run side by side (two per vector, two vectors): each is still one sum in its order, but
 * the four do not wait on each other, where one block's sum alone is a chain of dependent additions.
 */
export function normaliseMany(x: usize, len: i32, count: i32, stride: usize, sq: usize): void {
  squaresMany(x, len, count, stride, sq, true);
}

/** normaliseMany's sums of squares alone (sq[j]), the blocks left as they are (addRows scales them as it adds). */
export function sumSquaresMany(x: usize, len: i32, count: i32, stride: usize, sq: usize): void {
  squaresMany(x, len, count, stride, sq, false);
}

// @ts-ignore: decorator
@inline function squaresMany(x: usize, len: i32, count: i32, stride: usize, sq: usize, scaleToo: bool): void {
  const bytes = <usize>len << 3;
  for (let j0 = 0; j0 < count; j0 += 4) {
    // blocks j0 … j0 + 3; past the last one, repeats of block j0 (their sums are not kept)
    const p0 = x + <usize>j0 * stride;
    const p1 = j0 + 1 < count ? p0 + stride : p0;
    const p2 = j0 + 2 < count ? p0 + 2 * stride : p0;
    const p3 = j0 + 3 < count ? p0 + 3 * stride : p0;
    let s0 = f64x2.splat(0), s1 = f64x2.splat(0);
    for (let o: usize = 0; o < bytes; o += 8) {
      const v0 = v128.load64_lane(p1 + o, v128.load64_zero(p0 + o), 1);
      const v1 = v128.load64_lane(p3 + o, v128.load64_zero(p2 + o), 1);
      s0 = f64x2.add(s0, f64x2.mul(v0, v0));
      s1 = f64x2.add(s1, f64x2.mul(v1, v1));
    }
    const last = min(4, count - j0);
    for (let j = 0; j < last; j++) {
      const v = j < 2 ? s0 : s1;
      const s = (j & 1) == 0 ? f64x2.extract_lane(v, 0) : f64x2.extract_lane(v, 1);
      store<f64>(sq + (<usize>(j0 + j) << 3), s);
      if (!scaleToo || s == 0 || !isFinite<f64>(s)) continue;
      scale(p0 + <usize>j * stride, len, 1 / Math.sqrt(s));
    }
  }
}

/**
 * acc[r·accRow + f] += x[r·n + f] · inv for r < rows, f < n (accRow in doubles): one environment's block, scaled as
 * normalise scales it (inv = 1/√ of its squared norm; 1 where normalise leaves it as it is, x · 1 being x), added
 * to its species' running sums (core/learning/kernels.ts linearDesignRows, each entry a sum in environment order).
 */
export function addRows(acc: usize, accRow: i32, x: usize, n: i32, rows: i32, inv: f64): void {
  const vinv = f64x2.splat(inv);
  for (let r = 0; r < rows; r++) {
    const a = acc + (<usize>(r * accRow) << 3);
    const b = x + (<usize>(r * n) << 3);
    let f = 0;
    for (; f + 1 < n; f += 2) {
      const at = a + (<usize>f << 3);
      v128.store(at, f64x2.add(v128.load(at), f64x2.mul(v128.load(b + (<usize>f << 3)), vinv)));
    }
    if (f < n) {
      const at = a + (<usize>f << 3);
      store<f64>(at, load<f64>(at) + load<f64>(b + (<usize>f << 3)) * inv);
    }
  }
}

/** x[0 … len) *= inv, two per vector. */
@inline
function scale(x: usize, len: i32, inv: f64): void {
  const vinv = f64x2.splat(inv);
  let i = 0;
  for (; i + 1 < len; i += 2) {
    const at = x + (<usize>i << 3);
    v128.store(at, f64x2.mul(v128.load(at), vinv));
  }
  if (i < len) {
    const at = x + (<usize>i << 3);
    store<f64>(at, load<f64>(at) * inv);
  }
}

/**
 * The density expansion's sums for one centre (core/descriptors/density.ts), from pairTerms' output: the pairs of
 * channel a at sorted positions q = chanStart[a] … chanStart[a+1]−1 (in pair order), with harmonics
 * Y[q·LL + lm] and weighted radial integrals R[q·NLp + l·nmax + n]. out[(a·nmax + n)·LL + lm] = Σ_q y_q r_q, each
 * sum from zero in pair order (vectorised across n and held in registers over the pairs, two lm of one degree per
 * pass), then selfTerm[n] added to the l = 0 slot of channel centreChannel (when ≥ 0). The same numbers also
 * transposed into cT[lm·nch + a·nmax + n] (nch = channels·nmax), the layout of powerSpectrumRow.
 */
export function expandAccumulate(Y: usize, R: usize, chanStart: usize, NLp: i32, nmax: i32, lmax: i32, channels: i32, out: usize, selfTerm: usize, centreChannel: i32, cT: usize): void {
  const L1 = lmax + 1;
  const LL = L1 * L1;
  const nch = channels * nmax;
  const yStep = <usize>LL << 3;
  const rStep = <usize>NLp << 3;
  const nStep = <usize>LL << 3; // from feature n to n + 1 in out
  const tStep = <usize>nch << 3; // from lm to lm + 1 in cT
  for (let a = 0; a < channels; a++) {
    const q0 = load<i32>(chanStart + (<usize>(a << 2)));
    const np = load<i32>(chanStart + (<usize>((a + 1) << 2))) - q0;
    const yA = Y + <usize>q0 * yStep;
    const rA = R + <usize>q0 * rStep;
    const oA = out + (<usize>(a * nmax * LL) << 3);
    const tA = cT + (<usize>(a * nmax) << 3);
    for (let l = 0; l <= lmax; l++) {
      const rl = rA + (<usize>(l * nmax) << 3);
      const hi = (l + 1) * (l + 1);
      let lm = l * l;
      for (; lm + 1 < hi; lm += 2) sumTwo(yA + (<usize>lm << 3), yStep, rl, rStep, np, nmax, oA + (<usize>lm << 3), nStep, tA + <usize>lm * tStep, tStep);
      if (lm < hi) sumOne(yA + (<usize>lm << 3), yStep, rl, rStep, np, nmax, oA + (<usize>lm << 3), nStep, tA + <usize>lm * tStep);
    }
  }
  if (centreChannel >= 0) {
    for (let n = 0; n < nmax; n++) {
      const at = out + (<usize>((centreChannel * nmax + n) * LL) << 3);
      const x = load<f64>(at) + load<f64>(selfTerm + (<usize>n << 3));
      store<f64>(at, x);
      store<f64>(cT + (<usize>(centreChannel * nmax + n) << 3), x);
    }
  }
}

/** Stores the two lanes of v at o (feature n) and o + step (feature n + 1). */
@inline
function putPair(o: usize, step: usize, v: v128): void {
  v128.store64_lane(o, v, 0);
  v128.store64_lane(o + step, v, 1);
}

/** Eight sums of one harmonic (radial functions n … n + 7, two per vector) to out (from o, step apart) and to cT (from tn, side by side). */
@inline
function putEight(o: usize, step: usize, tn: usize, a0: v128, a1: v128, a2: v128, a3: v128): void {
  putPair(o, step, a0);
  putPair(o + 2 * step, step, a1);
  putPair(o + 4 * step, step, a2);
  putPair(o + 6 * step, step, a3);
  v128.store(tn, a0);
  v128.store(tn, a1, 16);
  v128.store(tn, a2, 32);
  v128.store(tn, a3, 48);
}

/**
 * o[n·step] = Σ_q y[q·yStep] r[q·rStep + n] and o[8 + n·step] = Σ_q y[8 + q·yStep] r[q·rStep + n] for n < nmax, over
 * q < np in order, each from zero: two harmonics (lm, lm + 1) of one degree against its radial integrals.
 */
@inline
function sumTwo(y: usize, yStep: usize, r: usize, rStep: usize, np: i32, nmax: i32, o: usize, step: usize, t: usize, tStep: usize): void {
  let n = 0;
  for (; n + 7 < nmax; n += 8) {
    let a0 = f64x2.splat(0), a1 = f64x2.splat(0), a2 = f64x2.splat(0), a3 = f64x2.splat(0);
    let b0 = f64x2.splat(0), b1 = f64x2.splat(0), b2 = f64x2.splat(0), b3 = f64x2.splat(0);
    let yq = y;
    let rq = r + (<usize>n << 3);
    for (let q = 0; q < np; q++) {
      const ya = v128.load64_splat(yq), yb = v128.load64_splat(yq, 8);
      const r0 = v128.load(rq), r1 = v128.load(rq, 16), r2 = v128.load(rq, 32), r3 = v128.load(rq, 48);
      a0 = f64x2.add(a0, f64x2.mul(ya, r0));
      b0 = f64x2.add(b0, f64x2.mul(yb, r0));
      a1 = f64x2.add(a1, f64x2.mul(ya, r1));
      b1 = f64x2.add(b1, f64x2.mul(yb, r1));
      a2 = f64x2.add(a2, f64x2.mul(ya, r2));
      b2 = f64x2.add(b2, f64x2.mul(yb, r2));
      a3 = f64x2.add(a3, f64x2.mul(ya, r3));
      b3 = f64x2.add(b3, f64x2.mul(yb, r3));
      yq += yStep;
      rq += rStep;
    }
    const on = o + <usize>n * step;
    const tn = t + (<usize>n << 3);
    putEight(on, step, tn, a0, a1, a2, a3);
    putEight(on + 8, step, tn + tStep, b0, b1, b2, b3);
  }
  for (; n + 1 < nmax; n += 2) {
    let a0 = f64x2.splat(0), b0 = f64x2.splat(0);
    let yq = y;
    let rq = r + (<usize>n << 3);
    for (let q = 0; q < np; q++) {
      const r0 = v128.load(rq);
      a0 = f64x2.add(a0, f64x2.mul(v128.load64_splat(yq), r0));
      b0 = f64x2.add(b0, f64x2.mul(v128.load64_splat(yq, 8), r0));
      yq += yStep;
      rq += rStep;
    }
    const on = o + <usize>n * step;
    putPair(on, step, a0);
    putPair(on + 8, step, b0);
    v128.store(t + (<usize>n << 3), a0);
    v128.store(t + (<usize>n << 3) + tStep, b0);
  }
  if (n < nmax) {
    // the odd last n: the two harmonics side by side
    let s = f64x2.splat(0);
    let yq = y;
    let rq = r + (<usize>n << 3);
    for (let q = 0; q < np; q++) {
      s = f64x2.add(s, f64x2.mul(v128.load(yq), v128.load64_splat(rq)));
      yq += yStep;
      rq += rStep;
    }
    v128.store(o + <usize>n * step, s);
    v128.store64_lane(t + (<usize>n << 3), s, 0);
    v128.store64_lane(t + (<usize>n << 3) + tStep, s, 1);
  }
}

/** sumTwo for one harmonic (the last of its degree). */
@inline
function sumOne(y: usize, yStep: usize, r: usize, rStep: usize, np: i32, nmax: i32, o: usize, step: usize, t: usize): void {
  let n = 0;
  for (; n + 7 < nmax; n += 8) {
    let a0 = f64x2.splat(0), a1 = f64x2.splat(0), a2 = f64x2.splat(0), a3 = f64x2.splat(0);
    let yq = y;
    let rq = r + (<usize>n << 3);
    for (let q = 0; q < np; q++) {
      const ya = v128.load64_splat(yq);
      a0 = f64x2.add(a0, f64x2.mul(ya, v128.load(rq)));
      a1 = f64x2.add(a1, f64x2.mul(ya, v128.load(rq, 16)));
      a2 = f64x2.add(a2, f64x2.mul(ya, v128.load(rq, 32)));
      a3 = f64x2.add(a3, f64x2.mul(ya, v128.load(rq, 48)));
      yq += yStep;
      rq += rStep;
    }
    putEight(o + <usize>n * step, step, t + (<usize>n << 3), a0, a1, a2, a3);
  }
  for (; n + 1 < nmax; n += 2) {
    let a0 = f64x2.splat(0);
    let yq = y;
    let rq = r + (<usize>n << 3);
    for (let q = 0; q < np; q++) {
      a0 = f64x2.add(a0, f64x2.mul(v128.load64_splat(yq), v128.load(rq)));
      yq += yStep;
      rq += rStep;
    }
    putPair(o + <usize>n * step, step, a0);
    v128.store(t + (<usize>n << 3), a0);
  }
  if (n < nmax) {
    let s: f64 = 0;
    let yq = y;
    let rq = r + (<usize>n << 3);
    for (let q = 0; q < np; q++) {
      s += load<f64>(yq) * load<f64>(rq);
      yq += yStep;
      rq += rStep;
    }
    store<f64>(o + <usize>n * step, s);
    store<f64>(t + (<usize>n << 3), s);
  }
}

/**
 * dst_l[m·K + k] = c[base[k] + l² + m] for l ≤ lmax, m ≤ 2l, k < K, with dst_l = dst + K·l² doubles: the coefficients
 * of K channels (base: Int32 offsets of each channel's block in c) transposed per degree.
 */
export function transposeChannels(c: usize, base: usize, K: i32, lmax: i32, dst: usize): void {
  for (let l = 0; l <= lmax; l++) {
    const w = 2 * l + 1;
    const d = dst + (<usize>(K * l * l) << 3);
    for (let k = 0; k < K; k++) {
      const src = c + (<usize>(load<i32>(base + (<usize>k << 2)) + l * l) << 3);
      for (let m = 0; m < w; m++) store<f64>(d + (<usize>(m * K + k) << 3), load<f64>(src + (<usize>m << 3)));
    }
  }
}

/**
 * The λ = 0 row of one environment, unnormalised (core/descriptors/features.ts powerSpectrum): for channel pairs
 * c1 ≤ c2 (c1 outer) and l ≤ lmax, out[pair·(lmax+1) + l] = (w·invSqrt[l]) · Σ_m c_{c1,lm} c_{c2,lm}, w = 1 for
 * c1 = c2 and √2 otherwise, each sum from zero in m order; cT the coefficients of all nch channels transposed
 * (transposeChannels), readable one double past its end.
 *
 * For each l, the sums of two first channels (c1, c1 + 1) against partners c1 … nch − 1 at once, in tiles of two
 * rows by up to eight partners (psTile): each loaded coefficient serves two sums, and eight or sixteen sums run
 * side by side, where one first channel's partners (sixteen down to one at nch 16) left many short passes. Row
 * c1 + 1 also sums its partner c1, below the diagonal, which is not stored.
 */
export function powerSpectrumRow(cT: usize, nch: i32, lmax: i32, invSqrt: usize, out: usize): void {
  const L1 = lmax + 1;
  const rowBytes = <usize>nch << 3;
  const step = <usize>L1 << 3;
  for (let l = 0; l <= lmax; l++) {
    const w = 2 * l + 1;
    const v = load<f64>(invSqrt + (<usize>l << 3));
    const vwv = f64x2.splat(Math.SQRT2 * v);
    const cl = cT + (<usize>(nch * l * l) << 3);
    // o: the slot of pair (c1, c1) for this l; the row of c1 holds nch − c1 pairs
    let o = out + (<usize>l << 3);
    let c1 = 0;
    for (; c1 + 1 < nch; c1 += 2) {
      const o1 = o + <usize>(nch - c1) * step;
      let j = c1;
      for (; j + 7 < nch; j += 8) psTile(4, true, cl, rowBytes, w, c1, j, nch, o, o1, step, v, vwv);
      const rest = nch - j;
      if (rest > 6) psTile(4, true, cl, rowBytes, w, c1, j, nch, o, o1, step, v, vwv);
      else if (rest > 4) psTile(3, true, cl, rowBytes, w, c1, j, nch, o, o1, step, v, vwv);
      else if (rest > 2) psTile(2, true, cl, rowBytes, w, c1, j, nch, o, o1, step, v, vwv);
      else if (rest > 0) psTile(1, true, cl, rowBytes, w, c1, j, nch, o, o1, step, v, vwv);
      o = o1 + <usize>(nch - c1 - 1) * step;
    }
    if (c1 < nch) psTile(1, false, cl, rowBytes, w, c1, c1, nch, o, o, step, v, vwv); // the last channel alone (nch odd)
  }
}

/**
 * Sums of rows c1 and (with `two`) c1 + 1 against partners j … j + 2nv − 1 over the 2l + 1 rows of cl (w of them,
 * rowBytes apart), each from zero in m order; then stored (psStore) to the pair slots of row c1 from o0 (its
 * diagonal) and of row c1 + 1 from o1. nv and two are constants at every call.
 */
// @ts-ignore: decorator
@inline function psTile(nv: i32, two: bool, cl: usize, rowBytes: usize, w: i32, c1: i32, j: i32, nch: i32, o0: usize, o1: usize, step: usize, v: f64, vwv: v128): void {
  const zero = f64x2.splat(0);
  let s00 = zero, s01 = zero, s02 = zero, s03 = zero;
  let s10 = zero, s11 = zero, s12 = zero, s13 = zero;
  let a = cl + (<usize>c1 << 3);
  let b = cl + (<usize>j << 3);
  for (let m = 0; m < w; m++) {
    const x0 = v128.load64_splat(a);
    const b0 = v128.load(b);
    s00 = f64x2.add(s00, f64x2.mul(x0, b0));
    if (two) {
      const x1 = v128.load64_splat(a, 8);
      s10 = f64x2.add(s10, f64x2.mul(x1, b0));
      if (nv > 1) {
        const b1 = v128.load(b, 16);
        s01 = f64x2.add(s01, f64x2.mul(x0, b1));
        s11 = f64x2.add(s11, f64x2.mul(x1, b1));
      }
      if (nv > 2) {
        const b2 = v128.load(b, 32);
        s02 = f64x2.add(s02, f64x2.mul(x0, b2));
        s12 = f64x2.add(s12, f64x2.mul(x1, b2));
      }
      if (nv > 3) {
        const b3 = v128.load(b, 48);
        s03 = f64x2.add(s03, f64x2.mul(x0, b3));
        s13 = f64x2.add(s13, f64x2.mul(x1, b3));
      }
    }
    a += rowBytes;
    b += rowBytes;
  }
  psStore(o0, step, j - c1, nch - j, s00, v, vwv);
  if (nv > 1) psStore(o0, step, j - c1 + 2, nch - j - 2, s01, v, vwv);
  if (nv > 2) psStore(o0, step, j - c1 + 4, nch - j - 4, s02, v, vwv);
  if (nv > 3) psStore(o0, step, j - c1 + 6, nch - j - 6, s03, v, vwv);
  if (two) {
    psStore(o1, step, j - c1 - 1, nch - j, s10, v, vwv);
    if (nv > 1) psStore(o1, step, j - c1 + 1, nch - j - 2, s11, v, vwv);
    if (nv > 2) psStore(o1, step, j - c1 + 3, nch - j - 4, s12, v, vwv);
    if (nv > 3) psStore(o1, step, j - c1 + 5, nch - j - 6, s13, v, vwv);
  }
}

/**
 * Two sums s of one row, partners k and k + 1 places right of its diagonal (k = −1: the first is below it, not
 * stored, and the second on it; left < 2: the second is past the last channel, not stored), weighted and stored to
 * the row's slots from o: v·s on the diagonal, √2·v·s elsewhere.
 */
@inline
function psStore(o: usize, step: usize, k: i32, left: i32, s: v128, v: f64, vwv: v128): void {
  const r = f64x2.mul(vwv, s);
  if (k == 0) store<f64>(o, v * f64x2.extract_lane(s, 0));
  else if (k > 0) store<f64>(o + <usize>k * step, f64x2.extract_lane(r, 0));
  if (k == -1) store<f64>(o, v * f64x2.extract_lane(s, 1));
  else if (left > 1) store<f64>(o + <usize>(k + 1) * step, f64x2.extract_lane(r, 1));
}

/**
 * Every pair's harmonics and weighted radial integrals for expandAccumulate (core/descriptors/density.ts): pair p's
 * parameters at par[8p…]: x, y, z (its vector), r (written here: |vector| by hypot3, as Math.hypot gives it), w (the cutoff weight 4π f_c),
 * k (the table's interval), t (the position in it); its channel chan[p] (< 0: left out). The pairs are sorted by
 * channel, keeping their order (order: scratch for count Int32; chanStart[a]: the first sorted position of channel
 * a, channels + 1 entries), and the pair at sorted position q gets Y[q·LL + l² + l + m], the real harmonics by the
 * recurrences of harmonics.ts (tables: a, b at l(l+1)/2 + m, diag at m; y00 = 1/√(4π)), two pairs per vector, and
 * R[q·NLp + j] = w · (c0 + t c1 + t² c2 + t³ c3) for j < NLp (NL rounded up to even), two j per vector, from the
 * table coef laid out [interval k][j/2][power][j mod 2] — the operations of the JavaScript loop in its order.
 */
export function pairTerms(par: usize, chan: usize, count: i32, channels: i32, lmax: i32, NLp: i32, a: usize, b: usize, diag: usize, y00: f64, coef: usize, Y: usize, R: usize, order: usize, chanStart: usize): void {
  const L1 = lmax + 1;
  const LL = L1 * L1;
  // sort by channel, stably: counts, then first positions, then places
  for (let c = 0; c <= channels; c++) store<i32>(chanStart + (<usize>c << 2), 0);
  for (let p = 0; p < count; p++) {
    const c = load<i32>(chan + (<usize>p << 2));
    if (c >= 0) {
      const at = chanStart + (<usize>(c + 1) << 2);
      store<i32>(at, load<i32>(at) + 1);
    }
  }
  for (let c = 0; c < channels; c++) {
    const at = chanStart + (<usize>(c + 1) << 2);
    store<i32>(at, load<i32>(at) + load<i32>(at - 4));
  }
  for (let p = 0; p < count; p++) {
    const c = load<i32>(chan + (<usize>p << 2));
    if (c >= 0) {
      // chanStart[c] runs ahead while placing; put back below
      const at = chanStart + (<usize>c << 2);
      const q = load<i32>(at);
      store<i32>(order + (<usize>q << 2), p);
      store<i32>(at, q + 1);
    }
  }
  for (let c = channels; c > 0; c--) store<i32>(chanStart + (<usize>c << 2), load<i32>(chanStart + (<usize>(c - 1) << 2)));
  store<i32>(chanStart, 0);
  const valid = load<i32>(chanStart + (<usize>channels << 2));
  let h = 0;
  for (; h + 1 < valid; h += 2) {
    hypotTwo(par + (<usize>load<i32>(order + (<usize>h << 2)) << 6), par + (<usize>load<i32>(order + (<usize>(h + 1) << 2)) << 6));
  }
  if (h < valid) {
    const pp = par + (<usize>load<i32>(order + (<usize>h << 2)) << 6);
    store<f64>(pp, hypot3(load<f64>(pp), load<f64>(pp, 8), load<f64>(pp, 16)), 24);
  }

  const yStep = <usize>LL << 3;
  let q = 0;
  for (; q + 1 < valid; q += 2) {
    const pa = par + (<usize>load<i32>(order + (<usize>q << 2)) << 6);
    const pb = par + (<usize>load<i32>(order + (<usize>(q + 1) << 2)) << 6);
    const Ya = Y + <usize>q * yStep;
    const ra = load<f64>(pa, 24), rb = load<f64>(pb, 24);
    if (lmax == 0 || ra == 0 || rb == 0) {
      harmonicsOne(pa, lmax, LL, a, b, diag, y00, Ya);
      harmonicsOne(pb, lmax, LL, a, b, diag, y00, Ya + yStep);
    } else {
      harmonicsTwo(pa, pb, lmax, a, b, diag, y00, Ya, Ya + yStep);
    }
  }
  if (q < valid) harmonicsOne(par + (<usize>load<i32>(order + (<usize>q << 2)) << 6), lmax, LL, a, b, diag, y00, Y + <usize>q * yStep);

  const half = NLp >> 1;
  for (let s = 0; s < valid; s++) {
    const pp = par + (<usize>load<i32>(order + (<usize>s << 2)) << 6);
    const w = f64x2.splat(load<f64>(pp, 32));
    const k = <i32>load<f64>(pp, 40);
    const ts = load<f64>(pp, 48);
    const t2s = ts * ts;
    const t = f64x2.splat(ts), t2 = f64x2.splat(t2s), t3 = f64x2.splat(t2s * ts);
    let o = coef + (<usize>(k * half) << 6);
    let Rq = R + (<usize>(s * NLp) << 3);
    let j = 0;
    for (; j + 1 < half; j += 2) {
      const c0 = v128.load(o), c1 = v128.load(o, 16), c2 = v128.load(o, 32), c3 = v128.load(o, 48);
      const d0 = v128.load(o, 64), d1 = v128.load(o, 80), d2 = v128.load(o, 96), d3 = v128.load(o, 112);
      v128.store(Rq, f64x2.mul(w, f64x2.add(f64x2.add(f64x2.add(c0, f64x2.mul(t, c1)), f64x2.mul(t2, c2)), f64x2.mul(t3, c3))));
      v128.store(Rq, f64x2.mul(w, f64x2.add(f64x2.add(f64x2.add(d0, f64x2.mul(t, d1)), f64x2.mul(t2, d2)), f64x2.mul(t3, d3))), 16);
      o += 128;
      Rq += 32;
    }
    if (j < half) {
      const c0 = v128.load(o), c1 = v128.load(o, 16), c2 = v128.load(o, 32), c3 = v128.load(o, 48);
      v128.store(Rq, f64x2.mul(w, f64x2.add(f64x2.add(f64x2.add(c0, f64x2.mul(t, c1)), f64x2.mul(t2, c2)), f64x2.mul(t3, c3))));
    }
  }
}

/**
 * |(x, y, z)| with the operations of the JavaScript engine's Math.hypot (V8's builtin: the largest magnitude,
 * each magnitude divided by it, the squares summed in argument order with Kahan's compensation, then
 * √sum · largest), so the same bits as Math.hypot(x, y, z) (test/core/wasm: compared on many vectors). Exported
 * for that test.
 */
export function hypot3(x: f64, y: f64, z: f64): f64 {
  const ax = Math.abs(x), ay = Math.abs(y), az = Math.abs(z);
  let max: f64 = 0;
  if (ax > max) max = ax;
  if (ay > max) max = ay;
  if (az > max) max = az;
  if (max == Infinity) return Infinity;
  if (isNaN<f64>(x) || isNaN<f64>(y) || isNaN<f64>(z)) return NaN;
  if (max == 0) return 0;
  let sum: f64 = 0, compensation: f64 = 0;
  let n = ax / max;
  let summand = n * n - compensation;
  let preliminary = sum + summand;
  compensation = preliminary - sum - summand;
  sum = preliminary;
  n = ay / max;
  summand = n * n - compensation;
  preliminary = sum + summand;
  compensation = preliminary - sum - summand;
  sum = preliminary;
  n = az / max;
  summand = n * n - compensation;
  preliminary = sum + summand;
  sum = preliminary;
  return Math.sqrt(sum) * max;
}

/**
 * hypot3 of two pairs' vectors (parameters at pa and pb, finite: the caller checks) into their r, one pair per
 * lane: the largest magnitude is the same number as hypot3's running maximum (no NaN among them), and the rest
 * are its operations; a zero vector gets 0, as there.
 */
@inline
function hypotTwo(pa: usize, pb: usize): void {
  const ax = f64x2.abs(f64x2(load<f64>(pa), load<f64>(pb)));
  const ay = f64x2.abs(f64x2(load<f64>(pa, 8), load<f64>(pb, 8)));
  const az = f64x2.abs(f64x2(load<f64>(pa, 16), load<f64>(pb, 16)));
  const max = f64x2.max(f64x2.max(ax, ay), az);
  let sum = f64x2.splat(0), compensation = f64x2.splat(0);
  let n = f64x2.div(ax, max);
  let summand = f64x2.sub(f64x2.mul(n, n), compensation);
  let preliminary = f64x2.add(sum, summand);
  compensation = f64x2.sub(f64x2.sub(preliminary, sum), summand);
  sum = preliminary;
  n = f64x2.div(ay, max);
  summand = f64x2.sub(f64x2.mul(n, n), compensation);
  preliminary = f64x2.add(sum, summand);
  compensation = f64x2.sub(f64x2.sub(preliminary, sum), summand);
  sum = preliminary;
  n = f64x2.div(az, max);
  summand = f64x2.sub(f64x2.mul(n, n), compensation);
  sum = f64x2.add(sum, summand);
  const r = v128.bitselect(f64x2.splat(0), f64x2.mul(f64x2.sqrt(sum), max), f64x2.eq(max, f64x2.splat(0)));
  v128.store64_lane(pa + 24, r, 0);
  v128.store64_lane(pb + 24, r, 1);
}

/** One pair's harmonics (parameters at q) into Y, as harmonics.ts harmonicsAt computes them; r = 0: Y_00 only. */
function harmonicsOne(q: usize, lmax: i32, LL: i32, a: usize, b: usize, diag: usize, y00: f64, Yp: usize): void {
  const x = load<f64>(q), y = load<f64>(q, 8), z = load<f64>(q, 16), r = load<f64>(q, 24);
  store<f64>(Yp, y00);
  if (lmax == 0) return;
  if (r == 0) {
    for (let i = 1; i < LL; i++) store<f64>(Yp + (<usize>i << 3), 0);
    return;
  }
  const ux = x / r, uy = y / r, uz = z / r;
  let pmm = y00;
  let cm: f64 = 1, sm: f64 = 0;
  for (let m = 0; m <= lmax; m++) {
    if (m > 0) {
      pmm *= load<f64>(diag + (<usize>m << 3));
      const c = cm * ux - sm * uy;
      sm = cm * uy + sm * ux;
      cm = c;
    }
    const scaleC: f64 = m == 0 ? 1 : Math.SQRT2 * cm;
    const scaleS = Math.SQRT2 * sm;
    let p2 = pmm;
    putHarmonic(Yp, m, m, p2, scaleC, scaleS);
    if (m == lmax) break;
    let p1 = Math.sqrt(<f64>(2 * m + 3)) * uz * pmm;
    putHarmonic(Yp, m + 1, m, p1, scaleC, scaleS);
    for (let l = m + 2; l <= lmax; l++) {
      const kk = <usize>((l * (l + 1)) / 2 + m) << 3;
      const v = load<f64>(a + kk) * (uz * p1 - load<f64>(b + kk) * p2);
      putHarmonic(Yp, l, m, v, scaleC, scaleS);
      p2 = p1;
      p1 = v;
    }
  }
}

@inline
function putHarmonic(Y: usize, l: i32, m: i32, p: f64, scaleC: f64, scaleS: f64): void {
  const centre = l * l + l;
  if (m == 0) {
    store<f64>(Y + (<usize>centre << 3), p);
  } else {
    store<f64>(Y + (<usize>(centre + m) << 3), p * scaleC);
    store<f64>(Y + (<usize>(centre - m) << 3), p * scaleS);
  }
}

/**
 * harmonicsOne for two pairs at once (parameters at qa and qb, both r ≠ 0, lmax ≥ 1), one in each lane: every
 * value by the same operations in the same order, so the same bits.
 */
function harmonicsTwo(qa: usize, qb: usize, lmax: i32, a: usize, b: usize, diag: usize, y00: f64, Ya: usize, Yb: usize): void {
  const x = f64x2(load<f64>(qa), load<f64>(qb));
  const y = f64x2(load<f64>(qa, 8), load<f64>(qb, 8));
  const z = f64x2(load<f64>(qa, 16), load<f64>(qb, 16));
  const r = f64x2(load<f64>(qa, 24), load<f64>(qb, 24));
  store<f64>(Ya, y00);
  store<f64>(Yb, y00);
  const ux = f64x2.div(x, r), uy = f64x2.div(y, r), uz = f64x2.div(z, r);
  const root2 = f64x2.splat(Math.SQRT2);
  let pmm = f64x2.splat(y00);
  let cm = f64x2.splat(1), sm = f64x2.splat(0);
  for (let m = 0; m <= lmax; m++) {
    if (m > 0) {
      pmm = f64x2.mul(pmm, v128.load64_splat(diag + (<usize>m << 3)));
      const c = f64x2.sub(f64x2.mul(cm, ux), f64x2.mul(sm, uy));
      sm = f64x2.add(f64x2.mul(cm, uy), f64x2.mul(sm, ux));
      cm = c;
    }
    const scaleC = f64x2.mul(root2, cm);
    const scaleS = f64x2.mul(root2, sm);
    let p2 = pmm;
    putHarmonicTwo(Ya, Yb, m, m, p2, scaleC, scaleS);
    if (m == lmax) break;
    let p1 = f64x2.mul(f64x2.mul(f64x2.splat(Math.sqrt(<f64>(2 * m + 3))), uz), pmm);
    putHarmonicTwo(Ya, Yb, m + 1, m, p1, scaleC, scaleS);
    for (let l = m + 2; l <= lmax; l++) {
      const kk = <usize>((l * (l + 1)) / 2 + m) << 3;
      const v = f64x2.mul(v128.load64_splat(a + kk), f64x2.sub(f64x2.mul(uz, p1), f64x2.mul(v128.load64_splat(b + kk), p2)));
      putHarmonicTwo(Ya, Yb, l, m, v, scaleC, scaleS);
      p2 = p1;
      p1 = v;
    }
  }
}

/** putHarmonic of lane 0 into Ya and lane 1 into Yb (m = 0: p itself, as scaleC = 1 there). */
@inline
function putHarmonicTwo(Ya: usize, Yb: usize, l: i32, m: i32, p: v128, scaleC: v128, scaleS: v128): void {
  const centre = <usize>(l * l + l) << 3;
  if (m == 0) {
    v128.store64_lane(Ya + centre, p, 0);
    v128.store64_lane(Yb + centre, p, 1);
  } else {
    const c = f64x2.mul(p, scaleC), s = f64x2.mul(p, scaleS);
    const up = <usize>m << 3;
    v128.store64_lane(Ya + centre + up, c, 0);
    v128.store64_lane(Yb + centre + up, c, 1);
    v128.store64_lane(Ya + centre - up, s, 0);
    v128.store64_lane(Yb + centre - up, s, 1);
  }
}

// ---------------------------------------------------------------------------------------------------------------
// The λ > 0 read-out of one environment (core/learning/tensor-readout.ts readOne), here beside the density
// expansion so that it reads the coefficients where the expansion wrote them.

/**
 * A tile of two rows (i, i + 1) by nv lane pairs of columns (j … j + 2nv − 1) of product's out: each sum from zero
 * over k < kEnd in order. A(i, k) at aTab[k] + aOff, A(i + 1, k) one row (ai bytes) further; B(k, j) at bTab[k] +
 * jb. With `odd`, the last lane pair holds one column: its second lane (one double past the row, readable) is
 * dropped. nv is a constant at every call, so the compiler keeps only its branches.
 */
// @ts-ignore: decorator
@inline function tileTwo(nv: i32, aTab: usize, aOff: usize, ai: usize, bTab: usize, jb: usize, kEnd: i32, p0: usize, p1: usize, odd: bool): void {
  const zero = f64x2.splat(0);
  let s00 = zero, s01 = zero, s02 = zero, s03 = zero;
  let s10 = zero, s11 = zero, s12 = zero, s13 = zero;
  for (let k = 0; k < kEnd; k++) {
    const pa = <usize>load<u32>(aTab + (<usize>k << 2)) + aOff;
    const pb = <usize>load<u32>(bTab + (<usize>k << 2)) + jb;
    const x0 = v128.load64_splat(pa);
    const x1 = v128.load64_splat(pa + ai);
    const b0 = v128.load(pb);
    s00 = f64x2.add(s00, f64x2.mul(x0, b0));
    s10 = f64x2.add(s10, f64x2.mul(x1, b0));
    if (nv > 1) {
      const b1 = v128.load(pb, 16);
      s01 = f64x2.add(s01, f64x2.mul(x0, b1));
      s11 = f64x2.add(s11, f64x2.mul(x1, b1));
    }
    if (nv > 2) {
      const b2 = v128.load(pb, 32);
      s02 = f64x2.add(s02, f64x2.mul(x0, b2));
      s12 = f64x2.add(s12, f64x2.mul(x1, b2));
    }
    if (nv > 3) {
      const b3 = v128.load(pb, 48);
      s03 = f64x2.add(s03, f64x2.mul(x0, b3));
      s13 = f64x2.add(s13, f64x2.mul(x1, b3));
    }
  }
  putTile(nv, p0 + jb, odd, s00, s01, s02, s03);
  putTile(nv, p1 + jb, odd, s10, s11, s12, s13);
}

/** tileTwo for one row. */
// @ts-ignore: decorator
@inline function tileOne(nv: i32, aTab: usize, aOff: usize, bTab: usize, jb: usize, kEnd: i32, p0: usize, odd: bool): void {
  const zero = f64x2.splat(0);
  let s0 = zero, s1 = zero, s2 = zero, s3 = zero;
  for (let k = 0; k < kEnd; k++) {
    const x = v128.load64_splat(<usize>load<u32>(aTab + (<usize>k << 2)) + aOff);
    const pb = <usize>load<u32>(bTab + (<usize>k << 2)) + jb;
    s0 = f64x2.add(s0, f64x2.mul(x, v128.load(pb)));
    if (nv > 1) s1 = f64x2.add(s1, f64x2.mul(x, v128.load(pb, 16)));
    if (nv > 2) s2 = f64x2.add(s2, f64x2.mul(x, v128.load(pb, 32)));
    if (nv > 3) s3 = f64x2.add(s3, f64x2.mul(x, v128.load(pb, 48)));
  }
  putTile(nv, p0 + jb, odd, s0, s1, s2, s3);
}

/** Stores nv lane pairs from o (the last one's first lane only, with `odd`). */
// @ts-ignore: decorator
@inline function putTile(nv: i32, o: usize, odd: bool, s0: v128, s1: v128, s2: v128, s3: v128): void {
  if (nv == 1) {
    if (odd) v128.store64_lane(o, s0, 0);
    else v128.store(o, s0);
  } else v128.store(o, s0);
  if (nv == 2) {
    if (odd) v128.store64_lane(o, s1, 0, 16);
    else v128.store(o, s1, 16);
  } else if (nv > 2) v128.store(o, s1, 16);
  if (nv == 3) {
    if (odd) v128.store64_lane(o, s2, 0, 32);
    else v128.store(o, s2, 32);
  } else if (nv > 3) v128.store(o, s2, 32);
  if (nv == 4) {
    if (odd) v128.store64_lane(o, s3, 0, 48);
    else v128.store(o, s3, 48);
  }
}

/**
 * out[i·os + j] = Σ_k A(i, k) · B(k, j) for i < rows, j < cols, each sum over k ascending from zero, where
 * A(i, k) is the double at aTab[k] + i·ai and B(k, j) the double at bTab[k] + 8j (aTab, bTab: tables of byte
 * addresses, one per k; B readable one double past each row). Two rows at a time, the columns in tiles of eight
 * and then one tile of the two to seven left; an odd last row alone. With `upper`, the sum for a tile of columns
 * [j, j + t) stops at k = min(K, j + t): the terms it still takes with k > j' for a column j' of the tile are
 * products with the zeros of an upper-triangular B, which add nothing to a sum that starts from +0, so every
 * value equals the one of the plain loop over k ≤ j'. With `sym` (A and B the same matrix, rows = cols), only the
 * tiles on and right of the diagonal are computed and the rest copied across it: out[j·os + i] = Σ_k A(j, k) A(i, k)
 * has the very products of out[i·os + j] (a product does not depend on the order of its factors), summed in the
 * same order.
 */
function productTiles(aTab: usize, ai: usize, bTab: usize, rows: i32, cols: i32, K: i32, upper: bool, sym: bool, out: usize, os: usize): void {
  const outRow = os << 3;
  let i = 0;
  for (; i + 1 < rows; i += 2) {
    const aOff = <usize>i * ai;
    const p0 = out + <usize>i * outRow;
    const p1 = p0 + outRow;
    let j = sym ? i : 0;
    for (; j + 7 < cols; j += 8) tileTwo(4, aTab, aOff, ai, bTab, <usize>j << 3, upper ? min(K, j + 8) : K, p0, p1, false);
    const rest = cols - j;
    if (rest > 0) {
      const jb = <usize>j << 3;
      const odd = (rest & 1) != 0;
      const kEnd = upper ? min(K, j + rest + (rest & 1)) : K;
      if (rest <= 2) tileTwo(1, aTab, aOff, ai, bTab, jb, kEnd, p0, p1, odd);
      else if (rest <= 4) tileTwo(2, aTab, aOff, ai, bTab, jb, kEnd, p0, p1, odd);
      else if (rest <= 6) tileTwo(3, aTab, aOff, ai, bTab, jb, kEnd, p0, p1, odd);
      else tileTwo(4, aTab, aOff, ai, bTab, jb, kEnd, p0, p1, odd);
    }
  }
  if (i < rows) {
    const aOff = <usize>i * ai;
    const p0 = out + <usize>i * outRow;
    let j = sym ? i : 0;
    for (; j + 7 < cols; j += 8) tileOne(4, aTab, aOff, bTab, <usize>j << 3, upper ? min(K, j + 8) : K, p0, false);
    const rest = cols - j;
    if (rest > 0) {
      const jb = <usize>j << 3;
      const odd = (rest & 1) != 0;
      const kEnd = upper ? min(K, j + rest + (rest & 1)) : K;
      if (rest <= 2) tileOne(1, aTab, aOff, bTab, jb, kEnd, p0, odd);
      else if (rest <= 4) tileOne(2, aTab, aOff, bTab, jb, kEnd, p0, odd);
      else if (rest <= 6) tileOne(3, aTab, aOff, bTab, jb, kEnd, p0, odd);
      else tileOne(4, aTab, aOff, bTab, jb, kEnd, p0, odd);
    }
  }
  if (sym) {
    for (let r = 1; r < rows; r++) {
      for (let q = 0; q < r; q++) store<f64>(out + <usize>r * outRow + (<usize>q << 3), load<f64>(out + <usize>q * outRow + (<usize>r << 3)));
    }
  }
}

/** Fills tab[k] = base + 8·(off[k] + shift) for k < n (byte addresses of a coefficient column). */
function addressTable(tab: usize, base: usize, off: usize, shift: i32, n: i32): void {
  for (let k = 0; k < n; k++) store<u32>(tab + (<usize>k << 2), <u32>(base + (<usize>(load<i32>(off + (<usize>k << 2)) + shift) << 3)));
}

/** Fills tab[k] = base + k·step for k < n. */
function stepTable(tab: usize, base: usize, step: usize, n: i32): void {
  for (let k = 0; k < n; k++) store<u32>(tab + (<usize>k << 2), <u32>(base + <usize>k * step));
}

/**
 * The read-out of one environment, as tensor-readout.ts readOne computes it: y[μ] for μ < 2λ+1 from the density
 * coefficients at `c` (the expander's layout, readable two doubles past its end) and the weight matrices at `W`
 * (one channels × channels matrix per block, readable two doubles past the end). `plan` is the table the wrapper
 * writes (core/learning/tensor-readout.ts layoutPlan): i32 words tch, nM, nL, blocks, then byte addresses
 * of the channel offsets, the per-degree Gram addresses, the left and both scratch, the block records and two
 * address tables; each block record holds l, l2, the byte offset of its matrix in W and the addresses of its
 * muStart, e1, e2 (i32) and ev (f64) tables. Every number a product of readOne's in readOne's order.
 */
export function readOut(plan: usize, c: usize, W: usize, y: usize): void {
  const tch = load<i32>(plan);
  const nM = load<i32>(plan, 4);
  const nL = load<i32>(plan, 8);
  const nB = load<i32>(plan, 12);
  const chOff = <usize>load<u32>(plan, 16);
  const gramAt = <usize>load<u32>(plan, 20);
  const left = <usize>load<u32>(plan, 24);
  const both = <usize>load<u32>(plan, 28);
  const blocks = <usize>load<u32>(plan, 32);
  const tabA = <usize>load<u32>(plan, 36);
  const tabB = <usize>load<u32>(plan, 40);
  // Gram matrices of every degree (exactly symmetric: one triangle computed, copied across)
  for (let l = 0; l < nL; l++) {
    const w = 2 * l + 1;
    addressTable(tabA, c, chOff, l * l, tch);
    productTiles(tabA, 8, tabA, w, w, tch, false, true, <usize>load<u32>(gramAt + (<usize>l << 2)), <usize>w);
  }
  for (let mu = 0; mu < nM; mu++) f64.store(y + (<usize>mu << 3), 0);
  let norm2: f64 = 0;
  for (let b = 0; b < nB; b++) {
    const rec = blocks + (<usize>b << 5);
    const l = load<i32>(rec);
    const l2 = load<i32>(rec, 4);
    const wb = <usize>load<u32>(rec, 8);
    const muStart = <usize>load<u32>(rec, 12);
    const e1 = <usize>load<u32>(rec, 16);
    const e2 = <usize>load<u32>(rec, 20);
    const ev = <usize>load<u32>(rec, 24);
    const w1 = 2 * l + 1;
    const w2 = 2 * l2 + 1;
    // left = Aᵀ W (w1 × channels); an l = l' block's W is upper triangular
    addressTable(tabA, c, chOff, l * l, tch);
    stepTable(tabB, W + wb, <usize>tch << 3, tch);
    productTiles(tabA, 8, tabB, w1, tch, tch, l == l2, false, left, <usize>tch);
    // both = Aᵀ W B (w1 × w2)
    stepTable(tabA, left, 8, tch);
    addressTable(tabB, c, chOff, l2 * l2, tch);
    productTiles(tabA, <usize>tch << 3, tabB, w1, w2, tch, false, false, both, <usize>w2);
    const ga = <usize>load<u32>(gramAt + (<usize>l << 2));
    const gb = <usize>load<u32>(gramAt + (<usize>l2 << 2));
    let blockNorm: f64 = 0;
    for (let mu = 0; mu < nM; mu++) {
      const k0 = load<i32>(muStart + (<usize>mu << 2));
      const k1 = load<i32>(muStart + (<usize>(mu + 1) << 2));
      let s: f64 = 0;
      for (let k = k0; k < k1; k++) {
        const a1 = load<i32>(e1 + (<usize>k << 2));
        const a2 = load<i32>(e2 + (<usize>k << 2));
        s += f64.load(ev + (<usize>k << 3)) * f64.load(both + (<usize>(a1 * w2 + a2) << 3));
      }
      const yp = y + (<usize>mu << 3);
      f64.store(yp, f64.load(yp) + s);
      // the norm's terms t_k = ½ v_k G_A[m_k, m_k] G_B[m'_k, m'_k] + Σ_{k' < k} v_k' G_A[m_k, m_k'] G_B[m'_k, m'_k'],
      // four k side by side (four chains of additions, each in its k' order), added to blockNorm in k order
      let k = k0;
      for (; k + 3 < k1; k += 4) {
        const kb = <usize>k << 2;
        const i0 = load<i32>(e1 + kb), i1 = load<i32>(e1 + kb, 4), i2 = load<i32>(e1 + kb, 8), i3 = load<i32>(e1 + kb, 12);
        const j0 = load<i32>(e2 + kb), j1 = load<i32>(e2 + kb, 4), j2 = load<i32>(e2 + kb, 8), j3 = load<i32>(e2 + kb, 12);
        const vb = ev + (<usize>k << 3);
        const v0 = f64.load(vb), v1 = f64.load(vb, 8), v2 = f64.load(vb, 16), v3 = f64.load(vb, 24);
        const ra0 = ga + (<usize>(i0 * w1) << 3), ra1 = ga + (<usize>(i1 * w1) << 3), ra2 = ga + (<usize>(i2 * w1) << 3), ra3 = ga + (<usize>(i3 * w1) << 3);
        const rb0 = gb + (<usize>(j0 * w2) << 3), rb1 = gb + (<usize>(j1 * w2) << 3), rb2 = gb + (<usize>(j2 * w2) << 3), rb3 = gb + (<usize>(j3 * w2) << 3);
        let t0 = 0.5 * v0 * f64.load(ra0 + (<usize>i0 << 3)) * f64.load(rb0 + (<usize>j0 << 3));
        let t1 = 0.5 * v1 * f64.load(ra1 + (<usize>i1 << 3)) * f64.load(rb1 + (<usize>j1 << 3));
        let t2 = 0.5 * v2 * f64.load(ra2 + (<usize>i2 << 3)) * f64.load(rb2 + (<usize>j2 << 3));
        let t3 = 0.5 * v3 * f64.load(ra3 + (<usize>i3 << 3)) * f64.load(rb3 + (<usize>j3 << 3));
        for (let k2 = k0; k2 < k; k2++) {
          const v = f64.load(ev + (<usize>k2 << 3));
          const x = <usize>load<i32>(e1 + (<usize>k2 << 2)) << 3;
          const z = <usize>load<i32>(e2 + (<usize>k2 << 2)) << 3;
          t0 += v * f64.load(ra0 + x) * f64.load(rb0 + z);
          t1 += v * f64.load(ra1 + x) * f64.load(rb1 + z);
          t2 += v * f64.load(ra2 + x) * f64.load(rb2 + z);
          t3 += v * f64.load(ra3 + x) * f64.load(rb3 + z);
        }
        // k' = k, k + 1, k + 2 for the chains they precede
        const x0 = <usize>i0 << 3, z0 = <usize>j0 << 3, x1 = <usize>i1 << 3, z1 = <usize>j1 << 3, x2 = <usize>i2 << 3, z2 = <usize>j2 << 3;
        t1 += v0 * f64.load(ra1 + x0) * f64.load(rb1 + z0);
        t2 += v0 * f64.load(ra2 + x0) * f64.load(rb2 + z0);
        t3 += v0 * f64.load(ra3 + x0) * f64.load(rb3 + z0);
        t2 += v1 * f64.load(ra2 + x1) * f64.load(rb2 + z1);
        t3 += v1 * f64.load(ra3 + x1) * f64.load(rb3 + z1);
        t3 += v2 * f64.load(ra3 + x2) * f64.load(rb3 + z2);
        blockNorm += 2 * v0 * t0;
        blockNorm += 2 * v1 * t1;
        blockNorm += 2 * v2 * t2;
        blockNorm += 2 * v3 * t3;
      }
      for (; k < k1; k++) {
        const a1 = load<i32>(e1 + (<usize>k << 2));
        const a2 = load<i32>(e2 + (<usize>k << 2));
        const vk = f64.load(ev + (<usize>k << 3));
        const ra = ga + (<usize>(a1 * w1) << 3);
        const rb = gb + (<usize>(a2 * w2) << 3);
        let t = 0.5 * vk * f64.load(ra + (<usize>a1 << 3)) * f64.load(rb + (<usize>a2 << 3));
        for (let k2 = k0; k2 < k; k2++) {
          t += f64.load(ev + (<usize>k2 << 3)) * f64.load(ra + (<usize>load<i32>(e1 + (<usize>k2 << 2)) << 3)) * f64.load(rb + (<usize>load<i32>(e2 + (<usize>k2 << 2)) << 3));
        }
        blockNorm += 2 * vk * t;
      }
    }
    norm2 += l == l2 ? blockNorm : 2 * blockNorm;
  }
  if (norm2 > 0 && norm2 < Infinity) {
    const inv = 1 / Math.sqrt(norm2);
    for (let mu = 0; mu < nM; mu++) {
      const yp = y + (<usize>mu << 3);
      f64.store(yp, f64.load(yp) * inv);
    }
  } else {
    // a zero block (a lone atom's λ = 2) stays zero
    for (let mu = 0; mu < nM; mu++) f64.store(y + (<usize>mu << 3), 0);
  }
}
