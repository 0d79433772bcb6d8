// Quantum ESPRESSO reader, checked against real pw.x + ph.x outputs made here (test/fixtures/dft/qe, see its
// README: QE 6.7 from Debian, Si with the package's Si.pz-vbc.UPF). The printed numbers are read again in the
// test with a separate pattern, so the reader is compared with the file, not with itself.
import { copyFileSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { cellVolume } from '../../../src-main/core/geometry/cell.ts';
import { BOHR_A } from '../../../src-main/core/dielectric/units.ts';
import { InputError } from '../../../src-main/core/errors.ts';
import { splitLines } from '../../../src-main/io/dft/dft-run.ts';
import { qeProgramOf, readQeRuns, type QeOutput } from '../../../src-main/io/dft/quantum-espresso.ts';
import type { DftRun, RunReading } from '../../../src-main/io/dft/dft-run.ts';
import { scratchFolders } from '../../helpers/scratch.ts';

const scratch = scratchFolders('pw-qe-');

const dir = join(__dirname, '../../fixtures/dft/qe');

function output(file: string): QeOutput {
  const text = readFileSync(file, 'utf8');
  const program = qeProgramOf(text);
  if (!program) throw new Error(`${file} is not a QE output`);
  return { file, program, text, lines: splitLines(text) };
}

function read(...names: string[]): { runs: DftRun[]; readings: RunReading[]; errors: [string, InputError][] } {
  const errors: [string, InputError][] = [];
  const readings = readQeRuns(names.map((n) => output(n.includes('/') ? n : join(dir, n))), (f, e) => errors.push([f, e]));
  return { runs: readings.flatMap((r) => (r.ok ? [r.run] : [])), readings, errors };
}

/** The 3 rows printed under "Dielectric constant in cartesian axis", read independently of the reader. */
function printedEps(file: string): number[] {
  const text = readFileSync(join(dir, file), 'utf8');
  const block = /Dielectric constant in cartesian axis\s*\n\s*\n((?:\s*\(.*\)\s*\n){3})/.exec(text);
  if (!block) throw new Error('no tensor');
  return block[1].trim().split('\n').flatMap((row) => row.replace(/[()]/g, ' ').trim().split(/\s+/).map(Number));
}

describe('Quantum ESPRESSO pw.x + ph.x', () => {
  it('recognises the two programs by their first lines', () => {
    expect(qeProgramOf(readFileSync(join(dir, 'si-alat.pw.out'), 'utf8'))).toBe('pw.x');
    expect(qeProgramOf(readFileSync(join(dir, 'si-alat.ph.out'), 'utf8'))).toBe('ph.x');
    expect(qeProgramOf(' CP2K| version string:  CP2K version 2023.1')).toBeNull();
  });

  it('reproduces the printed ε∞ to its printed precision (9 decimals), as the symmetric part', () => {
    const { runs } = read('si-alat.pw.out', 'si-alat.ph.out', 'si-angstrom.pw.out', 'si-angstrom.ph.out');
    expect(runs.map((r) => r.kind)).toEqual(['eps', 'eps']);
    for (const [run, file] of [[runs[0], 'si-alat.ph.out'], [runs[1], 'si-angstrom.ph.out']] as const) {
      const p = printedEps(file);
      for (const d of [0, 4, 8]) expect(Math.abs(run.tensor[d] - p[d])).toBeLessThan(5e-10);
      for (const [i, j] of [[1, 3], [2, 6], [5, 7]]) {
        expect(run.tensor[i]).toBe(run.tensor[j]);
        expect(Math.abs(run.tensor[i] - (p[i] + p[j]) / 2)).toBeLessThan(5e-10);
        // the printed tensor's own asymmetry is at the solver's tolerance
        expect(Math.abs(p[i] - p[j])).toBeLessThan(2e-8);
      }
    }
    // quoted from si-alat.ph.out line 150: diamond-structure Si has an isotropic ε∞ (cubic symmetry)
    expect(runs[0].tensor[0]).toBe(13.636816049);
    expect(runs[0].tensor[4]).toBe(13.636816049);
    expect(runs[0].tensor[1]).toBe(0);
    // quoted from si-angstrom.ph.out line 153 (the stretched cell with an atom moved: anisotropic)
    expect(runs[1].tensor[8]).toBe(14.293062821);
  });

  it('alat trap: a cell given by ibrav/celldm is printed in alat units of Bohr and comes out in Å', () => {
    const run = read('si-alat.pw.out', 'si-alat.ph.out').runs[0];
    const a = 10.2 * BOHR_A; // celldm(1) = 10.20 bohr in the input; CODATA 2018 Bohr radius
    // fcc primitive vectors of pw.x's ibrav = 2: (−1,0,1)a/2, (0,1,1)a/2, (−1,1,0)a/2
    const expected = [-a / 2, 0, a / 2, 0, a / 2, a / 2, -a / 2, a / 2, 0];
    expected.forEach((v, i) => expect(run.frame.cell![i]).toBeCloseTo(v, 9));
    // the volume the output prints, 265.3020 (a.u.)^3 (si-alat.pw.out line 38), in Å³ — not in bohr³
    const V = cellVolume(run.frame.cell!);
    expect(V).toBeCloseTo(265.302 * BOHR_A ** 3, 3);
    expect(V).toBeCloseTo(39.314, 3);
    // Si–Si bond in the diamond structure: √3/4 · a (a = 5.3976 Å here)
    const p = run.frame.positions;
    expect(Math.hypot(p[3] - p[0], p[4] - p[1], p[5] - p[2])).toBeCloseTo((Math.sqrt(3) / 4) * a, 6);
    expect(run.frame.species).toEqual(['Si', 'Si']);
  });

  it('a cell given by CELL_PARAMETERS angstrom comes back as the input wrote it, to the printed precision', () => {
    const run = read('si-angstrom.pw.out', 'si-angstrom.ph.out').runs[0];
    const input = readFileSync(join(dir, 'si-angstrom.pw.in'), 'utf8');
    const cellRows = /CELL_PARAMETERS angstrom\n((?:.*\n){3})/.exec(input)![1].trim().split('\n').flatMap((r) => r.trim().split(/\s+/).map(Number));
    const atomRows = /ATOMIC_POSITIONS angstrom\n((?:.*\n){2})/.exec(input)![1].trim().split('\n').flatMap((r) => r.trim().split(/\s+/).slice(1).map(Number));
    // pw.x prints axes to 6 decimals of alat (7.322049 bohr) and positions to 7: about 2e-6 Å
    cellRows.forEach((v, i) => expect(Math.abs(run.frame.cell![i] - v)).toBeLessThan(3e-6));
    atomRows.forEach((v, i) => expect(Math.abs(run.frame.positions[i] - v)).toBeLessThan(3e-6));
    expect(cellVolume(run.frame.cell!)).toBeCloseTo(273.3236 * BOHR_A ** 3, 3); // printed, si-angstrom.pw.out line 38
  });

  it('states the settings, with the k-point mesh from the input beside the output', () => {
    const run = read('si-alat.pw.out', 'si-alat.ph.out').runs[0];
    const s = Object.fromEntries(run.settings.map((x) => [x.name, x.value]));
    expect(s.functional).toBe('SLA PZ NOGX NOGC');
    expect(s.cutoff).toBe('14 Ry (density 56 Ry)');
    expect(s.pseudopotentials).toMatch(/^Si\.pz-vbc\.UPF \(MD5 a974d1b8/);
    expect(s['k-points']).toBe('mesh 4×4×4, offset 1 1 1');
    expect(run.program).toBe('Quantum ESPRESSO 6.7MaX (pw.x, ph.x)');
  });

  it('pairs ph.x with pw.x by the save folder, in any order, and reports the unpaired and failed ones', () => {
    const names = ['si-unconverged.pw.out', 'si-angstrom.ph.out', 'si-alat.pw.out', 'si-kmesh-2.ph.out', 'si-angstrom.pw.out', 'si-alat.ph.out', 'si-kmesh-2.pw.out'];
    const { readings } = read(...names);
    const ok = readings.flatMap((r) => (r.ok ? [r.run.file.split('/').pop()] : []));
    expect(ok.sort()).toEqual(['si-alat.ph.out', 'si-angstrom.ph.out', 'si-kmesh-2.ph.out']);
    const bad = readings.flatMap((r) => (r.ok ? [] : [r.unusable]));
    expect(bad).toHaveLength(1);
    expect(bad[0].status).toBe('unconverged');
    expect(bad[0].reason).toMatch(/did not converge in 2 iterations/);
    // ph.x without its pw.x, and pw.x without a ph.x
    const lone = read('si-alat.ph.out', 'si-angstrom.pw.out').readings.map((r) => (r.ok ? 'ok' : r.unusable.reason));
    expect(lone.join('\n')).toMatch(/pw\.x output of this run was not given/);
    expect(lone.join('\n')).toMatch(/no ph\.x output given/);
  });

  it('refuses a ph.x output whose structure is not that of the pw.x run it names', () => {
    const tmp = scratch();
    copyFileSync(join(dir, 'si-alat.pw.out'), join(tmp, 'a.pw.out'));
    // the stretched cell's ph.x output, made to name si-alat's save folder
    writeFileSync(join(tmp, 'b.ph.out'), readFileSync(join(dir, 'si-angstrom.ph.out'), 'utf8').replace('./tmp/si-angstrom.save/', './tmp/si-alat.save/'));
    const r = read(join(tmp, 'a.pw.out'), join(tmp, 'b.ph.out')).readings;
    expect(r).toHaveLength(1);
    expect(r[0].ok).toBe(false);
    if (!r[0].ok) expect(r[0].unusable.reason).toMatch(/structure is not the one in a\.pw\.out/);
  });

  it('reports a ph.x output cut short, and a damaged tensor as an error naming the file and line', () => {
    const tmp = scratch();
    copyFileSync(join(dir, 'si-alat.pw.out'), join(tmp, 'si-alat.pw.out'));
    const ph = readFileSync(join(dir, 'si-alat.ph.out'), 'utf8').split('\n');
    writeFileSync(join(tmp, 'cut.ph.out'), ph.slice(0, 140).join('\n'));
    const cut = read(join(tmp, 'si-alat.pw.out'), join(tmp, 'cut.ph.out')).readings[0];
    expect(cut.ok === false && cut.unusable.status).toBe('unfinished');
    writeFileSync(join(tmp, 'bad.ph.out'), ph.map((l, i) => (i === 150 ? l.replace('13.636816049', '13.63x816049') : l)).join('\n'));
    const { errors, readings } = read(join(tmp, 'si-alat.pw.out'), join(tmp, 'bad.ph.out'));
    expect(readings).toHaveLength(0); // the pw.x output belongs to the failed pair: reported with it
    expect(errors).toHaveLength(1);
    expect(errors[0][1].message).toMatch(/bad\.ph\.out, line 151: row 2 of the dielectric tensor/);
  });
});
