// `train`, `validate` and `predict` on frames without a cell (clusters cut from the invented demo liquid and
// labelled by its dipole model in vacuum), alone and mixed with periodic frames, through the command line.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../../src-main/cli/main.ts';
import { formatExtxyzFrame, parseExtxyz } from '../../src-main/io/extxyz.ts';
import { readAllStructures } from '../../src-main/io/read-structures.ts';
import { BUNDLED_DEMO_DIR } from '../../src-main/demo/run-demo.ts';
import { CLUSTER_KEY, demoClusters } from '../../src-main/demo/clusters.ts';
import { parseCsv } from '../../src-main/io/csv.ts';

let dir: string;
const FAST = ['--radial-functions', '4', '--angular-order', '3'];

async function cli(argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await runCli(argv, { out: (t) => (out += t), err: (t) => (err += t), signal: new AbortController().signal });
  return { code, out, err };
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'pw-isolated-cli-'));
  const liquid = (await readAllStructures(join(BUNDLED_DEMO_DIR, 'liquid.extxyz.gz'))).filter((_, i) => i % 40 === 0);
  const clusters = demoClusters(liquid.slice(0, 3), { sizes: [1, 2, 3, 4], perSize: 3, seed: 3 });
  writeFileSync(join(dir, 'clusters.extxyz'), clusters.map(formatExtxyzFrame).join(''));
  writeFileSync(join(dir, 'mixed.extxyz'), [...clusters, ...liquid.slice(3, 6)].map(formatExtxyzFrame).join(''));
}, 60_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('frames without a cell on the command line', () => {
  it('the clusters are written without a Lattice and read back as isolated frames', () => {
    const back = parseExtxyz(readFileSync(join(dir, 'clusters.extxyz'), 'utf8'), 'clusters.extxyz');
    expect(back[0].cell).toBeNull();
    expect(back[0].pbc).toEqual([false, false, false]);
  });

  it('train --as alpha-mol, validate (route direct skipped) and predict: α in the table, ε, n and Δn empty', async () => {
    const clusters = join(dir, 'clusters.extxyz');
    const model = join(dir, 'clusters.json');
    const t = await cli(['train', clusters, '--tensor', CLUSTER_KEY, '--as', 'alpha-mol', ...FAST, '-o', model]);
    expect(t.err).not.toMatch(/error/i);
    expect(t.code).toBe(0);
    expect(t.out).toMatch(/12 isolated frames/);

    const v = await cli(['validate', clusters, '--tensor', CLUSTER_KEY, '--as', 'alpha-mol', '--folds', '3', ...FAST]);
    expect(v.code).toBe(0);
    expect(v.out).toMatch(/route direct skipped/);
    expect(v.out).toMatch(/on alpha-mol \(Å³\) \(12 frames\)/);
    expect(v.out).not.toMatch(/on ε/);

    const csv = join(dir, 'p.csv');
    const p = await cli(['predict', model, clusters, '-o', csv]);
    expect(p.code).toBe(0);
    const text = readFileSync(csv, 'utf8');
    expect(text).toMatch(/not defined for a lone molecule/);
    const table = parseCsv(text, 'p.csv');
    expect(table.text('eps_iso').every((x) => x === '')).toBe(true);
    expect(table.text('dn').every((x) => x === '')).toBe(true);
    expect(table.text('volume_A3').every((x) => x === '')).toBe(true);
    const alpha = table.numbers('alpha_cm_xx_A3');
    // a monomer of the invented molecule: about the sum of its point polarisabilities (B 1.1, N 1.05, 2 × Cl 2.3 Å³)
    expect(alpha[0]).toBeGreaterThan(5);
    expect(alpha[0]).toBeLessThan(12);

    // analyse reads a table of isolated frames on its α series (no ε), and refuses one mixing them with periodic rows
    const a = await cli(['analyse', csv, '-o', join(dir, 'a.csv')]);
    expect(a.err).not.toMatch(/error/i);
    expect(a.code).toBe(0);
    // the α of a table of isolated frames is the molecule's polarisability in vacuum, not a cell's α_CM
    expect(a.out).toMatch(/mean α of the molecule or cluster in vacuum \(Å³\)/);
    expect(a.out).not.toMatch(/α_CM/);
    expect(readFileSync(join(dir, 'a.csv'), 'utf8')).toMatch(/\nmean,alpha_mol,iso,/);
    // the same from the extended XYZ output (pred_alpha_mol_A3 and the per-atom local tensors), on the three
    // monomers (per-species sums need the same atoms in every frame)
    const xyz = join(dir, 'p3.extxyz');
    const csv3 = join(dir, 'p3.csv');
    expect((await cli(['predict', model, clusters, '--frames', '0:3', '-o', xyz])).code).toBe(0);
    expect((await cli(['predict', model, clusters, '--frames', '0:3', '-o', csv3])).code).toBe(0);
    const ax = await cli(['analyse', xyz]);
    expect(ax.err).not.toMatch(/error/i);
    expect(ax.code).toBe(0);
    expect(ax.out).toMatch(/mean α of the molecule or cluster in vacuum \(Å³\)/);
    expect(ax.out).toMatch(/per-species contributions to α \(in vacuum\) \(Å³\)/);
    expect(ax.out).not.toMatch(/α_CM/);
    const ac = await cli(['analyse', csv3]);
    expect(ac.code).toBe(0);
    // the extended XYZ file and the table give the same mean α
    const isoOf = (out: string) => /mean α of the molecule[^\n]*\n(?:.*\n){6}\s+iso\s+(\S+)/.exec(out)![1];
    expect(isoOf(ax.out)).toBe(isoOf(ac.out));
    const lines = text.split('\n');
    const header = lines.findIndex((l) => l.startsWith('frame,'));
    const periodicRow = lines[header + 1].split(',').map((f, k) => (k >= 2 && k <= 17 ? (k === 2 ? '1000' : '1.5') : f)).join(',');
    writeFileSync(join(dir, 'mixed.csv'), [...lines.slice(0, header + 2), periodicRow, ...lines.slice(header + 2)].join('\n'));
    const m = await cli(['analyse', join(dir, 'mixed.csv'), '-o', join(dir, 'm.csv')]);
    expect(m.code).not.toBe(0);
    expect(m.err).toMatch(/without a periodic cell/);
  }, 120_000);

  it('a mixed set trains with --isolated-tensor, and says it is needed when missing', async () => {
    const mixed = join(dir, 'mixed.extxyz');
    const missing = await cli(['train', mixed, '--tensor', 'eps_ref', '--as', 'eps', ...FAST, '-o', join(dir, 'x.json')]);
    expect(missing.code).not.toBe(0);
    expect(missing.err).toMatch(/--isolated-tensor/);
    const v = await cli(['validate', mixed, '--tensor', 'eps_ref', '--as', 'eps', '--isolated-tensor', CLUSTER_KEY, '--folds', '3', ...FAST]);
    expect(v.err).not.toMatch(/error/i);
    expect(v.code).toBe(0);
    expect(v.out).toMatch(/on ε, periodic frames \(3 frames\)/);
    expect(v.out).toMatch(/on alpha-mol \(Å³\), isolated frames \(12 frames\)/);
    expect(v.out).toMatch(/every frame weighs 1/);
  }, 120_000);
});
