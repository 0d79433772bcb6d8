// The app service end to end in Node (no window): open a file of real DFT water frames, check the summary,
// train through a worker thread, predict, and export a CSV that must match `polarweave predict` row for row
// for the same model and frames. Plus the plain errors a user sees for bad input.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it, vi } from 'vitest';
import type { AppService } from '../../src-main/app/service.ts';
import { createAppService } from '../../src-main/app/wiring.ts';
import { runCli } from '../../src-main/cli/main.ts';
import { setSummaryLines } from '../../src-main/app/predict/prediction.ts';
import { tsWorkerFactory } from '../../src-main/jobs/spawn-ts.ts';
import type { JobRunner } from '../../src-main/jobs/runner.ts';
import type { PredictTaskInput } from '../../src-main/app/task-types.ts';
import type { Model } from '../../src-main/core/learning/model.ts';

function typedArraysOf(value: unknown, out: ArrayBufferView[] = []): ArrayBufferView[] {
  if (ArrayBuffer.isView(value)) out.push(value);
  else if (Array.isArray(value)) value.forEach((v) => typedArraysOf(v, out));
  else if (value !== null && typeof value === 'object') for (const v of Object.values(value)) typedArraysOf(v, out);
  return out;
}

const WATER = '/work/shared/data/water-dft-sample.extxyz';
const scratch = mkdtempSync(join(tmpdir(), 'pw-service-'));
const service: AppService = createAppService({
  spawn: tsWorkerFactory(new URL('../../src-main/app/worker.ts', import.meta.url)),
  demoDir: join(scratch, 'no-demo'),
});
afterAll(() => {
  service.dispose();
  rmSync(scratch, { recursive: true, force: true });
});

const small = { cutoff: 3.5, nmax: 3, lmax: 2, sparsePoints: 0, seed: 3 };

describe('app service', () => {
  let datasetId = '';
  let predictionId = '';

  it('summarises an uploaded extended XYZ file', async () => {
    const s = await service.openStructures({ name: 'water.extxyz', text: readFileSync(WATER, 'utf8') });
    datasetId = s.id;
    expect(s.frames).toBe(8);
    expect(s.atoms).toEqual({ min: 48, max: 48 });
    expect(s.species).toEqual([
      { symbol: 'H', perFrame: 32 },
      { symbol: 'O', perFrame: 16 },
    ]);
    expect(s.periodic).toBe(true);
    // Cubic cell of 7.830199 Å (from the file's Lattice): V = a³.
    expect(s.volumeA3!.min).toBeCloseTo(7.830199 ** 3, 6);
    expect(s.firstCell!.alpha).toBeCloseTo(90, 10);
    const eps = s.tensorKeys.find((t) => t.key === 'eps_inf')!;
    expect(eps.kindGuess).toBe('eps');
    expect(eps.unit).toBe('dimensionless');
    expect(eps.frames).toBe(8);
    // Frame 0's trace/3 from the file: (1.54877740 + 1.54077875 + 1.57263030) / 3.
    expect(eps.isoRange.min).toBeLessThanOrEqual((1.5487774 + 1.54077875 + 1.5726303) / 3 + 1e-12);
    expect(s.tensorKeys.find((t) => t.key === 'alpha_periodic_A3')!.kindGuess).toBe('alpha-c');
    expect(s.otherKeys).toContain('energy_hartree');
  });

  it('reads a CIF upload (values checked against python3-ase in test/fixtures/io/cif-ase.json)', async () => {
    const text = readFileSync(new URL('../fixtures/io/nacl-fm3m.cif', import.meta.url), 'utf8');
    const s = await service.openStructures({ name: 'nacl-fm3m.cif', text });
    const ase = JSON.parse(readFileSync(new URL('../fixtures/io/cif-ase.json', import.meta.url), 'utf8'))['nacl-fm3m.cif'];
    expect(s.frames).toBe(1);
    expect(s.atoms.min).toBe(ase.species.length);
    expect(s.volumeA3!.min).toBeCloseTo(ase.volume, 8);
    expect(s.tensorKeys).toEqual([]);
    expect(s.warnings.join(' ')).toMatch(/can be predicted, not trained on/);
    await service.closeDataset({ datasetId: s.id });
  });

  it('names the file kinds it reads when given another', async () => {
    const err = (await service.openStructures({ name: 'notes.txt', text: 'hello' }).catch((e: unknown) => e)) as { where?: unknown; hint?: string };
    expect(err.where).toEqual({ file: 'notes.txt' });
    expect(err.hint).toMatch(/\.xyz.*\.cif/);
  });

  it('gives a frame as plain JSON with its source line', async () => {
    const f = await service.getFrame({ datasetId, index: 1 });
    expect(f.species.length).toBe(48);
    expect(f.positions.length).toBe(144);
    expect(f.source).toEqual({ file: 'water.extxyz', index: 1, line: 51 });
    await expect(service.getFrame({ datasetId, index: 8 })).rejects.toThrow(/has 8 frames; there is no frame 8/);
  });

  it('reports a broken upload with file, line and frame', async () => {
    const text = readFileSync(WATER, 'utf8').split('\n');
    text[52] = 'H 1.0 2.0'; // frame 1, third atom line: one coordinate missing
    const err = (await service.openStructures({ name: 'broken.xyz', text: text.join('\n') }).catch((e: unknown) => e)) as { where?: unknown };
    expect(err.where).toMatchObject({ file: 'broken.xyz', line: 53, frame: 1 });
  });

  it('trains in a worker, predicts, and exports the CLI’s CSV for the same model and frames', async () => {
    const { jobId } = await service.startJob({
      kind: 'train',
      params: { datasetId, frames: [0, 1, 2, 3, 4, 5], testFrames: [6, 7], request: { tensorKey: 'eps_inf', kind: 'eps', route: 'cm', settings: small }, folds: 3, learningCurve: [] },
    });
    const s = await service.waitForJob(jobId);
    expect(s.error).toBeNull();
    expect(s.state).toBe('done');
    expect(s.events.some((e) => e.type === 'progress')).toBe(true);
    if (s.result?.kind !== 'train') throw new Error('expected a train result');
    const model = s.result.model;
    expect(model.report!.points.map((p) => p.frame).sort()).toEqual([0, 1, 2, 3, 4, 5]);
    expect(model.test!.points.map((p) => p.frame)).toEqual([6, 7]);
    expect(model.trainedOn.frames).toBe(6);

    // the predict job hands its worker the model in shared memory (no copy per job), as the CLI does
    const runner = (service as unknown as { options: { runner: JobRunner } }).options.runner;
    const start = vi.spyOn(runner, 'start');
    const p = await service.startJob({ kind: 'predict', params: { modelId: model.id, datasetId } });
    const handed = (start.mock.calls[0][1] as PredictTaskInput).model as Model;
    start.mockRestore();
    const arrays = typedArraysOf(handed);
    expect(arrays.length).toBeGreaterThan(3);
    expect(arrays.every((a) => a.buffer instanceof SharedArrayBuffer)).toBe(true);
    const ps = await service.waitForJob(p.jobId);
    if (ps.result?.kind !== 'predict') throw new Error(`expected a predict result, got ${JSON.stringify(ps.error)}`);
    const pred = ps.result.prediction;
    expect(pred.frames.length).toBe(8);
    // The file's reference ε is carried beside each prediction.
    expect(pred.frames[0].reference![0]).toBeCloseTo(1.5487774, 7);
    // Refractive indices are √ of ε's principal values: their squares sum to tr ε.
    const f0 = pred.frames[0];
    if (f0.isolated) throw new Error('a periodic water frame came back as isolated');
    expect(f0.refractive.reduce((a, n) => a + n * n, 0)).toBeCloseTo(f0.eps[0] + f0.eps[4] + f0.eps[8], 10);

    // The per-atom marks of the structure view follow the rule that counts the frame's atoms outside.
    for (const f of pred.frames) {
      const d = await service.getFrameDetail({ predictionId: pred.id, index: f.frame });
      expect(d.atomScore).toHaveLength(48);
      expect(d.atomOutside.filter((o) => o).length).toBe(f.applicability.atomsOutside);
      expect(d.atomOutside).toEqual(d.atomScore.map((u) => u > 1));
    }
    predictionId = pred.id;

    const csv = await service.exportCsv({ predictionId: pred.id });
    const modelFile = await service.exportModel({ modelId: model.id });
    const modelPath = join(scratch, 'model.json');
    writeFileSync(modelPath, modelFile.text);
    const outPath = join(scratch, 'cli.csv');
    let err = '';
    let said = '';
    const code = await runCli(['predict', modelPath, WATER, '-o', outPath], { out: (t) => (said += t), err: (t) => (err += t), signal: new AbortController().signal });
    expect(code, err).toBe(0);
    // The CLI's closing summary is the window's Transfer summary, from the same sums and the same words.
    expect(pred.summary!.reference!.frames).toBe(8);
    expect(said).toContain(setSummaryLines(pred.summary!).join('\n'));
    expect(said).toMatch(/ε iso \d\.\d+ ± 0\.\d+/);
    const cliText = readFileSync(outPath, 'utf8');
    expect(csv.text).toMatch(/# Note: these values are model estimates/);
    // The comment block differs only in its Source, Written and Identity lines (the CLI names its model file and input); header and rows are the same, byte for byte.
    const body = (t: string) => t.split('\n').filter((l) => !l.startsWith('#'));
    const comments = (t: string) => t.split('\n').filter((l) => l.startsWith('#') && !/^# (Source|Written|Identity):/.test(l));
    expect(body(csv.text)).toEqual(body(cliText));
    expect(comments(csv.text)).toEqual(comments(cliText));
    expect(body(csv.text).length).toBe(1 + 8 + 1);
    // both carry the frames' reference (the file's eps_inf, from the DFT code) and the difference
    const header = body(csv.text)[0].split(',');
    const row0 = body(csv.text)[1].split(',');
    expect(header).toEqual(expect.arrayContaining(['eps_ref_xx', 'eps_ref_iso', 'eps_iso_diff', 'eps_aniso_diff']));
    expect(Number(row0[header.indexOf('eps_ref_xx')])).toBeCloseTo(1.5487774, 7);
    // the Export view describes the file from the columns the export writes
    expect(pred.csvColumns).toEqual(header);
    expect((await service.getState()).predictions.find((x) => x.id === pred.id)!.csvColumns).toEqual(header);
  });

  it('refuses a tensor key the frames do not have, naming the choices', async () => {
    await expect(
      service.startJob({ kind: 'train', params: { datasetId, request: { tensorKey: 'energy_hartree', kind: 'eps', route: 'cm' }, folds: 2, learningCurve: [] } }),
    ).rejects.toThrow(/no tensor "energy_hartree".*alpha_periodic_A3, eps_inf/);
  });

  it('saves and reopens a project', async () => {
    const before = await service.getFrameDetail({ predictionId, index: 7 });
    const saved = await service.saveProject({ ui: { view: 'checks' } });
    const project = JSON.parse(saved.text);
    expect(project.format).toBe('polarweave-project');
    expect(project.version).toBe(1);
    const state = await service.openProject({ name: 'p.pwproj.json', text: saved.text });
    expect(state.datasets.map((d) => d.frames)).toEqual([8]);
    expect(state.models.length).toBe(1);
    expect(state.predictions.length).toBe(1);
    expect(state.ui).toEqual({ view: 'checks' });
    // per-atom domain scores survive the round trip
    const reopened = state.predictions[0].id;
    const d = await service.getFrameDetail({ predictionId: reopened, index: 7 });
    expect(d.atomScore).toEqual(before.atomScore);
    expect(d.atomOutside).toEqual(before.atomOutside);
    await expect(service.openProject({ name: 'x.json', text: '{"format":"other"}' })).rejects.toThrow(/x.json: not a Polarweave project file/);
  });

  it('draws a learning curve after training (the Quick look) the same as training with it would, into the model’s report', async () => {
    const datasetId = (await service.openStructures({ name: 'water.extxyz', text: readFileSync(WATER, 'utf8') })).id;
    const request = { tensorKey: 'eps_inf', kind: 'eps' as const, route: 'cm' as const, settings: small };
    const frames = [0, 1, 2, 3, 4, 5];
    const train = async (learningCurve: number[]) => {
      const s = await service.waitForJob((await service.startJob({ kind: 'train', params: { datasetId, frames, request, folds: 3, learningCurve } })).jobId);
      if (s.result?.kind !== 'train') throw new Error(`expected a train result, got ${JSON.stringify(s.error)}`);
      return s.result.model;
    };
    const quick = await train([]);
    expect(quick.report!.learningCurve).toEqual([]);
    const withCurve = await train([3, 4]);
    expect(withCurve.report!.learningCurve.map((c) => c.trainSize)).toEqual([3, 4]);
    // a curve for another model's frames or folds is refused
    await expect(service.startJob({ kind: 'validate', params: { datasetId, frames, request, folds: 2, learningCurve: [3], modelId: quick.id } })).rejects.toThrow(/its own frames and folds/);
    const v = await service.waitForJob((await service.startJob({ kind: 'validate', params: { datasetId, frames, request, folds: 3, learningCurve: [3, 4], modelId: quick.id } })).jobId);
    expect(v.state).toBe('done');
    const after = await service.getModel({ modelId: quick.id });
    expect(after.report!.learningCurve).toEqual(withCurve.report!.learningCurve);
    expect(after.report!.curveTrend).toBe(withCurve.report!.curveTrend);
    // the rest of the report is the training's own
    expect(after.report!.errors).toEqual(quick.report!.errors);
  }, 120_000);
});
