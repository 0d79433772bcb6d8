// The window's trajectory statistics and `polarweave analyse` are one computation: the service's trajectoryStats
// and analyse's summary of the same predictions (the window's CSV export) give the same Δn with the same error
// bar, the same indices of the mean ε and the same mean isotropic ε, to the last bit.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { withError } from '../../src-main/core/numerics/uncertain.ts';
import type { AppService } from '../../src-main/app/service.ts';
import { createAppService } from '../../src-main/app/wiring.ts';
import { tsWorkerFactory } from '../../src-main/jobs/spawn-ts.ts';
import { serialiseModel } from '../../src-main/io/model-file.ts';
import { parseCsv } from '../../src-main/io/csv.ts';
import { cli } from '../cli/run-cli.ts';
import { jitteredTrajectory, smallModel, trajectoryText } from '../helpers/trajectory.ts';

const scratch = mkdtempSync(join(tmpdir(), 'pw-trajstats-'));
const service: AppService = createAppService({
  spawn: tsWorkerFactory(new URL('../../src-main/app/worker.ts', import.meta.url)),
  demoDir: join(scratch, 'no-demo'),
});
afterAll(() => {
  service.dispose();
  rmSync(scratch, { recursive: true, force: true });
});

let predictionId = '';
beforeAll(async () => {
  const model = await smallModel();
  const m = await service.importModel({ name: 'small.pwmodel.json', text: serialiseModel(model) });
  const d = await service.openStructures({ name: 'traj.extxyz', text: trajectoryText(jitteredTrajectory(64, 0.05, 11)) });
  const { jobId } = await service.startJob({ kind: 'predict', params: { modelId: m.id, datasetId: d.id } });
  const s = await service.waitForJob(jobId);
  if (s.result?.kind !== 'predict') throw new Error(`predict failed: ${JSON.stringify(s.error)}`);
  predictionId = s.result.prediction.id;
}, 120_000);

describe('trajectory statistics: the window and analyse agree', () => {
  it('gives the same Δn ± error, indices of the mean ε and isotropic mean as `analyse` on the exported CSV', async () => {
    const stats = await service.trajectoryStats({ predictionId });
    const csv = await service.exportCsv({ predictionId });
    const file = join(scratch, 'window.csv');
    writeFileSync(file, csv.text);
    const r = await cli('analyse', file, '-o', join(scratch, 'summary.csv'));
    expect(r.code, r.err).toBe(0);
    const t = parseCsv(readFileSync(join(scratch, 'summary.csv'), 'utf8'), 'summary.csv');
    const row = (section: string, quantity: string, component: string) => {
      const k = t.records.findIndex((x) => x[0] === section && x[1] === quantity && x[2] === component);
      expect(k, `${section}/${quantity}/${component}`).toBeGreaterThanOrEqual(0);
      return { value: Number(t.records[k][3]), error: Number(t.records[k][4]) };
    };
    const dn = row('optics', 'birefringence', 'n3-n1');
    expect(stats.birefringence).toBe(dn.value);
    expect(stats.birefringenceError).toBe(dn.error);
    for (let k = 0; k < 3; k++) {
      const n = row('optics', 'n', String(k + 1));
      expect(stats.meanRefractive[k]).toBe(n.value);
      expect(stats.refractiveError[k]).toBe(n.error);
    }
    const iso = row('mean', 'eps', 'iso');
    expect(stats.mean.iso.value).toBe(iso.value);
    expect(stats.mean.iso.error).toBe(iso.error);
    const xy = row('mean', 'eps', 'xy');
    expect(stats.mean.xy.value).toBe(xy.value);
    expect(stats.mean.xy.error).toBe(xy.error);
    const aniso = row('mean', 'eps', 'aniso');
    expect(stats.anisotropy.value).toBe(aniso.value);
    // and both write them alike: value ± error to the digits the error justifies (the window's Trajectory view
    // formats these same stats with the same withError)
    expect(r.out).toContain(`birefringence n_3 − n_1 = ${withError(stats.birefringence, stats.birefringenceError)}`);
    expect(r.out).toContain(`n_1 ${withError(stats.meanRefractive[0], stats.refractiveError[0])}`);
    expect(r.out).toMatch(new RegExp(`iso +${withError(stats.mean.iso.value, stats.mean.iso.error).replace(/[.]/g, '\\.')} `));
  }, 120_000);

  it("takes Δn from the mean ε, not from each frame's sorted indices (which biases Δn upwards)", async () => {
    const stats = await service.trajectoryStats({ predictionId });
    const pred = await service.getPrediction({ predictionId });
    const mean = (xs: number[]) => xs.reduce((a, x) => a + x, 0) / xs.length;
    const periodic = pred.frames.flatMap((f) => (f.isolated ? [] : [f]));
    expect(periodic.length).toBe(pred.frames.length);
    const perFrameSorted = mean(periodic.map((f) => f.refractive[2])) - mean(periodic.map((f) => f.refractive[0]));
    expect(stats.birefringence).toBeLessThan(perFrameSorted);
    // the charted index series are the first-order indices along the mean's axes: their means are the indices
    for (let k = 0; k < 3; k++) expect(mean(stats.refractive[k])).toBeCloseTo(stats.meanRefractive[k], 12);
  });
});
