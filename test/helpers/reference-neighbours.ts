// The neighbour list of core/geometry/neighbours.ts as it was before it was restructured for speed (issue 16): fresh
// arrays per call, and each centre's candidates put in (j, shift) order by a sort on a packed key. Kept as the oracle
// of the bit-for-bit test in test/core/geometry/neighbours.test.ts and for `npm run bench -- neighbours`. Do not
// optimise this file.
import { InputError, type Where } from '../../src-main/core/errors.ts';
import type { Frame, Mat3 } from '../../src-main/core/geometry/frame.ts';
import { checkCell, perpendicularWidths, reciprocalCell } from '../../src-main/core/geometry/cell.ts';

interface NeighbourList {
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

interface NeighbourOptions {
  /**
   * Bin edge as a fraction of the cutoff (default 1: bins just thicker than the cutoff, 27 searched per atom). Smaller bins test fewer far candidates but visit more
   * bins; the result does not depend on it (tests use it to exercise the binning).
   */
  binFraction?: number;
}

function whereOf(frame: Frame): Where {
  return frame.source ? { file: frame.source.file, line: frame.source.line, frame: frame.source.index } : {};
}

/**
 * A non-singular cell for binning: the periodic rows of the frame's cell, and along each non-periodic axis a
 * unit vector orthogonal to the periodic rows. Images are only ever taken along periodic rows, so the rows of
 * non-periodic axes (which may be zero or absent in files) never affect the result.
 */
function binningCell(frame: Frame, pbc: readonly boolean[], where: Where): Mat3 {
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

function growInt(a: Int32Array, size: number): Int32Array<ArrayBuffer> {
  const b = new Int32Array(size);
  b.set(a);
  return b;
}

function growFloat(a: Float64Array, size: number): Float64Array<ArrayBuffer> {
  const b = new Float64Array(size);
  b.set(a);
  return b;
}

const MAX_PAIRS = 2 ** 31 - 1;

/**
 * The full neighbour list of a frame within `cutoff` (Å): every j ≠ i and every image of j (and every periodic
 * image of i itself) with |r_j + s·H − r_i| < cutoff, in both directions (i→j with s and j→i with −s).
 */
export function referenceNeighbourList(frame: Frame, cutoff: number, options: NeighbourOptions = {}): NeighbourList {
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
  for (let k = 0; k < 3 * n; k++) {
    const x = pos[k];
    if (!Number.isFinite(x)) {
      throw new InputError(`atom ${Math.floor(k / 3)} has a non-finite coordinate (${x})`, where,
        'every position must be a finite number in Å');
    }
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
  const wrapped = new Float64Array(3 * n); // wrapped Cartesian positions
  const offset = new Int32Array(3 * n);
  const frac = new Float64Array(3 * n);
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
      }
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
  const nb = [1, 1, 1], f = [1, 1, 1], origin = [0, 0, 0];
  const extent = [0, 1, 2].map((k) => (pbc[k] ? width[k] : n > 0 ? (hi[k] - lo[k]) * width[k] : 0));
  if (!extent.every(Number.isFinite) || !width.every(Number.isFinite)) {
    throw new InputError(`the cell or the positions span a non-finite extent (${extent.map((e) => e.toPrecision(3)).join(', ')} Å)`, where,
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
  const m = [0, 1, 2].map((k) => {
    const need = Math.ceil((cutoff / (f[k] * width[k])) * (1 + 1e-10));
    return pbc[k] ? need : Math.min(nb[k] - 1, need);
  });
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
  const [n0, n1, n2] = nb;
  const nBins = n0 * n1 * n2;
  const binOf = new Int32Array(n);
  const bin3 = new Int32Array(3 * n);
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
  const binAtom = new Int32Array(n);
  // Slot-ordered copies (atoms of one bin side by side), so the inner loop reads memory in order.
  const binPos = new Float64Array(3 * n);
  const binOff = new Int32Array(3 * n);
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

  // Sorting key per pair: (j, s_a, s_b, s_c) packed into one integer-valued double.
  const sMin = [0, 0, 0], sSpan = [1, 1, 1];
  for (let k = 0; k < 3; k++) {
    if (!pbc[k]) continue;
    let oLo = 0, oHi = 0;
    for (let i = 0; i < n; i++) {
      const o = offset[3 * i + k];
      if (o < oLo) oLo = o;
      if (o > oHi) oHi = o;
    }
    const binShiftLo = Math.floor(-m[k] / nb[k]), binShiftHi = Math.floor((nb[k] - 1 + m[k]) / nb[k]);
    sMin[k] = binShiftLo - (oHi - oLo);
    sSpan[k] = binShiftHi - binShiftLo + 2 * (oHi - oLo) + 1;
  }
  const keySpan = n * sSpan[0] * sSpan[1] * sSpan[2];

  // Output buffers, grown geometrically.
  let cap = Math.min(MAX_PAIRS, Math.ceil(Math.min(estimate * 1.1, fullyPeriodic ? Infinity : 64 * n)) + 1024);
  let outJ = new Int32Array(cap);
  let outV = new Float64Array(3 * cap);
  let outD = new Float64Array(cap);
  let outS = new Int32Array(3 * cap);
  const start = new Int32Array(n + 1);
  let count = 0;

  // Per-centre scratch (candidates of one centre before sorting).
  let scap = 256;
  let cJ = new Int32Array(scap), cS = new Int32Array(3 * scap);
  let cV = new Float64Array(3 * scap), cD = new Float64Array(scap), cKey = new Float64Array(scap);

  const scratch: { order: Int32Array<ArrayBuffer>; packed: Float64Array<ArrayBuffer> } = {
    order: new Int32Array(256),
    packed: new Float64Array(256),
  };
  // Slightly above cutoff² so that the final test is on the reported distance itself (see the inclusion rule).
  const cut2 = cutoff * cutoff * (1 + 8 * Number.EPSILON);
  // Per axis, for a bin index t = c + d (stored at c + d + m): the bin it falls in (−1 if outside an open axis)
  // and the image shift that brings it there. Lookups instead of modulo arithmetic in the loop.
  const tables = [0, 1, 2].map((k) => {
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
  });
  const wrapA = tables[0].wrap, wrapB = tables[1].wrap, wrapC = tables[2].wrap;
  const shiftA = tables[0].shift, shiftB = tables[1].shift, shiftC = tables[2].shift;
  const w0 = 2 * m[0] + 1, w1 = 2 * m[1] + 1, w2 = 2 * m[2] + 1;
  const h0 = h[0], h1 = h[1], h2 = h[2], h3 = h[3], h4 = h[4], h5 = h[5], h6 = h[6], h7 = h[7], h8 = h[8];
  const [span0, span1, span2] = sSpan;
  const [min0, min1, min2] = sMin;

  for (let i = 0; i < n; i++) {
    start[i] = count;
    let ncand = 0;
    const xi = wrapped[3 * i], yi = wrapped[3 * i + 1], zi = wrapped[3 * i + 2];
    const oi0 = offset[3 * i], oi1 = offset[3 * i + 1], oi2 = offset[3 * i + 2];
    const c0 = bin3[3 * i], c1 = bin3[3 * i + 1], c2 = bin3[3 * i + 2];
    for (let d0 = 0; d0 < w0; d0++) {
      const t0 = wrapA[c0 + d0];
      if (t0 < 0) continue;
      const S0 = shiftA[c0 + d0];
      for (let d1 = 0; d1 < w1; d1++) {
        const t1 = wrapB[c1 + d1];
        if (t1 < 0) continue;
        const S1 = shiftB[c1 + d1];
        const row = (t0 * n1 + t1) * n2;
        const tx01 = S0 * h0 + S1 * h3, ty01 = S0 * h1 + S1 * h4, tz01 = S0 * h2 + S1 * h5;
        for (let d2 = 0; d2 < w2; d2++) {
          const t2 = wrapC[c2 + d2];
          if (t2 < 0) continue;
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
              cJ = growInt(cJ, scap);
              cS = growInt(cS, 3 * scap);
              cV = growFloat(cV, 3 * scap);
              cD = growFloat(cD, scap);
              cKey = new Float64Array(scap);
            }
            cJ[ncand] = j;
            cS[3 * ncand] = s0;
            cS[3 * ncand + 1] = s1;
            cS[3 * ncand + 2] = s2;
            cV[3 * ncand] = vx;
            cV[3 * ncand + 1] = vy;
            cV[3 * ncand + 2] = vz;
            cD[ncand] = dist;
            ncand++;
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
      for (let c = 0; c < ncand; c++) {
        cKey[c] = ((cJ[c] * span0 + (cS[3 * c] - min0)) * span1 + (cS[3 * c + 1] - min1)) * span2 + (cS[3 * c + 2] - min2);
      }
      const order = sortOrder(cKey, ncand, keySpan, scratch);
      for (let r = 0; r < ncand; r++) {
        const c = order[r];
        const o = count + r;
        outJ[o] = cJ[c];
        outD[o] = cD[c];
        outS[3 * o] = cS[3 * c];
        outS[3 * o + 1] = cS[3 * c + 1];
        outS[3 * o + 2] = cS[3 * c + 2];
        outV[3 * o] = cV[3 * c];
        outV[3 * o + 1] = cV[3 * c + 1];
        outV[3 * o + 2] = cV[3 * c + 2];
      }
      count += ncand;
    }
  }
  start[n] = count;

  // Trim: copy when much space is wasted, else hand out views.
  const trim = count < cap * 0.85;
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

/**
 * Indices 0…len−1 ordered by ascending key (keys are distinct non-negative integers below keySpan), in
 * scratch.order (reused between calls; grown when needed).
 */
function sortOrder(
  key: Float64Array,
  len: number,
  keySpan: number,
  scratch: { order: Int32Array<ArrayBuffer>; packed: Float64Array<ArrayBuffer> },
): Int32Array {
  if (scratch.order.length < len) {
    scratch.order = new Int32Array(2 * len);
    scratch.packed = new Float64Array(2 * len);
  }
  const order = scratch.order;
  // Pack (key, index) into one exact double: key·2^b + index with 2^b ≥ len, so the index is the low part.
  let pow = 1;
  while (pow < len) pow *= 2;
  if (keySpan * pow <= 2 ** 53) {
    const packed = scratch.packed;
    for (let a = 0; a < len; a++) packed[a] = key[a] * pow + a;
    if (len <= 64) {
      // Insertion sort: cheaper than a native call for the short lists typical of one centre.
      for (let a = 1; a < len; a++) {
        const v = packed[a];
        let p = a - 1;
        while (p >= 0 && packed[p] > v) {
          packed[p + 1] = packed[p];
          p--;
        }
        packed[p + 1] = v;
      }
    } else {
      packed.subarray(0, len).sort();
    }
    const inv = 1 / pow;
    for (let a = 0; a < len; a++) {
      const v = packed[a];
      order[a] = v - Math.floor(v * inv) * pow;
    }
    return order;
  }
  const idx = Array.from({ length: len }, (_, a) => a).sort((u, v) => key[u] - key[v]);
  for (let a = 0; a < len; a++) order[a] = idx[a];
  return order;
}
