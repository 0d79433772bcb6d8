// The whole learning engine on the real DFT water frames (test/fixtures/water-dft-sample.extxyz, see its README):
// the Clausius–Mossotti route against the reference, route cm vs direct, size-extensivity on a 2×2×2 supercell,
// rotation (and mirror) equivariance of a trained model, and the applicability flag.
import { readFileSync } from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import { cellVolume, supercell } from '../../../src-main/core/geometry/cell.ts';
import { convertTensor } from '../../../src-main/core/dielectric/clausius-mossotti.ts';
import type { Frame } from '../../../src-main/core/geometry/frame.ts';
import { predictFrame, trainModel, type Model } from '../../../src-main/core/learning/model.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { rotateTensor, toIrreducible } from '../../../src-main/core/dielectric/tensor.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';
import { parseModel, serialiseModel } from '../../../src-main/io/model-file.ts';
import { tuneSettings } from '../../../src-main/core/learning/tuning.ts';
import { moleculeContributions } from '../../../src-main/core/geometry/molecules.ts';
import { MIRROR, randomRotations, transformFrame } from '../../helpers/equivariance-harness.ts';

const frames: Frame[] = parseExtxyz(readFileSync(new URL('../../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water-dft-sample.extxyz');
const KEY = 'alpha_periodic_A3';
const models: Partial<Record<'cm' | 'direct', Model>> = {};

beforeAll(async () => {
  for (const route of ['cm', 'direct'] as const) {
    models[route] = await trainModel(frames.slice(0, 6), { tensorKey: KEY, kind: 'alpha-c', route });
  }
}, 120_000);

function reference(f: number): { eps: Float64Array; alphaCM: Float64Array } {
  const v = cellVolume(frames[f].cell!);
  const ac = Float64Array.from(frames[f].info[KEY] as number[]);
  return { eps: Float64Array.from(frames[f].info.eps_inf as number[]), alphaCM: convertTensor(ac, 'alpha-c', 'alpha-cm', v) };
}

const iso = (t: Float64Array) => (t[0] + t[4] + t[8]) / 3;
const anisoNorm = (t: Float64Array) => Math.hypot(...toIrreducible(t).slice(1));

describe('real DFT water: train on frames 0–5, predict frames 6 and 7', () => {
  it('route cm gives per-molecule α_CM and ε close to the reference', () => {
    // Errors reached when this test was written (6 training frames, default settings):
    //   α_CM per molecule: predicted 1.1311 / 1.1285 Å³ against 1.1319 / 1.1328 Å³;
    //   ε isotropic: 1.56264 / 1.56102 against 1.56311 / 1.56358;
    //   ε anisotropic error norm 0.0085 / 0.0083 against reference anisotropy norms 0.036 / 0.017.
    // Tolerances are a few times these (only 8 frames exist: a consistency check, not a benchmark).
    const m = models.cm!;
    let sqAniso = 0;
    let sqRef = 0;
    for (const f of [6, 7]) {
      const p = predictFrame(m, frames[f]);
      const ref = reference(f);
      const perMolecule = iso(p.alphaCM) / 16; // isotropic α_CM per molecule (16 molecules)
      // the data's README: the Clausius–Mossotti polarisability per molecule is ≈ 1.12 Å³
      expect(Math.abs(perMolecule - 1.12)).toBeLessThan(0.03);
      expect(Math.abs(perMolecule - iso(ref.alphaCM) / 16)).toBeLessThan(0.01);
      expect(Math.abs(iso(p.eps) - iso(ref.eps))).toBeLessThan(0.006);
      expect(iso(p.eps)).toBeGreaterThan(1.5);
      expect(iso(p.eps)).toBeLessThan(1.62);
      const d = new Float64Array(9).map((_, q) => p.eps[q] - ref.eps[q]);
      sqAniso += anisoNorm(d) ** 2;
      sqRef += anisoNorm(ref.eps) ** 2;
      expect(p.applicability.outside).toBe(false);
    }
    // the anisotropic part is learnt: its error is well below the size of the anisotropy itself
    expect(Math.sqrt(sqAniso / 2)).toBeLessThan(0.012);
    expect(Math.sqrt(sqAniso / sqRef)).toBeLessThan(0.5);
  });

  it('routes cm and direct agree closely on these nearly isotropic, low-density frames', () => {
    for (const f of [6, 7]) {
      const a = predictFrame(models.cm!, frames[f]);
      const b = predictFrame(models.direct!, frames[f]);
      for (let q = 0; q < 9; q++) expect(Math.abs(a.eps[q] - b.eps[q])).toBeLessThan(2e-3);
      const ref = reference(f);
      expect(Math.abs(iso(b.eps) - iso(ref.eps))).toBeLessThan(0.006);
    }
  });

  it('per-molecule α_CM: 16 molecules of about 1.13 Å³ each, summing to the cell', () => {
    const p = predictFrame(models.cm!, frames[6]);
    const { molecules, local } = moleculeContributions(frames[6], p.local);
    expect(molecules.count).toBe(16);
    let trace = 0;
    for (let m = 0; m < 16; m++) {
      const t = local.subarray(m * 9, m * 9 + 9);
      const isoM = (t[0] + t[4] + t[8]) / 3;
      trace += isoM;
      // local molecular polarisabilities near the cell average (1.12 Å³ per molecule, data README)
      expect(isoM).toBeGreaterThan(0.8);
      expect(isoM).toBeLessThan(1.5);
    }
    expect(trace).toBeCloseTo(iso(p.alphaCM), 9);
  });

  it('the sum of the per-atom local contributions is the predicted additive tensor', () => {
    for (const route of ['cm', 'direct'] as const) {
      const p = predictFrame(models[route]!, frames[6]);
      const sum = new Float64Array(9);
      for (let i = 0; i < frames[6].species.length; i++) for (let q = 0; q < 9; q++) sum[q] += p.local[i * 9 + q];
      const target = route === 'cm' ? p.alphaCM : new Float64Array(9).map((_, q) => p.eps[q] - (q % 4 === 0 ? 1 : 0));
      for (let q = 0; q < 9; q++) expect(sum[q]).toBeCloseTo(target[q], 9);
    }
  });
});

describe('symmetry and size of a trained model', () => {
  it('size-extensivity: a 2×2×2 supercell has 8× α_CM and α_c and the same ε (both routes)', () => {
    for (const route of ['cm', 'direct'] as const) {
      const frame = frames[7];
      const big = supercell(frame, [2, 2, 2]);
      const p = predictFrame(models[route]!, frame);
      const q = predictFrame(models[route]!, big);
      for (let k = 0; k < 9; k++) {
        expect(q.alphaCM[k]).toBeCloseTo(8 * p.alphaCM[k], 8);
        expect(q.alphaC[k]).toBeCloseTo(8 * p.alphaC[k], 8);
        expect(q.eps[k]).toBeCloseTo(p.eps[k], 10);
      }
      expect(q.applicability.maxDistance).toBeCloseTo(p.applicability.maxDistance, 10);
    }
  });

  it('rotation equivariance: predict(R·frame) = R α Rᵀ, also for a mirror', () => {
    const m = models.cm!;
    const frame = frames[6];
    const p = predictFrame(m, frame);
    const scale = Math.max(...p.alphaCM.map(Math.abs));
    for (const R of [...randomRotations(makeRng(17), 2), MIRROR]) {
      const q = predictFrame(m, transformFrame(frame, R));
      const expected = rotateTensor(p.alphaCM, R);
      for (let k = 0; k < 9; k++) expect(Math.abs(q.alphaCM[k] - expected[k])).toBeLessThan(1e-9 * scale);
      expect(q.applicability.variance).toBeCloseTo(p.applicability.variance, 6);
    }
  });

  it('flags a compressed structure as outside the training data, with a larger predictive variance', () => {
    const m = models.cm!;
    const frame = frames[6];
    const squeezed: Frame = { ...frame, positions: frame.positions.map((x) => 0.8 * x), cell: frame.cell!.map((x) => 0.8 * x) };
    const p = predictFrame(m, frame);
    const q = predictFrame(m, squeezed);
    expect(p.applicability.outside).toBe(false);
    expect(q.applicability.outside).toBe(true);
    expect(q.applicability.atomsOutside).toBeGreaterThan(0);
    expect(q.applicability.maxDistance).toBeGreaterThan(q.applicability.threshold);
    expect(q.applicability.variance).toBeGreaterThan(p.applicability.variance);
  });
});

describe('feature selection and tuning on the real frames', () => {
  it('a model with at most 40 feature columns per order stays equivariant and close to the reference', async () => {
    const m = await trainModel(frames.slice(0, 6), { tensorKey: KEY, kind: 'alpha-c', route: 'cm', settings: { maxFeatures: 40, radialFunctions: 4, angularOrder: 3 } });
    expect(m.featureSelection?.[0]?.length).toBe(40);
    expect(m.featureSelection?.[2]?.length).toBe(40);
    expect(m.parts[1].n).toBe(40);
    const back = parseModel(serialiseModel(m), 'sel.json');
    for (const f of [6, 7]) {
      const p = predictFrame(back, frames[f]);
      expect(Math.abs(iso(p.alphaCM) / 16 - iso(reference(f).alphaCM) / 16)).toBeLessThan(0.03);
      const R = randomRotations(makeRng(f), 1)[0];
      const q = predictFrame(back, transformFrame(frames[f], R));
      const expected = rotateTensor(p.alphaCM, R);
      for (let k = 0; k < 9; k++) expect(Math.abs(q.alphaCM[k] - expected[k])).toBeLessThan(1e-9 * 30);
    }
  }, 120_000);

  it('tuning picks the cutoff with the smaller cross-validated error and records it', async () => {
    const request = { tensorKey: KEY, kind: 'alpha-c' as const, route: 'cm' as const, settings: { radialFunctions: 4, angularOrder: 3 } };
    const tuned = await tuneSettings(frames.slice(0, 6), request, { cutoffRadius: [3.0, 4.5] });
    expect(tuned.table.length).toBe(2);
    const best = tuned.table.reduce((a, b) => (b.score < a.score ? b : a));
    expect(tuned.best).toEqual(best.settings);
    const m = await trainModel(frames.slice(0, 6), { ...request, tune: { cutoffRadius: [3.0, 4.5] } });
    expect(m.settings.cutoffRadius).toBe(best.settings.cutoffRadius);
    expect(m.notes.join(' ')).toMatch(/tuned by cross-validation: cutoff radius [0-9.]+/);
  }, 180_000);
});
