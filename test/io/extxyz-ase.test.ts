// Interoperability with Debian's python3-ase 3.22 (fixtures made by test/fixtures/io/extxyz-ase.py): we read a
// file ASE wrote exactly as ASE reads it back, and ASE reads a file our writer made exactly as we do.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import type { Frame } from '../../src-main/core/geometry/frame.ts';
import { parseExtxyz } from '../../src-main/io/extxyz.ts';

const FIX = path.join(import.meta.dirname, '../fixtures/io');
interface AseFrame {
  species: string[];
  positions: number[];
  cell: number[];
  pbc: boolean[];
  info: Record<string, unknown>;
  arrays: Record<string, number[]>;
}
const ase = JSON.parse(readFileSync(path.join(FIX, 'extxyz-ase.json'), 'utf8')) as Record<string, AseFrame[]>;

// ASE keeps a file's `charge` column under its own internal name; we keep the column name of the file.
const ASE_NAMES: Record<string, string> = { initial_charges: 'charge' };

function compare(ours: Frame[], ref: AseFrame[]): void {
  expect(ours.length).toBe(ref.length);
  ours.forEach((f, k) => {
    const r = { ...ref[k], arrays: Object.fromEntries(Object.entries(ref[k].arrays).map(([n, v]) => [ASE_NAMES[n] ?? n, v])) };
    expect(f.species).toEqual(r.species);
    expect(Array.from(f.positions)).toEqual(r.positions); // exact: both read the same decimals
    expect(Array.from(f.cell!)).toEqual(r.cell);
    expect(f.pbc).toEqual(r.pbc);
    expect(f.info).toEqual(r.info);
    expect(Object.keys(f.arrays).sort()).toEqual(Object.keys(r.arrays).sort());
    for (const [name, a] of Object.entries(f.arrays)) expect(Array.from(a.data as ArrayLike<number>)).toEqual(r.arrays[name]);
  });
}

describe('extended XYZ and python3-ase', () => {
  it('reads an ASE-written file as ASE does (triclinic cell, partial pbc, extra columns, _JSON 3×3 arrays)', () => {
    const frames = parseExtxyz(readFileSync(path.join(FIX, 'ase-written.extxyz'), 'utf8'), 'ase-written.extxyz');
    compare(frames, ase['ase-written.extxyz']);
    expect((frames[2].info.eps_inf as number[]).length).toBe(9); // a 3×3 tensor, row-major
  });

  it('ASE reads our writer’s output as we do', () => {
    compare(parseExtxyz(readFileSync(path.join(FIX, 'ours.extxyz'), 'utf8'), 'ours.extxyz'), ase['ours.extxyz']);
  });
});
