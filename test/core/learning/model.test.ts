// Training and prediction on synthetic features with a known linear model in feature space: the regression
// must recover the frame targets and the per-atom contributions (the target is additive by construction).
import { describe, expect, it } from 'vitest';
import type { EnvironmentFeatures } from '../../../src-main/core/descriptors/feature-types.ts';
import { makeFrame, type Frame } from '../../../src-main/core/geometry/frame.ts';
import { predictWithFeatures, trainWithFeaturiser, type Featuriser } from '../../../src-main/core/learning/model.ts';
import { fromIrreducible, toIrreducible } from '../../../src-main/core/dielectric/tensor.ts';
import { sphericalToVector } from '../../../src-main/core/learning/targets.ts';
import { makeRng, syntheticFeatures } from '../../helpers/synthetic-features.ts';

const SPECIES = ['H', 'O']; // sorted, as the model orders them

interface Synthetic {
  frames: Frame[];
  features: EnvironmentFeatures[];
  /** true per-atom irreducible contributions, per frame (atoms × components) */
  local: Float64Array[];
}

function makeSet(shape: 'tensor' | 'vector' | 'scalar', nFrames: number, seed: number): Synthetic {
  const rng = makeRng(seed);
  const n0 = 6;
  const nT = 4;
  const order = shape === 'tensor' ? 2 : 1;
  const C = shape === 'tensor' ? 6 : shape === 'vector' ? 3 : 1;
  // the known model: baseline b_s, weights w0_s (λ=0) and wT_s (λ=order)
  const wRng = makeRng(999);
  const b = [0.4, 1.3];
  const w0 = SPECIES.map(() => Float64Array.from({ length: n0 }, () => wRng.normal()));
  const wT = SPECIES.map(() => Float64Array.from({ length: nT }, () => wRng.normal()));
  const frames: Frame[] = [];
  const features: EnvironmentFeatures[] = [];
  const local: Float64Array[] = [];
  for (let f = 0; f < nFrames; f++) {
    const nO = 2 + rng.int(4);
    const nH = 3 + rng.int(6);
    const species = [...Array(nO).fill('O'), ...Array(nH).fill('H')];
    const frame = makeFrame(species, new Float64Array(3 * species.length), [9, 0, 0, 0, 9, 0, 0, 0, 9]);
    const fe = syntheticFeatures(rng, {
      count: species.length,
      n0,
      tensor: shape === 'scalar' ? {} : { [order]: nT },
      centreSpecies: species.map((s) => SPECIES.indexOf(s)),
    });
    const loc = new Float64Array(species.length * C);
    const total = new Float64Array(C);
    for (let e = 0; e < fe.count; e++) {
      const s = fe.centreSpecies[e];
      if (shape !== 'vector') {
        let v = b[s];
        for (let k = 0; k < n0; k++) v += w0[s][k] * fe.scalar[e * n0 + k];
        loc[e * C] = v;
      }
      if (shape !== 'scalar') {
        const w = 2 * order + 1;
        const off = shape === 'tensor' ? 1 : 0;
        for (let mu = 0; mu < w; mu++) {
          let v = 0;
          for (let k = 0; k < nT; k++) v += wT[s][k] * fe.tensor[order as 1 | 2]!.data[(e * w + mu) * nT + k];
          loc[e * C + off + mu] = v;
        }
      }
      for (let c = 0; c < C; c++) total[c] += loc[e * C + c];
    }
    if (shape === 'tensor') frame.info.alpha = [...fromIrreducible(total)];
    else if (shape === 'vector') frame.info.alpha = [...sphericalToVector(total)];
    else frame.info.alpha = total[0];
    frames.push(frame);
    features.push(fe);
    local.push(loc);
  }
  return { frames, features, local };
}

describe('model on a known linear target in feature space', () => {
  for (const shape of ['tensor', 'vector', 'scalar'] as const) {
    it(`recovers a ${shape} target and its per-atom contributions`, async () => {
      const set = makeSet(shape, 48, shape.length);
      const nTrain = 40;
      const train = set.frames.slice(0, nTrain);
      const featurise: Featuriser = (_frame, i) => set.features[i];
      // the synthetic target is linear in made-up features, not a physical α (some values are negative): past the kind guard
      const model = await trainWithFeaturiser(train, { tensorKey: 'alpha', kind: 'alpha-cm', route: 'cm', trustKind: true }, featurise, {}, { createdAt: 'test' });
      expect(model.target.shape).toBe(shape);
      for (const p of model.parts) {
        expect(p.regularisation.chosenBy).toBe('cross-validation');
        expect(p.regularisation.relative).toBeLessThanOrEqual(1e-6);
      }
      const C = shape === 'tensor' ? 6 : shape === 'vector' ? 3 : 1;
      for (let f = nTrain; f < set.frames.length; f++) {
        const pred = predictWithFeatures(model, set.frames[f], set.features[f], f);
        const truth = set.local[f];
        const scale = Math.max(...truth.map(Math.abs));
        for (let q = 0; q < truth.length; q++) expect(Math.abs(pred.localIrreducible[q] - truth[q])).toBeLessThan(1e-5 * scale);
        const ref = set.frames[f].info.alpha;
        const refIrr = shape === 'tensor' ? toIrreducible(Float64Array.from(ref as number[])) : shape === 'vector' ? Float64Array.of((ref as number[])[1], (ref as number[])[2], (ref as number[])[0]) : Float64Array.of(ref as number);
        for (let c = 0; c < C; c++) expect(pred.irreducible[c]).toBeCloseTo(refIrr[c], 5);
      }
    });
  }

  it('fits the per-species baseline and the kernel forms (ζ = 2 sparse and exact) agree on interpolation', async () => {
    const set = makeSet('scalar', 30, 77);
    const featurise: Featuriser = (_frame, i) => set.features[i];
    const request = (settings: object) => ({ tensorKey: 'alpha', kind: 'alpha-cm' as const, route: 'cm' as const, settings, trustKind: true });
    const exact = await trainWithFeaturiser(set.frames, request({ kernelExponent: 2, anchorEnvironments: 0, regularisation: 1e-6 }), featurise);
    // with as many representatives as environments the sparse form equals the exact one
    const sparse = await trainWithFeaturiser(set.frames, request({ kernelExponent: 2, anchorEnvironments: 5000, regularisation: 1e-6 }), featurise);
    expect(exact.parts[0].method).toBe('exact');
    expect(sparse.parts[0].method).toBe('sparse');
    for (let f = 0; f < 5; f++) {
      const a = predictWithFeatures(exact, set.frames[f], set.features[f]);
      const b = predictWithFeatures(sparse, set.frames[f], set.features[f]);
      expect(b.irreducible[0]).toBeCloseTo(a.irreducible[0], 4);
      expect(a.irreducible[0]).toBeCloseTo(set.frames[f].info.alpha as number, 2);
      expect(a.applicability.variance).toBeGreaterThanOrEqual(0);
    }
  });

  it('is deterministic for a seed', async () => {
    const set = makeSet('tensor', 12, 5);
    const featurise: Featuriser = (_frame, i) => set.features[i];
    const req = { tensorKey: 'alpha', kind: 'alpha-cm' as const, route: 'cm' as const, settings: { seed: 3 }, trustKind: true };
    const a = await trainWithFeaturiser(set.frames, req, featurise, {}, { createdAt: 'x' });
    const b = await trainWithFeaturiser(set.frames, req, featurise, {}, { createdAt: 'x' });
    expect([...a.parts[1].weights!]).toEqual([...b.parts[1].weights!]);
    expect(a.applicability.threshold).toBe(b.applicability.threshold);
  });

  it('stops on an aborted signal', async () => {
    const set = makeSet('scalar', 6, 1);
    const c = new AbortController();
    c.abort();
    await expect(trainWithFeaturiser(set.frames, { tensorKey: 'alpha', kind: 'alpha-cm', route: 'cm' }, (_f, i) => set.features[i], { signal: c.signal })).rejects.toThrow(/cancelled/);
  });

  it('says clearly when the key is missing or malformed', async () => {
    const set = makeSet('scalar', 4, 2);
    await expect(trainWithFeaturiser(set.frames, { tensorKey: 'nope', kind: 'eps', route: 'cm' }, (_f, i) => set.features[i])).rejects.toThrow(/no property "nope"/);
    set.frames[2].info.alpha = [1, 2];
    await expect(trainWithFeaturiser(set.frames, { tensorKey: 'alpha', kind: 'eps', route: 'cm' }, (_f, i) => set.features[i])).rejects.toThrow(/frame 2.*2 numbers|2 numbers/);
  });
});
