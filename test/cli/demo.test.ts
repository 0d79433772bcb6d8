// End-to-end test of `polarweave demo --quick` on the bundled invented data: exit code, the files written, and
// that the job did real work (the model learns the liquid and transfers to the crystal within loose bounds).
import { mkdtempSync, readFileSync, existsSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { parseCsv } from '../../src-main/io/csv.ts';
import { parseModel } from '../../src-main/io/model-file.ts';
import { cli } from './run-cli.ts';

const scratch = mkdtempSync(join(tmpdir(), 'pw-demo-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

describe('polarweave demo --quick', () => {
  it('runs the whole job and writes CSV, model, validation and summary', async () => {
    const dir = join(scratch, 'out');
    const r = await cli('demo', '--quick', '-o', dir);
    expect(r.code, r.err).toBe(0);
    for (const f of ['crystal-eps.csv', 'liquid-model.json', 'liquid-validation.json', 'summary.md', 'clusters.extxyz']) {
      expect(existsSync(join(dir, f)), f).toBe(true);
      expect(r.out).toContain(join(dir, f));
    }
    expect(r.out).toMatch(/model estimates/);
    const summary = readFileSync(join(dir, 'summary.md'), 'utf8');
    expect(summary).toMatch(/invented/i);
    expect(summary).toMatch(/model estimates/);
    // the liquid's three state points: the within-state figure leads, then each state point, then all frames
    const within = summary.indexOf('ε within state points (3 state points, by state_point');
    expect(within).toBeGreaterThan(0);
    expect(summary.indexOf('ε over all frames')).toBeGreaterThan(within);
    for (const sp of ['liquid-A', 'liquid-B', 'liquid-C']) expect(summary).toContain(`  - ${sp}: `);
    expect(summary).toMatch(/verdict \(rule of thumb, on ε within state points/);
    // one kind of "%" (of the spread), digits from the errors (no 7-figure values), a word on the birefringence
    expect(summary).not.toMatch(/% of its mean/);
    expect(summary).not.toMatch(/\d\.\d{6,}/);
    expect(summary).toMatch(/birefringence n_max − n_min: predicted [\d.]+; reference [\d.]+ — the model (gets|overestimates|underestimates)/);
    expect(summary).toMatch(/random splits/);
    const table = parseCsv(readFileSync(join(dir, 'crystal-eps.csv'), 'utf8'), 'crystal-eps.csv');
    expect(table.records.length).toBe(15); // every 4th of the 60 crystal frames
    const model = parseModel(readFileSync(join(dir, 'liquid-model.json'), 'utf8'), 'liquid-model.json');
    expect(model.target.route).toBe('cm');
    const report = JSON.parse(readFileSync(join(dir, 'liquid-validation.json'), 'utf8'));
    expect(report.learningCurve.length).toBeGreaterThanOrEqual(2);
    expect(report.learningCurve[0].repeats).toBe(3);
    expect(report.statePoints.groups.length).toBe(3);
    // the printed line gives the same headline figure as summary.md and validate: within state points, not the
    // all-frames figure that the differences between state points flatter
    const line = r.out.split('\n').find((l) => l.startsWith('liquid cross-validation')) ?? '';
    expect(line).toContain('within state points');
    expect(line).toContain(`isotropic ${report.statePoints.within.percentIso.toFixed(1)} % of the spread`);
    expect(line).toContain(`anisotropic ${report.statePoints.within.percentAniso.toFixed(1)} %`);
    // the reference columns with the differences, through predict's format
    expect(table.columns).toEqual(expect.arrayContaining(['eps_ref_iso', 'eps_iso_diff', 'eps_aniso_diff']));
    // The liquid is learnt: cross-validated %RMSE of the isotropic part well below 100 % (a useless model
    // scores ~100 %). The crystal's isotropic ε, far outside the liquid's range, is predicted within 5 %.
    expect(report.errors.percentIso).toBeLessThan(30);
    const pred = table.numbers('eps_iso');
    const [xx, yy, zz] = ['eps_ref_xx', 'eps_ref_yy', 'eps_ref_zz'].map((c) => table.numbers(c));
    const ref = xx.map((v, i) => (v + yy[i] + zz[i]) / 3);
    for (let i = 0; i < pred.length; i++) expect(Math.abs(pred[i] - ref[i]) / ref[i]).toBeLessThan(0.05);
  }, 300_000);
});
