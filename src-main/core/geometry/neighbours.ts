// Neighbour lists under periodic boundary conditions: every pair (i, j, image shift) closer than a cutoff, for any
// triclinic cell, any cutoff (also larger than the cell), partial periodicity and open structures. Linear-time
// cell lists binned in fractional coordinates; the output is a full list in CSR order by centre. It is the first
// step of featurisation, so it works on typed arrays only and allocates nothing per pair. The search over centres
// runs in WebAssembly when the kernels are on (core/wasm/assembly/neighbour-search.ts: the same bits, and fast
// from its first call, which matters for one-frame jobs); the JavaScript loop below is its fallback and oracle.
//
// Inclusion rule: a pair is listed iff its reported distance |r_j + s·H − r_i| (as computed in double precision)
// is strictly smaller than the cutoff. The zero-shift self pair (i, i, 0) is never listed; an atom's own periodic
// images are. Order: by centre i, then neighbour j, then shift (s_a, then s_b, then s_c), all ascending.
import { InputError, type Where } from '../errors.ts';
import type { Frame, Mat3 } from './frame.ts';
import { checkCell, perpendicularWidths, reciprocalCell } from './cell.ts';
import { neighbourKernels, type NeighbourKernels } from '../wasm/neighbour-search.ts';

export interface NeighbourList {
  /** The cutoff the list was built with (Å); pairs satisfy distance < cutoff. */
  cutoff: number;
  /** Number of pairs (= neighbour.length). */
  count: number;
  /** CSR offsets by centre: the pairs of centre i are start[i] … start[i+1]−1. Length N+1. */
  start: Int32Array;
  /** Neighbour atom index j of each pair. */
  neighbour: Int32Array;
  /**
   * r_j + s·H − r_i (Å), 3 per pair, for the frame's positions as given (unwrapped); computed from positions
   * wrapped into the cell, so equal to that expression up to rounding (~1e-15 of the coordinates).
   */
  vectors: Float64Array;
  /** |vector| (Å), one per pair. */
  distances: Float64Array;
  /** Lattice shift s of the image of j (integers, 3 per pair); 0 along non-periodic axes. */
  shifts: Int32Array;
}

export interface NeighbourOptions {
  /**
   * Bin edge as a fraction of the cutoff (default 1: bins just thicker than the cutoff, 27 searched per atom). Smaller bins test fewer far candidates but visit more
   * bins; the result does not depend on it (tests use it to exercise the binning).
   */
  binFraction?: number;
  /**
   * A list from an earlier call that nothing reads any more: its arrays are written over and handed out again
   * (views of its buffers, grown when too small) instead of new ones. The result is the same; `reuse` is invalid
   * afterwards.
   */
  reuse?: NeighbourList;
}

/** Where a frame came from, for errors (exported, like binningCell and the growers, for the kept first version in the tests). */
export function whereOf(frame: Frame): Where {
  return frame.source ? { file: frame.source.file, line: frame.source.line, frame: frame.source.index } : {};
}

/**
 * A non-singular cell for binning: the periodic rows of the frame's cell, and along each non-periodic axis a
 * unit vector orthogonal to the periodic rows. Images are only ever taken along periodic rows, so the rows of
 * non-periodic axes (which may be zero or absent in files) never affect the result.
 */
export function binningCell(frame: Frame, pbc: readonly boolean[], where: Where): Mat3 {
  const cell = frame.cell;
  const periodic = [0, 1, 2].filter((k) => pbc[k]);
  if (periodic.length === 3) {
    checkCell(cell, where);
    return cell;
  }
  if (periodic.length > 0 && cell === null) {
    throw new InputError('the structure is marked periodic but has no cell', where,
      'give the lattice vectors, or mark every axis non-periodic (pbc="F F F")');
  }
  const rows: number[][] = [[], [], []];
  for (const k of periodic) {
    const v = [cell![3 * k], cell![3 * k + 1], cell![3 * k + 2]];
    if (!v.every(Number.isFinite) || Math.hypot(v[0], v[1], v[2]) === 0) {
      throw new InputError(`lattice vector ${'abc'[k]} of a periodic axis is (${v.join(', ')})`, where,
        'a periodic axis needs a finite, non-zero lattice vector (Å)');
    }
    rows[k] = v;
  }
  const cross = (u: number[], v: number[]) => [u[1] * v[2] - u[2] * v[1], u[2] * v[0] - u[0] * v[2], u[0] * v[1] - u[1] * v[0]];
  const unit = (u: number[]) => {
    const n = Math.hypot(u[0], u[1], u[2]);
    return [u[0] / n, u[1] / n, u[2] / n];
  };
  const open = [0, 1, 2].filter((k) => !pbc[k]);
  if (periodic.length === 2) {
    const [i, j] = periodic;
    const n = cross(rows[i], rows[j]);
    const ln = Math.hypot(n[0], n[1], n[2]);
    const li = Math.hypot(rows[i][0], rows[i][1], rows[i][2]), lj = Math.hypot(rows[j][0], rows[j][1], rows[j][2]);
    if (!(ln > 1e-10 * li * lj)) {
      throw new InputError(`the periodic lattice vectors ${'abc'[i]} and ${'abc'[j]} are parallel`, where,
        'two periodic axes need two independent lattice vectors');
    }
    rows[open[0]] = unit(n);
  } else if (periodic.length === 1) {
    const u = unit(rows[periodic[0]]);
    // Any vector not parallel to u, then two orthonormal vectors perpendicular to u.
    const helper = Math.abs(u[0]) < 0.6 ? [1, 0, 0] : [0, 1, 0];
    const v = unit(cross(u, helper));
    const w = cross(u, v);
    rows[open[0]] = v;
    rows[open[1]] = w;
  } else {
    rows[0] = [1, 0, 0];
    rows[1] = [0, 1, 0];
    rows[2] = [0, 0, 1];
  }
  return Float64Array.from(rows.flat());
}

export function growInt(a: Int32Array, size: number): Int32Array<ArrayBuffer> {
  const b = new Int32Array(size);
  b.set(a);
  return b;
}

export function growFloat(a: Float64Array, size: number): Float64Array<ArrayBuffer> {
  const b = new Float64Array(size);
  b.set(a);
  return b;
}

const MAX_PAIRS = 2 ** 31 - 1;

/** Per-atom and per-centre scratch of neighbourList, kept between calls (one thread runs one list at a time). */
interface Workspace {
  atoms: number;
  wrapped: Float64Array<ArrayBuffer>;
  offset: Int32Array<ArrayBuffer>;
  frac: Float64Array<ArrayBuffer>;
  binOf: Int32Array<ArrayBuffer>;
  bin3: Int32Array<ArrayBuffer>;
  binAtom: Int32Array<ArrayBuffer>;
  binPos: Float64Array<ArrayBuffer>;
  binOff: Int32Array<ArrayBuffer>;
  /** First candidate of neighbour j in this centre's list, −1 when none (all −1 between centres). */
  first: Int32Array<ArrayBuffer>;
  /** One bit per atom j with candidates, and one bit per non-zero word of `bits` (both zero between centres). */
  bits: Int32Array<ArrayBuffer>;
  summary: Int32Array<ArrayBuffer>;
  cJ: Int32Array<ArrayBuffer>;
  cS: Int32Array<ArrayBuffer>;
  cV: Float64Array<ArrayBuffer>;
  cD: Float64Array<ArrayBuffer>;
  next: Int32Array<ArrayBuffer>;
}

/** Frames up to this many atoms keep their scratch for the next call; larger ones get their own and free it. */
const KEEP_ATOMS = 1 << 16;
let kept: Workspace | null = null;

function workspace(n: number): Workspace {
  if (kept && kept.atoms >= n) return kept;
  const size = Math.max(n, kept ? Math.min(2 * kept.atoms, KEEP_ATOMS) : 0);
  const scap = 256;
  const w: Workspace = {
    atoms: size,
    wrapped: new Float64Array(3 * size),
    offset: new Int32Array(3 * size),
    frac: new Float64Array(3 * size),
    binOf: new Int32Array(size),
    bin3: new Int32Array(3 * size),
    binAtom: new Int32Array(size),
    binPos: new Float64Array(3 * size),
    binOff: new Int32Array(3 * size),
    first: new Int32Array(size).fill(-1),
    bits: new Int32Array((size + 31) >>> 5),
    summary: new Int32Array((size + 1023) >>> 10),
    cJ: new Int32Array(scap),
    cS: new Int32Array(3 * scap),
    cV: new Float64Array(3 * scap),
    cD: new Float64Array(scap),
    next: new Int32Array(scap),
  };
  if (size <= KEEP_ATOMS) kept = w;
  return w;
}

/**
 * The whole buffers of a list handed in for reuse (at least as many pairs as it held; `start` sized for n atoms),
 * or null when it cannot be written over safely: arrays not of plain, distinct buffers starting at offset 0.
 */
function reusable(list: NeighbourList | undefined, n: number): {
  outJ: Int32Array<ArrayBuffer>; outV: Float64Array<ArrayBuffer>; outD: Float64Array<ArrayBuffer>; outS: Int32Array<ArrayBuffer>; start: Int32Array<ArrayBuffer>;
} | null {
  if (!list) return null;
  const arrays = [list.neighbour, list.vectors, list.distances, list.shifts, list.start];
  const buffers = arrays.map((a) => a.buffer);
  if (arrays.some((a) => a.byteOffset !== 0) || buffers.some((b) => !(b instanceof ArrayBuffer)) || new Set(buffers).size !== buffers.length) return null;
  const [bJ, bV, bD, bS, bStart] = buffers as ArrayBuffer[];
  const cap = Math.floor(Math.min(bJ.byteLength / 4, bV.byteLength / 24, bD.byteLength / 8, bS.byteLength / 12));
  return {
    outJ: new Int32Array(bJ, 0, cap),
    outV: new Float64Array(bV, 0, 3 * cap),
    outD: new Float64Array(bD, 0, cap),
    outS: new Int32Array(bS, 0, 3 * cap),
    start: bStart.byteLength >= 4 * (n + 1) ? new Int32Array(bStart, 0, n + 1) : new Int32Array(n + 1),
  };
}

/** Three per-axis numbers, all `value`. */
function axes(value: number): Float64Array {
  return new Float64Array(3).fill(value);
}

/** Whether shift (s0, s1, s2) comes before candidate c's shift (ascending s_a, then s_b, then s_c). */
function shiftBefore(s0: number, s1: number, s2: number, cS: Int32Array, c: number): boolean {
  const t0 = cS[3 * c];
  if (s0 !== t0) return s0 < t0;
  const t1 = cS[3 * c + 1];
  if (s1 !== t1) return s1 < t1;
  return s2 < cS[3 * c + 2];
}

/** The most pairs the kernel writes before the caller copies them out (12 MiB of its memory). */
const CHUNK_PAIRS = 1 << 18;
/** Candidates one centre may hold in the kernel at first (more: the centre is done again with twice the room). */
const KERNEL_CANDIDATES = 512;
let chunkPairs = CHUNK_PAIRS;
let kernelCandidates = KERNEL_CANDIDATES;

/**
 * The kernel's room: the most pairs it writes before they are copied out, and the candidates one centre may hold at
 * first (null: the defaults). Tests make them small, so that every way of running out of room is taken; the list is
 * the same.
 */
export function setNeighbourKernelRoom(pairs: number | null, candidates: number | null): void {
  chunkPairs = pairs ?? CHUNK_PAIRS;
  kernelCandidates = candidates ?? KERNEL_CANDIDATES;
}

interface Outputs {
  outJ: Int32Array<ArrayBuffer>;
  outV: Float64Array<ArrayBuffer>;
  outD: Float64Array<ArrayBuffer>;
  outS: Int32Array<ArrayBuffer>;
  cap: number;
}

/** What neighbourList has set up, for its search in the kernel. */
interface KernelSearch {
  n: number;
  nb: Float64Array;
  m: Float64Array;
  orthogonal: boolean;
  origin: Float64Array;
  f: Float64Array;
  thick: Float64Array;
  h: Mat3;
  cutoff: number;
  cut2: number;
  reach2: number;
  work: Workspace;
  binStart: Int32Array;
  tables: { wrap: Int32Array; shift: Int32Array }[];
  /** CSR offsets, written. */
  start: Int32Array;
  /** Pairs the kernel's chunk holds at first. */
  chunk: number;
  out: Outputs;
  where: Where;
}

/**
 * neighbourList's search over centres in the WebAssembly kernel: the arrays laid out from the module's heapBase
 * (nothing kept between calls), the pairs copied out chunk by chunk into the outputs (grown as neighbourList grows
 * them). Returns the outputs and the number of pairs, or null when the module's memory cannot hold the layout
 * (the caller then searches in JavaScript).
 */
function kernelPairs(kernel: NeighbourKernels, s: KernelSearch): (Outputs & { count: number }) | null {
  const { n, work } = s;
  const module = kernel.module;
  const nBins = s.nb[0] * s.nb[1] * s.nb[2];
  let { outJ, outV, outD, outS, cap } = s.out;
  let chunk = Math.max(1, s.chunk);
  let candidates = kernelCandidates;
  // byte sizes of the arrays, in the order of the kernel's address table (core/wasm/assembly/neighbour-search.ts)
  const sizes = () => [
    24 * n, 12 * n, 24 * n, 12 * n, 4 * (nBins + 1), 4 * n, 24 * n, 12 * n,
    ...s.tables.map((t) => 4 * t.wrap.length), ...s.tables.map((t) => 4 * t.shift.length), ...s.m.map((m) => 8 * (2 * m + 1)),
    4 * n, 4 * ((n + 31) >>> 5), 4 * ((n + 1023) >>> 10),
    4 * candidates, 12 * candidates, 24 * candidates, 8 * candidates, 4 * candidates,
    4 * chunk, 12 * chunk, 24 * chunk, 8 * chunk, 4 * (n + 1),
    4 * (nBins + 1), 24 * slots, 4 * slots, 12 * slots,
  ];
  // padded slots: each bin's atoms and at most one padding slot
  const slots = n + nBins;
  const IP = 16 + 34, FP = 21;
  // in memory, the regions that grow (candidates, chunk) come last: laid out again, the others keep their place
  const memoryOrder = [...Array.from({ length: 20 }, (_, k) => k), 29, 30, 31, 32, 33, 20, 21, 22, 23, 24, 25, 26, 27, 28];
  let at: number[] = [];
  // lays out the description blocks and the arrays (the inputs written); false when the memory cannot grow so far
  const layout = (): boolean => {
    const base = module.heapBase;
    let top = base + 16 * Math.ceil((4 * IP) / 16) + 8 * FP;
    const bytes = sizes();
    at = new Array<number>(bytes.length);
    for (const k of memoryOrder) {
      at[k] = top;
      top += 16 * Math.ceil(bytes[k] / 16);
    }
    if (!module.reserve(top - base)) return false;
    const ints = module.i32(base, IP), fl = module.f64(base + 16 * Math.ceil((4 * IP) / 16), FP);
    ints.set([n, s.nb[0], s.nb[1], s.nb[2], s.m[0], s.m[1], s.m[2], s.orthogonal ? 1 : 0, 0, chunk, candidates, 0]);
    ints.set(at, 16);
    fl.set([...s.origin, ...s.f, ...s.thick, ...s.h, s.cutoff, s.cut2, s.reach2]);
    module.f64(at[0], 3 * n).set(work.wrapped.subarray(0, 3 * n));
    module.i32(at[1], 3 * n).set(work.offset.subarray(0, 3 * n));
    module.f64(at[2], 3 * n).set(work.frac.subarray(0, 3 * n));
    module.i32(at[3], 3 * n).set(work.bin3.subarray(0, 3 * n));
    module.i32(at[4], nBins + 1).set(s.binStart);
    module.i32(at[5], n).set(work.binAtom.subarray(0, n));
    module.f64(at[6], 3 * n).set(work.binPos.subarray(0, 3 * n));
    module.i32(at[7], 3 * n).set(work.binOff.subarray(0, 3 * n));
    for (let k = 0; k < 3; k++) {
      module.i32(at[8 + k], s.tables[k].wrap.length).set(s.tables[k].wrap);
      module.i32(at[11 + k], s.tables[k].shift.length).set(s.tables[k].shift);
    }
    return true;
  };
  if (!layout()) return null;
  const ipAt = module.heapBase, fpAt = module.heapBase + 16 * Math.ceil((4 * IP) / 16);
  let count = 0;
  for (let from = 0; ;) {
    const ints = module.i32(ipAt, 16);
    ints[8] = from;
    ints[11] = count;
    kernel.pairs(ipAt, fpAt);
    const state = module.i32(ipAt, 16);
    const reached = state[12], why = state[13], got = state[14], wanted = state[15];
    if (got > 0) {
      // copy the chunk out, growing the outputs as the JavaScript search grows them
      if (count + got > cap) {
        if (count + got > MAX_PAIRS) {
          throw new InputError(`more than ${MAX_PAIRS} pairs within ${s.cutoff} Å`, s.where, 'use a smaller cutoff or a smaller structure');
        }
        cap = Math.min(MAX_PAIRS, Math.max(count + got, Math.ceil(cap * 1.5)));
        outJ = growInt(outJ, cap);
        outV = growFloat(outV, 3 * cap);
        outD = growFloat(outD, cap);
        outS = growInt(outS, 3 * cap);
      }
      outJ.set(module.i32(at[25], got), count);
      outS.set(module.i32(at[26], 3 * got), 3 * count);
      outV.set(module.f64(at[27], 3 * got), 3 * count);
      outD.set(module.f64(at[28], got), count);
      count += got;
    }
    // the centres' offsets (the start region may move below)
    const upTo = why === 0 ? n + 1 : reached;
    s.start.set(module.i32(at[29] + 4 * from, upTo - from), from);
    if (why === 0) break;
    from = reached;
    if (why === 2) candidates *= 2;
    else if (got === 0) chunk = Math.max(2 * chunk, wanted);
    // more room: laid out again. The marks (first, bits, summary, clear: the kernel undid the unfinished centre's)
    // and the padded copies lie before the regions that grow, so they stay where they are.
    if ((why === 2 || got === 0) && !layout()) return null;
  }
  return { outJ, outV, outD, outS, cap, count };
}

/**
 * neighbourList's search over centres in JavaScript: the fallback where the kernel is off or its memory cannot hold
 * the layout, and the tests' oracle. A function of its own, so that the optimising compiler of a fresh thread, which
 * compiles neighbourList once the kernel runs, does not compile this loop with it. Returns the outputs (grown when
 * too small) and the number of pairs; the marks (first, bits, summary) are left set if it throws mid-centre.
 */
function jsPairs(s: KernelSearch): Outputs & { count: number } {
  const { n, work, start, cutoff, cut2, reach2, orthogonal, origin, f, m, thick, h, binStart, tables, where } = s;
  const { wrapped, offset, frac, bin3, binAtom, binPos, binOff } = work;
  const n1 = s.nb[1], n2 = s.nb[2];
  let { outJ, outV, outD, outS, cap } = s.out;
  let count = 0;
  // Per-centre candidates, put in (j, shift) order without sorting: the candidates of one neighbour j form a chain
  // (first[j], then next[c]) kept in shift order, and a two-level bit set marks the j that have any, so that they
  // are visited in ascending order (bits cleared and chains reset as they are read).
  let scap = work.cJ.length;
  let cJ = work.cJ, cS = work.cS, cV = work.cV, cD = work.cD, next = work.next;
  const first = work.first, bits = work.bits, summary = work.summary;
  const wrapA = tables[0].wrap, wrapB = tables[1].wrap, wrapC = tables[2].wrap;
  const shiftA = tables[0].shift, shiftB = tables[1].shift, shiftC = tables[2].shift;
  const w0 = 2 * m[0] + 1, w1 = 2 * m[1] + 1, w2 = 2 * m[2] + 1;
  const h0 = h[0], h1 = h[1], h2 = h[2], h3 = h[3], h4 = h[4], h5 = h[5], h6 = h[6], h7 = h[7], h8 = h[8];
  const summaryWords = (n + 1023) >>> 10;
  const gapA = new Float64Array(w0), gapB = new Float64Array(w1), gapC = new Float64Array(w2);
  /** Squared perpendicular gaps (Å²) from fractional position c + u (in slices) to the slices c + d − m, d = 0…w−1. */
  const gaps = (out: Float64Array, k: number, c: number, fracK: number) => {
    let u = (fracK - origin[k]) / f[k] - c;
    if (!(u >= 0)) u = 0;
    else if (u > 1) u = 1;
    for (let d = 0; d < out.length; d++) {
      const delta = d - m[k];
      const g = delta > 0 ? delta - u : delta < 0 ? u - delta - 1 : 0;
      out[d] = g > 0 ? (g * thick[k]) ** 2 : 0;
    }
  };

  for (let i = 0; i < n; i++) {
    start[i] = count;
    let ncand = 0;
    const xi = wrapped[3 * i], yi = wrapped[3 * i + 1], zi = wrapped[3 * i + 2];
    const oi0 = offset[3 * i], oi1 = offset[3 * i + 1], oi2 = offset[3 * i + 2];
    const c0 = bin3[3 * i], c1 = bin3[3 * i + 1], c2 = bin3[3 * i + 2];
    gaps(gapA, 0, c0, frac[3 * i]);
    gaps(gapB, 1, c1, frac[3 * i + 1]);
    gaps(gapC, 2, c2, frac[3 * i + 2]);
    for (let d0 = 0; d0 < w0; d0++) {
      const t0 = wrapA[c0 + d0];
      if (t0 < 0) continue;
      const g0 = gapA[d0];
      if (g0 > reach2) continue;
      const S0 = shiftA[c0 + d0];
      for (let d1 = 0; d1 < w1; d1++) {
        const t1 = wrapB[c1 + d1];
        if (t1 < 0) continue;
        const g01 = orthogonal ? g0 + gapB[d1] : Math.max(g0, gapB[d1]);
        if (g01 > reach2) continue;
        const S1 = shiftB[c1 + d1];
        const row = (t0 * n1 + t1) * n2;
        const tx01 = S0 * h0 + S1 * h3, ty01 = S0 * h1 + S1 * h4, tz01 = S0 * h2 + S1 * h5;
        for (let d2 = 0; d2 < w2; d2++) {
          const t2 = wrapC[c2 + d2];
          if (t2 < 0) continue;
          if ((orthogonal ? g01 + gapC[d2] : Math.max(g01, gapC[d2])) > reach2) continue;
          const S2 = shiftC[c2 + d2];
          const bin = row + t2;
          const ex = tx01 + S2 * h6 - xi, ey = ty01 + S2 * h7 - yi, ez = tz01 + S2 * h8 - zi;
          const zeroShift = S0 === 0 && S1 === 0 && S2 === 0;
          const end = binStart[bin + 1];
          for (let p = binStart[bin]; p < end; p++) {
            const vx = binPos[3 * p] + ex, vy = binPos[3 * p + 1] + ey, vz = binPos[3 * p + 2] + ez;
            const v2 = vx * vx + vy * vy + vz * vz;
            if (v2 > cut2) continue;
            const dist = Math.sqrt(v2);
            if (!(dist < cutoff)) continue;
            const j = binAtom[p];
            if (j === i && zeroShift) continue;
            // The shift relative to the original (unwrapped) positions.
            const s0 = S0 - binOff[3 * p] + oi0, s1 = S1 - binOff[3 * p + 1] + oi1, s2 = S2 - binOff[3 * p + 2] + oi2;
            if (ncand === scap) {
              scap *= 2;
              cJ = work.cJ = growInt(cJ, scap);
              cS = work.cS = growInt(cS, 3 * scap);
              cV = work.cV = growFloat(cV, 3 * scap);
              cD = work.cD = growFloat(cD, scap);
              next = work.next = growInt(next, scap);
            }
            const c = ncand++;
            cJ[c] = j;
            cS[3 * c] = s0;
            cS[3 * c + 1] = s1;
            cS[3 * c + 2] = s2;
            cV[3 * c] = vx;
            cV[3 * c + 1] = vy;
            cV[3 * c + 2] = vz;
            cD[c] = dist;
            const head = first[j];
            if (head < 0) {
              first[j] = c;
              next[c] = -1;
              bits[j >>> 5] |= 1 << (j & 31);
              summary[j >>> 10] |= 1 << ((j >>> 5) & 31);
            } else if (shiftBefore(s0, s1, s2, cS, head)) {
              first[j] = c;
              next[c] = head;
            } else {
              // several images of one neighbour (cells narrower than twice the cutoff): insert in shift order
              let at = head;
              while (next[at] >= 0 && !shiftBefore(s0, s1, s2, cS, next[at])) at = next[at];
              next[c] = next[at];
              next[at] = c;
            }
          }
        }
      }
    }

    // Append this centre's pairs in (j, shift) order.
    if (count + ncand > cap) {
      if (count + ncand > MAX_PAIRS) {
        throw new InputError(`more than ${MAX_PAIRS} pairs within ${cutoff} Å`, where, 'use a smaller cutoff or a smaller structure');
      }
      cap = Math.min(MAX_PAIRS, Math.max(count + ncand, Math.ceil(cap * 1.5)));
      outJ = growInt(outJ, cap);
      outV = growFloat(outV, 3 * cap);
      outD = growFloat(outD, cap);
      outS = growInt(outS, 3 * cap);
    }
    if (ncand > 0) {
      let o = count;
      for (let sw = 0; sw < summaryWords; sw++) {
        let top = summary[sw];
        if (top === 0) continue;
        summary[sw] = 0;
        while (top !== 0) {
          const wi = (sw << 5) + (31 - Math.clz32(top & -top));
          top &= top - 1;
          let word = bits[wi];
          bits[wi] = 0;
          while (word !== 0) {
            const j = (wi << 5) + (31 - Math.clz32(word & -word));
            word &= word - 1;
            for (let c = first[j]; c >= 0; c = next[c]) {
              outJ[o] = j;
              outD[o] = cD[c];
              outS[3 * o] = cS[3 * c];
              outS[3 * o + 1] = cS[3 * c + 1];
              outS[3 * o + 2] = cS[3 * c + 2];
              outV[3 * o] = cV[3 * c];
              outV[3 * o + 1] = cV[3 * c + 1];
              outV[3 * o + 2] = cV[3 * c + 2];
              o++;
            }
            first[j] = -1;
          }
        }
      }
      count += ncand;
    }
  }
  return { outJ, outV, outD, outS, cap, count };
}

/**
 * The full neighbour list of a frame within `cutoff` (Å): every j ≠ i and every image of j (and every periodic
 * image of i itself) with |r_j + s·H − r_i| < cutoff, in both directions (i→j with s and j→i with −s).
 */
export function neighbourList(frame: Frame, cutoff: number, options: NeighbourOptions = {}): NeighbourList {
  const where = whereOf(frame);
  const n = frame.species.length;
  const pos = frame.positions;
  if (pos.length !== 3 * n) {
    throw new InputError(`${n} atoms but ${pos.length} coordinates`, where, 'each atom needs exactly three coordinates');
  }
  if (!(Number.isFinite(cutoff) && cutoff > 0)) {
    throw new InputError(`neighbour cutoff ${cutoff} Å`, where, 'the cutoff must be a positive number of ångström');
  }
  const binFraction = options.binFraction ?? 1;
  if (!(binFraction > 0 && binFraction <= 4)) throw new RangeError(`binFraction must lie in (0, 4], got ${binFraction}`);
  let largest = 0; // the largest |coordinate| (Å), for the margin of the bin-distance bound below
  for (let k = 0; k < 3 * n; k++) {
    const x = pos[k];
    if (!Number.isFinite(x)) {
      throw new InputError(`atom ${Math.floor(k / 3)} has a non-finite coordinate (${x})`, where,
        'every position must be a finite number in Å');
    }
    if (Math.abs(x) > largest) largest = Math.abs(x);
  }
  const pbc = frame.cell === null ? [false, false, false] : [frame.pbc[0], frame.pbc[1], frame.pbc[2]];
  if (frame.cell === null && (frame.pbc[0] || frame.pbc[1] || frame.pbc[2])) {
    throw new InputError('the structure is marked periodic but has no cell', where,
      'give the lattice vectors, or mark every axis non-periodic (pbc="F F F")');
  }
  const h = binningCell(frame, pbc, where);
  const b = reciprocalCell(h, where);
  const width = perpendicularWidths(h, where);

  // Fractional coordinates; along periodic axes split into an integer offset and a wrapped part in [0, 1).
  const work = workspace(n);
  const wrapped = work.wrapped; // wrapped Cartesian positions
  const offset = work.offset;
  const frac = work.frac;
  const lo = [Infinity, Infinity, Infinity], hi = [-Infinity, -Infinity, -Infinity];
  for (let i = 0; i < n; i++) {
    const x = pos[3 * i], y = pos[3 * i + 1], z = pos[3 * i + 2];
    let wx = x, wy = y, wz = z;
    for (let k = 0; k < 3; k++) {
      let s = x * b[3 * k] + y * b[3 * k + 1] + z * b[3 * k + 2];
      if (pbc[k]) {
        let o = Math.floor(s);
        s -= o;
        if (s >= 1) {
          s = 0;
          o += 1;
        }
        if (Math.abs(o) > 1e9) {
          throw new InputError(`atom ${i} lies ${o} cells away from the cell along ${'abc'[k]}`, where,
            'check the positions and the cell (units?)');
        }
        offset[3 * i + k] = o;
        wx -= o * h[3 * k];
        wy -= o * h[3 * k + 1];
        wz -= o * h[3 * k + 2];
      } else offset[3 * i + k] = 0;
      frac[3 * i + k] = s;
      if (s < lo[k]) lo[k] = s;
      if (s > hi[k]) hi[k] = s;
    }
    wrapped[3 * i] = wx;
    wrapped[3 * i + 1] = wy;
    wrapped[3 * i + 2] = wz;
  }

  // Bins: along a periodic axis nb equal slices of [0, 1); along an open axis slices of [lo, hi].
  // Each slice is at least binLen thick (perpendicular to its faces); the total is capped near 2N bins.
  // Per-axis numbers in typed arrays: one hidden class whatever the values (a plain array of three numbers holds
  // small integers or doubles depending on the frame, and each change deoptimised this large function in a fresh
  // thread, 5 optimising compiles of ~0.1–0.25 s CPU each before it settled)
  const nb = axes(1), f = axes(1), origin = axes(0);
  const extent = axes(0);
  for (let k = 0; k < 3; k++) extent[k] = pbc[k] ? width[k] : n > 0 ? (hi[k] - lo[k]) * width[k] : 0;
  if (!extent.every(Number.isFinite) || !width.every(Number.isFinite)) {
    throw new InputError(`the cell or the positions span a non-finite extent (${Array.from(extent, (e) => e.toPrecision(3)).join(', ')} Å)`, where,
      'check the cell and the positions: lattice vectors and coordinates are finite lengths in Å');
  }
  let binLen = cutoff * binFraction;
  const maxBins = Math.max(27, 2 * n);
  // finite extents: each pass grows binLen by 1.25, so a few hundred passes bring every axis to one bin
  for (let pass = 0; ; pass++) {
    for (let k = 0; k < 3; k++) nb[k] = Math.max(1, Math.floor(extent[k] / (binLen * (1 + 1e-9))));
    if (nb[0] * nb[1] * nb[2] <= maxBins) break;
    if (pass > 10_000) throw new Error('neighbourList: bin sizing did not converge');
    binLen *= 1.25;
  }
  for (let k = 0; k < 3; k++) {
    if (pbc[k]) {
      f[k] = 1 / nb[k];
      origin[k] = 0;
    } else {
      f[k] = nb[k] > 1 ? (hi[k] - lo[k]) / nb[k] : 1;
      origin[k] = n > 0 ? lo[k] : 0;
    }
  }
  // Stencil half-widths: bins whose index differs by more than m along an axis are farther apart than the cutoff
  // (their faces are (|Δ| − 1)·f·width apart). Along periodic axes m may exceed nb: several images of one bin.
  const m = axes(0);
  for (let k = 0; k < 3; k++) {
    const need = Math.ceil((cutoff / (f[k] * width[k])) * (1 + 1e-10));
    m[k] = pbc[k] ? need : Math.min(nb[k] - 1, need);
  }
  const stencil = (2 * m[0] + 1) * (2 * m[1] + 1) * (2 * m[2] + 1);
  if (stencil > 5e7) {
    throw new InputError(
      `the cutoff ${cutoff} Å needs ${stencil.toExponential(2)} bin images (the cell's widths are ` +
        `${width.map((w) => w.toPrecision(3)).join(', ')} Å): too many periodic images to list`,
      where,
      'use a smaller cutoff, or check the cell (units? a missing lattice vector?)',
    );
  }
  let volume = 1;
  for (let k = 0; k < 3; k++) volume *= pbc[k] ? width[k] : Math.max(extent[k], 1);
  // Expected pairs for a homogeneous system (exact in the mean when every axis is periodic).
  const estimate = n * (n / volume) * ((4 * Math.PI) / 3) * cutoff ** 3;
  const fullyPeriodic = pbc[0] && pbc[1] && pbc[2];
  if (fullyPeriodic && estimate > 1.2 * MAX_PAIRS) {
    throw new InputError(`about ${estimate.toExponential(2)} pairs within ${cutoff} Å: too many to store`, where,
      'use a smaller cutoff or a smaller structure');
  }

  // Counting sort of atoms into bins; within a bin atoms keep ascending index. Coordinates copied bin by bin.
  const n0 = nb[0], n1 = nb[1], n2 = nb[2];
  const nBins = n0 * n1 * n2;
  const binOf = work.binOf;
  const bin3 = work.bin3;
  const binStart = new Int32Array(nBins + 1);
  for (let i = 0; i < n; i++) {
    let idx = 0;
    for (let k = 0; k < 3; k++) {
      let q = Math.floor((frac[3 * i + k] - origin[k]) / f[k]);
      if (q < 0) q = 0;
      else if (q >= nb[k]) q = nb[k] - 1;
      bin3[3 * i + k] = q;
      idx = idx * nb[k] + q;
    }
    binOf[i] = idx;
    binStart[idx + 1]++;
  }
  for (let t = 0; t < nBins; t++) binStart[t + 1] += binStart[t];
  const binAtom = work.binAtom;
  // Slot-ordered copies (atoms of one bin side by side), so the inner loop reads memory in order.
  const binPos = work.binPos;
  const binOff = work.binOff;
  {
    const fill = binStart.slice(0, nBins);
    for (let i = 0; i < n; i++) {
      const p = fill[binOf[i]]++;
      binAtom[p] = i;
      for (let k = 0; k < 3; k++) {
        binPos[3 * p + k] = wrapped[3 * i + k];
        binOff[3 * p + k] = offset[3 * i + k];
      }
    }
  }

  // Output buffers, grown geometrically.
  let cap = Math.min(MAX_PAIRS, Math.ceil(Math.min(estimate * 1.1, fullyPeriodic ? Infinity : 64 * n)) + 1024);
  const given = reusable(options.reuse, n);
  let outJ: Int32Array<ArrayBuffer>, outV: Float64Array<ArrayBuffer>, outD: Float64Array<ArrayBuffer>, outS: Int32Array<ArrayBuffer>;
  let start: Int32Array<ArrayBuffer>;
  if (given) {
    ({ outJ, outV, outD, outS, start } = given);
    cap = outJ.length;
  } else {
    outJ = new Int32Array(cap);
    outV = new Float64Array(3 * cap);
    outD = new Float64Array(cap);
    outS = new Int32Array(3 * cap);
    start = new Int32Array(n + 1);
  }
  let count = 0;

  // Slightly above cutoff² so that the final test is on the reported distance itself (see the inclusion rule).
  const cut2 = cutoff * cutoff * (1 + 8 * Number.EPSILON);
  // Per axis, for a bin index t = c + d (stored at c + d + m): the bin it falls in (−1 if outside an open axis)
  // and the image shift that brings it there. Lookups instead of modulo arithmetic in the loop.
  const table = (k: number) => {
    const len = nb[k] + 2 * m[k];
    const wrap = new Int32Array(len), shift = new Int32Array(len);
    for (let u = 0; u < len; u++) {
      const t = u - m[k];
      if (pbc[k]) {
        const q = ((t % nb[k]) + nb[k]) % nb[k];
        wrap[u] = q;
        shift[u] = (t - q) / nb[k];
      } else {
        wrap[u] = t >= 0 && t < nb[k] ? t : -1;
      }
    }
    return { wrap, shift };
  };
  const tables = [table(0), table(1), table(2)];
  // A bin is skipped when every atom in it is farther from the centre than the cutoff: per axis, the gap between
  // the centre's fractional coordinate and the bin's slice, times the slice's thickness, bounds the distance from
  // below; in a cell with orthogonal axes the gaps add in squares, else the largest bounds it. The margin (1e-9 of
  // the cutoff, the cell and the coordinates) lies far above the rounding of positions and fractions, so a skipped
  // bin never holds a pair that the distance test would keep: the same pairs as visiting it.
  const thick = axes(0);
  for (let k = 0; k < 3; k++) thick[k] = f[k] * width[k];
  const orthogonal = [[0, 1], [0, 2], [1, 2]].every(([a, c]) => {
    const dot = h[3 * a] * h[3 * c] + h[3 * a + 1] * h[3 * c + 1] + h[3 * a + 2] * h[3 * c + 2];
    return Math.abs(dot) <= 1e-12 * Math.hypot(h[3 * a], h[3 * a + 1], h[3 * a + 2]) * Math.hypot(h[3 * c], h[3 * c + 1], h[3 * c + 2]);
  });
  const reach = cutoff + 1e-9 * (cutoff + width[0] + width[1] + width[2] + largest);
  const reach2 = reach * reach;
  // The search over centres in WebAssembly (core/wasm/assembly/neighbour-search.ts, the same bits) when the kernels
  // are on, else in JavaScript.
  const search: KernelSearch = {
    n, nb, m, orthogonal, origin, f, thick, h, cutoff, cut2, reach2, work, binStart, tables, start,
    chunk: Math.min(chunkPairs, Math.ceil(Math.min(estimate * 1.1, fullyPeriodic ? Infinity : 64 * n)) + 1024),
    out: { outJ, outV, outD, outS, cap }, where,
  };
  const kernel = n > 0 ? neighbourKernels() : null;
  let found = kernel && kernelPairs(kernel, search);
  if (!found) {
    try {
      found = jsPairs(search);
    } catch (error) {
      // the marks may be left set: the next call starts afresh
      if (work === kept) kept = null;
      throw error;
    }
  }
  ({ outJ, outV, outD, outS, cap, count } = found);
  start[n] = count;

  // Trim: copy when much space is wasted, else hand out views (always views of buffers handed in for reuse).
  const trim = !given && count < cap * 0.85;
  return {
    cutoff,
    count,
    start,
    neighbour: trim ? outJ.slice(0, count) : outJ.subarray(0, count),
    vectors: trim ? outV.slice(0, 3 * count) : outV.subarray(0, 3 * count),
    distances: trim ? outD.slice(0, count) : outD.subarray(0, count),
    shifts: trim ? outS.slice(0, 3 * count) : outS.subarray(0, 3 * count),
  };
}
