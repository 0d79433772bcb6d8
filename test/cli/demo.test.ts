// End-to-end test of `polarweave demo --quick` on the bundled invented data: exit code, the files written, and
// that the job did real work (the model learns the liquid and transfers to the crystal within loose bounds).
import { mkdtempSync, readFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseCsv } from '../../src-main/io/csv.ts';
import { parseModel } from '../../src-main/io/model-file.ts';
import { cli } from './run-cli.ts';

describe('polarweave demo --quick', () => {
  it('runs the whole job and writes CSV, model, validation and summary', async () => {
    const dir = join(mkdtempSync(join(tmpdir(), 'pw-demo-')), 'out');
    const r = await cli('demo', '--quick', '-o', dir);
    expect(r.code, r.err).toBe(0);
    for (const f of ['crystal-eps.csv', 'liquid-model.json', 'liquid-validation.json', 'summary.md']) {
      expect(existsSync(join(dir, f)), f).toBe(true);
      expect(r.out).toContain(join(dir, f));
    }
    expect(r.out).toMatch(/model estimates/);
    const summary = readFileSync(join(dir, 'summary.md'), 'utf8');
    expect(summary).toMatch(/invented/i);
    expect(summary).toMatch(/model estimates/);
    const table = parseCsv(readFileSync(join(dir, 'crystal-eps.csv'), 'utf8'), 'crystal-eps.csv');
    expect(table.records.length).toBe(15); // every 4th of the 60 crystal frames
    const model = parseModel(readFileSync(join(dir, 'liquid-model.json'), 'utf8'), 'liquid-model.json');
    expect(model.target.route).toBe('cm');
    const report = JSON.parse(readFileSync(join(dir, 'liquid-validation.json'), 'utf8'));
    expect(report.learningCurve.length).toBeGreaterThanOrEqual(2);
    // The liquid is learnt: cross-validated %RMSE of the isotropic part well below 100 % (a useless model
    // scores ~100 %). The crystal's isotropic ε, far outside the liquid's range, is predicted within 5 %.
    expect(report.errors.percentIso).toBeLessThan(30);
    const pred = table.numbers('eps_iso');
    const [xx, yy, zz] = ['eps_ref_xx', 'eps_ref_yy', 'eps_ref_zz'].map((c) => table.numbers(c));
    const ref = xx.map((v, i) => (v + yy[i] + zz[i]) / 3);
    for (let i = 0; i < pred.length; i++) expect(Math.abs(pred[i] - ref[i]) / ref[i]).toBeLessThan(0.05);
  }, 300_000);
});
