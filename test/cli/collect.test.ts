import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseExtxyz } from '../../src-main/io/extxyz.ts';
import { cellVolume } from '../../src-main/core/geometry/cell.ts';
import { cli } from './run-cli.ts';
import { scratchFolders } from '../helpers/scratch.ts';

const qe = join(__dirname, '../fixtures/dft/qe');
const cp2k = join(__dirname, '../fixtures/dft/cp2k');
const tmp = scratchFolders('pw-cli-collect-');

describe('polarweave collect', () => {
  it('--help says what each code gives and in which units', async () => {
    const r = await cli('collect', '--help');
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/Usage: polarweave collect RUN\.\.\. -o OUT\.extxyz/);
    expect(r.out).toMatch(/alpha_c_A3: the conducting-boundary cell polarisability α_c in Å³/);
    expect(r.out).toMatch(/eps_inf:\s+the optical dielectric tensor ε∞/);
    expect((await cli('--help')).out).toMatch(/collect\s+gather finished DFT/);
  });

  it('collects a folder, prints the settings kept and the runs left out, and the file reads back', async () => {
    const out = join(tmp(), 'refs.extxyz');
    const r = await cli('collect', qe, '-o', out);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/collected 2 runs into .*refs\.extxyz: eps_inf \(ε∞, dimensionless\), Quantum ESPRESSO 6\.7MaX/);
    expect(r.out).toMatch(/k-points: mesh 4×4×4, offset 1 1 1/);
    expect(r.err).toMatch(/left out 2 runs:\n.*si-kmesh-2\.ph\.out: different settings: k-points mesh 2×2×2.*\n.*si-unconverged\.pw\.out: did not converge/);
    const frames = parseExtxyz(readFileSync(out, 'utf8'), out);
    expect(frames.map((f) => f.info.dft_run)).toEqual(['si-alat.ph.out', 'si-angstrom.ph.out']);
    expect(frames[0].info.eps_inf).toEqual([13.636816049, 0, 0, 0, 13.636816049, 0, 0, 0, 13.636816049]);
  });

  it('the collected file goes straight into convert: α_c ↔ ε through the cell volume', async () => {
    const dir = tmp();
    const refs = join(dir, 'water.extxyz');
    expect((await cli('collect', join(cp2k, 'water-a.out'), join(cp2k, 'water-b.out'), '-o', refs)).code).toBe(0);
    const eps = join(dir, 'eps.extxyz');
    const c = await cli('convert', refs, '--tensor', 'alpha_c_A3', '--as', 'alpha-c', '--to', 'eps', '-o', eps);
    expect(c.code).toBe(0);
    for (const f of parseExtxyz(readFileSync(eps, 'utf8'), eps)) {
      const a = f.info.alpha_c_A3 as number[];
      const e = f.info.eps_converted as number[];
      const V = cellVolume(f.cell!);
      a.forEach((v, i) => expect(e[i]).toBeCloseTo((i % 4 === 0 ? 1 : 0) + (4 * Math.PI * v) / V, 12));
    }
  });

  it('exit 1 with the reasons when nothing can be collected; usage errors exit 2', async () => {
    const out = join(tmp(), 'none.extxyz');
    const r = await cli('collect', join(cp2k, 'water-unconverged.out'), '-o', out);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/no run could be collected/);
    expect((await cli('collect', join(cp2k, 'water-a.out'))).code).toBe(2);
    expect((await cli('collect', join(cp2k, 'water-a.out'), '-o', 'x.csv')).err).toMatch(/must be extended XYZ/);
  });
});
