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

/**
 * The density expansion's accumulation for one centre (core/descriptors/density.ts): with y_p = Y[p·LL + lm] the
 * harmonics and r_p = R[p·NL + l·nmax + n] the weighted radial integrals of pair p (p < count, of channel chan[p];
 * −1 for pairs left out), acc[(a·LL + lm)·nmax + n] = Σ_p y_p r_p over the pairs of channel a in pair order (each
 * sum from zero; four pairs per pass over the accumulators, two n per vector), then written to
 * out[(a·nmax + n)·LL + lm] with selfTerm[n] added to the l = 0 slot of channel centreChannel (when ≥ 0).
 * idx: scratch for count Int32 pair indices; acc: scratch for channels·LL·nmax doubles.
 */
export function expandAccumulate(Y: usize, R: usize, chan: usize, count: i32, nmax: i32, lmax: i32, channels: i32, idx: usize, acc: usize, out: usize, selfTerm: usize, centreChannel: i32): void {
  const L1 = lmax + 1;
  const LL = L1 * L1;
  const NL = nmax * L1;
  const size = channels * LL * nmax;
  memory.fill(acc, 0, <usize>size << 3);
  const pairBytesY = <usize>LL << 3;
  const pairBytesR = <usize>NL << 3;
  const nv = nmax & ~1;
  for (let a = 0; a < channels; a++) {
    // this channel's pairs, in order
    let np = 0;
    for (let p = 0; p < count; p++) {
      if (load<i32>(chan + (<usize>p << 2)) == a) {
        store<i32>(idx + (<usize>np << 2), p);
        np++;
      }
    }
    const base = acc + (<usize>(a * LL * nmax) << 3);
    let q = 0;
    for (; q + 3 < np; q += 4) {
      const p0 = <usize>load<i32>(idx + (<usize>q << 2));
      const p1 = <usize>load<i32>(idx + (<usize>(q + 1) << 2));
      const p2 = <usize>load<i32>(idx + (<usize>(q + 2) << 2));
      const p3 = <usize>load<i32>(idx + (<usize>(q + 3) << 2));
      const y0 = Y + p0 * pairBytesY, y1 = Y + p1 * pairBytesY, y2 = Y + p2 * pairBytesY, y3 = Y + p3 * pairBytesY;
      const r0 = R + p0 * pairBytesR, r1 = R + p1 * pairBytesR, r2 = R + p2 * pairBytesR, r3 = R + p3 * pairBytesR;
      for (let l = 0; l <= lmax; l++) {
        const rb = <usize>(l * nmax) << 3;
        const hi = (l + 1) * (l + 1);
        for (let lm = l * l; lm < hi; lm++) {
          const yo = <usize>lm << 3;
          const v0 = v128.load64_splat(y0 + yo), v1 = v128.load64_splat(y1 + yo), v2 = v128.load64_splat(y2 + yo), v3 = v128.load64_splat(y3 + yo);
          const s0 = load<f64>(y0 + yo), s1 = load<f64>(y1 + yo), s2 = load<f64>(y2 + yo), s3 = load<f64>(y3 + yo);
          const ob = base + (<usize>(lm * nmax) << 3);
          let n = 0;
          for (; n < nv; n += 2) {
            const no = <usize>n << 3;
            let x = v128.load(ob + no);
            x = f64x2.add(x, f64x2.mul(v0, v128.load(r0 + rb + no)));
            x = f64x2.add(x, f64x2.mul(v1, v128.load(r1 + rb + no)));
            x = f64x2.add(x, f64x2.mul(v2, v128.load(r2 + rb + no)));
            x = f64x2.add(x, f64x2.mul(v3, v128.load(r3 + rb + no)));
            v128.store(ob + no, x);
          }
          if (n < nmax) {
            const no = <usize>n << 3;
            let x = load<f64>(ob + no);
            x += s0 * load<f64>(r0 + rb + no);
            x += s1 * load<f64>(r1 + rb + no);
            x += s2 * load<f64>(r2 + rb + no);
            x += s3 * load<f64>(r3 + rb + no);
            store<f64>(ob + no, x);
          }
        }
      }
    }
    for (; q < np; q++) {
      const p0 = <usize>load<i32>(idx + (<usize>q << 2));
      const y0 = Y + p0 * pairBytesY;
      const r0 = R + p0 * pairBytesR;
      for (let l = 0; l <= lmax; l++) {
        const rb = <usize>(l * nmax) << 3;
        const hi = (l + 1) * (l + 1);
        for (let lm = l * l; lm < hi; lm++) {
          const yo = <usize>lm << 3;
          const v0 = v128.load64_splat(y0 + yo);
          const s0 = load<f64>(y0 + yo);
          const ob = base + (<usize>(lm * nmax) << 3);
          let n = 0;
          for (; n < nv; n += 2) {
            const no = <usize>n << 3;
            v128.store(ob + no, f64x2.add(v128.load(ob + no), f64x2.mul(v0, v128.load(r0 + rb + no))));
          }
          if (n < nmax) {
            const no = <usize>n << 3;
            store<f64>(ob + no, load<f64>(ob + no) + s0 * load<f64>(r0 + rb + no));
          }
        }
      }
    }
  }
  // back to the public layout (a·nmax + n)·LL + lm, plus the centre's own Gaussian
  for (let a = 0; a < channels; a++) {
    for (let lm = 0; lm < LL; lm++) {
      const src = acc + (<usize>((a * LL + lm) * nmax) << 3);
      for (let n = 0; n < nmax; n++) store<f64>(out + (<usize>((a * nmax + n) * LL + lm) << 3), load<f64>(src + (<usize>n << 3)));
    }
  }
  if (centreChannel >= 0) {
    for (let n = 0; n < nmax; n++) {
      const at = out + (<usize>((centreChannel * nmax + n) * LL) << 3);
      store<f64>(at, load<f64>(at) + load<f64>(selfTerm + (<usize>n << 3)));
    }
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
 * (transposeChannels).
 */
export function powerSpectrumRow(cT: usize, nch: i32, lmax: i32, invSqrt: usize, out: usize): void {
  const L1 = lmax + 1;
  const rowBytes = <usize>nch << 3;
  const pairStep = <usize>L1 << 3;
  let f = out;
  for (let c1 = 0; c1 < nch; c1++) {
    const count = nch - c1;
    for (let l = 0; l <= lmax; l++) {
      const w = 2 * l + 1;
      const v = load<f64>(invSqrt + (<usize>l << 3));
      const wv = Math.SQRT2 * v;
      const vwv = f64x2.splat(wv);
      const cl = cT + (<usize>(nch * l * l) << 3);
      const a = cl + (<usize>c1 << 3);
      let o = f + (<usize>l << 3);
      let j = 0;
      for (; j + 7 < count; j += 8) {
        let s0 = f64x2.splat(0);
        let s1 = f64x2.splat(0);
        let s2 = f64x2.splat(0);
        let s3 = f64x2.splat(0);
        let col = cl + (<usize>(c1 + j) << 3);
        let am = a;
        for (let m = 0; m < w; m++) {
          const x = v128.load64_splat(am);
          s0 = f64x2.add(s0, f64x2.mul(x, v128.load(col)));
          s1 = f64x2.add(s1, f64x2.mul(x, v128.load(col, 16)));
          s2 = f64x2.add(s2, f64x2.mul(x, v128.load(col, 32)));
          s3 = f64x2.add(s3, f64x2.mul(x, v128.load(col, 48)));
          col += rowBytes;
          am += rowBytes;
        }
        const r0 = f64x2.mul(vwv, s0), r1 = f64x2.mul(vwv, s1), r2 = f64x2.mul(vwv, s2), r3 = f64x2.mul(vwv, s3);
        store<f64>(o, j == 0 ? v * f64x2.extract_lane(s0, 0) : f64x2.extract_lane(r0, 0));
        store<f64>(o + pairStep, f64x2.extract_lane(r0, 1));
        store<f64>(o + 2 * pairStep, f64x2.extract_lane(r1, 0));
        store<f64>(o + 3 * pairStep, f64x2.extract_lane(r1, 1));
        store<f64>(o + 4 * pairStep, f64x2.extract_lane(r2, 0));
        store<f64>(o + 5 * pairStep, f64x2.extract_lane(r2, 1));
        store<f64>(o + 6 * pairStep, f64x2.extract_lane(r3, 0));
        store<f64>(o + 7 * pairStep, f64x2.extract_lane(r3, 1));
        o += 8 * pairStep;
      }
      for (; j + 1 < count; j += 2) {
        let s0 = f64x2.splat(0);
        let col = cl + (<usize>(c1 + j) << 3);
        let am = a;
        for (let m = 0; m < w; m++) {
          s0 = f64x2.add(s0, f64x2.mul(v128.load64_splat(am), v128.load(col)));
          col += rowBytes;
          am += rowBytes;
        }
        const r0 = f64x2.mul(vwv, s0);
        store<f64>(o, j == 0 ? v * f64x2.extract_lane(s0, 0) : f64x2.extract_lane(r0, 0));
        store<f64>(o + pairStep, f64x2.extract_lane(r0, 1));
        o += 2 * pairStep;
      }
      if (j < count) {
        let s: f64 = 0;
        let col = cl + (<usize>(c1 + j) << 3);
        let am = a;
        for (let m = 0; m < w; m++) {
          s += load<f64>(am) * load<f64>(col);
          col += rowBytes;
          am += rowBytes;
        }
        store<f64>(o, (j == 0 ? v : wv) * s);
      }
    }
    f += <usize>count * pairStep;
  }
}

/**
 * Every pair's harmonics and weighted radial integrals for expandAccumulate (core/descriptors/density.ts): pair p's
 * parameters at par[8p…]: x, y, z (its vector), r (|vector| as Math.hypot gives it), w (the cutoff weight 4π f_c),
 * k (the table's interval), t (the position in it); pairs with chan[p] < 0 are skipped. Y[p·LL + l² + l + m]: the
 * real harmonics by the recurrences of harmonics.ts (tables: a, b at l(l+1)/2 + m, diag at m; y00 = 1/√(4π));
 * R[p·NL + j] = w · (c0 + t c1 + t² c2 + t³ c3) from the reordered table coef[(k·NL + j)·4 + power].
 */
export function pairTerms(par: usize, chan: usize, count: i32, lmax: i32, NL: i32, a: usize, b: usize, diag: usize, y00: f64, coef: usize, Y: usize, R: usize): void {
  const L1 = lmax + 1;
  const LL = L1 * L1;
  for (let p = 0; p < count; p++) {
    if (load<i32>(chan + (<usize>p << 2)) < 0) continue;
    const q = par + (<usize>p << 6);
    const x = load<f64>(q), y = load<f64>(q, 8), z = load<f64>(q, 16), r = load<f64>(q, 24);
    const w = load<f64>(q, 32), k = <i32>load<f64>(q, 40), t = load<f64>(q, 48);
    const Yp = Y + (<usize>(p * LL) << 3);
    store<f64>(Yp, y00);
    if (lmax > 0) {
      if (r == 0) {
        for (let i = 1; i < LL; i++) store<f64>(Yp + (<usize>i << 3), 0);
      } else {
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
    }
    const t2 = t * t, t3 = t2 * t;
    const c0 = coef + (<usize>(k * 4 * NL) << 3);
    const Rp = R + (<usize>(p * NL) << 3);
    for (let j = 0; j < NL; j++) {
      const o = c0 + (<usize>j << 5);
      store<f64>(Rp + (<usize>j << 3), w * (load<f64>(o) + t * load<f64>(o, 8) + t2 * load<f64>(o, 16) + t3 * load<f64>(o, 24)));
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
