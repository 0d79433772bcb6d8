// Quantum ESPRESSO on a molecule in a periodic box (test/fixtures/dft/qe-molecule, made by make-fixtures.sh
// qe-molecule with Debian's pw.x/ph.x 6.7: H2 in a 12 bohr cube, Γ only, with and without assume_isolated = 'mt').
// QE prints no polarisability of the isolated molecule: ph.x's ε∞ is the periodic box's, and the "Polarizability"
// block it prints is the box's Clausius–Mossotti polarisability — checked here against the printed numbers. collect
// keeps such a run as a periodic ε frame and says so, with what to do; a crystal gets no such note.
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { collectedFrames, collectRuns } from '../../../src-main/app/collect-references.ts';
import { convertTensor } from '../../../src-main/core/dielectric/clausius-mossotti.ts';
import { cellVolume } from '../../../src-main/core/geometry/cell.ts';
import { BOX_VACUUM_A } from '../../../src-main/io/dft/quantum-espresso.ts';
import { cli } from '../../cli/run-cli.ts';

const dir = join(__dirname, '../../fixtures/dft/qe-molecule');
const si = join(__dirname, '../../fixtures/dft/qe');

/** The "Polarizability (A^3)" block ph.x prints (right-hand three columns), row-major, read independently of the reader. */
function printedPolarizabilityA3(file: string): number[] {
  const lines = readFileSync(file, 'utf8').split('\n');
  const at = lines.findIndex((l) => /Polarizability \(a\.u\.\)\^3\s+Polarizability \(A\^3\)/.test(l));
  expect(at, `no Polarizability block in ${file}`).toBeGreaterThan(-1);
  return lines.slice(at + 1, at + 4).flatMap((l) => l.trim().split(/\s+/).slice(3).map(Number));
}

describe('Quantum ESPRESSO, a molecule in a periodic box', () => {
  it('is kept as a periodic ε frame with a note: the box\'s dielectric tensor, not the molecule\'s polarisability in vacuum', async () => {
    const r = await collectRuns([dir]);
    expect(r.runs.map((x) => x.file.split('/').pop())).toEqual(['h2-box-mt.ph.out', 'h2-box.ph.out']);
    for (const run of r.runs) {
      expect(run.kind).toBe('eps');
      expect(run.frame.cell).not.toBeNull();
      expect(run.frame.pbc).toEqual([true, true, true]);
    }
    expect(r.notes.map((n) => n.file.split('/').pop())).toEqual(['h2-box-mt.ph.out', 'h2-box.ph.out']);
    for (const n of r.notes) {
      expect(n.text).toMatch(/dielectric tensor of the periodic box/);
      expect(n.text).toMatch(/not the molecule's polarisability in vacuum/);
      expect(n.text).toMatch(/CP2K with PERIODIC NONE in &CELL and &POISSON, which collect reads as alpha_mol_A3/);
    }
    // assume_isolated is named where pw.x printed it; without it, the vacuum around the molecule gives it away
    // (12 bohr = 6.35 Å box, H–H 0.74 Å: 5.6 Å between periodic copies > BOX_VACUUM_A)
    expect(r.notes[0].text).toMatch(/pw\.x says "Assuming isolated system, Martyna-Tuckerman method" \(line 48\)/);
    expect(r.notes[1].text).toMatch(new RegExp(`no atom lies within ${BOX_VACUUM_A} Å of a periodic copy`));
    // the frames are written as periodic ε frames (eps_inf with a Lattice)
    const frames = collectedFrames(r);
    expect(frames[1].info.eps_inf).toBeDefined();
    expect(frames[1].info.alpha_mol_A3).toBeUndefined();
  });

  it('the "Polarizability" ph.x prints is the box\'s Clausius–Mossotti α_CM from its ε∞ and volume, not (ε − 1)Ω/4π', async () => {
    const r = await collectRuns([dir]);
    for (const run of r.runs) {
      const printed = printedPolarizabilityA3(run.file);
      const V = cellVolume(run.frame.cell!);
      const cm = convertTensor(run.tensor, 'eps', 'alpha-cm', V);
      const ac = convertTensor(run.tensor, 'eps', 'alpha-c', V);
      // printed to 4 decimals (e.g. 1.0593 Å³ for H2 along its axis in h2-box.ph.out)
      for (const k of [0, 4, 8]) {
        expect(Math.abs(cm[k] - printed[k])).toBeLessThan(6e-5);
        expect(Math.abs(ac[k] - printed[k]) / printed[k]).toBeGreaterThan(0.01);
      }
    }
  });

  it('a crystal (diamond Si, 2 atoms, 4×4×4 k mesh) gets no such note', async () => {
    const r = await collectRuns([join(si, 'si-alat.ph.out'), join(si, 'si-alat.pw.out'), join(si, 'si-alat.pw.in')]);
    expect(r.runs).toHaveLength(1);
    expect(r.notes).toEqual([]);
  });

  it('the command says it', async () => {
    const out = mkdtempSync(join(tmpdir(), 'pw-qe-molecule-'));
    const res = await cli('collect', dir, '-o', join(out, 'h2.extxyz'));
    rmSync(out, { recursive: true, force: true });
    expect(res.code, res.err).toBe(0);
    expect(res.out).toMatch(/note: .*h2-box\.ph\.out: a molecule or cluster in a periodic box/);
  });
});
