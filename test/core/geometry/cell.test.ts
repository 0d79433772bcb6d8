// Tests of core/geometry/cell.ts: against ASE (committed fixture), textbook rock salt, and properties on random cells.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  cellDeterminant,
  cellFromParameters,
  cellParameters,
  cellVolume,
  checkCell,
  minimumImage,
  perpendicularWidths,
  reciprocalCell,
  supercell,
  toCartesian,
  toFractional,
  wrapPositions,
  wrapUnit,
  checkBelievableCell,
} from '../../../src-main/core/geometry/cell.ts';
import { InputError } from '../../../src-main/core/errors.ts';
import { makeFrame, type Frame } from '../../../src-main/core/geometry/frame.ts';

interface CellFixture {
  fromParameters: { parameters: number[]; cell: number[]; volume: number; reciprocal: number[]; widths: number[] }[];
  fromMatrix: { cell: number[]; volume: number; parameters: number[]; reciprocal: number[]; widths: number[] }[];
}
// Made by test/fixtures/make_cell_fixtures.py with Debian's python3-ase 3.22 (cellpar_to_cell, cell_to_cellpar,
// Cell.volume, Cell.reciprocal) and numpy.
const fixture: CellFixture = JSON.parse(readFileSync(new URL('../../fixtures/cell_reference.json', import.meta.url), 'utf8'));

function close(actual: ArrayLike<number>, expected: ArrayLike<number>, tol: number): void {
  expect(actual.length).toBe(expected.length);
  for (let k = 0; k < expected.length; k++) {
    expect(Math.abs(actual[k] - expected[k]), `component ${k}: ${actual[k]} vs ${expected[k]}`).toBeLessThanOrEqual(tol);
  }
}

/** A random well-conditioned triclinic cell: lattice vectors with lengths 2–12 Å, skewed but not flat. */
const arbCell = fc
  .tuple(
    fc.double({ min: 2, max: 12, noNaN: true }),
    fc.double({ min: 2, max: 12, noNaN: true }),
    fc.double({ min: 2, max: 12, noNaN: true }),
    fc.double({ min: 30, max: 150, noNaN: true }),
    fc.double({ min: 30, max: 150, noNaN: true }),
    fc.double({ min: 30, max: 150, noNaN: true }),
    fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: 3, maxLength: 3 }),
  )
  .filter(([, , , al, be, ga]) => {
    const c = (d: number) => Math.cos((d * Math.PI) / 180);
    return 1 - c(al) ** 2 - c(be) ** 2 - c(ga) ** 2 + 2 * c(al) * c(be) * c(ga) > 0.05;
  })
  .map(([a, b, c, al, be, ga, axis]) => {
    // Rotate the standard-orientation cell by a random rotation (axis–angle formula) so no axis is special.
    const h = cellFromParameters(a, b, c, al, be, ga);
    const n = Math.hypot(axis[0], axis[1], axis[2]) || 1;
    const [ux, uy, uz] = [axis[0] / n, axis[1] / n, axis[2] / n];
    const t = 2.3 * n;
    const ct = Math.cos(t), st = Math.sin(t), vt = 1 - ct;
    const r = [
      ct + ux * ux * vt, ux * uy * vt - uz * st, ux * uz * vt + uy * st,
      uy * ux * vt + uz * st, ct + uy * uy * vt, uy * uz * vt - ux * st,
      uz * ux * vt - uy * st, uz * uy * vt + ux * st, ct + uz * uz * vt,
    ];
    const out = new Float64Array(9);
    for (let row = 0; row < 3; row++) {
      for (let col = 0; col < 3; col++) {
        out[3 * row + col] = h[3 * row] * r[3 * col] + h[3 * row + 1] * r[3 * col + 1] + h[3 * row + 2] * r[3 * col + 2];
      }
    }
    return out;
  });

describe('cell against ASE (fixture)', () => {
  it('cellFromParameters matches ase.geometry.cellpar_to_cell, volume, reciprocal and widths', () => {
    expect(fixture.fromParameters.length).toBeGreaterThanOrEqual(5);
    for (const ref of fixture.fromParameters) {
      const [a, b, c, al, be, ga] = ref.parameters;
      const h = cellFromParameters(a, b, c, al, be, ga);
      close(h, ref.cell, 1e-12 * Math.max(a, b, c));
      expect(Math.abs(cellVolume(h) - ref.volume)).toBeLessThanOrEqual(1e-11 * ref.volume);
      close(reciprocalCell(h), ref.reciprocal, 1e-13);
      close(perpendicularWidths(h), ref.widths, 1e-11);
      const p = cellParameters(h);
      close([p.a, p.b, p.c, p.alpha, p.beta, p.gamma], ref.parameters, 1e-9);
    }
  });

  it('volume, parameters, reciprocal and widths of arbitrary matrices match ASE', () => {
    for (const ref of fixture.fromMatrix) {
      const h = Float64Array.from(ref.cell);
      expect(Math.abs(cellVolume(h) - ref.volume)).toBeLessThanOrEqual(1e-11 * ref.volume);
      const p = cellParameters(h);
      close([p.a, p.b, p.c, p.alpha, p.beta, p.gamma], ref.parameters, 1e-9);
      close(reciprocalCell(h), ref.reciprocal, 1e-12);
      close(perpendicularWidths(h), ref.widths, 1e-10);
    }
  });
});

describe('textbook values', () => {
  it('rock salt: conventional cubic cell a = 5.6402 Å has V = a³ = 179.43 Å³', () => {
    // a = 5.6402 Å for NaCl at room temperature (common crystallographic value, as tabulated in the CRC Handbook
    // of Chemistry and Physics); V = a³ = 179.425 Å³ computed by hand.
    const h = cellFromParameters(5.6402, 5.6402, 5.6402, 90, 90, 90);
    expect(cellVolume(h)).toBeCloseTo(179.425, 3);
    expect(perpendicularWidths(h)).toEqual([5.6402, 5.6402, 5.6402]);
  });

  it('hexagonal cell: V = (√3/2) a² c (textbook formula)', () => {
    // Volume of a hexagonal cell, V = a²c·sin 120° (any crystallography text); a, c of no particular crystal.
    const a = 3.2, c = 5.2;
    expect(cellVolume(cellFromParameters(a, a, c, 90, 90, 120))).toBeCloseTo((Math.sqrt(3) / 2) * a * a * c, 10);
  });

  it('fcc primitive cell: rows a/2 (0,1,1), (1,0,1), (1,1,0) have V = a³/4 and all angles 60°', () => {
    // Primitive cell of the face-centred cubic lattice (textbook), angles 60° between its vectors.
    const a = 5.6402;
    const h = Float64Array.of(0, a / 2, a / 2, a / 2, 0, a / 2, a / 2, a / 2, 0);
    expect(cellVolume(h)).toBeCloseTo(a ** 3 / 4, 10);
    const p = cellParameters(h);
    for (const angle of [p.alpha, p.beta, p.gamma]) expect(angle).toBeCloseTo(60, 10);
    for (const len of [p.a, p.b, p.c]) expect(len).toBeCloseTo(a / Math.SQRT2, 12);
  });
});

describe('validation', () => {
  it('degenerate, non-finite and short cells throw InputError with a hint', () => {
    const flat = Float64Array.of(1, 0, 0, 0, 1, 0, 1, 1, 0);
    expect(() => cellVolume(flat)).toThrow(InputError);
    expect(() => cellVolume(flat)).toThrow(/zero volume.*non-periodic/);
    expect(() => cellVolume(new Float64Array(9))).toThrow(InputError);
    expect(() => cellVolume(Float64Array.of(1, 0, 0, 0, NaN, 0, 0, 0, 1))).toThrow(/finite/);
    expect(() => reciprocalCell(Float64Array.of(1, 0, 0, 0, Infinity, 0, 0, 0, 1))).toThrow(InputError);
    expect(() => checkCell(Float64Array.of(1, 2, 3))).toThrow(/9 numbers/);
    expect(() => checkCell(null)).toThrow(InputError);
  });

  it('the error says where when given a location', () => {
    try {
      cellVolume(new Float64Array(9), { file: 'water.xyz', line: 12, frame: 3 });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as Error).message).toMatch(/^water\.xyz, line 12, frame 3: /);
    }
  });

  it('wrapUnit maps into [0, 1) even for a tiny negative coordinate', () => {
    expect(wrapUnit(-1e-17)).toBe(0);
    expect(wrapUnit(-0.25)).toBe(0.75);
    expect(wrapUnit(3.5)).toBe(0.5);
    expect(wrapUnit(1)).toBe(0);
  });

  it('a left-handed cell is accepted with V = |det H|', () => {
    const h = Float64Array.of(0, 3, 0, 2, 0, 0, 0, 0, 4);
    expect(cellDeterminant(h)).toBeCloseTo(-24, 12);
    expect(cellVolume(h)).toBeCloseTo(24, 12);
  });

  it('impossible cell parameters throw InputError', () => {
    expect(() => cellFromParameters(1, 1, 1, 90, 90, 190)).toThrow(InputError);
    expect(() => cellFromParameters(1, 1, 1, 10, 20, 150)).toThrow(/do not form a cell/);
    expect(() => cellFromParameters(-1, 1, 1, 90, 90, 90)).toThrow(/positive/);
    expect(() => cellFromParameters(1, 1, NaN, 90, 90, 90)).toThrow(InputError);
    // 120 + 120 + 120 = 360: a flat cell.
    expect(() => cellFromParameters(1, 1, 1, 120, 120, 120)).toThrow(InputError);
  });
});

describe('cell properties on random triclinic cells', () => {
  it('a_i · b_j = δ_ij and V · |b_i| = |a_j × a_k|', () => {
    fc.assert(
      fc.property(arbCell, (h) => {
        const b = reciprocalCell(h);
        for (let i = 0; i < 3; i++) {
          for (let j = 0; j < 3; j++) {
            const dot = h[3 * i] * b[3 * j] + h[3 * i + 1] * b[3 * j + 1] + h[3 * i + 2] * b[3 * j + 2];
            expect(Math.abs(dot - (i === j ? 1 : 0))).toBeLessThan(1e-12);
          }
        }
        const w = perpendicularWidths(h);
        const v = cellVolume(h);
        for (let i = 0; i < 3; i++) {
          const j = (i + 1) % 3, k = (i + 2) % 3;
          const cx = h[3 * j + 1] * h[3 * k + 2] - h[3 * j + 2] * h[3 * k + 1];
          const cy = h[3 * j + 2] * h[3 * k] - h[3 * j] * h[3 * k + 2];
          const cz = h[3 * j] * h[3 * k + 1] - h[3 * j + 1] * h[3 * k];
          expect(w[i]).toBeCloseTo(v / Math.hypot(cx, cy, cz), 10);
        }
      }),
    );
  });

  it('cellParameters ∘ cellFromParameters is the identity, and the rebuilt cell is the same up to rotation', () => {
    fc.assert(
      fc.property(arbCell, (h) => {
        const p = cellParameters(h);
        const g = cellFromParameters(p.a, p.b, p.c, p.alpha, p.beta, p.gamma);
        const q = cellParameters(g);
        close([q.a, q.b, q.c, q.alpha, q.beta, q.gamma], [p.a, p.b, p.c, p.alpha, p.beta, p.gamma], 1e-9);
        // Standard orientation: a along x, b in the xy plane with b_y > 0, c_z > 0.
        expect(g[1]).toBe(0);
        expect(g[2]).toBe(0);
        expect(g[5]).toBe(0);
        expect(g[4]).toBeGreaterThan(0);
        expect(g[8]).toBeGreaterThan(0);
        expect(cellVolume(g)).toBeCloseTo(cellVolume(h), 9);
      }),
    );
  });

  it('toCartesian ∘ toFractional is the identity; wrapping only changes periodic axes, by lattice vectors', () => {
    fc.assert(
      fc.property(
        arbCell,
        fc.array(fc.double({ min: -40, max: 40, noNaN: true }), { minLength: 3, maxLength: 30 }),
        fc.tuple(fc.boolean(), fc.boolean(), fc.boolean()),
        (h, raw, pbc) => {
          const pos = Float64Array.from(raw.slice(0, raw.length - (raw.length % 3)));
          const back = toCartesian(h, toFractional(h, pos));
          close(back, pos, 1e-11);
          const wrapped = wrapPositions(h, pos, pbc);
          // Atoms already inside along every periodic axis are returned bit for bit.
          const inside = toFractional(h, pos);
          for (let i = 0; i < pos.length; i += 3) {
            if ([0, 1, 2].every((k) => !pbc[k] || (inside[i + k] >= 0 && inside[i + k] < 1))) {
              expect(Array.from(wrapped.subarray(i, i + 3))).toEqual(Array.from(pos.subarray(i, i + 3)));
            }
          }
          const s = toFractional(h, wrapped);
          const s0 = toFractional(h, pos);
          for (let i = 0; i < s.length; i++) {
            const k = i % 3;
            if (pbc[k]) {
              expect(s[i]).toBeGreaterThanOrEqual(-1e-12);
              expect(s[i]).toBeLessThan(1 + 1e-12);
              expect(Math.abs(s[i] - s0[i] - Math.round(s[i] - s0[i]))).toBeLessThan(1e-9);
            } else {
              expect(s[i]).toBeCloseTo(s0[i], 10);
            }
          }
        },
      ),
    );
  });

  it('minimumImage is no longer than any image in a brute-force search over shifts', () => {
    fc.assert(
      fc.property(arbCell, fc.array(fc.double({ min: -30, max: 30, noNaN: true }), { minLength: 3, maxLength: 3 }), (h, d) => {
        const m = minimumImage(h, d);
        const lm = Math.hypot(m[0], m[1], m[2]);
        // m − d must be a lattice vector.
        const s = toFractional(h, [m[0] - d[0], m[1] - d[1], m[2] - d[2]]);
        for (const x of s) expect(Math.abs(x - Math.round(x))).toBeLessThan(1e-9);
        let best = Infinity;
        for (let a = -8; a <= 8; a++) for (let b = -8; b <= 8; b++) for (let c = -8; c <= 8; c++) {
          const x = d[0] + a * h[0] + b * h[3] + c * h[6];
          const y = d[1] + a * h[1] + b * h[4] + c * h[7];
          const z = d[2] + a * h[2] + b * h[5] + c * h[8];
          best = Math.min(best, Math.hypot(x, y, z));
        }
        expect(lm).toBeLessThanOrEqual(best + 1e-9);
      }),
      { numRuns: 60 },
    );
  });
});

describe('supercell', () => {
  function sample(): Frame {
    const f = makeFrame(['O', 'H', 'H'], [0.1, 0.2, 0.3, 1.0, 0.1, 0.2, 0.2, 1.1, 0.4], [4, 0, 0, 1, 5, 0, 0.5, 0.3, 6]);
    f.pbc = [true, true, false];
    f.info = { energy: -3.5, label: 'water', alpha: [1, 2, 3, 4, 5, 6, 7, 8, 9] };
    f.arrays = {
      forces: { kind: 'real', width: 3, data: Float64Array.of(1, 2, 3, 4, 5, 6, 7, 8, 9) },
      tag: { kind: 'int', width: 1, data: Int32Array.of(7, 8, 9) },
      fixed: { kind: 'bool', width: 1, data: Uint8Array.of(1, 0, 1) },
      name: { kind: 'string', width: 1, data: ['a', 'b', 'c'] },
    };
    f.source = { file: 'x.xyz', index: 2, line: 9 };
    return f;
  }

  it('repeats atoms image by image, scales the cell, repeats per-atom arrays and copies info', () => {
    const f = sample();
    const s = supercell(f, [2, 3, 1]);
    expect(s.species.length).toBe(18);
    expect(s.species.slice(0, 6)).toEqual(['O', 'H', 'H', 'O', 'H', 'H']);
    close(s.cell!, [8, 0, 0, 3, 15, 0, 0.5, 0.3, 6], 0);
    expect(s.pbc).toEqual([true, true, false]);
    // Image (0, 1, 0) is the second block: positions + b.
    close(s.positions.subarray(9, 18), [1.1, 5.2, 0.3, 2.0, 5.1, 0.2, 1.2, 6.1, 0.4], 1e-15);
    // Image (1, 0, 0) is the fourth block: positions + a.
    close(s.positions.subarray(27, 36), [4.1, 0.2, 0.3, 5.0, 0.1, 0.2, 4.2, 1.1, 0.4], 1e-15);
    expect(s.arrays.forces.data.length).toBe(54);
    expect(Array.from(s.arrays.tag.data as Int32Array).slice(0, 6)).toEqual([7, 8, 9, 7, 8, 9]);
    expect(Array.from(s.arrays.fixed.data as Uint8Array).slice(15, 18)).toEqual([1, 0, 1]);
    expect((s.arrays.name.data as string[]).slice(3, 6)).toEqual(['a', 'b', 'c']);
    expect(s.info).toEqual(f.info);
    (s.info.alpha as number[])[0] = 99; // a copy, not shared
    expect((f.info.alpha as number[])[0]).toBe(1);
    expect(s.source).toEqual(f.source);
    expect(cellVolume(s.cell!)).toBeCloseTo(6 * cellVolume(f.cell!), 10);
  });

  it('every supercell atom is an original atom plus a lattice vector, each image exactly once', () => {
    const f = sample();
    const s = supercell(f, [2, 2, 3]);
    const seen = new Set<string>();
    for (let t = 0; t < s.species.length; t++) {
      const i = t % 3;
      const d = [0, 1, 2].map((k) => s.positions[3 * t + k] - f.positions[3 * i + k]);
      const frac = toFractional(f.cell!, d);
      const key = Array.from(frac, (x) => {
        expect(Math.abs(x - Math.round(x))).toBeLessThan(1e-12);
        return Math.round(x);
      });
      seen.add(`${i}:${key.join(',')}`);
    }
    expect(seen.size).toBe(36);
  });

  it('rejects open frames and bad repeats', () => {
    const open = makeFrame(['H'], [0, 0, 0], null);
    expect(() => supercell(open, [2, 2, 2])).toThrow(InputError);
    expect(() => supercell(sample(), [0, 1, 1])).toThrow(/positive integers/);
    expect(() => supercell(sample(), [1.5, 1, 1])).toThrow(InputError);
  });
});

describe('believable cell volume', () => {
  it('refuses a volume just below 1 Å³ with a message that does not print it as 1.000', () => {
    // the sheared cell a fuzz run found: determinant 1 − 0.3 × 1.85e-16 × … = 0.9999999999999999
    const cell = Float64Array.from([1, 0, 1.8503717077085978e-16, 0, 1, 0, 0.2999999999999995, 0, 1]);
    let message = '';
    try {
      checkBelievableCell(cell, { file: 'x.xyz', line: 2 });
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      message = (e as Error).message;
    }
    expect(message).toMatch(/cell volume 0\.9999999\d* Å³ is outside the range believed/);
    // an ordinary refusal keeps four digits
    expect(() => checkBelievableCell(Float64Array.from([0.5, 0, 0, 0, 0.5, 0, 0, 0, 0.5]))).toThrow(/cell volume 0\.1250 Å³/);
    expect(() => checkBelievableCell(Float64Array.from([1.2, 0, 0, 0, 1.2, 0, 0, 0, 1.2]))).not.toThrow();
  });
});
