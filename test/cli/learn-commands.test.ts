import { copyFileSync, existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../../src-main/cli/main.ts';
import { parseExtxyz, writeExtxyz } from '../../src-main/io/extxyz.ts';

let dir: string;
const data = () => join(dir, 'water.extxyz');
const FAST = ['--radial-functions', '4', '--angular-order', '3'];

async function cli(argv: string[], signal?: AbortSignal): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await runCli(argv, { out: (t) => (out += t), err: (t) => (err += t), signal: signal ?? new AbortController().signal });
  return { code, out, err };
}

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'pw-learn-cli-'));
  copyFileSync(new URL('../fixtures/water-dft-sample.extxyz', import.meta.url), data());
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('polarweave train / predict / validate', () => {
  it('takes a species split (--species-split), keeps it in the model file, and refuses a malformed one', async () => {
    const model = join(dir, 'split.json');
    const t = await cli(['train', data(), '--tensor', 'eps_inf', '--as', 'eps', ...FAST, '--species-split', 'O:3,H:1', '-o', model]);
    expect(t.err).not.toMatch(/error/);
    expect(t.code).toBe(0);
    const { loadModel } = await import('../../src-main/io/model-file.ts');
    const m = await loadModel(model);
    expect(m.settings.speciesSplit).toEqual({ O: 3, H: 1 });
    expect(m.notes.join('\n')).toMatch(/species split: where the training compositions leave it open/);
    const bad = await cli(['train', data(), '--tensor', 'eps_inf', '--as', 'eps', ...FAST, '--species-split', 'O:3', '-o', join(dir, 'bad.json')]);
    expect(bad.code).not.toBe(0);
    expect(bad.err).toMatch(/--species-split: a species split needs at least two species/);
  }, 120_000);

  it('trains, then predicts to CSV and to extended XYZ', async () => {
    const model = join(dir, 'm.json');
    const t = await cli(['train', data(), '--tensor', 'alpha_periodic_A3', '--as', 'alpha-c', ...FAST, '-o', model]);
    expect(t.err).not.toMatch(/error/);
    expect(t.code).toBe(0);
    expect(t.out).toMatch(/trained on 8 frames, 384 atoms/);
    expect(t.out).toMatch(/λ=2: linear/);
    expect(existsSync(model)).toBe(true);

    const csv = join(dir, 'p.csv');
    const p = await cli(['predict', model, data(), '--frames', '2:8', '--stride', '2', '-o', csv]);
    expect(p.code).toBe(0);
    expect(p.out).toMatch(/3 frames predicted/);
    const lines = readFileSync(csv, 'utf8').trim().split('\n');
    expect(lines[0]).toMatch(/^# Polarweave predicted dielectric tensors/);
    expect(lines.some((l) => /model estimates/.test(l))).toBe(true);
    const body = lines.filter((l) => !l.startsWith('#'));
    const header = body[0].split(',');
    expect(header.slice(0, 4)).toEqual(['frame', 'tag', 'volume_A3', 'eps_xx']);
    expect(header).toContain('outside');
    expect(header).toContain('alpha_cm_xx_A3');
    const rows = body.slice(1).map((l) => l.split(','));
    expect(rows.map((r) => r[0])).toEqual(['2', '4', '6']);
    expect(rows.map((r) => r[1])).toEqual(['sample-003', 'sample-005', 'sample-007']);
    const epsXX = Number(rows[0][header.indexOf('eps_xx')]);
    expect(epsXX).toBeGreaterThan(1.5);
    expect(epsXX).toBeLessThan(1.62);
    // the input carries the model's reference (alpha_periodic_A3 as α_c): beside the prediction as ε, with the
    // difference. Check value: the same DFT run's own ε∞ (the file's eps_inf key, frame 2), from the code's output.
    const ref = (c: string) => Number(rows[0][header.indexOf(c)]);
    expect(header).toEqual(expect.arrayContaining(['eps_ref_xx', 'eps_ref_yz', 'eps_ref_iso', 'eps_iso_diff', 'eps_aniso_diff']));
    const epsInf = parseExtxyz(readFileSync(data(), 'utf8'), 'w').map((f) => f.info.eps_inf as number[])[2];
    expect(ref('eps_ref_xx')).toBeCloseTo(epsInf[0], 4);
    expect(ref('eps_ref_yz')).toBeCloseTo(epsInf[5], 4);
    expect(ref('eps_iso_diff')).toBeCloseTo(ref('eps_iso') - ref('eps_ref_iso'), 9);
    expect(ref('eps_aniso_diff')).toBeGreaterThanOrEqual(0);

    const xyz = join(dir, 'p.extxyz');
    const q = await cli(['predict', model, data(), '--frames', ':2', '-o', xyz]);
    expect(q.code).toBe(0);
    const back = parseExtxyz(readFileSync(xyz, 'utf8'), 'p.extxyz');
    expect(back.length).toBe(2);
    expect((back[0].info.pred_eps as number[]).length).toBe(9);
    expect(back[0].arrays.local_alpha_cm_A3.width).toBe(9);
    expect(new Set(back[0].arrays.molecule.data as Int32Array).size).toBe(16);
    // the per-atom local tensors sum to the frame's α_CM
    const local = back[0].arrays.local_alpha_cm_A3.data as Float64Array;
    let xx = 0;
    for (let i = 0; i < 48; i++) xx += local[i * 9];
    expect(xx).toBeCloseTo((back[0].info.pred_alpha_cm_A3 as number[])[0], 6);
  }, 120_000);

  it('validates both routes and says whether the model is good', async () => {
    const v = await cli(['validate', data(), '--tensor', 'eps_inf', '--as', 'eps', '--folds', '4', '--learning-curve', '3,20', ...FAST]);
    expect(v.code).toBe(0);
    expect(v.out).toMatch(/route cm: 4-fold cross-validation over 8 frames/);
    expect(v.out).toMatch(/route direct:/);
    expect(v.out).toMatch(/isotropic \(tr\/3\): +RMSE [0-9.e-]+ +[0-9.]+ % of the spread/);
    expect(v.out).toMatch(/anisotropic \(anisotropy\): RMSE [0-9.e-]+ +[0-9.]+ % of the spread/);
    expect(v.out).toMatch(/verdict \(rule of thumb, on ε over all frames\): (good|usable|poor)/);
    expect(v.out).toMatch(/learning curve, 3 training frames \(mean ± spread of 3 random splits\)/);
    expect(v.out).toMatch(/learning curve: (Still falling|Flat|Not falling|Too few)/);
    expect(v.out).toMatch(/learning curve, 3 training frames/);
    expect(v.out).toMatch(/sizes skipped.*20/);
    expect(v.out).toMatch(/comparison on ε: route (cm|direct)/);
  }, 180_000);

  it('trains and predicts a vector (dipole-like) target to CSV', async () => {
    // an invented per-frame 3-vector (built from the off-diagonal of ε, only to exercise the λ=1 path)
    const frames = parseExtxyz(readFileSync(data(), 'utf8'), 'water.extxyz');
    for (const f of frames) {
      const e = f.info.eps_inf as number[];
      f.info.dipole = [100 * e[5], 100 * e[2], 100 * e[1]];
    }
    const file = join(dir, 'dipole.extxyz');
    await writeExtxyz(file, frames);
    const model = join(dir, 'dip.json');
    const t = await cli(['train', file, '--tensor', 'dipole', '--as', 'eps', ...FAST, '-o', model]);
    expect(t.code).toBe(0);
    expect(t.out).toMatch(/learns vector/);
    expect(t.out).toMatch(/λ=1: linear/);
    const csv = join(dir, 'dip.csv');
    expect((await cli(['predict', model, file, '-o', csv])).code).toBe(0);
    const lines = readFileSync(csv, 'utf8').trim().split('\n').filter((l) => !l.startsWith('#'));
    expect(lines[0].split(',').slice(0, 5)).toEqual(['frame', 'tag', 'value_x', 'value_y', 'value_z']);
    expect(lines.length).toBe(9);
    const row = lines[1].split(',');
    for (const k of [2, 3, 4]) expect(Number.isFinite(Number(row[k]))).toBe(true);
    const x = await cli(['predict', model, file, '-o', join(dir, 'dip.extxyz')]);
    expect(x.code).toBe(2);
    expect(x.err).toMatch(/extended XYZ output is for tensor models/);
  }, 120_000);

  it('validates a dipole and a scalar target without --as, and trains them without it', async () => {
    // Invented additive targets on the real DFT geometries (not measured quantities): a dipole of point charges
    // +0.4 e on each H relative to its O (Σ over molecules of 0.4 (r_H1 + r_H2 − 2 r_O), in e·Å), and a scalar
    // sum over O–O pairs of exp(−(d − 2.8 Å)²/0.1 Å²). Both are sums of local terms, so the model can learn them.
    const frames = parseExtxyz(readFileSync(data(), 'utf8'), 'water.extxyz');
    for (const f of frames) {
      const L = f.cell![0];
      const mi = (d: number) => d - L * Math.round(d / L);
      const vec = (i: number, j: number) => [0, 1, 2].map((k) => mi(f.positions[3 * j + k] - f.positions[3 * i + k]));
      const dip = [0, 0, 0];
      let pairs = 0;
      const n = f.species.length;
      for (let i = 0; i < n; i++) {
        if (f.species[i] !== 'O') continue;
        const hs = [...Array(n).keys()].filter((j) => f.species[j] === 'H').map((j) => vec(i, j)).sort((a, b) => Math.hypot(...a) - Math.hypot(...b));
        for (const v of hs.slice(0, 2)) for (let k = 0; k < 3; k++) dip[k] += 0.4 * v[k];
        for (let j = i + 1; j < n; j++) if (f.species[j] === 'O') pairs += Math.exp(-((Math.hypot(...vec(i, j)) - 2.8) ** 2) / 0.1);
      }
      f.info.cell_dipole = dip;
      f.info.oo_pairs = pairs;
    }
    const file = join(dir, 'values.extxyz');
    await writeExtxyz(file, frames);
    const v = await cli(['validate', file, '--tensor', 'cell_dipole', '--folds', '4', ...FAST]);
    expect(v.err).not.toMatch(/error/);
    expect(v.code).toBe(0);
    expect(v.out).toMatch(/vector "cell_dipole".*4-fold cross-validation over 8 frames/);
    const pct = Number(/RMSE [0-9.e-]+ +([\d.]+) % of the spread/.exec(v.out)?.[1]);
    const r2 = Number(/R² ([-\d.]+)/.exec(v.out)?.[1]);
    // observed when written: 12.8 % of the spread, R² 0.984 (a wrong component order or sign would give R² < 0)
    expect(pct).toBeLessThan(30);
    expect(r2).toBeGreaterThan(0.9);
    expect(v.out).toMatch(/verdict \(rule of thumb\): (good|usable with care)/);

    const s = await cli(['validate', file, '--tensor', 'oo_pairs', '--folds', '4', '--learning-curve', '2,6', ...FAST]);
    expect(s.code).toBe(0);
    expect(s.out).toMatch(/scalar "oo_pairs": 4-fold/);
    // observed when written: 136 % of the spread with 2 training frames, 62 % with 6 — more data must help
    const curve = [...s.out.matchAll(/learning curve, (\d+) training frames: error ([\d.]+) % of the spread/g)].map((m) => Number(m[2]));
    expect(curve).toHaveLength(2);
    expect(curve[1]).toBeLessThan(curve[0]);

    const t = await cli(['train', file, '--tensor', 'cell_dipole', ...FAST, '-o', join(dir, 'cd.json')]);
    expect(t.code).toBe(0);
    expect(t.out).toMatch(/learns vector/);
    // a tensor still needs --as
    const e = await cli(['validate', file, '--tensor', 'eps_inf', ...FAST]);
    expect(e.code).toBe(2);
    expect(e.err).toMatch(/--as eps\|alpha-c\|alpha-cm/);
  }, 240_000);

  it('reports usage errors with exit code 2 and bad data with exit code 1', async () => {
    const a = await cli(['train', data(), '--tensor', 'eps_inf', '-o', join(dir, 'x.json')]);
    expect(a.code).toBe(2);
    expect(a.err).toMatch(/--as eps\|alpha-c\|alpha-cm/);
    const b = await cli(['train', data(), '--tensor', 'missing_key', '--as', 'eps', '-o', join(dir, 'x.json')]);
    expect(b.code).toBe(1);
    expect(b.err).toMatch(/line 1, frame 0: no property "missing_key"/);
    const bad = join(dir, 'bad.json');
    writeFileSync(bad, '{"format":"polarweave-model","version":1');
    const c = await cli(['predict', bad, data(), '-o', join(dir, 'y.csv')]);
    expect(c.code).toBe(1);
    expect(c.err).toMatch(/not a model file/);
    expect(existsSync(join(dir, 'y.csv'))).toBe(false);
  });

  it('Ctrl-C stops cleanly and leaves no output file behind', async () => {
    const sub = mkdtempSync(join(dir, 'abort-'));
    copyFileSync(data(), join(sub, 'in.extxyz'));
    const c = new AbortController();
    c.abort();
    const r = await cli(['train', join(sub, 'in.extxyz'), '--tensor', 'eps_inf', '--as', 'eps', ...FAST, '-o', join(sub, 'm.json')], c.signal);
    expect(r.code).toBe(130);
    expect(readdirSync(sub)).toEqual(['in.extxyz']);
    // predict and validate stop the same way
    const model = join(sub, 'model.json');
    expect((await cli(['train', join(sub, 'in.extxyz'), '--tensor', 'eps_inf', '--as', 'eps', ...FAST, '--regularisation', '1e-6', '-o', model])).code).toBe(0);
    const p = await cli(['predict', model, join(sub, 'in.extxyz'), '-o', join(sub, 'out.csv')], c.signal);
    expect(p.code).toBe(130);
    expect(readdirSync(sub).sort()).toEqual(['in.extxyz', 'model.json']);
    const v = await cli(['validate', join(sub, 'in.extxyz'), '--tensor', 'eps_inf', '--as', 'eps', ...FAST], c.signal);
    expect(v.code).toBe(130);
  }, 60_000);
});
