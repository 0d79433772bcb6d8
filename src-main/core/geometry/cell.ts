// Periodic cells: volume, reciprocal rows, fractional ↔ Cartesian, wrapping, face-to-face widths, cell
// parameters (a, b, c, α, β, γ) and supercells. A cell is a Mat3 whose rows are the lattice vectors a, b, c (Å);
// a position r has fractional coordinates s with r = s·H (row vector times matrix).
import { InputError, type Where } from '../errors.ts';
import type { AtomArray, Frame, InfoValue, Mat3 } from './frame.ts';
import { MAX_CELL_VOLUME_A3, MIN_CELL_VOLUME_A3 } from '../limits.ts';

/** Lattice lengths (Å) and angles (degrees): α = ∠(b, c), β = ∠(a, c), γ = ∠(a, b). */
export interface CellParameters {
  a: number;
  b: number;
  c: number;
  alpha: number;
  beta: number;
  gamma: number;
}

/** Signed determinant of H = a · (b × c); negative for a left-handed set of rows. */
export function cellDeterminant(cell: Mat3): number {
  const [ax, ay, az, bx, by, bz, cx, cy, cz] = cell;
  return ax * (by * cz - bz * cy) - ay * (bx * cz - bz * cx) + az * (bx * cy - by * cx);
}

/**
 * Throws InputError unless `cell` is nine finite numbers spanning a non-zero volume. A cell counts as
 * degenerate when |det H| ≤ 1e-10 · |a||b||c| (the rows are coplanar to ~1e-10 rad) — a relative test, so it
 * does not depend on the size of the cell. Left-handed cells (det H < 0) are accepted: V = |det H|.
 */
export function checkCell(cell: ArrayLike<number> | null | undefined, where: Where = {}): asserts cell is Mat3 {
  if (cell === null || cell === undefined) {
    throw new InputError('no periodic cell given', where, 'give the three lattice vectors (e.g. Lattice="..." in extended XYZ)');
  }
  if (cell.length !== 9) {
    throw new InputError(`a cell needs 9 numbers (three lattice vectors), got ${cell.length}`, where,
      'write the lattice vectors a, b, c one after the other, in Å');
  }
  for (let k = 0; k < 9; k++) {
    if (!Number.isFinite(cell[k])) {
      throw new InputError(`cell entry ${k} (vector ${'abc'[Math.floor(k / 3)]}) is ${cell[k]}`, where,
        'every lattice vector component must be a finite number in Å');
    }
  }
  const h = cell as Mat3;
  const det = cellDeterminant(h);
  const la = Math.hypot(h[0], h[1], h[2]);
  const lb = Math.hypot(h[3], h[4], h[5]);
  const lc = Math.hypot(h[6], h[7], h[8]);
  if (!Number.isFinite(det) || !Number.isFinite(la * lb * lc)) {
    throw new InputError(`the cell's volume overflows (|a| = ${la}, |b| = ${lb}, |c| = ${lc} Å)`, where,
      'lattice vectors are lengths in Å; check the units and the numbers of the cell');
  }
  if (!(Math.abs(det) > 1e-10 * la * lb * lc) || la === 0 || lb === 0 || lc === 0) {
    throw new InputError(
      `the cell has zero volume (det = ${det}; |a| = ${la}, |b| = ${lb}, |c| = ${lc} Å)`,
      where,
      'the three lattice vectors must not lie in one plane; for a slab or a wire, give a non-zero vector along ' +
        'each non-periodic axis (e.g. the vacuum thickness) and mark that axis non-periodic',
    );
  }
}

/** A volume to four digits, or to all of them where four would print a bound of the range (0.99999… as 1.000). */
function volumeText(v: number): string {
  const short = v.toPrecision(4);
  return Number(short) === MIN_CELL_VOLUME_A3 || Number(short) === MAX_CELL_VOLUME_A3 ? String(v) : short;
}

/**
 * checkCell, and a volume within the range believed for a structure (core/limits.ts): what every reader
 * applies to a cell from a file, so an overflowing or mistyped cell is refused where it is read.
 */
export function checkBelievableCell(cell: ArrayLike<number> | null | undefined, where: Where = {}): asserts cell is Mat3 {
  checkCell(cell, where);
  const v = Math.abs(cellDeterminant(cell));
  if (v < MIN_CELL_VOLUME_A3 || v > MAX_CELL_VOLUME_A3) {
    throw new InputError(
      `the cell volume ${volumeText(v)} Å³ is outside the range believed for a structure (${MIN_CELL_VOLUME_A3} to ${MAX_CELL_VOLUME_A3.toExponential(0)} Å³)`,
      where,
      'lattice vectors are in Å: check the units (bohr? nm?) and the numbers of the cell',
    );
  }
}

/** V = |det H| (Å³). Throws InputError for a degenerate or non-finite cell. */
export function cellVolume(cell: Mat3, where: Where = {}): number {
  checkCell(cell, where);
  return Math.abs(cellDeterminant(cell));
}

/**
 * Rows b_i with a_i · b_j = δ_ij (no factor 2π), i.e. B = (H⁻¹)ᵀ. Fractional coordinates are s_i = r · b_i.
 */
export function reciprocalCell(cell: Mat3, where: Where = {}): Mat3 {
  checkCell(cell, where);
  const [ax, ay, az, bx, by, bz, cx, cy, cz] = cell;
  const inv = 1 / cellDeterminant(cell);
  // b_1 = (b × c)/det, b_2 = (c × a)/det, b_3 = (a × b)/det.
  return Float64Array.of(
    (by * cz - bz * cy) * inv, (bz * cx - bx * cz) * inv, (bx * cy - by * cx) * inv,
    (cy * az - cz * ay) * inv, (cz * ax - cx * az) * inv, (cx * ay - cy * ax) * inv,
    (ay * bz - az * by) * inv, (az * bx - ax * bz) * inv, (ax * by - ay * bx) * inv,
  );
}

function checkPositions(pos: ArrayLike<number>, what: string): void {
  if (pos.length % 3 !== 0) {
    throw new RangeError(`${what}: expected 3 numbers per atom, got ${pos.length} numbers`);
  }
}

/** Fractional coordinates s = r H⁻¹ of a flat list of positions (3 per atom). */
export function toFractional(cell: Mat3, pos: ArrayLike<number>, where: Where = {}): Float64Array {
  checkPositions(pos, 'toFractional');
  const b = reciprocalCell(cell, where);
  const n = pos.length / 3;
  const out = new Float64Array(3 * n);
  for (let i = 0; i < n; i++) {
    const x = pos[3 * i], y = pos[3 * i + 1], z = pos[3 * i + 2];
    out[3 * i] = x * b[0] + y * b[1] + z * b[2];
    out[3 * i + 1] = x * b[3] + y * b[4] + z * b[5];
    out[3 * i + 2] = x * b[6] + y * b[7] + z * b[8];
  }
  return out;
}

/** Cartesian positions r = s H of a flat list of fractional coordinates (3 per atom). */
export function toCartesian(cell: Mat3, frac: ArrayLike<number>, where: Where = {}): Float64Array {
  checkPositions(frac, 'toCartesian');
  checkCell(cell, where);
  const n = frac.length / 3;
  const out = new Float64Array(3 * n);
  for (let i = 0; i < n; i++) {
    const s0 = frac[3 * i], s1 = frac[3 * i + 1], s2 = frac[3 * i + 2];
    out[3 * i] = s0 * cell[0] + s1 * cell[3] + s2 * cell[6];
    out[3 * i + 1] = s0 * cell[1] + s1 * cell[4] + s2 * cell[7];
    out[3 * i + 2] = s0 * cell[2] + s1 * cell[5] + s2 * cell[8];
  }
  return out;
}

/** s − ⌊s⌋, forced into [0, 1) (a tiny negative s would otherwise round to exactly 1). */
export function wrapUnit(s: number): number {
  const w = s - Math.floor(s);
  return w >= 1 ? 0 : w;
}

/**
 * Positions moved into the cell along the periodic axes: each atom is moved by the whole lattice vectors that bring
 * its fractional coordinate along every axis with pbc true into [0, 1) (up to rounding); nothing moves along
 * non-periodic axes, and an atom already inside is returned bit for bit.
 */
export function wrapPositions(
  cell: Mat3,
  pos: ArrayLike<number>,
  pbc: readonly [boolean, boolean, boolean] = [true, true, true],
  where: Where = {},
): Float64Array {
  const frac = toFractional(cell, pos, where);
  const out = Float64Array.from(pos);
  for (let i = 0; i < frac.length; i += 3) {
    for (let k = 0; k < 3; k++) {
      if (!pbc[k]) continue;
      const o = Math.floor(frac[i + k]);
      if (o === 0) continue;
      out[i] -= o * cell[3 * k];
      out[i + 1] -= o * cell[3 * k + 1];
      out[i + 2] -= o * cell[3 * k + 2];
    }
  }
  return out;
}

/**
 * Distances between opposite faces of the cell, [d_a, d_b, d_c] with d_i = 1/|b_i| = V / |a_j × a_k|. A sphere
 * of radius r fits inside the cell, without touching its own images, iff r < min(d)/2.
 */
export function perpendicularWidths(cell: Mat3, where: Where = {}): [number, number, number] {
  const b = reciprocalCell(cell, where);
  return [
    1 / Math.hypot(b[0], b[1], b[2]),
    1 / Math.hypot(b[3], b[4], b[5]),
    1 / Math.hypot(b[6], b[7], b[8]),
  ];
}

/** cos of an angle in degrees, exactly 0 at 90° (so orthorhombic cells get exact zeros). */
function cosDeg(angle: number): number {
  return Math.abs(angle - 90) < 1e-10 ? 0 : Math.cos((angle * Math.PI) / 180);
}

/**
 * The cell of the given lengths (Å) and angles (degrees) in the crystallographic standard orientation:
 * a along x, b in the xy plane (positive y), c with positive z (a right-handed set of rows).
 */
export function cellFromParameters(
  a: number,
  b: number,
  c: number,
  alphaDeg: number,
  betaDeg: number,
  gammaDeg: number,
  where: Where = {},
): Mat3 {
  const lengths = { a, b, c };
  for (const [name, v] of Object.entries(lengths)) {
    if (!(Number.isFinite(v) && v > 0)) {
      throw new InputError(`cell length ${name} = ${v}`, where, 'cell lengths must be positive numbers in Å');
    }
  }
  const angles = { alpha: alphaDeg, beta: betaDeg, gamma: gammaDeg };
  for (const [name, v] of Object.entries(angles)) {
    if (!(Number.isFinite(v) && v > 0 && v < 180)) {
      throw new InputError(`cell angle ${name} = ${v}°`, where, 'cell angles must lie strictly between 0 and 180 degrees');
    }
  }
  const ca = cosDeg(alphaDeg), cb = cosDeg(betaDeg), cg = cosDeg(gammaDeg);
  const sg = Math.abs(gammaDeg - 90) < 1e-10 ? 1 : Math.sin((gammaDeg * Math.PI) / 180);
  const cy = (ca - cb * cg) / sg;
  const cz2 = 1 - cb * cb - cy * cy;
  // cz2 · sg² = 1 − cos²α − cos²β − cos²γ + 2 cosα cosβ cosγ, the squared volume of the unit cell.
  if (!(cz2 > 1e-12)) {
    throw new InputError(
      `the angles α = ${alphaDeg}°, β = ${betaDeg}°, γ = ${gammaDeg}° do not form a cell (zero or imaginary volume)`,
      where,
      'each angle must be smaller than the sum of the other two, and their sum below 360°',
    );
  }
  return Float64Array.of(a, 0, 0, b * cg, b * sg, 0, c * cb, c * cy, c * Math.sqrt(cz2));
}

/** Angle between two vectors in degrees, by atan2 (accurate near 0° and 180° too). */
function angleDeg(u: ArrayLike<number>, v: ArrayLike<number>): number {
  const cx = u[1] * v[2] - u[2] * v[1];
  const cy = u[2] * v[0] - u[0] * v[2];
  const cz = u[0] * v[1] - u[1] * v[0];
  const dot = u[0] * v[0] + u[1] * v[1] + u[2] * v[2];
  return (Math.atan2(Math.hypot(cx, cy, cz), dot) * 180) / Math.PI;
}

/** Lengths and angles of a cell's rows (orientation is lost; handedness too). */
export function cellParameters(cell: Mat3, where: Where = {}): CellParameters {
  checkCell(cell, where);
  const a = cell.subarray(0, 3), b = cell.subarray(3, 6), c = cell.subarray(6, 9);
  return {
    a: Math.hypot(a[0], a[1], a[2]),
    b: Math.hypot(b[0], b[1], b[2]),
    c: Math.hypot(c[0], c[1], c[2]),
    alpha: angleDeg(b, c),
    beta: angleDeg(a, c),
    gamma: angleDeg(a, b),
  };
}

function repeatArray(arr: AtomArray, copies: number): AtomArray {
  const len = arr.data.length;
  switch (arr.kind) {
    case 'real': {
      const data = new Float64Array(len * copies);
      for (let t = 0; t < copies; t++) data.set(arr.data, t * len);
      return { kind: 'real', width: arr.width, data };
    }
    case 'int': {
      const data = new Int32Array(len * copies);
      for (let t = 0; t < copies; t++) data.set(arr.data, t * len);
      return { kind: 'int', width: arr.width, data };
    }
    case 'bool': {
      const data = new Uint8Array(len * copies);
      for (let t = 0; t < copies; t++) data.set(arr.data, t * len);
      return { kind: 'bool', width: arr.width, data };
    }
    case 'string': {
      const data: string[] = new Array(len * copies);
      for (let t = 0; t < copies; t++) for (let k = 0; k < len; k++) data[t * len + k] = arr.data[k];
      return { kind: 'string', width: arr.width, data };
    }
  }
}

function copyInfo(info: Record<string, InfoValue>): Record<string, InfoValue> {
  const out: Record<string, InfoValue> = {};
  for (const [k, v] of Object.entries(info)) out[k] = Array.isArray(v) ? [...v] : v;
  return out;
}

/**
 * The frame repeated na × nb × nc times: the new cell has rows na·a, nb·b, nc·c; atoms are ordered image by
 * image (image (0,0,0) first: the original atoms in their order; the last index nc varies fastest), and every
 * per-atom array is repeated the same way. Per-frame properties (info) are copied unchanged — extensive ones
 * (a cell polarisability, an energy) are NOT scaled; the caller knows which they are.
 */
export function supercell(frame: Frame, repeats: readonly [number, number, number]): Frame {
  const where: Where = frame.source ? { file: frame.source.file, line: frame.source.line, frame: frame.source.index } : {};
  if (frame.cell === null) {
    throw new InputError('cannot build a supercell of an open structure (no cell)', where, 'give the frame a periodic cell');
  }
  checkCell(frame.cell, where);
  for (const r of repeats) {
    if (!(Number.isInteger(r) && r >= 1)) {
      throw new InputError(`supercell repeats must be positive integers, got [${repeats.join(', ')}]`, where,
        'use e.g. [2, 2, 2] for a doubled cell along each axis');
    }
  }
  const [na, nb, nc] = repeats;
  const h = frame.cell;
  const n = frame.species.length;
  const copies = na * nb * nc;
  const positions = new Float64Array(3 * n * copies);
  const species: string[] = new Array(n * copies);
  let t = 0;
  for (let i0 = 0; i0 < na; i0++) {
    for (let i1 = 0; i1 < nb; i1++) {
      for (let i2 = 0; i2 < nc; i2++, t++) {
        const tx = i0 * h[0] + i1 * h[3] + i2 * h[6];
        const ty = i0 * h[1] + i1 * h[4] + i2 * h[7];
        const tz = i0 * h[2] + i1 * h[5] + i2 * h[8];
        for (let i = 0; i < n; i++) {
          const o = 3 * (t * n + i);
          positions[o] = frame.positions[3 * i] + tx;
          positions[o + 1] = frame.positions[3 * i + 1] + ty;
          positions[o + 2] = frame.positions[3 * i + 2] + tz;
          species[t * n + i] = frame.species[i];
        }
      }
    }
  }
  const arrays: Record<string, AtomArray> = {};
  for (const [k, v] of Object.entries(frame.arrays)) arrays[k] = repeatArray(v, copies);
  const out: Frame = {
    species,
    positions,
    cell: Float64Array.of(na * h[0], na * h[1], na * h[2], nb * h[3], nb * h[4], nb * h[5], nc * h[6], nc * h[7], nc * h[8]),
    pbc: [frame.pbc[0], frame.pbc[1], frame.pbc[2]],
    info: copyInfo(frame.info),
    arrays,
  };
  if (frame.source) out.source = { ...frame.source };
  return out;
}

/**
 * The shortest periodic image of a displacement d (Å) over the lattice translations along periodic axes:
 * returns d + s·H with integer s minimising |d + s·H|. Exact for any cell shape (not just the
 * fractional-rounding estimate, which fails for skewed cells): after rounding, every image shorter than the
 * rounded one is searched for within the bound set by the face-to-face widths.
 */
export function minimumImage(
  cell: Mat3,
  d: ArrayLike<number>,
  pbc: readonly [boolean, boolean, boolean] = [true, true, true],
  where: Where = {},
): Float64Array {
  const b = reciprocalCell(cell, where);
  const out = Float64Array.of(d[0], d[1], d[2]);
  // Round the fractional components along periodic axes.
  for (let k = 0; k < 3; k++) {
    if (!pbc[k]) continue;
    const s = out[0] * b[3 * k] + out[1] * b[3 * k + 1] + out[2] * b[3 * k + 2];
    const r = Math.round(s);
    out[0] -= r * cell[3 * k];
    out[1] -= r * cell[3 * k + 1];
    out[2] -= r * cell[3 * k + 2];
  }
  // Any shorter image d' = out + s·H has |s_k| ≤ (|out| + |d'|)·|b_k| ≤ 2|out|·|b_k|.
  const len = Math.hypot(out[0], out[1], out[2]);
  const m = [0, 1, 2].map((k) => (pbc[k] ? Math.ceil(2 * len * Math.hypot(b[3 * k], b[3 * k + 1], b[3 * k + 2])) : 0));
  let best0 = out[0], best1 = out[1], best2 = out[2], best = len * len;
  for (let s0 = -m[0]; s0 <= m[0]; s0++) {
    for (let s1 = -m[1]; s1 <= m[1]; s1++) {
      for (let s2 = -m[2]; s2 <= m[2]; s2++) {
        const x = out[0] + s0 * cell[0] + s1 * cell[3] + s2 * cell[6];
        const y = out[1] + s0 * cell[1] + s1 * cell[4] + s2 * cell[7];
        const z = out[2] + s0 * cell[2] + s1 * cell[5] + s2 * cell[8];
        const q = x * x + y * y + z * z;
        if (q < best) {
          best = q;
          best0 = x;
          best1 = y;
          best2 = z;
        }
      }
    }
  }
  out[0] = best0;
  out[1] = best1;
  out[2] = best2;
  return out;
}
