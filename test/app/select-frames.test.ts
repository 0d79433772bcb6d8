// Choosing frames for DFT (app/select-frames.ts) through `polarweave select` and through the window's job: the
// same use case, so the same bytes (a test below says so). Inputs: the real DFT water frames of test/fixtures
// (8 distinct liquid snapshots) repeated with seeded jitter, so the right answers are known by construction:
// diversity must take each snapshot once before any twice; with a model, the first choice must be the frame of
// largest error bar (or domain score) as predict computes it frame by frame.
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cli } from '../cli/run-cli.ts';
import { jitteredTrajectory, smallModel, trajectoryText, waterFrames } from '../helpers/trajectory.ts';
import { parseExtxyz } from '../../src-main/io/extxyz.ts';
import { saveModel } from '../../src-main/io/model-file.ts';
import { framePredictionFrom, modelPredictor, type Model } from '../../src-main/core/learning/model.ts';
import { memorySource, selectFrames } from '../../src-main/app/select-frames.ts';
import { loadedModel } from '../../src-main/app/predict/prediction.ts';
import { frameFeaturiser } from '../../src-main/core/descriptors/frame-features.ts';
import { createAppService } from '../../src-main/app/wiring.ts';
import { tsWorkerFactory } from '../../src-main/jobs/spawn-ts.ts';
import type { AppService } from '../../src-main/app/service.ts';

const dir = mkdtempSync(join(tmpdir(), 'pw-select-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
// jitter 0.01 Å: the snapshots stay farther apart in frame features than the jitter moves them (checked below)
const frames = jitteredTrajectory(40, 0.01, 11);
const traj = join(dir, 'run.extxyz');
writeFileSync(traj, trajectoryText(frames));
const chosenOf = (file: string) => parseExtxyz(readFileSync(file, 'utf8'), file);

describe('polarweave select (no model): the most diverse frames', () => {
  it('takes each of the 8 snapshots once, writes them whole with their source frame numbers', async () => {
    const ff = frameFeaturiser(['H', 'O']);
    const v = frames.map((f) => ff.features(f));
    const dist = (a: Float64Array, b: Float64Array) => Math.hypot(...a.map((x, i) => x - b[i]));
    let within = 0;
    let between = Infinity;
    for (let i = 0; i < 40; i++) for (let k = 0; k < i; k++) {
      if (i % 8 === k % 8) within = Math.max(within, dist(v[i], v[k]));
      else between = Math.min(between, dist(v[i], v[k]));
    }
    expect(2 * within).toBeLessThan(between); // the premise: eight well-separated groups
    const out = join(dir, 'eight.extxyz');
    const r = await cli('select', traj, '-n', '8', '-o', out);
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/chose 8 of 8 frames asked for/);
    const chosen = chosenOf(out);
    const numbers = chosen.map((f) => f.info.source_frame as number);
    expect(new Set(numbers.map((k) => k % 8)).size).toBe(8);
    expect([...numbers].sort((a, b) => a - b)).toEqual(numbers); // written in frame order
    for (const f of chosen) {
      const src = frames[f.info.source_frame as number];
      expect(f.info.tag).toBe(src.info.tag); // the frame's own properties kept
      for (let i = 0; i < src.positions.length; i++) expect(Math.abs(f.positions[i] - src.positions[i])).toBeLessThan(1e-7);
      expect(f.info.source_file).toBe('run.extxyz');
      expect(f.info.selection).toMatch(/farthest-point/);
    }
    expect(readdirSync(dir).filter((n) => n.includes('.tmp') || n.startsWith('.'))).toEqual([]);
  });

  it('stride and minimum time gap: only every 2nd frame, times 3 fs apart at least', async () => {
    const out = join(dir, 'gap.extxyz');
    const r = await cli('select', traj, '-n', '6', '-o', out, '--stride', '2', '--time-step', '0.5', '--min-gap', '3');
    expect(r.code, r.err).toBe(0);
    const t = chosenOf(out).map((f) => [f.info.source_frame as number, f.info.source_time_fs as number]);
    for (const [k, time] of t) {
      expect(k % 2).toBe(0);
      expect(time).toBeCloseTo(0.5 * k, 12);
    }
    for (let a = 1; a < t.length; a++) expect(t[a][1] - t[a - 1][1]).toBeGreaterThanOrEqual(3);
  });

  it('bounded memory: a pool of 8 over 40 frames thins evenly and says so', async () => {
    const r = await selectFrames(memorySource('run', frames), { count: 4, capacity: 8 });
    expect(r.candidates).toBeLessThanOrEqual(8);
    expect(r.effectiveStride).toBe(8);
    for (const c of r.chosen) expect(c.frame % 8).toBe(0);
  });

  it('bad input: a gap without times, a broken frame, the output as input, a bad count — named, nothing written', async () => {
    const out = join(dir, 'never.extxyz');
    let r = await cli('select', traj, '-n', '3', '-o', out, '--min-gap', '10');
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/run\.extxyz, frame 0: the frame carries no time \(time_fs\).*--time-step/);
    const broken = join(dir, 'broken.extxyz');
    const lines = trajectoryText(frames.slice(0, 5)).split('\n');
    lines[3 * 50 + 7] = 'O 1.0 zero 2.0';
    writeFileSync(broken, lines.join('\n'));
    r = await cli('select', broken, '-n', '2', '-o', out);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/broken\.extxyz, line \d+, frame 3/);
    r = await cli('select', traj, '-n', '2', '-o', traj);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/output file is also an input/);
    r = await cli('select', traj, '-n', '0', '-o', out);
    expect(r.code).toBe(2);
    expect(existsSync(out)).toBe(false);
  });
});

describe('polarweave select --model: the largest error bars or domain scores', () => {
  let model: Model;
  const modelFile = join(dir, 'model.json');
  // larger displacements on a few frames make them the uncertain ones
  const mixed = jitteredTrajectory(24, 0.04, 5).map((f, k) => (k % 7 === 3 ? jitteredTrajectory(1, 0.25, 100 + k)[0] : f));
  const mixedFile = join(dir, 'mixed.extxyz');
  beforeAll(async () => {
    model = await smallModel();
    await saveModel(modelFile, model);
    writeFileSync(mixedFile, trajectoryText(mixed));
  }, 120_000);

  it('the first frame chosen has the largest calibrated error bar that predict gives; the rest follow by score', async () => {
    const predict = modelPredictor(model);
    const bars = mixed.map((f, k) => framePredictionFrom(model, f, predict(f, k), k).errorBars!.epsIso);
    const out = join(dir, 'by-error.extxyz');
    const r = await cli('select', mixedFile, '-n', '3', '-o', out, '--model', modelFile);
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/model estimates/);
    const chosen = chosenOf(out).sort((a, b) => (a.info.selection_order as number) - (b.info.selection_order as number));
    const best = bars.indexOf(Math.max(...bars));
    expect(chosen[0].info.source_frame).toBe(best);
    expect(chosen[0].info.selection_score as number).toBeCloseTo(bars[best], 12);
    const scores = chosen.map((f) => f.info.selection_score as number);
    expect([...scores].sort((a, b) => b - a)).toEqual(scores);
    // the strongly displaced frames are the uncertain ones (k mod 7 = 3)
    expect(chosen.every((f) => (f.info.source_frame as number) % 7 === 3)).toBe(true);
  });

  it('--by domain ranks by the domain score; --known excludes the frames already computed', async () => {
    const predict = modelPredictor(model);
    const scores = mixed.map((f, k) => predict(f, k).applicability.score);
    const out = join(dir, 'by-domain.extxyz');
    let r = await cli('select', mixedFile, '-n', '1', '-o', out, '--model', modelFile, '--by', 'domain');
    expect(r.code, r.err).toBe(0);
    expect(chosenOf(out)[0].info.source_frame).toBe(scores.indexOf(Math.max(...scores)));
    // every frame already known: nothing new to choose
    const known = join(dir, 'known.extxyz');
    writeFileSync(known, trajectoryText(mixed));
    r = await cli('select', mixedFile, '-n', '2', '-o', join(dir, 'none.extxyz'), '--model', modelFile, '--known', known);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/no frame could be chosen.*near duplicates/);
  });

  it('refuses to rank periodic and isolated frames by error bar together (ε and α error bars differ); by domain score it can', async () => {
    const w = waterFrames();
    const cluster = { ...w[1], cell: null, pbc: [false, false, false] as [boolean, boolean, boolean], info: {} };
    const source = memorySource('mixed', [w[0], cluster, w[2]]);
    await expect(selectFrames(source, { count: 2, model: loadedModel(model, 'm') })).rejects.toThrow(/mixed, frame 1: the run mixes periodic and isolated frames/);
    const r = await selectFrames(source, { count: 2, model: loadedModel(model, 'm'), by: 'domain' });
    expect(r.chosen.length).toBe(2);
  });

  it('writes the user\'s CP2K template once per chosen frame (cell and atoms filled)', async () => {
    const inp = readFileSync(join(__dirname, '../fixtures/dft/cp2k/water-c.inp'), 'utf8');
    const coord = inp.slice(inp.indexOf('&COORD\n') + 7, inp.indexOf('    &END COORD'));
    const template = join(dir, 'water.inp');
    writeFileSync(template, inp.replace('      ABC 6.21 6.21 6.21', '      A {{cell_a}}\n      B {{cell_b}}\n      C {{cell_c}}').replace(coord, '      {{atoms}}\n'));
    const folder = join(dir, 'inputs');
    const r = await cli('select', traj, '-n', '2', '-o', join(dir, 'two.extxyz'), '--template', template, '--inputs', folder);
    expect(r.code, r.err).toBe(0);
    const chosen = chosenOf(join(dir, 'two.extxyz'));
    const names = readdirSync(folder).sort();
    expect(names).toEqual(chosen.map((f) => `water-frame${f.info.source_frame}.inp`).sort());
    const text = readFileSync(join(folder, names[0]), 'utf8');
    expect(text.match(/^ {6}[OH] +-?\d+\.\d{10} -?\d+\.\d{10} -?\d+\.\d{10}$/gm)!.length).toBe(48);
    expect(text).toContain('PROJECT water-c'); // the rest as the user wrote it
    const bad = join(dir, 'bad.inp');
    writeFileSync(bad, 'A {{cell_a}}\nB {{cell_b}}\nC {{cell_c}}\n{{coords}}\n');
    const b = await cli('select', traj, '-n', '2', '-o', join(dir, 'bad.extxyz'), '--template', bad);
    expect(b.code).toBe(1);
    expect(b.err).toMatch(/bad\.inp, line 4: unknown placeholder/);
    expect(existsSync(join(dir, 'bad.extxyz'))).toBe(false);
  });
});

describe('the window chooses with the same use case as the CLI', () => {
  let service: AppService;
  beforeAll(() => {
    service = createAppService({ spawn: tsWorkerFactory(new URL('../../src-main/app/worker.ts', import.meta.url)), demoDir: join(dir, 'none') });
  });
  afterAll(() => service.dispose());

  it('a select job gives the bytes `polarweave select` writes, and its report lines', async () => {
    const out = join(dir, 'cli-same.extxyz');
    const r = await cli('select', traj, '-n', '5', '-o', out, '--stride', '3');
    expect(r.code, r.err).toBe(0);
    const ds = await service.openStructures({ name: 'run.extxyz', text: readFileSync(traj, 'utf8') });
    const { jobId } = await service.startJob({ kind: 'select', params: { datasetId: ds.id, count: 5, stride: 3, minGapFs: 0, by: 'error' } });
    const s = await service.waitForJob(jobId);
    expect(s.state, JSON.stringify(s.error)).toBe('done');
    if (s.result?.kind !== 'select') throw new Error('no selection');
    expect(s.result.selection.file.text).toBe(readFileSync(out, 'utf8'));
    // the same report; only the first line names the source (the path given, or the upload's name)
    expect(s.result.selection.lines.slice(1)).toEqual(r.out.split('\n').slice(1, s.result.selection.lines.length));
    expect(s.result.selection.dataset?.frames).toBe(5);
  }, 120_000);

  it('a select job reports progress and stops on cancel, keeping nothing', async () => {
    const ds = await service.openStructures({ name: 'long.extxyz', text: trajectoryText(jitteredTrajectory(600, 0.01, 3)) });
    const before = (await service.getState()).datasets.length;
    const { jobId } = await service.startJob({ kind: 'select', params: { datasetId: ds.id, count: 5, stride: 1, minGapFs: 0, by: 'error' } });
    let progressed = false;
    for (let k = 0; k < 600 && !progressed; k++) {
      const st = await service.jobStatus({ jobId, since: 0 });
      progressed = st.events.some((e) => e.type === 'progress' && e.stage === 'describing frames' && (e.total ?? 0) === 600);
      if (!progressed) await new Promise((r) => setTimeout(r, 50));
    }
    expect(progressed).toBe(true);
    await service.cancelJob({ jobId });
    const s = await service.waitForJob(jobId);
    expect(s.state).toBe('cancelled');
    expect(s.result).toBe(null);
    expect((await service.getState()).datasets.length).toBe(before);
  }, 120_000);

  it('a bad template fails the job with its line named', async () => {
    const ds = await service.openStructures({ name: 'run2.extxyz', text: readFileSync(traj, 'utf8') });
    const { jobId } = await service.startJob({ kind: 'select', params: { datasetId: ds.id, count: 2, stride: 1, minGapFs: 0, by: 'error', template: { name: 'in.tmpl', text: '{{atoms}}\n{{nope}}\n' } } });
    const s = await service.waitForJob(jobId);
    expect(s.state).toBe('failed');
    expect(s.error?.message).toMatch(/in\.tmpl, line 2: unknown placeholder/);
  }, 60_000);
});
