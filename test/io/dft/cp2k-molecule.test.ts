// A CP2K isolated-molecule run (test/fixtures/dft/cp2k-molecule, see the README there: CP2K 2023.1 from Debian,
// PBE, aug-TZV2P-GTH, non-periodic cell and Poisson solver, position operator): read as the polarisability of the
// molecule in vacuum (alpha-mol) on a frame without a cell, checked against the printed numbers and, for the
// monomer, against the measured polarisability of a water molecule; the dimer against twice the monomer.
import { copyFileSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { BOHR_A } from '../../../src-main/core/dielectric/units.ts';
import { readCp2kRun } from '../../../src-main/io/dft/cp2k.ts';
import type { DftRun, RunReading } from '../../../src-main/io/dft/dft-run.ts';
import { collectedFrames, collectRuns } from '../../../src-main/app/collect-references.ts';
import { formatExtxyzFrame, parseExtxyz } from '../../../src-main/io/extxyz.ts';

const dir = join(__dirname, '../../fixtures/dft/cp2k-molecule');
const fixture = (name: string) => join(dir, name);
const BOHR3 = BOHR_A ** 3; // CODATA 2018

function read(file: string): RunReading {
  return readCp2kRun(file, readFileSync(file, 'utf8'));
}
function run(file: string): DftRun {
  const r = read(file);
  if (!r.ok) throw new Error(`${file}: ${r.unusable.reason}`);
  return r.run;
}

/** The tensor printed under "POLAR| Polarizability tensor [a.u.]", row-major, read independently of the reader. */
function printedAu(file: string): number[] {
  const text = readFileSync(file, 'utf8');
  const at = text.indexOf('Polarizability tensor [a.u.]');
  const [d, u, l] = text.slice(at).split('\n').slice(1, 4).map((line) => line.trim().split(/\s+/).slice(2).map(Number));
  return [d[0], u[0], u[1], l[0], d[1], u[2], l[1], l[2], d[2]];
}

function xyz(file: string): { species: string[]; positions: number[] } {
  const lines = readFileSync(file, 'utf8').trim().split('\n').slice(2);
  return { species: lines.map((l) => l.trim().split(/\s+/)[0]), positions: lines.flatMap((l) => l.trim().split(/\s+/).slice(1, 4).map(Number)) };
}

/**
 * The measured static polarisability of the water molecule, 1.45 Å³ (CRC Handbook of Chemistry and Physics, table
 * "Atomic and Molecular Polarizabilities"; from memory, not checked against the book here). A semi-local functional
 * with a finite basis is expected within about 15 % of it (common practice, no source): the sanity range below.
 */
const WATER_ALPHA_A3 = 1.45;

describe('CP2K isolated water monomer', () => {
  const file = fixture('water-monomer.out');

  it('is read as alpha-mol on a frame without a cell, the printed a.u. tensor times a0³', () => {
    const r = run(file);
    expect(r.kind).toBe('alpha-mol');
    expect(r.frame.cell).toBeNull();
    expect(r.frame.pbc).toEqual([false, false, false]);
    const ref = xyz(fixture('water-monomer.xyz'));
    expect(r.frame.species).toEqual(ref.species);
    ref.positions.forEach((v, i) => expect(r.frame.positions[i]).toBeCloseTo(v, 5));
    const au = printedAu(file);
    for (const d of [0, 4, 8]) expect(r.tensor[d]).toBeCloseTo(au[d] * BOHR3, 12);
    expect(r.printedAs).toMatch(/isolated molecule/);
  });

  it('lies in the sanity range of the measured water polarisability (1.45 Å³, handbook)', () => {
    const t = run(file).tensor;
    const iso = (t[0] + t[4] + t[8]) / 3;
    expect(iso).toBeGreaterThan(0.85 * WATER_ALPHA_A3);
    expect(iso).toBeLessThan(1.15 * WATER_ALPHA_A3);
  });

  it('collect writes alpha_mol_A3 on a frame without a Lattice, which reads back as an isolated frame', async () => {
    const r = await collectRuns([file]);
    expect(r.runs).toHaveLength(1);
    const [frame] = collectedFrames(r);
    expect(frame.info.reference_kind).toBe('alpha-mol');
    expect(frame.info.alpha_mol_A3).toHaveLength(9);
    const text = formatExtxyzFrame(frame);
    expect(text).not.toMatch(/Lattice=/);
    expect(parseExtxyz(text, 'm.extxyz')[0].cell).toBeNull();
  });

  it('the position operator in a periodic Poisson solver is still refused (not an isolated molecule)', () => {
    const tmp = mkdtempSync(join(tmpdir(), 'pw-cp2k-mol-'));
    for (const n of ['water-monomer.out', 'water-monomer.xyz']) copyFileSync(fixture(n), join(tmp, n));
    writeFileSync(join(tmp, 'water-monomer.inp'), readFileSync(fixture('water-monomer.inp'), 'utf8').replace(/&POISSON[\s\S]*?&END POISSON\n/, ''));
    const r = read(join(tmp, 'water-monomer.out'));
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.unusable.reason).toMatch(/PERIODIC NONE in &CELL and in &POISSON/);
  });
});

/**
 * The water dimer against two monomers: the interaction changes a hydrogen-bonded water dimer's isotropic
 * polarisability by about 1 % of the sum of its monomers' (from memory: ab initio studies of the dimer near its
 * equilibrium geometry find an interaction polarisability of a few tenths of a bohr³ on about 19 bohr³). The
 * band below, 0.97–1.06 × twice the monomer's, allows for this dimer's hand-built geometry (not optimised, same
 * monomer geometry as the monomer run) and for PBE's tendency to overstate the interaction (common practice, no source).
 */
const DIMER_BAND = { low: 0.97, high: 1.06 };

describe('CP2K isolated water dimer', () => {
  const file = fixture('water-dimer.out');

  it('is read as alpha-mol on a frame without a cell, the printed a.u. tensor times a0³', () => {
    const r = run(file);
    expect(r.kind).toBe('alpha-mol');
    expect(r.frame.cell).toBeNull();
    const ref = xyz(fixture('water-dimer.xyz'));
    expect(r.frame.species).toEqual(ref.species);
    expect(r.frame.species).toHaveLength(6);
    ref.positions.forEach((v, i) => expect(r.frame.positions[i]).toBeCloseTo(v, 5));
    // the printed a.u. tensor times a0³ (CODATA 2018), its symmetric part: xy and yx differ in the 4th digit
    const au = printedAu(file);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) expect(r.tensor[3 * i + j]).toBeCloseTo(((au[3 * i + j] + au[3 * j + i]) / 2) * BOHR3, 12);
    // and what CP2K printed in Å³ beside it (line "Polarizability tensor [ang^3]": xx 3.422159478141)
    expect(r.tensor[0]).toBeCloseTo(3.422159478141, 6);
  });

  it('collect writes alpha_mol_A3 on a frame without a Lattice', async () => {
    const r = await collectRuns([file]);
    expect(r.runs).toHaveLength(1);
    const [frame] = collectedFrames(r);
    expect(frame.info.alpha_mol_A3).toHaveLength(9);
    const text = formatExtxyzFrame(frame);
    expect(text).not.toMatch(/Lattice=/);
    expect(parseExtxyz(text, 'd.extxyz')[0].cell).toBeNull();
  });

  it('its α_iso is close to twice the monomer\'s (the interaction polarisability is small)', () => {
    const iso = (t: ArrayLike<number>) => (t[0] + t[4] + t[8]) / 3;
    const ratio = iso(run(file).tensor) / (2 * iso(run(fixture('water-monomer.out')).tensor));
    expect(ratio).toBeGreaterThan(DIMER_BAND.low);
    expect(ratio).toBeLessThan(DIMER_BAND.high);
  });
});
