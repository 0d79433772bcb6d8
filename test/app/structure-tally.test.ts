// `polarweave inspect` and the window's Data view summarise a file with one tally: the same figures, a test says so.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { summariseFile } from '../../src-main/app/file-summary.ts';
import { summariseDataset } from '../../src-main/app/dataset-summary.ts';
import { parseExtxyz } from '../../src-main/io/extxyz.ts';
import { cli } from '../cli/run-cli.ts';

const WATER = new URL('../fixtures/water-dft-sample.extxyz', import.meta.url).pathname; // a copy of the shared DFT sample

describe('one structure summary for inspect and the Data view', () => {
  it('gives the same frames, atoms, species, volumes and tensor ranges on the DFT water sample', async () => {
    const file = await summariseFile(WATER);
    const data = summariseDataset('d1', 'water', parseExtxyz(readFileSync(WATER, 'utf8'), WATER), 'file');
    expect(data.frames).toBe(file.frames);
    expect(data.atoms).toEqual(file.atoms.toJSON());
    expect(data.volumeA3).toEqual(file.volumeA3.toJSON());
    expect(data.species).toEqual([...file.species].map(([symbol, n]) => ({ symbol, perFrame: n / file.frames })).sort((a, b) => a.symbol.localeCompare(b.symbol)));
    expect(data.tensorKeys.map((t) => t.key)).toEqual([...file.tensors.keys()].sort());
    for (const t of data.tensorKeys) expect(t.isoRange).toEqual(file.tensors.get(t.key)!.isotropic.toJSON());
    // 7.830199 Å cubic cell (the sample's Lattice): V = a³
    expect(file.volumeA3.min).toBeCloseTo(7.830199 ** 3, 6);
    expect(data.firstCell!.a).toBeCloseTo(7.830199, 9);
  });

  it('inspect --json prints the figures the Data view shows', async () => {
    const r = await cli('inspect', WATER, '--json');
    expect(r.code, r.err).toBe(0);
    const j = JSON.parse(r.out);
    const data = summariseDataset('d1', 'water', parseExtxyz(readFileSync(WATER, 'utf8'), WATER), 'file');
    expect(j.volumeA3).toEqual(data.volumeA3);
    for (const t of data.tensorKeys) expect(j.tensors[t.key].isotropic).toEqual(t.isoRange);
  });

  it('counts a frame as periodic only with a cell periodic along a, b and c, in both', async () => {
    const text = ['2', 'Lattice="9 0 0 0 9 0 0 0 9" pbc="T T T" Properties=species:S:1:pos:R:3', 'O 0 0 0', 'H 0.96 0 0', '2', 'Lattice="9 0 0 0 9 0 0 0 9" pbc="T T F" Properties=species:S:1:pos:R:3', 'O 0 0 0', 'H 0.96 0 0', ''].join('\n');
    const frames = parseExtxyz(text, 'slab.extxyz');
    const data = summariseDataset('d2', 'slab', frames, 'upload');
    expect(data.periodic).toBe(false);
    expect(data.volumeA3).toEqual({ min: 729, max: 729 });
    expect(data.warnings.join(' ')).toMatch(/1 of 2 frames have no periodic cell/);
  });
});
