// The binned bond search against a brute-force search over all pairs and all 27 neighbouring images.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { findBonds } from '../../src-renderer/components/structure/bond-search.ts';
import { inverse3 } from '../../src-renderer/components/structure/linear3.ts';

/** Every pair, every image n ∈ {−1,0,1}³: the shortest vector below the bond limit (a reference by a different route). */
function bruteForce(pos: number[], radii: number[], cell: number[] | null, factor: number): Map<string, number> {
  const out = new Map<string, number>();
  const n = radii.length;
  const shifts: number[][] = [];
  if (cell) {
    for (let a = -1; a <= 1; a++)
      for (let b = -1; b <= 1; b++) for (let c = -1; c <= 1; c++) shifts.push([0, 1, 2].map((k) => a * cell[k] + b * cell[3 + k] + c * cell[6 + k]));
  } else shifts.push([0, 0, 0]);
  for (let i = 0; i < n; i++)
    for (let j = i + 1; j < n; j++) {
      let best = Infinity;
      for (const s of shifts) {
        const r = Math.hypot(pos[3 * j] + s[0] - pos[3 * i], pos[3 * j + 1] + s[1] - pos[3 * i + 1], pos[3 * j + 2] + s[2] - pos[3 * i + 2]);
        best = Math.min(best, r);
      }
      if (best > 0.1 && best < factor * (radii[i] + radii[j])) out.set(`${i}-${j}`, best);
    }
  return out;
}

const coords = (n: number, L: number) => fc.array(fc.double({ min: 0, max: L, noNaN: true }), { minLength: 3 * n, maxLength: 3 * n });

describe('findBonds', () => {
  it('finds the same bonds and lengths as the brute force, in a mildly skewed periodic cell', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 2, max: 60 }).chain((n) =>
          fc.tuple(coords(n, 9), fc.array(fc.constantFrom(0.31, 0.66, 0.76, 1.05), { minLength: n, maxLength: n }), fc.double({ min: -1.5, max: 1.5, noNaN: true })),
        ),
        ([pos, radii, skew]) => {
          const cell = [9, 0, 0, skew, 8.5, 0, 0.5, -skew, 9.5];
          const got = findBonds(pos, radii, cell, inverse3(cell), 1.2);
          const want = bruteForce(pos, radii, cell, 1.2);
          expect(got.map((b) => `${b.i}-${b.j}`).sort()).toEqual([...want.keys()].sort());
          for (const b of got) expect(Math.hypot(...b.d)).toBeCloseTo(want.get(`${b.i}-${b.j}`)!, 9);
        },
      ),
      { numRuns: 60 },
    );
  });

  it('finds the same bonds as the brute force without a cell', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 2, max: 80 }).chain((n) => fc.tuple(coords(n, 12), fc.array(fc.constantFrom(0.31, 0.76, 1.4), { minLength: n, maxLength: n }))),
        ([pos, radii]) => {
          const got = findBonds(pos, radii, null, null, 1.2);
          expect(got.map((b) => `${b.i}-${b.j}`).sort()).toEqual([...bruteForce(pos, radii, null, 1.2).keys()].sort());
        },
      ),
      { numRuns: 60 },
    );
  });

  it('bonds through the boundary point to the nearest image: atoms at x = 0.2 and 9.8 in a 10 Å cell are 0.4 Å apart', () => {
    const cell = [10, 0, 0, 0, 10, 0, 0, 0, 10];
    const b = findBonds([0.2, 5, 5, 9.8, 5, 5], [0.31, 0.31], cell, inverse3(cell));
    expect(b).toHaveLength(1);
    expect(b[0].d[0]).toBeCloseTo(-0.4, 12);
  });
});
