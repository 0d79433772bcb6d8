// CIF reading: rock salt from its asymmetric unit and the 192 operations of Fm-3m; a monoclinic crystal against
// Debian's python3-ase; syntax that must not break the parser; errors with lines.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { InputError } from '../../src-main/core/errors.ts';
import type { Frame } from '../../src-main/core/geometry/frame.ts';
import { cifNumber, elementFromLabel, parseCif, parseSymmetryOp } from '../../src-main/io/cif.ts';
import { formatExtxyzFrame, parseExtxyz } from '../../src-main/io/extxyz.ts';

const FIX = path.join(import.meta.dirname, '../fixtures/io');
const ase = JSON.parse(readFileSync(path.join(FIX, 'cif-ase.json'), 'utf8')) as Record<string, { species: string[]; cell: number[]; positions: number[]; volume: number }>;

/** Shortest distance between atoms i and j over the 27 neighbouring images (brute force, for the checks). */
function periodicDistance(f: Frame, i: number, j: number): number {
  const h = f.cell!;
  let best = Infinity;
  for (let a = -1; a <= 1; a++)
    for (let b = -1; b <= 1; b++)
      for (let c = -1; c <= 1; c++) {
        let s = 0;
        for (let k = 0; k < 3; k++) {
          const d = f.positions[3 * j + k] + a * h[k] + b * h[3 + k] + c * h[6 + k] - f.positions[3 * i + k];
          s += d * d;
        }
        best = Math.min(best, Math.sqrt(s));
      }
  return best;
}

function det(h: ArrayLike<number>): number {
  return h[0] * (h[4] * h[8] - h[5] * h[7]) - h[1] * (h[3] * h[8] - h[5] * h[6]) + h[2] * (h[3] * h[7] - h[4] * h[6]);
}

describe('parseCif: rock salt from the asymmetric unit', () => {
  const text = readFileSync(path.join(FIX, 'nacl-fm3m.cif'), 'utf8');
  const [f] = parseCif(text, 'nacl-fm3m.cif');

  it('gives the 8 atoms of the conventional cell (4 Na + 4 Cl) in a 5.6402 Å cube', () => {
    // a = 5.6402 Å: CRC Handbook lattice-constant table (from memory, see the fixture header); Z = 4 formula units
    expect(f.species.filter((s) => s === 'Na').length).toBe(4);
    expect(f.species.filter((s) => s === 'Cl').length).toBe(4);
    expect(Array.from(f.cell!)).toEqual([5.6402, 0, 0, 0, 5.6402, 0, 0, 0, 5.6402]);
    expect(f.pbc).toEqual([true, true, true]);
  });

  it('nearest Na–Cl distance is a/2 = 2.8201 Å, nearest Na–Na a/√2 = 3.9882 Å (rock-salt geometry)', () => {
    let naCl = Infinity;
    let naNa = Infinity;
    for (let i = 0; i < 8; i++)
      for (let j = 0; j < 8; j++) {
        if (i === j) continue;
        const d = periodicDistance(f, i, j);
        if (f.species[i] === 'Na' && f.species[j] === 'Cl') naCl = Math.min(naCl, d);
        if (f.species[i] === 'Na' && f.species[j] === 'Na') naNa = Math.min(naNa, d);
      }
    expect(naCl).toBeCloseTo(2.8201, 10);
    expect(naNa).toBeCloseTo(5.6402 / Math.SQRT2, 10);
  });

  it('positions are wrapped into the cell and agree with python3-ase', () => {
    for (const x of f.positions) {
      expect(x).toBeGreaterThanOrEqual(0);
      expect(x).toBeLessThan(5.6402);
    }
    expectSameAtoms(f, ase['nacl-fm3m.cif'], 1e-9);
  });

  it('keeps scalar data items in info', () => {
    expect(f.info.cif_block).toBe('rocksalt');
    expect(f.info['symmetry_space_group_name_h-m']).toBe('F m -3 m');
    expect(f.info.symmetry_int_tables_number).toBe(225);
  });
});

/** Every atom of `f` has one atom of the reference, same species, within tol Å (periodic). */
function expectSameAtoms(f: Frame, ref: { species: string[]; cell: number[]; positions: number[] }, tol: number): void {
  expect(f.species.length).toBe(ref.species.length);
  for (let k = 0; k < 9; k++) expect(f.cell![k]).toBeCloseTo(ref.cell[k], 9);
  const h = f.cell!;
  // invert H once to take differences in fractional coordinates
  const inv = invert(h);
  const used = new Set<number>();
  for (let i = 0; i < f.species.length; i++) {
    let found = -1;
    for (let j = 0; j < ref.species.length; j++) {
      if (used.has(j) || ref.species[j] !== f.species[i]) continue;
      const d = [0, 1, 2].map((k) => f.positions[3 * i + k] - ref.positions[3 * j + k]);
      const s = [0, 1, 2].map((k) => d[0] * inv[k] + d[1] * inv[3 + k] + d[2] * inv[6 + k]).map((x) => x - Math.round(x));
      const c = [0, 1, 2].map((k) => s[0] * h[k] + s[1] * h[3 + k] + s[2] * h[6 + k]);
      if (Math.hypot(c[0], c[1], c[2]) < tol) {
        found = j;
        break;
      }
    }
    expect(found, `atom ${i} (${f.species[i]}) has a partner in the reference`).toBeGreaterThanOrEqual(0);
    used.add(found);
  }
}

function invert(h: Float64Array): number[] {
  const d = det(h);
  return [
    (h[4] * h[8] - h[5] * h[7]) / d, (h[2] * h[7] - h[1] * h[8]) / d, (h[1] * h[5] - h[2] * h[4]) / d,
    (h[5] * h[6] - h[3] * h[8]) / d, (h[0] * h[8] - h[2] * h[6]) / d, (h[2] * h[3] - h[0] * h[5]) / d,
    (h[3] * h[7] - h[4] * h[6]) / d, (h[1] * h[6] - h[0] * h[7]) / d, (h[0] * h[4] - h[1] * h[3]) / d,
  ];
}

describe('parseCif: monoclinic ZrO2 against python3-ase 3.22 (test/fixtures/io/cif-ase.py)', () => {
  const text = readFileSync(path.join(FIX, 'zro2-monoclinic.cif'), 'utf8');
  const frames = parseCif(text, 'zro2-monoclinic.cif');

  it('skips the block without atoms, reads past the text field and quotes', () => {
    expect(frames.length).toBe(1);
    expect(frames[0].info.cif_block).toBe('zro2_p21c');
    expect(frames[0].source).toEqual({ file: 'zro2-monoclinic.cif', index: 0, line: 14 });
  });

  it('expands P2_1/c to 12 atoms (Z = 4) equal to ASE’s, same cell and volume', () => {
    const f = frames[0];
    expect(f.species.filter((s) => s === 'Zr').length).toBe(4);
    expect(f.species.filter((s) => s === 'O').length).toBe(8);
    expect(det(f.cell!)).toBeCloseTo(ase['zro2-monoclinic.cif'].volume, 9);
    expectSameAtoms(f, ase['zro2-monoclinic.cif'], 1e-9);
  });
});

describe('CIF → extended XYZ', () => {
  it('a CIF frame (with its data items) is written as extended XYZ and reads back equal', () => {
    for (const name of ['nacl-fm3m.cif', 'zro2-monoclinic.cif']) {
      const [f] = parseCif(readFileSync(path.join(FIX, name), 'utf8'), name);
      const [back] = parseExtxyz(formatExtxyzFrame(f), 'x.xyz');
      const { source: _a, ...want } = f;
      const { source: _b, ...got } = back;
      expect(got).toEqual(want);
    }
  });
});

describe('CIF pieces', () => {
  it('reads numbers with standard uncertainties', () => {
    const v = (text: string, quoted = false) => cifNumber({ text, line: 1, quoted });
    expect(v('5.6402(3)')).toBe(5.6402);
    expect(v('99.23(1)')).toBe(99.23);
    expect(v('-.5')).toBe(-0.5);
    expect(v('1.2e-3(4)')).toBe(0.0012);
    expect(v('?')).toBeUndefined();
    expect(v('.')).toBeUndefined();
    expect(v('abc')).toBeNaN();
    expect(v('?', true)).toBeNaN();
  });

  it('parses symmetry operations in their usual spellings', () => {
    const op = (t: string) => {
      const r = parseSymmetryOp(t);
      if (typeof r === 'string') throw new Error(r);
      return [Array.from(r.rotation), Array.from(r.translation)];
    };
    expect(op('x,y,z')).toEqual([[1, 0, 0, 0, 1, 0, 0, 0, 1], [0, 0, 0]]);
    expect(op('-x+1/2, y, -z')).toEqual([[-1, 0, 0, 0, 1, 0, 0, 0, -1], [0.5, 0, 0]]);
    expect(op('1/2+x, 1/2-y, +z+0.25')).toEqual([[1, 0, 0, 0, -1, 0, 0, 0, 1], [0.5, 0.5, 0.25]]);
    expect(op('x-y, x, z+1/6')).toEqual([[1, -1, 0, 1, 0, 0, 0, 0, 1], [0, 0, 1 / 6]]); // hexagonal 6-fold
    expect(op('X, Y, Z')).toEqual([[1, 0, 0, 0, 1, 0, 0, 0, 1], [0, 0, 0]]);
    expect(parseSymmetryOp('x, y')).toMatch(/three/);
    expect(parseSymmetryOp('x, y, q')).toMatch(/cannot read/);
    expect(parseSymmetryOp('x, x, z')).toMatch(/determinant/);
    expect(parseSymmetryOp('x, yz, z')).toMatch(/missing \+ or -|determinant/);
  });

  it('takes the element from type symbols and labels', () => {
    expect(['Na1', 'Na1+', 'O2-', 'Fe3+', 'Cl', 'CA1', 'Ow', 'Si4', 'H12a', 'Xq'].map(elementFromLabel)).toEqual(['Na', 'Na', 'O', 'Fe', 'Cl', 'C', 'O', 'Si', 'H', undefined]);
  });
});

describe('CIF errors name the line', () => {
  const base = (extra: string) => `data_t\n_cell_length_a 4\n_cell_length_b 4\n_cell_length_c 4\n_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\n${extra}`;
  const sites = 'loop_\n_atom_site_label\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\nNa1 0 0 0\n';
  function err(text: string): InputError {
    try {
      parseCif(text, 't.cif');
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).hint ?? '').not.toBe('');
      return e as InputError;
    }
    throw new Error('no error');
  }
  it('unterminated quotes and text fields', () => {
    expect(err(base("_title 'open\n") + sites).where.line).toBe(8);
    expect(err(base(';\nnever closed\n') + sites).where.line).toBe(8);
  });
  it('loops whose values do not fill the rows', () => {
    const e = err(base('loop_\n_atom_site_label\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\nNa1 0 0\n'));
    expect(e.where.line).toBe(13);
    expect(e.problem).toMatch(/4 tags.*3 values/);
  });
  it('missing and bad cell parameters, bad coordinates, unknown elements', () => {
    expect(err(`data_t\n${sites}`).problem).toMatch(/no _cell_length_a/);
    expect(err(base('').replace('_cell_length_b 4', '_cell_length_b abc') + sites).where.line).toBe(3);
    expect(err(base('').replace('_cell_angle_gamma 90', '_cell_angle_gamma 200') + sites).problem).toMatch(/angle gamma/);
    expect(err(base(sites.replace('Na1 0 0 0', 'Na1 0 x 0'))).where.line).toBe(13);
    expect(err(base(sites.replace('Na1', 'Qq1'))).problem).toMatch(/no element/);
  });
  it('a named space group without operations, a bad operation, disorder', () => {
    expect(err(base("_symmetry_space_group_name_H-M 'F m -3 m'\n") + sites).problem).toMatch(/operations are not listed/);
    expect(err(base("loop_\n_symmetry_equiv_pos_as_xyz\n'x,y,z'\n'x,x,z'\n") + sites).where.line).toBe(11);
    const twoOnOne = base("loop_\n_atom_site_label\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\nNa1 0 0 0\nCl1 0 0 1.0\n");
    expect(err(twoOnOne).problem).toMatch(/same position/);
    expect(err(base(sites.replace('_atom_site_fract_z\n', '_atom_site_fract_z\n_atom_site_occupancy\n').replace('Na1 0 0 0', 'Na1 0 0 0 0.5'))).problem).toMatch(/occupancy/);
  });
  it('files without blocks or atoms', () => {
    expect(err('# nothing\n').problem).toMatch(/no data_ block/);
    expect(err(base('')).problem).toMatch(/no data block holds atom sites/);
    expect(err('_cell_length_a 4\n').problem).toMatch(/before the first data_/);
  });
  it('merges symmetry copies that coincide within the tolerance (periodic image)', () => {
    // a site at 0.9999 and its mirror image at -0.9999 ≡ 0.0001: 0.0008 Å apart in a 4 Å cell → one site
    const text = base("loop_\n_symmetry_equiv_pos_as_xyz\n'x,y,z'\n'-x,y,z'\n") + sites.replace('Na1 0 0 0', 'Na1 0.9999 0.5 0.5');
    expect(parseCif(text, 't.cif')[0].species.length).toBe(1);
    expect(parseCif(text, 't.cif', { mergeTolerance: 1e-4 })[0].species.length).toBe(2);
  });
});
