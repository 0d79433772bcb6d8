// The pair search of the neighbour list (core/geometry/neighbours.ts) in AssemblyScript: for each centre, the
// atoms of the bins around it, their distances, and the pairs within the cutoff appended in (neighbour, shift)
// order. The JavaScript sets everything up (fractional coordinates, bins, the per-axis wrap and shift tables) and
// lays it out in this module's memory; this is its loop over centres, line for line: every number is computed by
// the same operations in the same order, so the list is the same bits. Compiled by scripts/build-wasm.mjs into
// ../generated/neighbour-search.ts; loaded through ../neighbour-search.ts.
//
// The call's description is two blocks the caller writes (byte addresses ip and fp):
//   ip, Int32: 0 n, 1 nb_a, 2 nb_b, 3 nb_c, 4 m_a, 5 m_b, 6 m_c, 7 orthogonal cell (0/1), 8 first centre, 9 pairs the
//     chunk holds, 10 candidates one centre may hold, 11 pairs listed before this call; written back: 12 the
//     centre reached, 13 why it stopped (0 done, 1 the chunk cannot take that centre's pairs, 2 too many
//     candidates), 14 pairs in the chunk, 15 that centre's candidates (when 1); from 16 the byte addresses of the
//     arrays, in the order of the ADDRESS constants below.
//   fp, Float64: 0–2 origin, 3–5 slice width f, 6–8 slice thickness (Å), 9–17 the cell H, 18 cutoff, 19 cutoff²
//     with its margin, 20 the skip reach².
// A centre that cannot be finished is undone (its marks cleared), so the caller can make room and call again from it.

/** Where the caller's buffers may start: the first byte after this module's static data. */
export function heapBase(): usize {
  return __heap_base;
}

// the arrays' byte addresses (ip + 4·(16 + k))
const WRAPPED = 0; // Float64 3n: wrapped positions
const OFFSET = 1; // Int32 3n: whole cells taken off
const FRAC = 2; // Float64 3n: fractional coordinates
const BIN3 = 3; // Int32 3n: bin index per axis
const BIN_START = 4; // Int32 bins + 1
const BIN_ATOM = 5; // Int32 n: atoms in bin order
const BIN_POS = 6; // Float64 3n: wrapped positions in bin order
const BIN_OFF = 7; // Int32 3n: offsets in bin order
const WRAP_A = 8; // Int32 nb + 2m per axis: the bin a stencil index falls in (−1: none)
const WRAP_B = 9;
const WRAP_C = 10;
const SHIFT_A = 11; // Int32 nb + 2m per axis: the image shift that brings it there
const SHIFT_B = 12;
const SHIFT_C = 13;
const GAP_A = 14; // Float64 2m + 1 per axis: scratch
const GAP_B = 15;
const GAP_C = 16;
const FIRST = 17; // Int32 n: first candidate of each neighbour (−1: none)
const BITS = 18; // Int32 ⌈n / 32⌉
const SUMMARY = 19; // Int32 ⌈n / 1024⌉
const CAND_J = 20; // Int32 per candidate (unused: a candidate's neighbour is known from its chain)
const CAND_S = 21; // Int32 3 per candidate
const CAND_V = 22; // Float64 3 per candidate
const CAND_D = 23; // Float64 per candidate
const NEXT = 24; // Int32 per candidate
const OUT_J = 25; // Int32 per pair of the chunk
const OUT_S = 26; // Int32 3 per pair
const OUT_V = 27; // Float64 3 per pair
const OUT_D = 28; // Float64 per pair
const START = 29; // Int32 n + 1
const PAD_START = 30; // Int32 bins + 1: each bin's first slot in the padded copies below (an even number)
const PAD_POS = 31; // Float64 3 per slot: per two slots x, x', y, y', z, z' (a bin's odd last slot: x = +∞)
const PAD_ATOM = 32; // Int32 per slot: the atom (−1 in a padding slot)
const PAD_OFF = 33; // Int32 3 per slot: its offsets

@inline function addr(ip: usize, k: i32): usize {
  return <usize>load<u32>(ip + ((16 + <usize>k) << 2));
}

@inline function i32At(base: usize, k: i32): i32 {
  return load<i32>(base + (<usize>k << 2));
}

@inline function f64At(base: usize, k: i32): f64 {
  return load<f64>(base + (<usize>k << 3));
}

/** Whether shift (s0, s1, s2) comes before candidate c's shift (ascending s_a, then s_b, then s_c). */
@inline function shiftBefore(s0: i32, s1: i32, s2: i32, cS: usize, c: i32): bool {
  const p = cS + <usize>c * 12;
  const t0 = load<i32>(p);
  if (s0 != t0) return s0 < t0;
  const t1 = load<i32>(p, 4);
  if (s1 != t1) return s1 < t1;
  return s2 < load<i32>(p, 8);
}

/** Squared perpendicular gaps (Å²) from fractional position c + u (in slices) to the slices c + d − m, d < 2m + 1. */
function gaps(out: usize, m: i32, c: i32, fracK: f64, origin: f64, f: f64, thick: f64): void {
  let u = (fracK - origin) / f - <f64>c;
  if (!(u >= 0)) u = 0;
  else if (u > 1) u = 1;
  const w = 2 * m + 1;
  for (let d = 0; d < w; d++) {
    const delta = d - m;
    const g: f64 = delta > 0 ? <f64>delta - u : delta < 0 ? u - <f64>delta - 1 : 0;
    const gt = g * thick;
    store<f64>(out + (<usize>d << 3), g > 0 ? gt * gt : 0);
  }
}

/**
 * The bins' atoms in padded copies for two-at-a-time distance tests: bin b's slots from padStart[b] (even), its
 * atoms in their order, then one padding slot when their number is odd (x = +∞: never within the cutoff).
 */
function pad(bins: i32, binStart: usize, binAtom: usize, binPos: usize, binOff: usize, padStart: usize, padPos: usize, padAtom: usize, padOff: usize): void {
  let q = 0;
  for (let b = 0; b < bins; b++) {
    store<i32>(padStart + (<usize>b << 2), q);
    const end = i32At(binStart, b + 1);
    for (let p = i32At(binStart, b); p < end; p++, q++) {
      const at = padPos + (<usize>(q >> 1)) * 48 + (<usize>(q & 1) << 3);
      store<f64>(at, f64At(binPos, 3 * p));
      store<f64>(at, f64At(binPos, 3 * p + 1), 16);
      store<f64>(at, f64At(binPos, 3 * p + 2), 32);
      store<i32>(padAtom + (<usize>q << 2), i32At(binAtom, p));
      const o = padOff + <usize>q * 12;
      store<i32>(o, i32At(binOff, 3 * p));
      store<i32>(o, i32At(binOff, 3 * p + 1), 4);
      store<i32>(o, i32At(binOff, 3 * p + 2), 8);
    }
    if (q & 1) {
      const at = padPos + (<usize>(q >> 1)) * 48 + 8;
      store<f64>(at, Infinity);
      store<f64>(at, 0, 16);
      store<f64>(at, 0, 32);
      store<i32>(padAtom + (<usize>q << 2), -1);
      q++;
    }
  }
  store<i32>(padStart + (<usize>bins << 2), q);
}

// The candidates' and the chunk's addresses for takeMarks, set by pairs() at each call.
let gFirst: usize = 0, gBits: usize = 0, gSummary: usize = 0, gNext: usize = 0;
let gCS: usize = 0, gCV: usize = 0, gCD: usize = 0;
let gOutJ: usize = 0, gOutS: usize = 0, gOutV: usize = 0, gOutD: usize = 0;

/**
 * Walks a centre's marked neighbours j in ascending order, clearing the marks (first, bits, summary); with `emit`,
 * appends each one's chain of candidates (in shift order) to the chunk from pair o on. Returns the pairs in the chunk.
 */
function takeMarks(summaryWords: i32, emit: bool, o: i32): i32 {
  for (let sw = 0; sw < summaryWords; sw++) {
    let top = i32At(gSummary, sw);
    if (top == 0) continue;
    store<i32>(gSummary + (<usize>sw << 2), 0);
    while (top != 0) {
      const wi = (sw << 5) + ctz(top);
      top &= top - 1;
      let word = i32At(gBits, wi);
      store<i32>(gBits + (<usize>wi << 2), 0);
      while (word != 0) {
        const j = (wi << 5) + ctz(word);
        word &= word - 1;
        if (emit) {
          for (let c = i32At(gFirst, j); c >= 0; c = i32At(gNext, c)) {
            store<i32>(gOutJ + (<usize>o << 2), j);
            store<f64>(gOutD + (<usize>o << 3), f64At(gCD, c));
            const ps = gCS + <usize>c * 12, qs = gOutS + <usize>o * 12;
            store<i32>(qs, load<i32>(ps));
            store<i32>(qs, load<i32>(ps, 4), 4);
            store<i32>(qs, load<i32>(ps, 8), 8);
            const pv = gCV + <usize>c * 24, qv = gOutV + <usize>o * 24;
            store<f64>(qv, load<f64>(pv));
            store<f64>(qv, load<f64>(pv, 8), 8);
            store<f64>(qv, load<f64>(pv, 16), 16);
            o++;
          }
        }
        store<i32>(gFirst + (<usize>j << 2), -1);
      }
    }
  }
  return o;
}

/** The pairs of centres from ip[8] on, into the chunk; see the head of this file. */
export function pairs(ip: usize, fp: usize): void {
  const n = i32At(ip, 0);
  const n0 = i32At(ip, 1), n1 = i32At(ip, 2), n2 = i32At(ip, 3);
  const m0 = i32At(ip, 4), m1 = i32At(ip, 5), m2 = i32At(ip, 6);
  const orthogonal = i32At(ip, 7) != 0;
  const from = i32At(ip, 8);
  const chunkCap = i32At(ip, 9);
  const candCap = i32At(ip, 10);
  const before = i32At(ip, 11);
  const origin0 = f64At(fp, 0), origin1 = f64At(fp, 1), origin2 = f64At(fp, 2);
  const f0 = f64At(fp, 3), f1 = f64At(fp, 4), f2 = f64At(fp, 5);
  const thick0 = f64At(fp, 6), thick1 = f64At(fp, 7), thick2 = f64At(fp, 8);
  const h0 = f64At(fp, 9), h1 = f64At(fp, 10), h2 = f64At(fp, 11), h3 = f64At(fp, 12), h4 = f64At(fp, 13);
  const h5 = f64At(fp, 14), h6 = f64At(fp, 15), h7 = f64At(fp, 16), h8 = f64At(fp, 17);
  const cutoff = f64At(fp, 18), cut2 = f64At(fp, 19), reach2 = f64At(fp, 20);
  const cut2v = f64x2.splat(cut2);
  const wrapped = addr(ip, WRAPPED), offset = addr(ip, OFFSET), frac = addr(ip, FRAC), bin3 = addr(ip, BIN3);
  const binStart = addr(ip, BIN_START), binAtom = addr(ip, BIN_ATOM), binPos = addr(ip, BIN_POS), binOff = addr(ip, BIN_OFF);
  const wrapA = addr(ip, WRAP_A), wrapB = addr(ip, WRAP_B), wrapC = addr(ip, WRAP_C);
  const shiftA = addr(ip, SHIFT_A), shiftB = addr(ip, SHIFT_B), shiftC = addr(ip, SHIFT_C);
  const gapA = addr(ip, GAP_A), gapB = addr(ip, GAP_B), gapC = addr(ip, GAP_C);
  const first = addr(ip, FIRST), bits = addr(ip, BITS), summary = addr(ip, SUMMARY);
  const cS = addr(ip, CAND_S), cV = addr(ip, CAND_V), cD = addr(ip, CAND_D), next = addr(ip, NEXT);
  const outJ = addr(ip, OUT_J), outS = addr(ip, OUT_S), outV = addr(ip, OUT_V), outD = addr(ip, OUT_D), start = addr(ip, START);
  gFirst = first;
  gBits = bits;
  gSummary = summary;
  gNext = next;
  gCS = cS;
  gCV = cV;
  gCD = cD;
  gOutJ = outJ;
  gOutS = outS;
  gOutV = outV;
  gOutD = outD;
  const summaryWords = (n + 1023) >>> 10;
  const w0 = 2 * m0 + 1, w1 = 2 * m1 + 1, w2 = 2 * m2 + 1;
  const padStart = addr(ip, PAD_START), padPos = addr(ip, PAD_POS), padAtom = addr(ip, PAD_ATOM), padOff = addr(ip, PAD_OFF);
  if (from == 0) {
    for (let j = 0; j < n; j++) store<i32>(first + (<usize>j << 2), -1);
    memory.fill(bits, 0, <usize>((n + 31) >>> 5) << 2);
    memory.fill(summary, 0, <usize>summaryWords << 2);
    pad(n0 * n1 * n2, binStart, binAtom, binPos, binOff, padStart, padPos, padAtom, padOff);
  }
  let count = 0;
  for (let i = from; i < n; i++) {
    store<i32>(start + (<usize>i << 2), before + count);
    let ncand = 0;
    let full = false;
    const xi = f64At(wrapped, 3 * i), yi = f64At(wrapped, 3 * i + 1), zi = f64At(wrapped, 3 * i + 2);
    const oi0 = i32At(offset, 3 * i), oi1 = i32At(offset, 3 * i + 1), oi2 = i32At(offset, 3 * i + 2);
    const c0 = i32At(bin3, 3 * i), c1 = i32At(bin3, 3 * i + 1), c2 = i32At(bin3, 3 * i + 2);
    gaps(gapA, m0, c0, f64At(frac, 3 * i), origin0, f0, thick0);
    gaps(gapB, m1, c1, f64At(frac, 3 * i + 1), origin1, f1, thick1);
    gaps(gapC, m2, c2, f64At(frac, 3 * i + 2), origin2, f2, thick2);
    for (let d0 = 0; d0 < w0 && !full; d0++) {
      const t0 = i32At(wrapA, c0 + d0);
      if (t0 < 0) continue;
      const g0 = f64At(gapA, d0);
      if (g0 > reach2) continue;
      const S0 = i32At(shiftA, c0 + d0);
      for (let d1 = 0; d1 < w1 && !full; d1++) {
        const t1 = i32At(wrapB, c1 + d1);
        if (t1 < 0) continue;
        const g01 = orthogonal ? g0 + f64At(gapB, d1) : max(g0, f64At(gapB, d1));
        if (g01 > reach2) continue;
        const S1 = i32At(shiftB, c1 + d1);
        const row = (t0 * n1 + t1) * n2;
        const tx01 = <f64>S0 * h0 + <f64>S1 * h3, ty01 = <f64>S0 * h1 + <f64>S1 * h4, tz01 = <f64>S0 * h2 + <f64>S1 * h5;
        for (let d2 = 0; d2 < w2 && !full; d2++) {
          const t2 = i32At(wrapC, c2 + d2);
          if (t2 < 0) continue;
          if ((orthogonal ? g01 + f64At(gapC, d2) : max(g01, f64At(gapC, d2))) > reach2) continue;
          const S2 = i32At(shiftC, c2 + d2);
          const bin = row + t2;
          const ex = tx01 + <f64>S2 * h6 - xi, ey = ty01 + <f64>S2 * h7 - yi, ez = tz01 + <f64>S2 * h8 - zi;
          const zeroShift = S0 == 0 && S1 == 0 && S2 == 0;
          const end = i32At(padStart, bin + 1);
          const exv = f64x2.splat(ex), eyv = f64x2.splat(ey), ezv = f64x2.splat(ez);
          // two slots at a time: each lane computes its v2 by the scalar loop's operations, in its order
          for (let q = i32At(padStart, bin); q < end; q += 2) {
            const pp = padPos + <usize>q * 24;
            const vxv = f64x2.add(v128.load(pp), exv), vyv = f64x2.add(v128.load(pp, 16), eyv), vzv = f64x2.add(v128.load(pp, 32), ezv);
            const v2v = f64x2.add(f64x2.add(f64x2.mul(vxv, vxv), f64x2.mul(vyv, vyv)), f64x2.mul(vzv, vzv));
            const far = i64x2.bitmask(f64x2.gt(v2v, cut2v));
            if (far == 3) continue;
            for (let lane = 0; lane < 2; lane++) {
              if ((far >> lane) & 1) continue;
              const p = q + lane;
              const vx = lane == 0 ? f64x2.extract_lane(vxv, 0) : f64x2.extract_lane(vxv, 1);
              const vy = lane == 0 ? f64x2.extract_lane(vyv, 0) : f64x2.extract_lane(vyv, 1);
              const vz = lane == 0 ? f64x2.extract_lane(vzv, 0) : f64x2.extract_lane(vzv, 1);
              const v2 = lane == 0 ? f64x2.extract_lane(v2v, 0) : f64x2.extract_lane(v2v, 1);
              const dist = sqrt<f64>(v2);
              if (!(dist < cutoff)) continue;
              const j = i32At(padAtom, p);
              if (j == i && zeroShift) continue;
              // the shift relative to the original (unwrapped) positions
              const s0 = S0 - i32At(padOff, 3 * p) + oi0, s1 = S1 - i32At(padOff, 3 * p + 1) + oi1, s2 = S2 - i32At(padOff, 3 * p + 2) + oi2;
              if (ncand == candCap) {
                full = true;
                break;
              }
              const c = ncand++;
            const ps = cS + <usize>c * 12;
            store<i32>(ps, s0);
            store<i32>(ps, s1, 4);
            store<i32>(ps, s2, 8);
            const pv = cV + <usize>c * 24;
            store<f64>(pv, vx);
            store<f64>(pv, vy, 8);
            store<f64>(pv, vz, 16);
            store<f64>(cD + (<usize>c << 3), dist);
            const head = i32At(first, j);
            if (head < 0) {
              store<i32>(first + (<usize>j << 2), c);
              store<i32>(next + (<usize>c << 2), -1);
              const pb = bits + (<usize>(j >>> 5) << 2);
              store<i32>(pb, load<i32>(pb) | (1 << (j & 31)));
              const pw = summary + (<usize>(j >>> 10) << 2);
              store<i32>(pw, load<i32>(pw) | (1 << ((j >>> 5) & 31)));
            } else if (shiftBefore(s0, s1, s2, cS, head)) {
              store<i32>(first + (<usize>j << 2), c);
              store<i32>(next + (<usize>c << 2), head);
            } else {
              // several images of one neighbour (cells narrower than twice the cutoff): insert in shift order
              let at = head;
              while (i32At(next, at) >= 0 && !shiftBefore(s0, s1, s2, cS, i32At(next, at))) at = i32At(next, at);
              store<i32>(next + (<usize>c << 2), i32At(next, at));
              store<i32>(next + (<usize>at << 2), c);
            }
            }
            if (full) break;
          }
        }
      }
    }
    if (full || count + ncand > chunkCap) {
      takeMarks(summaryWords, false, 0);
      store<i32>(ip, i, 48);
      store<i32>(ip, full ? 2 : 1, 52);
      store<i32>(ip, count, 56);
      store<i32>(ip, ncand, 60);
      return;
    }
    // append this centre's pairs in (j, shift) order
    if (ncand > 0) count = takeMarks(summaryWords, true, count);
  }
  store<i32>(start + (<usize>n << 2), before + count);
  store<i32>(ip, n, 48);
  store<i32>(ip, 0, 52);
  store<i32>(ip, count, 56);
  store<i32>(ip, 0, 60);
}
