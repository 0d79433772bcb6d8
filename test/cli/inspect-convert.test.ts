import { mkdtempSync, readFileSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseExtxyz } from '../../src-main/io/extxyz.ts';
import { parseCsv } from '../../src-main/io/csv.ts';
import { cli } from './run-cli.ts';
import { scratchFolders } from '../helpers/scratch.ts';

const water = join(__dirname, '../fixtures/water-dft-sample.extxyz');
const tmp = scratchFolders('pw-cli-');

describe('polarweave inspect', () => {
  it('summarises the DFT water frames', async () => {
    const r = await cli('inspect', water);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/frames\s+8\b/);
    expect(r.out).toMatch(/atoms\s+48 per frame/);
    expect(r.out).toMatch(/O 16, H 32/);
    expect(r.out).toMatch(/tensor\s+alpha_periodic_A3: 8 frames/);
    expect(r.out).toMatch(/tensor\s+eps_inf: 8 frames.*use --as eps/);
    // 7.83 Å cubic cell (data README): V = 7.83³ ≈ 480 Å³
    const m = /volume ([\d.]+)/.exec(r.out);
    expect(Number(m?.[1])).toBeCloseTo(7.83 ** 3, -1);
  });

  it('says which file and line when a file is broken', async () => {
    const dir = tmp();
    const bad = join(dir, 'bad.extxyz');
    writeFileSync(bad, '3\nLattice="5 0 0 0 5 0 0 0 5"\nO 0 0 0\nH 1 0 x\nH 0 1 0\n');
    const r = await cli('inspect', bad);
    expect(r.code).toBe(1);
    expect(r.err).toContain('bad.extxyz');
    expect(r.err).toMatch(/line 4/);
  });

  it('--help lists the options, unknown options are errors', async () => {
    expect((await cli('inspect', '--help')).out).toMatch(/--json/);
    const r = await cli('inspect', water, '--jsn');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/unknown option --jsn/);
  });
});

describe('polarweave convert', () => {
  it('α_c → ε reproduces the file\'s own ε = I + 4πα/V (data README relation)', async () => {
    const dir = tmp();
    const out = join(dir, 'eps.extxyz');
    const r = await cli('convert', water, '--tensor', 'alpha_periodic_A3', '--as', 'alpha-c', '--to', 'eps', '-o', out);
    expect(r.code, r.err).toBe(0);
    const frames = parseExtxyz(readFileSync(out, 'utf8'), out);
    expect(frames).toHaveLength(8);
    for (const f of frames) {
      const mine = f.info.eps_converted as number[];
      const theirs = f.info.eps_inf as number[];
      for (let k = 0; k < 9; k++) expect(mine[k]).toBeCloseTo(theirs[k], 5);
    }
  });

  it('ε → α_CM per molecule is about 1.12 Å³ (data README) and round-trips back', async () => {
    const dir = tmp();
    const out = join(dir, 'cm.extxyz');
    expect((await cli('convert', water, '--tensor', 'eps_inf', '--as', 'eps', '--to', 'alpha-cm', '-o', out)).code).toBe(0);
    const frames = parseExtxyz(readFileSync(out, 'utf8'), out);
    for (const f of frames) {
      const a = f.info.alpha_cm_A3 as number[];
      const perMolecule = (a[0] + a[4] + a[8]) / 3 / 16;
      expect(perMolecule).toBeGreaterThan(1.05);
      expect(perMolecule).toBeLessThan(1.2);
    }
    const back = join(dir, 'back.extxyz');
    expect((await cli('convert', out, '--tensor', 'alpha_cm_A3', '--as', 'alpha-cm', '--to', 'eps', '-o', back)).code).toBe(0);
    for (const f of parseExtxyz(readFileSync(back, 'utf8'), back)) {
      const e = f.info.eps_converted as number[];
      const ref = f.info.eps_inf as number[];
      for (let k = 0; k < 9; k++) expect(Math.abs(e[k] - ref[k])).toBeLessThan(1e-12);
    }
  });

  it('bohr³ output uses the CODATA 2018 bohr (1 bohr³ = 0.148184711472 Å³)', async () => {
    const dir = tmp();
    const a3 = join(dir, 'a3.extxyz');
    const b3 = join(dir, 'b3.extxyz');
    await cli('convert', water, '--tensor', 'eps_inf', '--as', 'eps', '--to', 'alpha-c', '-o', a3);
    await cli('convert', water, '--tensor', 'eps_inf', '--as', 'eps', '--to', 'alpha-c', '--out-units', 'bohr3', '-o', b3);
    const fa = parseExtxyz(readFileSync(a3, 'utf8'), a3)[0].info.alpha_c_A3 as number[];
    const fb = parseExtxyz(readFileSync(b3, 'utf8'), b3)[0].info.alpha_c_bohr3 as number[];
    expect(fb[0] * 0.148184711472).toBeCloseTo(fa[0], 9);
  });

  it('writes a CSV table with ε, α_CM and refractive indices', async () => {
    const dir = tmp();
    const out = join(dir, 'eps.csv');
    const r = await cli('convert', water, '--tensor', 'eps_inf', '--as', 'eps', '--to', 'eps', '-o', out);
    expect(r.code, r.err).toBe(0);
    const t = parseCsv(readFileSync(out, 'utf8'), out);
    expect(t.records).toHaveLength(8);
    const n = t.numbers(t.columns.find((c: string) => /^n_1/.test(c)) as string);
    // ε∞ ≈ 1.55 for this small basis (data README): n ≈ 1.245
    for (const v of n) expect(v).toBeGreaterThan(1.15);
    for (const v of n) expect(v).toBeLessThan(1.35);
  });

  it('a missing key names the frame and lists the keys that exist; no output is left behind', async () => {
    const dir = tmp();
    const out = join(dir, 'x.extxyz');
    const r = await cli('convert', water, '--tensor', 'nope', '--as', 'eps', '--to', 'alpha-cm', '-o', out);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/frame 0/);
    expect(r.err).toMatch(/eps_inf/);
    expect(existsSync(out)).toBe(false);
  });

  it('the polarisation catastrophe is a clear error, not NaN', async () => {
    const dir = tmp();
    const f = join(dir, 'cat.extxyz');
    // α_CM with 4πα/3V = 1.2 > 1 on every axis: no finite ε exists.
    const V = 1000;
    const a = (1.2 * 3 * V) / (4 * Math.PI);
    writeFileSync(f, `1\nLattice="10 0 0 0 10 0 0 0 10" acm="${a} 0 0 0 ${a} 0 0 0 ${a}"\nAr 0 0 0\n`);
    const r = await cli('convert', f, '--tensor', 'acm', '--as', 'alpha-cm', '--to', 'eps', '-o', join(dir, 'o.extxyz'));
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/catastrophe/i);
  });
});
