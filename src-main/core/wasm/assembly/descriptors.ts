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
 * out[μ·n + j·stride] = weight_j · Σ_{m < w} half[μ·w + m] · cT[m·tch + p0 + j] for j < count and μ < nM, each sum
 * from zero in m order; weight_0 = wFirst, the others wRest.
 */
@inline
function contract(half: usize, nM: i32, w: i32, cT: usize, tch: i32, p0: i32, count: i32, out: usize, n: i32, stride: i32, wFirst: f64, wRest: f64): void {
  const rowBytes = <usize>tch << 3;
  const rest = f64x2.splat(wRest);
  const step = <usize>stride << 3;
  for (let mu = 0; mu < nM; mu++) {
    const hb = half + (<usize>(mu * w) << 3);
    const ob = out + (<usize>(mu * n) << 3);
    let j = 0;
    for (; j + 7 < count; j += 8) {
      let s0 = f64x2.splat(0);
      let s1 = f64x2.splat(0);
      let s2 = f64x2.splat(0);
      let s3 = f64x2.splat(0);
      let col = cT + (<usize>(p0 + j) << 3);
      for (let m = 0; m < w; m++) {
        const h = v128.load64_splat(hb + (<usize>m << 3));
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
        s0 = f64x2.add(s0, f64x2.mul(v128.load64_splat(hb + (<usize>m << 3)), v128.load(col)));
        col += rowBytes;
      }
      let r0 = f64x2.mul(rest, s0);
      if (j == 0) r0 = f64x2.replace_lane(r0, 0, wFirst * f64x2.extract_lane(s0, 0));
      if (stride == 1) {
        v128.store(ob + (<usize>j << 3), r0);
      } else {
        const o = ob + <usize>j * step;
        store<f64>(o, f64x2.extract_lane(r0, 0));
        store<f64>(o + step, f64x2.extract_lane(r0, 1));
      }
    }
    if (j < count) {
      let s: f64 = 0;
      let col = cT + (<usize>(p0 + j) << 3);
      for (let m = 0; m < w; m++) {
        s += load<f64>(hb + (<usize>m << 3)) * load<f64>(col);
        col += rowBytes;
      }
      store<f64>(ob + <usize>j * step, (j == 0 ? wFirst : wRest) * s);
    }
  }
}

/**
 * A block (l, l) of one environment: for each first channel c1 the half-coupling over its degree-l coefficients,
 * then the partners c2 = c1 … tch−1 (weight 1 for c2 = c1, √2 otherwise) into out[μ·n + f], f running on from
 * the block's first feature. cT: the degree-l coefficients transposed; w = 2l + 1.
 */
export function coupleSame(cT: usize, tch: i32, w: i32, nM: i32, gStart: usize, gIdx: usize, gVal: usize, half: usize, out: usize, n: i32): void {
  const targets = nM * w;
  let f = out;
  for (let c1 = 0; c1 < tch; c1++) {
    gather(cT, tch, c1, targets, gStart, gIdx, gVal, half);
    contract(half, nM, w, cT, tch, c1, tch - c1, f, n, 1, 1.0, Math.SQRT2);
    f += <usize>(tch - c1) << 3;
  }
}

/**
 * A block (l, l2), l < l2, of one environment: for each channel c2 of degree l2 (held: the half-coupling over its
 * coefficients cT2) every channel c1 of degree l (cT, w = 2l + 1) into out[μ·n + c1·tch + c2], weight √2.
 */
export function coupleCross(cT: usize, cT2: usize, tch: i32, w: i32, nM: i32, gStart: usize, gIdx: usize, gVal: usize, half: usize, out: usize, n: i32): void {
  const targets = nM * w;
  for (let c2 = 0; c2 < tch; c2++) {
    gather(cT2, tch, c2, targets, gStart, gIdx, gVal, half);
    contract(half, nM, w, cT, tch, 0, tch, out + (<usize>c2 << 3), n, tch, Math.SQRT2, Math.SQRT2);
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
  const inv = 1 / Math.sqrt(s);
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
  return s;
}
