// Tests of core/geometry/neighbours.ts: against a brute-force enumeration of image shifts written here (random triclinic
// cells, skewed cells, cutoffs larger than the cell, partial periodicity), against ASE's neighbour list
// (committed fixture), textbook rock-salt coordination shells, and invariances.
import { readFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { cellFromParameters, supercell, toCartesian, toFractional } from '../../../src-main/core/geometry/cell.ts';
import { InputError } from '../../../src-main/core/errors.ts';
import { makeFrame, type Frame } from '../../../src-main/core/geometry/frame.ts';
import { neighbourList, setNeighbourKernelRoom, type NeighbourList } from '../../../src-main/core/geometry/neighbours.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';
import { neighbourKernels } from '../../../src-main/core/wasm/neighbour-search.ts';
import { referenceNeighbourList } from '../../helpers/reference-neighbours.ts';

type Pbc = [boolean, boolean, boolean];

interface Pair {
  i: number;
  j: number;
  s: [number, number, number];
  v: [number, number, number];
  d: number;
}

/**
 * Brute force: for every ordered pair (i, j), every lattice shift s (along periodic axes) with
 * |frac_j + s − frac_i|_k ≤ cutoff·|b_k| + 1 is tried; kept when |r_j + s·H − r_i| < cutoff. The fractional
 * bound is necessary for any shorter image, so nothing can be missed (cell.ts's toFractional is checked
 * against ASE in cell.test.ts).
 */
function bruteForce(frame: Frame, cutoff: number): Pair[] {
  const n = frame.species.length;
  const out: Pair[] = [];
  const pbc: Pbc = frame.cell ? frame.pbc : [false, false, false];
  const h = frame.cell ?? new Float64Array(9);
  let frac: Float64Array = new Float64Array(3 * n);
  const range = [0, 0, 0];
  if (frame.cell) {
    frac = toFractional(frame.cell, frame.positions);
    const unit = toFractional(frame.cell, [1, 0, 0, 0, 1, 0, 0, 0, 1]);
    for (let k = 0; k < 3; k++) {
      // |b_k| = norm of column k of H⁻¹ = norm over the fractional images of the unit vectors.
      const bk = Math.hypot(unit[k], unit[3 + k], unit[6 + k]);
      range[k] = cutoff * bk;
    }
  }
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const lo = [0, 0, 0], hi = [0, 0, 0];
      for (let k = 0; k < 3; k++) {
        if (!pbc[k]) continue;
        const df = frac[3 * j + k] - frac[3 * i + k];
        lo[k] = Math.floor(-range[k] - df) - 1;
        hi[k] = Math.ceil(range[k] - df) + 1;
      }
      for (let a = lo[0]; a <= hi[0]; a++) {
        for (let b = lo[1]; b <= hi[1]; b++) {
          for (let c = lo[2]; c <= hi[2]; c++) {
            if (i === j && a === 0 && b === 0 && c === 0) continue;
            const r = frame.positions;
            const vx = r[3 * j] - r[3 * i] + a * h[0] + b * h[3] + c * h[6];
            const vy = r[3 * j + 1] - r[3 * i + 1] + a * h[1] + b * h[4] + c * h[7];
            const vz = r[3 * j + 2] - r[3 * i + 2] + a * h[2] + b * h[5] + c * h[8];
            const d = Math.hypot(vx, vy, vz);
            if (d < cutoff) out.push({ i, j, s: [a, b, c], v: [vx, vy, vz], d });
          }
        }
      }
    }
  }
  return out;
}

function pairsOf(nl: NeighbourList): Pair[] {
  const out: Pair[] = [];
  const n = nl.start.length - 1;
  for (let i = 0; i < n; i++) {
    for (let p = nl.start[i]; p < nl.start[i + 1]; p++) {
      out.push({
        i,
        j: nl.neighbour[p],
        s: [nl.shifts[3 * p], nl.shifts[3 * p + 1], nl.shifts[3 * p + 2]],
        v: [nl.vectors[3 * p], nl.vectors[3 * p + 1], nl.vectors[3 * p + 2]],
        d: nl.distances[p],
      });
    }
  }
  return out;
}

const key = (p: { i: number; j: number; s: number[] }) => `${p.i} ${p.j} ${p.s.join(' ')}`;

/** Compare pair sets; pairs within `edge` of the cutoff may be missing on either side (rounding at the edge). */
function expectSamePairs(got: Pair[], want: Pair[], cutoff: number, tol = 1e-10, edge = 1e-9): void {
  // Problems are collected and asserted once (an expect per pair would dominate the run time).
  const problems: string[] = [];
  const g = new Map(got.map((p) => [key(p), p]));
  const w = new Map(want.map((p) => [key(p), p]));
  for (const [k, p] of w) {
    const q = g.get(k);
    if (!q) {
      if (!(Math.abs(p.d - cutoff) < edge)) problems.push(`missing pair ${k} at d = ${p.d}`);
      continue;
    }
    if (!(Math.abs(q.d - p.d) <= tol)) problems.push(`distance of ${k}: ${q.d} vs ${p.d}`);
    for (let x = 0; x < 3; x++) if (!(Math.abs(q.v[x] - p.v[x]) <= tol)) problems.push(`vector of ${k}: ${q.v} vs ${p.v}`);
  }
  for (const [k, p] of g) {
    if (!w.has(k) && !(Math.abs(p.d - cutoff) < edge)) problems.push(`extra pair ${k} at d = ${p.d}`);
  }
  expect(problems.slice(0, 5)).toEqual([]);
}

/** Structural checks every list must pass: CSR shape, order, no zero-shift self pair, d < cutoff, d = |v|. */
function expectWellFormed(nl: NeighbourList, n: number): void {
  expect(nl.start.length).toBe(n + 1);
  expect(nl.start[0]).toBe(0);
  expect(nl.start[n]).toBe(nl.count);
  expect(nl.neighbour.length).toBe(nl.count);
  expect(nl.vectors.length).toBe(3 * nl.count);
  expect(nl.shifts.length).toBe(3 * nl.count);
  expect(nl.distances.length).toBe(nl.count);
  const problems: string[] = [];
  for (let i = 0; i < n; i++) {
    if (nl.start[i + 1] < nl.start[i]) problems.push(`start decreases at ${i}`);
    for (let p = nl.start[i]; p < nl.start[i + 1]; p++) {
      const d = nl.distances[p];
      if (!(d < nl.cutoff)) problems.push(`pair ${p}: d = ${d} not below the cutoff`);
      if (d !== Math.sqrt(nl.vectors[3 * p] ** 2 + nl.vectors[3 * p + 1] ** 2 + nl.vectors[3 * p + 2] ** 2)) {
        problems.push(`pair ${p}: distance is not |vector|`);
      }
      if (nl.neighbour[p] === i && nl.shifts[3 * p] === 0 && nl.shifts[3 * p + 1] === 0 && nl.shifts[3 * p + 2] === 0) {
        problems.push(`pair ${p}: zero-shift self pair of atom ${i}`);
      }
      if (p > nl.start[i]) {
        const a = [nl.neighbour[p - 1], nl.shifts[3 * p - 3], nl.shifts[3 * p - 2], nl.shifts[3 * p - 1]];
        const b = [nl.neighbour[p], nl.shifts[3 * p], nl.shifts[3 * p + 1], nl.shifts[3 * p + 2]];
        let c = 0;
        for (let x = 0; x < 4 && c === 0; x++) c = Math.sign(b[x] - a[x]);
        if (c !== 1) problems.push(`order of pairs ${p - 1}, ${p} of centre ${i}`);
      }
    }
  }
  expect(problems.slice(0, 5)).toEqual([]);
}

/** Random cells: standard-orientation triclinic ones, and heavily sheared matrices (skewed, thin). */
const arbCell = fc.oneof(
  fc
    .tuple(
      fc.double({ min: 1.5, max: 9, noNaN: true }),
      fc.double({ min: 1.5, max: 9, noNaN: true }),
      fc.double({ min: 1.5, max: 9, noNaN: true }),
      fc.double({ min: 25, max: 155, noNaN: true }),
      fc.double({ min: 25, max: 155, noNaN: true }),
      fc.double({ min: 25, max: 155, noNaN: true }),
    )
    .filter(([, , , al, be, ga]) => {
      const c = (d: number) => Math.cos((d * Math.PI) / 180);
      return 1 - c(al) ** 2 - c(be) ** 2 - c(ga) ** 2 + 2 * c(al) * c(be) * c(ga) > 0.02;
    })
    .map(([a, b, c, al, be, ga]) => cellFromParameters(a, b, c, al, be, ga)),
  fc
    .array(fc.double({ min: -6, max: 6, noNaN: true }), { minLength: 9, maxLength: 9 })
    .map((x) => Float64Array.from(x, (v, k) => v + (k % 4 === 0 ? 3 : 0)))
    .filter((h) => {
      const det = h[0] * (h[4] * h[8] - h[5] * h[7]) - h[1] * (h[3] * h[8] - h[5] * h[6]) + h[2] * (h[3] * h[7] - h[4] * h[6]);
      return Math.abs(det) > 2;
    }),
);

const arbCase = fc.record({
  cell: arbCell,
  frac: fc.array(fc.double({ min: -0.7, max: 1.7, noNaN: true }), { minLength: 3, maxLength: 36 }),
  pbc: fc.tuple(fc.boolean(), fc.boolean(), fc.boolean()),
  // Cutoff relative to the cell's scale: from well inside to several times the cell.
  cutoffScale: fc.double({ min: 0.1, max: 1.6, noNaN: true }),
  binFraction: fc.constantFrom(0.25, 0.5, 1, 2),
});

function frameFromCase(c: { cell: Float64Array; frac: number[]; pbc: Pbc }): Frame {
  const f = c.frac.slice(0, c.frac.length - (c.frac.length % 3));
  const pos = toCartesian(c.cell, f);
  const frame = makeFrame(Array.from({ length: f.length / 3 }, () => 'X'), pos, c.cell);
  frame.pbc = [...c.pbc];
  return frame;
}

function cellScale(h: Float64Array): number {
  return Math.cbrt(Math.abs(h[0] * (h[4] * h[8] - h[5] * h[7]) - h[1] * (h[3] * h[8] - h[5] * h[6]) + h[2] * (h[3] * h[7] - h[4] * h[6])));
}

describe('neighbourList against brute force', () => {
  it('random triclinic and sheared cells, partial pbc, cutoffs up to several cell widths', () => {
    fc.assert(
      fc.property(arbCase, (c) => {
        const frame = frameFromCase(c);
        const cutoff = c.cutoffScale * 2.5 * cellScale(c.cell);
        const nl = neighbourList(frame, cutoff, { binFraction: c.binFraction });
        expectWellFormed(nl, frame.species.length);
        expectSamePairs(pairsOf(nl), bruteForce(frame, cutoff), cutoff);
      }),
      { numRuns: 150 },
    );
  });

  it('larger random cells use many bins and still agree', () => {
    fc.assert(
      fc.property(arbCell, fc.integer({ min: 0, max: 2 ** 30 }), fc.constantFrom(0.25, 0.5, 1), (h0, seed, binFraction) => {
        // Scale the cell up ×3 and fill it with 80 atoms: many bins per axis at a cutoff of about one cell scale.
        const h = h0.map((x) => 3 * x);
        let state = seed;
        const rand = () => ((state = (Math.imul(state, 1103515245) + 12345) >>> 0) / 4294967296);
        const frac = Array.from({ length: 240 }, () => rand() * 1.2 - 0.1);
        const frame = frameFromCase({ cell: h, frac, pbc: [true, true, true] });
        const cutoff = 0.35 * cellScale(h);
        const nl = neighbourList(frame, cutoff, { binFraction });
        expectWellFormed(nl, 80);
        expectSamePairs(pairsOf(nl), bruteForce(frame, cutoff), cutoff);
      }),
      { numRuns: 15 },
    );
  });

  it('open structures (no cell) agree with all-pairs distances', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -8, max: 8, noNaN: true }), { minLength: 0, maxLength: 90 }), fc.double({ min: 0.5, max: 9, noNaN: true }), (raw, cutoff) => {
        const pos = raw.slice(0, raw.length - (raw.length % 3));
        const frame = makeFrame(Array.from({ length: pos.length / 3 }, () => 'X'), pos, null);
        const nl = neighbourList(frame, cutoff);
        expectWellFormed(nl, pos.length / 3);
        expectSamePairs(pairsOf(nl), bruteForce(frame, cutoff), cutoff);
        for (let p = 0; p < nl.count; p++) expect([nl.shifts[3 * p], nl.shifts[3 * p + 1], nl.shifts[3 * p + 2]]).toEqual([0, 0, 0]);
      }),
      { numRuns: 80 },
    );
  });
});

/** Every output array of two lists, compared bit for bit (the same pairs in the same order, the same doubles). */
function expectIdentical(a: NeighbourList, b: Pick<NeighbourList, 'count' | 'start' | 'neighbour' | 'vectors' | 'distances' | 'shifts'>): void {
  expect(a.count).toBe(b.count);
  expect(Buffer.from(a.start.buffer, a.start.byteOffset, a.start.byteLength).equals(Buffer.from(b.start.buffer, b.start.byteOffset, b.start.byteLength))).toBe(true);
  expect(Buffer.from(a.neighbour.buffer, a.neighbour.byteOffset, a.neighbour.byteLength).equals(Buffer.from(b.neighbour.buffer, b.neighbour.byteOffset, b.neighbour.byteLength))).toBe(true);
  expect(Buffer.from(a.shifts.buffer, a.shifts.byteOffset, a.shifts.byteLength).equals(Buffer.from(b.shifts.buffer, b.shifts.byteOffset, b.shifts.byteLength))).toBe(true);
  expect(Buffer.from(a.vectors.buffer, a.vectors.byteOffset, a.vectors.byteLength).equals(Buffer.from(b.vectors.buffer, b.vectors.byteOffset, b.vectors.byteLength))).toBe(true);
  expect(Buffer.from(a.distances.buffer, a.distances.byteOffset, a.distances.byteLength).equals(Buffer.from(b.distances.buffer, b.distances.byteOffset, b.distances.byteLength))).toBe(true);
}

// Each comparison with the kept first version runs three ways: the search in WebAssembly (the default), in
// JavaScript (kernels off), and in WebAssembly with so little room that it runs out of it again and again (pairs
// copied out every few centres, centres done again with more room for their candidates).
const ways: { name: string; kernels: boolean; room: [number | null, number | null] }[] = [
  { name: 'WebAssembly search', kernels: true, room: [null, null] },
  { name: 'JavaScript search', kernels: false, room: [null, null] },
  { name: 'WebAssembly search with little room', kernels: true, room: [7, 2] },
];
for (const way of ways) describe(`neighbourList against its kept first version (test/helpers/reference-neighbours.ts), ${way.name}`, () => {
  beforeAll(() => {
    setWebAssemblyKernels(way.kernels);
    setNeighbourKernelRoom(...way.room);
    expect(neighbourKernels() !== null).toBe(way.kernels);
  });
  afterAll(() => {
    setWebAssemblyKernels(true);
    setNeighbourKernelRoom(null, null);
  });

  it('the same bits in the same order: random cells, partial pbc, cutoffs up to several cell widths, bin sizes', () => {
    // interleaved sizes, so that the scratch kept from a larger frame is reused by smaller ones and grown again
    fc.assert(
      fc.property(arbCase, (c) => {
        const frame = frameFromCase(c);
        const cutoff = c.cutoffScale * 2.5 * cellScale(c.cell);
        expectIdentical(neighbourList(frame, cutoff, { binFraction: c.binFraction }), referenceNeighbourList(frame, cutoff, { binFraction: c.binFraction }));
      }),
      { numRuns: 150 },
    );
  });

  it('the same bits for liquid-density cells of 384 and 1,536 atoms, atoms outside the cell, open clusters, lattices on bin edges', () => {
    let state = 12345;
    const rand = () => ((state = (Math.imul(state, 1103515245) + 12345) >>> 0) / 4294967296);
    const cases: [number, [number, number, number]][] = [[384, [90, 90, 90]], [1536, [75, 85, 105]], [384, [60, 60, 60]]];
    for (const [atoms, [al, be, ga]] of cases) {
      const a = Math.cbrt(atoms / 0.1) / cellScale(cellFromParameters(1, 1, 1, al, be, ga));
      const cell = cellFromParameters(a, a, a, al, be, ga);
      const frame = makeFrame(new Array<string>(atoms).fill('X'), toCartesian(cell, Array.from({ length: 3 * atoms }, () => rand() * 1.4 - 0.2)), cell);
      expectIdentical(neighbourList(frame, 4.5), referenceNeighbourList(frame, 4.5));
      const open = makeFrame(frame.species, frame.positions, null);
      expectIdentical(neighbourList(open, 4.5), referenceNeighbourList(open, 4.5));
    }
    // orthorhombic cells with atoms on a lattice (on bin edges, distances at the cutoff), and random ones, every pbc
    for (const [a, b, c] of [[12, 12, 12], [9, 15, 21], [6, 30, 4.5]]) {
      const cell = cellFromParameters(a, b, c, 90, 90, 90);
      const grid: number[] = [];
      for (let x = 0; x < a; x += 1.5) for (let y = 0; y < b; y += 1.5) for (let z = 0; z < c; z += 1.5) grid.push(x, y, z);
      const random = Array.from({ length: grid.length }, (_, k) => (rand() * 1.2 - 0.1) * [a, b, c][k % 3]);
      for (const positions of [grid, random]) {
        for (const pbc of [[true, true, true], [true, false, true], [false, false, false]] as Pbc[]) {
          const frame = makeFrame(new Array<string>(positions.length / 3).fill('X'), positions, cell);
          frame.pbc = pbc;
          for (const cutoff of [3, 4.5, 7.5]) expectIdentical(neighbourList(frame, cutoff), referenceNeighbourList(frame, cutoff));
        }
      }
    }
  });

  it('a list handed back for reuse is written over with the same result, grown when too small', () => {
    let state = 777;
    const rand = () => ((state = (Math.imul(state, 1103515245) + 12345) >>> 0) / 4294967296);
    let spare: NeighbourList | undefined;
    let sameBuffer = 0;
    // small, large, small, empty, large: the buffers are reused when large enough, and grown when not
    for (const [atoms, cutoff] of [[60, 4.5], [400, 5], [100, 3], [0, 4.5], [500, 5.5], [1, 6]] as const) {
      const a = Math.cbrt(atoms / 0.1 || 1000);
      const cell = cellFromParameters(a, a, a, 80, 95, 100);
      const frame = makeFrame(new Array<string>(atoms).fill('X'), toCartesian(cell, Array.from({ length: 3 * atoms }, () => rand())), cell);
      const before = spare?.distances.buffer;
      const nl = neighbourList(frame, cutoff, { reuse: spare });
      if (before && nl.distances.buffer === before) sameBuffer++;
      expectIdentical(nl, referenceNeighbourList(frame, cutoff));
      expectWellFormed(nl, atoms);
      spare = nl;
    }
    expect(sameBuffer).toBeGreaterThanOrEqual(2);
    // a list whose arrays share one buffer is not written over
    const frame = makeFrame(['X', 'X'], [0, 0, 0, 1, 0, 0], null);
    const shared = new ArrayBuffer(64);
    const odd: NeighbourList = { cutoff: 2, count: 1, start: new Int32Array(shared, 0, 3), neighbour: new Int32Array(shared, 16, 1), vectors: new Float64Array(shared, 24, 3), distances: new Float64Array(shared, 48, 1), shifts: new Int32Array(3) };
    const copy = new Uint8Array(shared.slice(0));
    expectIdentical(neighbourList(frame, 2, { reuse: odd }), referenceNeighbourList(frame, 2));
    expect(new Uint8Array(shared)).toEqual(copy);
  });
});

describe('neighbourList invariances', () => {
  it('symmetry: i→j with shift s iff j→i with −s, with the opposite vector', () => {
    fc.assert(
      fc.property(arbCase, (c) => {
        const frame = frameFromCase(c);
        const cutoff = c.cutoffScale * 2.5 * cellScale(c.cell);
        const pairs = pairsOf(neighbourList(frame, cutoff));
        const map = new Map(pairs.map((p) => [key(p), p]));
        for (const p of pairs) {
          const q = map.get(key({ i: p.j, j: p.i, s: p.s.map((x) => -x + 0) }));
          if (!q) {
            // Only possible within rounding of the cutoff.
            expect(Math.abs(p.d - cutoff)).toBeLessThan(1e-9);
            continue;
          }
          for (let x = 0; x < 3; x++) expect(Math.abs(q.v[x] + p.v[x])).toBeLessThan(1e-10);
        }
      }),
      { numRuns: 80 },
    );
  });

  it('translation: moving every atom by the same vector leaves pairs, shifts and vectors unchanged', () => {
    fc.assert(
      fc.property(arbCase, fc.array(fc.double({ min: -20, max: 20, noNaN: true }), { minLength: 3, maxLength: 3 }), (c, t) => {
        const frame = frameFromCase(c);
        const cutoff = c.cutoffScale * 2.5 * cellScale(c.cell);
        const moved: Frame = { ...frame, positions: frame.positions.map((x, k) => x + t[k % 3]) };
        expectSamePairs(pairsOf(neighbourList(moved, cutoff)), pairsOf(neighbourList(frame, cutoff)), cutoff, 1e-9, 1e-8);
      }),
      { numRuns: 80 },
    );
  });

  it('moving one atom by a lattice vector changes only its shifts, by that lattice vector', () => {
    const h = cellFromParameters(5, 6, 7, 80, 95, 110);
    const frame = makeFrame(['A', 'B', 'C'], toCartesian(h, [0.1, 0.2, 0.3, 0.6, 0.5, 0.9, 0.3, 0.8, 0.1]), h);
    const moved = makeFrame(frame.species, frame.positions, h);
    // Atom 1 moved by +a − 2c.
    for (let x = 0; x < 3; x++) moved.positions[3 + x] += h[x] - 2 * h[6 + x];
    const a = pairsOf(neighbourList(frame, 8));
    const b = pairsOf(neighbourList(moved, 8));
    expect(b.length).toBe(a.length);
    const expected = a.map((p) => {
      const s = [...p.s] as [number, number, number];
      if (p.j === 1) { s[0] -= 1; s[2] += 2; }
      if (p.i === 1) { s[0] += 1; s[2] -= 2; }
      return { ...p, s };
    });
    expectSamePairs(b, expected, 8);
  });

  it('a supercell of n copies has n times the pairs, and each copy of an atom sees the same distances', () => {
    fc.assert(
      fc.property(arbCase, fc.tuple(fc.integer({ min: 1, max: 2 }), fc.integer({ min: 1, max: 2 }), fc.integer({ min: 1, max: 3 })), (c, reps) => {
        const frame = frameFromCase({ ...c, pbc: [true, true, true] });
        const n = frame.species.length;
        const cutoff = c.cutoffScale * 1.5 * cellScale(c.cell);
        const small = neighbourList(frame, cutoff);
        const big = neighbourList(supercell(frame, reps), cutoff);
        const copies = reps[0] * reps[1] * reps[2];
        expect(big.count).toBe(copies * small.count);
        // Copy t of atom i (index t·n + i) has the sorted distances of atom i.
        const sortedDistances = (nl: NeighbourList, i: number) =>
          Array.from(nl.distances.subarray(nl.start[i], nl.start[i + 1])).sort((x, y) => x - y);
        for (let i = 0; i < n; i++) {
          const want = sortedDistances(small, i);
          const got = sortedDistances(big, (copies - 1) * n + i);
          expect(got.length).toBe(want.length);
          for (let k = 0; k < want.length; k++) expect(Math.abs(got[k] - want[k])).toBeLessThan(1e-9);
        }
      }),
      { numRuns: 40 },
    );
  });

  it('the result does not depend on the bin size', () => {
    const h = cellFromParameters(11, 9, 13, 70, 100, 115);
    let state = 12345;
    const rand = () => ((state = (Math.imul(state, 1103515245) + 12345) >>> 0) / 4294967296);
    const frame = makeFrame(Array.from({ length: 150 }, () => 'X'), toCartesian(h, Array.from({ length: 450 }, rand)), h);
    const ref = neighbourList(frame, 4.2, { binFraction: 0.5 });
    for (const bf of [0.2, 0.34, 1, 3]) {
      const other = neighbourList(frame, 4.2, { binFraction: bf });
      expect(Array.from(other.neighbour)).toEqual(Array.from(ref.neighbour));
      expect(Array.from(other.shifts)).toEqual(Array.from(ref.shifts));
      expect(Array.from(other.start)).toEqual(Array.from(ref.start));
    }
  });
});

describe('neighbourList edge cases', () => {
  it('inclusion is strict: a neighbour at exactly the cutoff is left out, one ulp further in it is kept', () => {
    // Simple cubic lattice, a = 2 Å (exactly representable): the six nearest images at exactly 2 Å.
    const frame = makeFrame(['X'], [0.5, 0.5, 0.5], [2, 0, 0, 0, 2, 0, 0, 0, 2]);
    expect(neighbourList(frame, 2).count).toBe(0);
    const above = 2 + 2 * Number.EPSILON; // the next double after 2
    const nl = neighbourList(frame, above);
    expect(nl.count).toBe(6);
    expect(Array.from(nl.distances)).toEqual([2, 2, 2, 2, 2, 2]);
    // Shifts in order (−1,0,0)… sorted ascending: (−1,0,0) (0,−1,0) (0,0,−1) (0,0,1) (0,1,0) (1,0,0).
    expect(Array.from(nl.shifts)).toEqual([-1, 0, 0, 0, -1, 0, 0, 0, -1, 0, 0, 1, 0, 1, 0, 1, 0, 0]);
    // Two atoms of an open pair 1.5 Å apart (exact in binary).
    const pair = makeFrame(['X', 'Y'], [0, 0, 0, 1.5, 0, 0], null);
    expect(neighbourList(pair, 1.5).count).toBe(0);
    expect(neighbourList(pair, 1.5000000001).count).toBe(2);
  });

  it("one atom in a small cell: its own images, never itself; counts match the lattice's shells", () => {
    // Simple cubic a = 1, cutoff 1.5: shells at 1 (6 images), √2 (12); √3 = 1.732 is outside.
    const frame = makeFrame(['X'], [0.3, 0.1, 0.7], [1, 0, 0, 0, 1, 0, 0, 0, 1]);
    const nl = neighbourList(frame, 1.5);
    expect(nl.count).toBe(18);
    // Cutoff 3.1 (over 3× the cell): number of integer vectors with 0 < |s| < 3.1 counted by hand-free formula
    // below (lattice points in a ball), cross-checked against the brute force.
    const big = neighbourList(frame, 3.1);
    let expected = 0;
    for (let a = -4; a <= 4; a++) for (let b = -4; b <= 4; b++) for (let c = -4; c <= 4; c++) {
      const r2 = a * a + b * b + c * c;
      if (r2 > 0 && r2 < 3.1 * 3.1) expected++;
    }
    expect(big.count).toBe(expected);
  });

  it('partial pbc: no images along a non-periodic axis, even when its lattice vector is zero', () => {
    const pos = [0.5, 0.5, 0.0, 1.0, 2.0, 0.9, 2.5, 0.5, 4.0];
    const slab = makeFrame(['A', 'B', 'C'], pos, [3, 0, 0, 0.5, 3, 0, 0, 0, 0]);
    slab.pbc = [true, true, false];
    const nl = neighbourList(slab, 4);
    expectWellFormed(nl, 3);
    for (let p = 0; p < nl.count; p++) expect(nl.shifts[3 * p + 2]).toBe(0);
    // Same as with any non-zero third vector, and as brute force with a tall third vector.
    const tall = makeFrame(['A', 'B', 'C'], pos, [3, 0, 0, 0.5, 3, 0, 0.4, 0.3, 37]);
    tall.pbc = [true, true, false];
    expectSamePairs(pairsOf(nl), bruteForce(tall, 4), 4);
    // A wire: one periodic axis.
    const wire = makeFrame(['A', 'B'], [0, 0, 0, 0.3, 1.2, 0.4], [0, 0, 0, 0, 2.5, 0, 0, 0, 0]);
    wire.pbc = [false, true, false];
    const w = neighbourList(wire, 6);
    const wireRef = makeFrame(['A', 'B'], [0, 0, 0, 0.3, 1.2, 0.4], [10, 0, 0, 0, 2.5, 0, 0, 0, 10]);
    wireRef.pbc = [false, true, false];
    expectSamePairs(pairsOf(w), bruteForce(wireRef, 6), 6);
  });

  it('atoms far outside the cell give the same vectors as wrapped ones', () => {
    const h = cellFromParameters(4, 5, 6, 90, 100, 90);
    const inside = makeFrame(['A', 'B'], toCartesian(h, [0.1, 0.2, 0.3, 0.7, 0.6, 0.5]), h);
    const outside = makeFrame(['A', 'B'], toCartesian(h, [12.1, -7.8, 0.3, -30.3, 0.6, 1000.5]), h);
    const a = pairsOf(neighbourList(inside, 7)).map((p) => `${p.i} ${p.j} ${p.v.map((x) => x.toFixed(8)).join(' ')}`).sort();
    const b = pairsOf(neighbourList(outside, 7)).map((p) => `${p.i} ${p.j} ${p.v.map((x) => x.toFixed(8)).join(' ')}`).sort();
    expect(b).toEqual(a);
    expectSamePairs(pairsOf(neighbourList(outside, 7)), bruteForce(outside, 7), 7, 1e-9);
  });

  it('empty frames and single open atoms give empty lists', () => {
    const empty = neighbourList(makeFrame([], [], [5, 0, 0, 0, 5, 0, 0, 0, 5]), 3);
    expect(empty.count).toBe(0);
    expect(Array.from(empty.start)).toEqual([0]);
    expect(neighbourList(makeFrame(['X'], [1, 2, 3], null), 10).count).toBe(0);
  });

  it('bad input throws InputError saying what to do', () => {
    const f = makeFrame(['X'], [0, 0, 0], [1, 0, 0, 0, 1, 0, 0, 0, 1]);
    expect(() => neighbourList(f, 0)).toThrow(InputError);
    expect(() => neighbourList(f, NaN)).toThrow(/positive number/);
    expect(() => neighbourList(makeFrame(['X'], [NaN, 0, 0], null), 1)).toThrow(/atom 0.*non-finite/);
    const flat = makeFrame(['X'], [0, 0, 0], [1, 0, 0, 0, 1, 0, 1, 1, 0]);
    expect(() => neighbourList(flat, 1)).toThrow(/zero volume/);
    const noCell = makeFrame(['X'], [0, 0, 0], null);
    noCell.pbc = [true, false, false];
    expect(() => neighbourList(noCell, 1)).toThrow(/no cell/);
    const thin = makeFrame(['X'], [0, 0, 0], [1e-4, 0, 0, 0, 1e-4, 0, 0, 0, 1e-4]);
    expect(() => neighbourList(thin, 5)).toThrow(InputError);
    const parallel = makeFrame(['X'], [0, 0, 0], [1, 0, 0, 2, 0, 0, 0, 0, 0]);
    parallel.pbc = [true, true, false];
    expect(() => neighbourList(parallel, 1)).toThrow(/parallel/);
    const located = { ...f, source: { file: 'ice.xyz', index: 4, line: 31 } };
    expect(() => neighbourList(located, -1)).toThrow(/^ice\.xyz, line 31, frame 4: /);
  });
});

describe('rock salt (textbook)', () => {
  // NaCl conventional cubic cell, a = 5.6402 Å (room temperature; common crystallographic value, as tabulated
  // in the CRC Handbook of Chemistry and Physics). Na on the fcc sites, Cl shifted by (½, 0, 0). Coordination
  // shells of the rock-salt structure (any solid-state text): 6 unlike ions at a/2, 12 like ions at a/√2,
  // 8 unlike ions at a√3/2, 6 like ions at a.
  const a = 5.6402;
  const fcc = [0, 0, 0, 0, 0.5, 0.5, 0.5, 0, 0.5, 0.5, 0.5, 0];
  const frac = [...fcc, ...fcc.map((x, k) => (k % 3 === 0 ? x + 0.5 : x))];
  const h = cellFromParameters(a, a, a, 90, 90, 90);
  const frame = makeFrame([...Array(4).fill('Na'), ...Array(4).fill('Cl')], toCartesian(h, frac), h);

  it('each ion has 6 unlike nearest neighbours at a/2', () => {
    const nl = neighbourList(frame, 3.0);
    for (let i = 0; i < 8; i++) {
      expect(nl.start[i + 1] - nl.start[i]).toBe(6);
      for (let p = nl.start[i]; p < nl.start[i + 1]; p++) {
        expect(nl.distances[p]).toBeCloseTo(a / 2, 12);
        expect(frame.species[nl.neighbour[p]]).not.toBe(frame.species[i]);
      }
    }
  });

  it('shells 6, 12, 8, 6 within a·1.05, in the primitive cell too (cutoff above the cell width)', () => {
    const shells = (nl: NeighbourList, i: number) => {
      const counts = [0, 0, 0, 0];
      const radii = [a / 2, a / Math.SQRT2, (a * Math.sqrt(3)) / 2, a];
      for (let p = nl.start[i]; p < nl.start[i + 1]; p++) {
        const k = radii.findIndex((r) => Math.abs(nl.distances[p] - r) < 1e-9);
        expect(k).toBeGreaterThanOrEqual(0);
        counts[k]++;
      }
      return counts;
    };
    const conv = neighbourList(frame, a * 1.05);
    for (let i = 0; i < 8; i++) expect(shells(conv, i)).toEqual([6, 12, 8, 6]);
    // The two-atom fcc primitive cell: perpendicular width a/√3 = 3.26 Å, far below the cutoff of 5.92 Å.
    const prim = Float64Array.of(0, a / 2, a / 2, a / 2, 0, a / 2, a / 2, a / 2, 0);
    const pf = makeFrame(['Na', 'Cl'], [0, 0, 0, a / 2, 0, 0], prim);
    const pn = neighbourList(pf, a * 1.05);
    expect(shells(pn, 0)).toEqual([6, 12, 8, 6]);
    expect(shells(pn, 1)).toEqual([6, 12, 8, 6]);
    // And a 2×2×2 supercell of the conventional cell has the same shells for every ion.
    const sc = neighbourList(supercell(frame, [2, 2, 2]), a * 1.05);
    for (let i = 0; i < 64; i += 7) expect(shells(sc, i)).toEqual([6, 12, 8, 6]);
  });
});

interface AseCase {
  name: string;
  cell: number[];
  pbc: Pbc;
  positions: number[];
  cutoff: number;
  i: number[];
  j: number[];
  S: number[];
  d: number[];
  D: number[];
}
// Made by test/fixtures/make_neighbour_fixtures.py with Debian's python3-ase 3.22:
// ase.neighborlist.neighbor_list('ijSdD', atoms, cutoff, self_interaction=False).
const aseCases: AseCase[] = JSON.parse(
  readFileSync(new URL('../../fixtures/neighbour_reference.json', import.meta.url), 'utf8'),
).cases;

describe('neighbourList against ASE (fixture)', () => {
  it('has the fixture cases', () => {
    expect(aseCases.length).toBeGreaterThanOrEqual(4);
  });
  for (const c of aseCases) {
    it(`${c.name}: same (i, j, shift) set, distances and vectors to 1e-10`, () => {
      const n = c.positions.length / 3;
      const frame = makeFrame(Array.from({ length: n }, () => 'X'), c.positions, c.cell);
      frame.pbc = [...c.pbc];
      const nl = neighbourList(frame, c.cutoff);
      expectWellFormed(nl, n);
      const want: Pair[] = c.i.map((i, p) => ({
        i,
        j: c.j[p],
        s: [c.S[3 * p], c.S[3 * p + 1], c.S[3 * p + 2]],
        v: [c.D[3 * p], c.D[3 * p + 1], c.D[3 * p + 2]],
        d: c.d[p],
      }));
      expect(nl.count).toBe(want.length);
      // No tolerance at the edge: every ASE pair must be present.
      expectSamePairs(pairsOf(nl), want, c.cutoff, 1e-10, 0);
    });
  }
});
