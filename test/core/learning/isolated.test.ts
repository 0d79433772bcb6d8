// Frames without a periodic cell (isolated molecules and clusters): learnt as α_CM is, predicted without periodic
// images, with no ε; mixed with periodic frames in one model; and the out-of-domain check of a cluster-trained
// model on the bulk. Reference values come from the demo scenario's interacting point-dipole model (invented
// data, used here as a physics model whose exact answers are known: open boundary, no Ewald sum).
import { beforeAll, describe, expect, it } from 'vitest';
import { readAllStructures } from '../../../src-main/io/read-structures.ts';
import { BUNDLED_DEMO_DIR, DEMO_SETTINGS } from '../../../src-main/demo/run-demo.ts';
import { CLUSTER_KEY, cutCluster, demoClusters, labelCluster } from '../../../src-main/demo/clusters.ts';
import { predictFrame, predictTarget, tensorPredictionFrom, trainModel, type Model } from '../../../src-main/core/learning/model.ts';
import { validate } from '../../../src-main/core/learning/validation.ts';
import { cellPolarisability } from '../../../src-main/core/dielectric/dipole-model.ts';
import { demoDipoleModel } from '../../../src-main/demo/scenario.ts';
import { makeFrame, type Frame } from '../../../src-main/core/geometry/frame.ts';
import { InputError, ModelError } from '../../../src-main/core/errors.ts';
import type { IsolatedPrediction, TrainRequest } from '../../../src-main/core/learning/model-types.ts';
import { annotateFrame, PRED_KEYS, predictionCsvOptions, tensorCsvRow, tensorPredictionRow } from '../../../src-main/io/prediction/prediction-format.ts';
import { join } from 'node:path';

let liquid: Frame[];
let clusters: Frame[];
let clusterModel: Model;
const request: TrainRequest = { tensorKey: CLUSTER_KEY, kind: 'alpha-mol', route: 'cm', settings: DEMO_SETTINGS };

beforeAll(async () => {
  liquid = (await readAllStructures(join(BUNDLED_DEMO_DIR, 'liquid.extxyz.gz'))).filter((_, i) => i % 20 === 0);
  clusters = demoClusters(liquid.slice(0, 4), { perSize: 4, seed: 7 });
  clusterModel = await trainModel(clusters, request);
}, 120_000);

function shifted(frame: Frame, by: number[]): Frame {
  const p = Float64Array.from(frame.positions, (x, k) => x + by[k % 3]);
  return makeFrame(frame.species, p, null);
}

function joined(a: Frame, b: Frame): Frame {
  return makeFrame([...a.species, ...b.species], [...a.positions, ...b.positions], null);
}

describe('isolated frames', () => {
  it('cut clusters are whole molecules about the centre, labelled by the open-boundary dipole model', () => {
    const c = cutCluster(liquid[0], 0, 3);
    expect(c.cell).toBeNull();
    expect(c.species).toHaveLength(12);
    expect(c.species.slice(0, 4)).toEqual(['B', 'N', 'Cl', 'Cl']);
    // every molecule whole: its B–N bond is the demo's 1.32 Å (scenario.ts), not a wrapped box length
    for (let m = 0; m < 3; m++) {
      const d = Math.hypot(...[0, 1, 2].map((k) => c.positions[12 * m + 3 + k] - c.positions[12 * m + k]));
      expect(d).toBeCloseTo(1.32, 3);
    }
    labelCluster(c);
    const a = c.info[CLUSTER_KEY] as number[];
    expect(a).toHaveLength(9);
    // the interacting cluster is more polarisable than its free atoms (head-to-tail enhancement) but finite
    const free = 3 * (1.1 + 1.05 + 2 * 2.3);
    expect((a[0] + a[4] + a[8]) / 3).toBeGreaterThan(0.8 * free);
  });

  it('train on clusters alone; a prediction is a polarisability with local contributions that sum to it, and no ε', () => {
    expect(clusterModel.training.isolatedFrames).toBe(clusters.length);
    expect(clusterModel.notes.join(' ')).toMatch(/isolated frame/);
    const p = tensorPredictionFrom(clusterModel, clusters[5], predictTarget(clusterModel, clusters[5]));
    expect(p.isolated).toBe(true);
    const iso = p as IsolatedPrediction;
    const sum = new Float64Array(9);
    for (let i = 0; i < clusters[5].species.length; i++) for (let q = 0; q < 9; q++) sum[q] += iso.local[9 * i + q];
    for (let q = 0; q < 9; q++) expect(sum[q]).toBeCloseTo(iso.alphaMol[q], 10);
    expect('eps' in iso).toBe(false);
    // the periodic-frame entry point refuses a frame without a cell instead of inventing a volume
    expect(() => predictFrame(clusterModel, clusters[5])).toThrow(/no periodic cell/);
  });

  it('has no periodic images: two copies far apart (beyond the cutoff) predict exactly twice one copy', () => {
    const one = cutCluster(liquid[1], 2, 2);
    const far = joined(one, shifted(one, [40, 0, 0]));
    const a1 = (tensorPredictionFrom(clusterModel, one, predictTarget(clusterModel, one)) as IsolatedPrediction).alphaMol;
    const a2 = (tensorPredictionFrom(clusterModel, far, predictTarget(clusterModel, far)) as IsolatedPrediction).alphaMol;
    for (let q = 0; q < 9; q++) expect(a2[q]).toBeCloseTo(2 * a1[q], 9);
    // the physics agrees to the dipole coupling at 40 Å (α/r³ ≈ 1e-4 relative): the reference is nearly additive too
    const r1 = cellPolarisability(one, demoDipoleModel, { tolerance: 1e-12 }).alpha;
    const r2 = cellPolarisability(far, demoDipoleModel, { tolerance: 1e-12 }).alpha;
    expect(Math.abs(r2[0] - 2 * r1[0]) / r1[0]).toBeLessThan(2e-3);
  });

  it('a Lattice with pbc="F F F" is an isolated frame: the same prediction as no cell at all', () => {
    const c = clusters[9];
    const boxed: Frame = { ...c, cell: Float64Array.of(6, 0, 0, 0, 6, 0, 0, 0, 6), pbc: [false, false, false] };
    const a = (tensorPredictionFrom(clusterModel, c, predictTarget(clusterModel, c)) as IsolatedPrediction).alphaMol;
    const b = tensorPredictionFrom(clusterModel, boxed, predictTarget(clusterModel, boxed));
    expect(b.isolated).toBe(true);
    for (let q = 0; q < 9; q++) expect((b as IsolatedPrediction).alphaMol[q]).toBeCloseTo(a[q], 10);
  });

  it('refuses what a lone molecule does not have: route direct, a cell kind without the clusters key, alpha-mol on a periodic frame', async () => {
    await expect(trainModel(clusters, { ...request, route: 'direct' })).rejects.toThrow(/route direct/);
    await expect(trainModel(clusters, { ...request, kind: 'eps' })).rejects.toThrow(/--isolated-tensor/);
    await expect(trainModel([...clusters.slice(0, 3), liquid[0]], request)).rejects.toThrow(InputError);
    const direct = await trainModel(liquid.slice(0, 3), { tensorKey: 'eps_ref', kind: 'eps', route: 'direct', settings: DEMO_SETTINGS });
    expect(() => tensorPredictionFrom(direct, clusters[0], predictTarget(direct, clusters[0]))).toThrow(ModelError);
  });

  it('the prediction table leaves ε, n and Δn of a lone molecule empty and carries its α; extended XYZ has pred_alpha_mol_A3 and no pred_eps', () => {
    const c = clusters[3];
    const p = tensorPredictionFrom(clusterModel, c, predictTarget(clusterModel, c));
    const options = predictionCsvOptions(clusterModel, 'm.json');
    const row = tensorPredictionRow(0, c, p, clusterModel);
    const fields = tensorCsvRow(row, options).trim().split(',');
    // frame, tag, volume, 6 ε components, ε_iso, ε_aniso, 3 principal values, 3 indices, Δn: empty
    expect(fields.slice(2, 18).every((f) => f === '')).toBe(true);
    const alpha = (p as IsolatedPrediction).alphaMol;
    expect(Number(fields[18])).toBeCloseTo(alpha[0], 12);
    const out = annotateFrame(c, p, clusterModel);
    expect(out.info[PRED_KEYS.eps]).toBeUndefined();
    expect(out.info[PRED_KEYS.alphaCM]).toBeUndefined();
    expect(out.info[PRED_KEYS.alphaMol]).toEqual([...alpha]);
  });
});

describe('mixed sets and the bulk', () => {
  it('clusters and periodic frames train one model; validation reports each kind and names the weights', async () => {
    const mixed = [...clusters.filter((_, i) => i % 2 === 0), ...liquid.slice(4, 10)];
    const req: TrainRequest = { tensorKey: 'eps_ref', kind: 'eps', isolatedKey: CLUSTER_KEY, route: 'cm', settings: DEMO_SETTINGS };
    const report = await validate(mixed, req, { folds: 3 });
    expect(report.target).toBe('eps, periodic frames');
    expect(report.errors.count).toBe(6);
    const iso = report.alsoOn.find((o) => o.target.includes('isolated'));
    expect(iso?.errors.count).toBe(mixed.length - 6);
    expect(report.notes.join(' ')).toMatch(/every frame weighs 1/);
    // the mixed model learns the clusters' α to better than their spread, and ε of held-out liquid frames
    expect(iso!.errors.percentIso).toBeLessThan(30);
    expect(report.errors.rmseIso).toBeLessThan(0.05);
  }, 120_000);

  it('a cluster-only model predicts a periodic frame through the forward relation, and flags the fully surrounded bulk atoms', async () => {
    const bulk = liquid.slice(6, 12);
    const periodic = await trainModel(liquid.slice(0, 6), { tensorKey: 'eps_ref', kind: 'eps', route: 'cm', settings: DEMO_SETTINGS });
    let clusterFlags = 0;
    let periodicFlags = 0;
    for (const f of bulk) {
      const p = predictFrame(clusterModel, f);
      const ref = f.info.eps_ref as number[];
      // ε through the forward Clausius–Mossotti relation of the summed local α: close to the reference
      expect(Math.abs((p.eps[0] + p.eps[4] + p.eps[8]) / 3 - (ref[0] + ref[4] + ref[8]) / 3)).toBeLessThan(0.1);
      if (p.applicability.reasons.some((r) => /neighbours more/.test(r.key))) clusterFlags++;
      if (predictFrame(periodic, f).applicability.reasons.some((r) => /neighbours more/.test(r.key))) periodicFlags++;
    }
    // clusters have surfaces only: bulk atoms with more neighbours than any cluster atom are reported
    expect(clusterFlags).toBe(bulk.length);
    expect(periodicFlags).toBe(0);
  }, 120_000);
});
