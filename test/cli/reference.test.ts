// Tests of `polarweave reference` through runCli: analytic outside checks (two undamped atoms, the cubic-lattice
// Lorentz field), the keys written, and clear errors.
import { mkdtempSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { readAllStructures } from '../../src-main/io/read-structures.ts';
import { cli } from './run-cli.ts';
import { scratchFolders } from '../helpers/scratch.ts';

const tmp = scratchFolders('pw-ref-');

describe('polarweave reference', () => {
  it('open pair: α∥ = 2α/(1 − 2α/r³), α⊥ = 2α/(1 + α/r³) (standard textbook result); cubic lattice: α_CM = α', async () => {
    const dir = tmp();
    const input = join(dir, 'in.extxyz');
    // frame 1: two Ar atoms 3 Å apart along z, open; frame 2: one Ar atom in a 3.5 Å simple cubic cell.
    writeFileSync(input, '2\nProperties=species:S:1:pos:R:3\nAr 0 0 0\nAr 0 0 3\n1\nLattice="3.5 0 0 0 3.5 0 0 0 3.5" pbc="T T T"\nAr 0 0 0\n');
    const out = join(dir, 'out.extxyz.gz');
    const r = await cli('reference', input, '--polarisabilities', 'Ar=1.6', '--thole', 'none', '-o', out, '--per-atom');
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/2 frames/);
    const frames = await readAllStructures(out);
    const pair = frames[0].info.dipole_alpha_A3 as number[];
    const x = 1.6 / 27;
    expect(pair[8]).toBeCloseTo(3.2 / (1 - 2 * x), 9);
    expect(pair[0]).toBeCloseTo(3.2 / (1 + x), 9);
    // Lorentz local field of a cubic lattice (textbook): α_CM equals the point polarisability exactly.
    const cm = frames[1].info.dipole_alpha_cm_A3 as number[];
    expect(cm[0]).toBeCloseTo(1.6, 7);
    expect(cm[4]).toBeCloseTo(1.6, 7);
    const eps = frames[1].info.dipole_eps as number[];
    const X = (4 * Math.PI * 1.6) / (3 * 3.5 ** 3);
    expect(eps[8]).toBeCloseTo((1 + 2 * X) / (1 - X), 7); // Clausius–Mossotti
    expect(frames[1].arrays.dipole_atom_alpha_cm_A3.width).toBe(9);
    expect(String(frames[1].info.dipole_model)).toMatch(/baseline/);
  });

  it('says which element and frame lack a polarisability, and writes nothing', async () => {
    const dir = tmp();
    const input = join(dir, 'in.extxyz');
    writeFileSync(input, '2\nProperties=species:S:1:pos:R:3\nO 0 0 0\nH 0 0 1\n');
    const out = join(dir, 'out.extxyz');
    const r = await cli('reference', input, '-p', 'O=1.2', '-o', out);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/element H/);
    expect(r.err).toMatch(/in\.extxyz/);
    expect(existsSync(out)).toBe(false);
    const bad = await cli('reference', input, '-p', 'O=1.2,H=x', '-o', out);
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/positive number/);
    const noP = await cli('reference', input, '-o', out);
    expect(noP.code).toBe(2);
    expect(noP.err).toMatch(/--polarisabilities/);
  });
});
