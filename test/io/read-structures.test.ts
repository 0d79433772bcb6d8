// readStructures: the reader is chosen by file kind (.xyz/.extxyz/.cif, with or without .gz).
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { copyFileSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { gzipSync } from 'node:zlib';
import os from 'node:os';
import path from 'node:path';
import { InputError } from '../../src-main/core/errors.ts';
import { readAllStructures, readStructures, structureKind } from '../../src-main/io/read-structures.ts';

const WATER = '/work/shared/data/water-dft-sample.extxyz';
const NACL = path.join(import.meta.dirname, '../fixtures/io/nacl-fm3m.cif');
let dir: string;
beforeAll(() => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'pw-rs-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('readStructures', () => {
  it('knows the kinds by extension', () => {
    expect(['a.xyz', 'a.XYZ', 'b.extxyz', 'b.extxyz.gz', 'c.cif', 'c.cif.gz', 'd.pdb', 'e'].map(structureKind)).toEqual(['extxyz', 'extxyz', 'extxyz', 'extxyz', 'cif', 'cif', undefined, undefined]);
  });

  it('reads extended XYZ, gzip too, with a frame range', async () => {
    const gz = path.join(dir, 'w.xyz.gz');
    writeFileSync(gz, gzipSync(readFileSync(WATER)));
    expect((await readAllStructures(WATER)).length).toBe(8);
    const some = await readAllStructures(gz, { range: { start: 2, step: 3 } });
    expect(some.map((f) => f.source!.index)).toEqual([2, 5]);
  });

  it('reads CIF, gzip too', async () => {
    const gz = path.join(dir, 'n.cif.gz');
    writeFileSync(gz, gzipSync(readFileSync(NACL)));
    for (const p of [NACL, gz]) {
      const [f] = await readAllStructures(p);
      expect(f.species.length).toBe(8); // conventional rock-salt cell
    }
  });

  it('refuses unknown kinds and missing files with InputError', async () => {
    expect(() => readStructures(path.join(dir, 'x.pdb'))).toThrow(InputError);
    expect(() => readStructures(path.join(dir, 'x.pdb'))).toThrow(/\.xyz, \.extxyz/);
    const cif = path.join(dir, 'missing.cif');
    await expect(readAllStructures(cif)).rejects.toMatchObject({ name: 'InputError', problem: 'file not found' });
    const wrong = path.join(dir, 'really-xyz.cif');
    copyFileSync(WATER, wrong);
    await expect(readAllStructures(wrong)).rejects.toBeInstanceOf(InputError);
  });
});
