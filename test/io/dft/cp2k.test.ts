// CP2K reader, checked against real linear-response outputs made here (test/fixtures/dft/cp2k, see the README:
// CP2K 2023.1 from Debian, 8 water molecules in a 6.21 Å cube, PBE, Berry-phase dipole operator). The printed
// tensors are read again in the test with a separate pattern, so the reader is compared with the file.
import { copyFileSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { BOHR_A } from '../../../src-main/core/dielectric/units.ts';
import { isCp2kOutput, readCp2kRun } from '../../../src-main/io/dft/cp2k.ts';
import type { DftRun, RunReading } from '../../../src-main/io/dft/dft-run.ts';
import { scratchFolders } from '../../helpers/scratch.ts';

const scratch = scratchFolders('pw-cp2k-');

const dir = join(__dirname, '../../fixtures/dft/cp2k');
const fixture = (name: string) => join(dir, name);

function read(file: string): RunReading {
  return readCp2kRun(file, readFileSync(file, 'utf8'));
}
function run(file: string): DftRun {
  const r = read(file);
  if (!r.ok) throw new Error(`${file}: ${r.unusable.reason}`);
  return r.run;
}

/** The tensor printed under "POLAR| Polarizability tensor [UNIT]" as xx,yy,zz / xy,xz,yz / yx,zx,zy, row-major. */
function printed(file: string, unit: 'a.u.' | 'ang^3'): number[] {
  const text = readFileSync(file, 'utf8');
  const at = text.indexOf(`Polarizability tensor [${unit}]`);
  const rows = text.slice(at).split('\n').slice(1, 4).map((l) => l.trim().split(/\s+/).slice(2).map(Number));
  const [d, u, l] = rows;
  return [d[0], u[0], u[1], l[0], d[1], u[2], l[1], l[2], d[2]];
}

/** Species and positions of a plain XYZ file, read independently. */
function xyz(file: string): { species: string[]; positions: number[] } {
  const lines = readFileSync(file, 'utf8').trim().split('\n').slice(2);
  return { species: lines.map((l) => l.trim().split(/\s+/)[0]), positions: lines.flatMap((l) => l.trim().split(/\s+/).slice(1, 4).map(Number)) };
}

const BOHR3 = BOHR_A ** 3; // CODATA 2018

describe('CP2K linear-response polarisability', () => {
  it('recognises a CP2K output by its header', () => {
    expect(isCp2kOutput(readFileSync(fixture('water-a.out'), 'utf8'))).toBe(true);
    expect(isCp2kOutput(readFileSync(join(dir, '../qe/si-alat.pw.out'), 'utf8'))).toBe(false);
  });

  it('Bohr³ vs Å³: the a.u. tensor times a0³ (CODATA 2018) is kept, and agrees with the printed ang^3 tensor', () => {
    const file = fixture('water-a.out');
    const r = run(file);
    expect(r.kind).toBe('alpha-c');
    const au = printed(file, 'a.u.');
    const ang = printed(file, 'ang^3');
    // water-a.out line 276: xx = 20.240864550052 a.u.
    expect(au[0]).toBe(20.240864550052);
    for (const d of [0, 4, 8]) {
      expect(r.tensor[d]).toBeCloseTo(au[d] * BOHR3, 12);
      // CP2K converts with its own Bohr radius: the ang^3 print agrees to 1e-7 relative, not to 12 digits
      expect(Math.abs(r.tensor[d] - ang[d]) / ang[d]).toBeLessThan(1e-7);
      // and the value is not the bohr³ number: the ratio is a0³ = 0.148185 Å³ per bohr³
      expect(r.tensor[d] / au[d]).toBeCloseTo(0.148185, 6);
    }
    // off-diagonal: the symmetric part of the printed pair (CP2K's columns come from separate linear solves)
    for (const [i, j] of [[1, 3], [2, 6], [5, 7]]) {
      expect(r.tensor[i]).toBe(r.tensor[j]);
      expect(r.tensor[i]).toBeCloseTo(((au[i] + au[j]) / 2) * BOHR3, 12);
      expect(Math.abs(au[i] - au[j]) / au[4]).toBeLessThan(1e-4);
    }
  });

  it('PRINT_LEVEL LOW: atoms from the input\'s &COORD, cell from &CELL, settings from the input', () => {
    const r = run(fixture('water-a.out'));
    const ref = xyz(fixture('water-a.xyz')); // the same coordinates make-fixtures.sh wrote into &COORD
    expect(r.frame.species).toEqual(ref.species);
    ref.positions.forEach((v, i) => expect(r.frame.positions[i]).toBe(v));
    expect(Array.from(r.frame.cell!)).toEqual([6.21, 0, 0, 0, 6.21, 0, 0, 0, 6.21]);
    expect(Object.fromEntries(r.settings.map((s) => [s.name, s.value]))).toEqual({
      functional: 'PBE',
      cutoff: '250 Ry (relative 40 Ry)',
      basis: 'H: SZV-MOLOPT-SR-GTH / GTH-PBE-q1; O: SZV-MOLOPT-SR-GTH / GTH-PBE-q6',
      'k-points': 'Γ only',
    });
    expect(r.program).toBe('CP2K 2023.1');
  });

  it('PRINT_LEVEL LOW: atoms from the coordinate file the input names', () => {
    const r = run(fixture('water-b.out'));
    const ref = xyz(fixture('water-b.xyz'));
    expect(r.frame.species).toEqual(ref.species);
    ref.positions.forEach((v, i) => expect(r.frame.positions[i]).toBe(v));
    expect(r.files.map((f) => f.split('/').pop())).toEqual(['water-b.out', 'water-b.inp', 'water-b.xyz']);
    // a second geometry gives a different tensor (water-b.out, a.u. xx = 20.125982315091)
    expect(r.tensor[0]).toBeCloseTo(20.125982315091 * BOHR3, 12);
  });

  it('cell and coordinates in Bohr in the input (the unit trap) give the same frame in Å', () => {
    const tmp = scratch();
    copyFileSync(fixture('water-a.out'), join(tmp, 'water-a.out'));
    const a = xyz(fixture('water-a.xyz'));
    const input = readFileSync(fixture('water-a.inp'), 'utf8')
      .replace('ABC 6.21 6.21 6.21', `ABC [bohr] ${6.21 / BOHR_A} ${6.21 / BOHR_A} ${6.21 / BOHR_A}`)
      .replace(/&COORD\n[\s\S]*?&END COORD/, `&COORD\n      UNIT bohr\n${a.species.map((s, k) => `      ${s} ${a.positions.slice(3 * k, 3 * k + 3).map((v) => v / BOHR_A).join(' ')}`).join('\n')}\n    &END COORD`);
    writeFileSync(join(tmp, 'water-a.inp'), input);
    const r = run(join(tmp, 'water-a.out'));
    const ref = run(fixture('water-a.out'));
    ref.frame.cell!.forEach((v, i) => expect(r.frame.cell![i]).toBeCloseTo(v, 10));
    ref.frame.positions.forEach((v, i) => expect(r.frame.positions[i]).toBeCloseTo(v, 10));

    // fractional (SCALED) coordinates too
    const scaled = readFileSync(fixture('water-a.inp'), 'utf8').replace(
      /&COORD\n[\s\S]*?&END COORD/,
      `&COORD\n      SCALED T\n${a.species.map((s, k) => `      ${s} ${a.positions.slice(3 * k, 3 * k + 3).map((v) => v / 6.21).join(' ')}`).join('\n')}\n    &END COORD`,
    );
    writeFileSync(join(tmp, 'water-a.inp'), scaled);
    const s = run(join(tmp, 'water-a.out'));
    ref.frame.positions.forEach((v, i) => expect(s.frame.positions[i]).toBeCloseTo(v, 10));
  });

  it('an output whose input is not beside it is an error naming the input', () => {
    const tmp = scratch();
    copyFileSync(fixture('water-a.out'), join(tmp, 'water-a.out'));
    expect(() => read(join(tmp, 'water-a.out'))).toThrow(/water-a\.out: the CP2K input .*water-a\.inp is not there — .*must sit beside the output/);
  });

  it('reports a run whose SCF stopped unconverged (CP2K then prints NaN) and one cut short', () => {
    const u = read(fixture('water-unconverged.out'));
    expect(u.ok).toBe(false);
    if (!u.ok) expect([u.unusable.status, u.unusable.reason]).toEqual(['unconverged', 'CP2K: the SCF did not converge ("SCF run NOT converged")']);
    expect(readFileSync(fixture('water-unconverged.out'), 'utf8')).toMatch(/xx,yy,zz\s+NaN/);
    const c = read(fixture('water-b-cut-short.out'));
    expect(c.ok === false && c.unusable.status).toBe('unfinished');
  });

  it('field boundary: a response to the position operator is not α_c and is refused', () => {
    const r = read(fixture('water-local-dipole.out'));
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.unusable.status).toBe('unsuitable');
      expect(r.unusable.reason).toMatch(/not the Berry-phase periodic dipole.*PERIODIC_DIPOLE_OPERATOR T/);
    }
  });

  it('PRINT_LEVEL MEDIUM: atoms as the output prints them, which match the input', () => {
    const r = run(fixture('water-c.out'));
    const ref = xyz(fixture('water-c.xyz'));
    expect(r.frame.species).toEqual(ref.species);
    ref.positions.forEach((v, i) => expect(Math.abs(r.frame.positions[i] - v)).toBeLessThan(1e-6));
  });
});
