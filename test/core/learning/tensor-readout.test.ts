// The λ > 0 read-out (core/learning/tensor-readout.ts) against the feature route it replaces: computeFeatures followed by
// a dot product with the same weights, and whole-model predictions through modelPredictor against
// predictWithFeatures, for every model form (linear and kernel tensor parts, a vector part, the fallbacks).
// The reference values come from the feature code, which is itself checked against Clebsch–Gordan tables and
// rotation tests in features.test.ts; here the two routes must agree to round-off.
import { readFileSync } from 'node:fs';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';
import type { FeatureSettings } from '../../../src-main/core/descriptors/feature-types.ts';
import { computeFeatures, featurePlan } from '../../../src-main/core/descriptors/features.ts';
import { makeFrame, type Frame } from '../../../src-main/core/geometry/frame.ts';
import { supercell } from '../../../src-main/core/geometry/cell.ts';
import { modelFeaturiser, modelPredictor, predictTarget, predictWithFeatures, trainModel, type Model } from '../../../src-main/core/learning/model.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { computeReadout, readOne, readoutScratch, readoutStep, weightMatrices } from '../../../src-main/core/learning/tensor-readout.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';
import { arenaRestarts, setArenaLimit } from '../../../src-main/core/wasm/arena.ts';
import { descriptorKernels } from '../../../src-main/core/wasm/descriptors.ts';
import { referenceReadOne } from '../../helpers/reference-kernels.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';
import { equivarianceError, MIRROR, randomCluster, randomRotations } from '../../helpers/equivariance-harness.ts';

const frames: Frame[] = parseExtxyz(readFileSync(new URL('../../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water-dft-sample.extxyz');

const base: FeatureSettings = { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 5, lmax: 5, species: ['O', 'H'], centres: ['O', 'H'] };

/** Σ_f ξ̂_fμ(e) u_f from computeFeatures, with u per centre species (species × n). */
function featureRoute(frame: Frame, s: FeatureSettings, lambda: 1 | 2, u: Float64Array): { values: Float64Array; scalar: Float64Array } {
  const fe = computeFeatures(frame, s, [lambda]);
  const t = fe.tensor[lambda]!;
  const nM = 2 * lambda + 1;
  const values = new Float64Array(fe.count * nM);
  for (let e = 0; e < fe.count; e++) {
    const off = fe.centreSpecies[e] * t.n;
    for (let mu = 0; mu < nM; mu++) {
      let d = 0;
      for (let f = 0; f < t.n; f++) d += t.data[(e * nM + mu) * t.n + f] * u[off + f];
      values[e * nM + mu] = d;
    }
  }
  return { values, scalar: fe.scalar };
}

function randomWeights(s: FeatureSettings, lambda: 1 | 2, seed: number): { u: Float64Array; n: number } {
  const n = computeFeatures(frames[0], s, [lambda]).tensor[lambda]!.n;
  const rng = makeRng(seed);
  return { u: Float64Array.from({ length: s.centres.length * n }, () => rng.normal()), n };
}

function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  expect(a.length).toBe(b.length);
  let d = 0;
  for (let i = 0; i < a.length; i++) d = Math.max(d, Math.abs(a[i] - b[i]));
  return d;
}

describe('λ > 0 read-out without forming the features', () => {
  const cases: [string, FeatureSettings][] = [
    ['default tensor limits', base],
    ['lmaxTensor = lmax', { ...base, lmaxTensor: base.lmax }],
    ['fewer tensor radial functions', { ...base, nmaxTensor: 3, lmaxTensor: 3 }],
    ['one centre species, three neighbour species', { ...base, species: ['O', 'H', 'C'], centres: ['O'] }],
  ];
  for (const lambda of [1, 2] as const) {
    for (const [name, s] of cases) {
      it(`λ = ${lambda}, ${name}: equals computeFeatures + dot product on a DFT water frame`, () => {
        const { u, n } = randomWeights(s, lambda, 11 + lambda);
        const W = s.centres.map((_, k) => weightMatrices(s, lambda, u, k * n));
        const fast = computeReadout(frames[3], s, { lambda, matrices: (_e, k) => W[k] });
        const slow = featureRoute(frames[3], s, lambda, u);
        let scale = 0;
        for (const v of slow.values) scale = Math.max(scale, Math.abs(v));
        expect(scale).toBeGreaterThan(0.1); // a real signal, not two zeros
        expect(maxAbsDiff(fast.values, slow.values)).toBeLessThan(1e-12 * scale);
        // the λ = 0 rows come from the same code and are identical
        expect(maxAbsDiff(fast.features.scalar, slow.scalar)).toBe(0);
      });
    }
  }

  it('weights that depend on the environment (a kernel model) are read per environment', () => {
    const s = base;
    const { u, n } = randomWeights(s, 2, 5);
    const fe = computeFeatures(frames[1], s, [2]);
    // environment e uses weights u scaled by (1 + its first λ = 0 feature): the matrices must see e's own row
    const scaled = (e: number) => 1 + fe.scalar[e * fe.n0];
    const fast = computeReadout(frames[1], s, {
      lambda: 2,
      matrices: (e, k, scalar, at) => {
        expect(at).toBe(e * fe.n0);
        return weightMatrices(s, 2, u.map((x) => x * (1 + scalar[at])), k * n);
      },
    });
    const t = fe.tensor[2]!;
    let worst = 0;
    for (let e = 0; e < fe.count; e++) {
      for (let mu = 0; mu < 5; mu++) {
        let d = 0;
        for (let f = 0; f < n; f++) d += t.data[(e * 5 + mu) * n + f] * u[fe.centreSpecies[e] * n + f] * scaled(e);
        worst = Math.max(worst, Math.abs(d - fast.values[e * 5 + mu]));
      }
    }
    expect(worst).toBeLessThan(1e-12);
  });

  it('a lone atom has a zero λ = 2 block, and its read-out is exactly zero', () => {
    const lone = makeFrame(['O'], [5, 5, 5], Float64Array.of(20, 0, 0, 0, 20, 0, 0, 0, 20));
    const s = { ...base, species: ['O'], centres: ['O'] };
    const { u } = { u: Float64Array.from({ length: 2000 }, (_, i) => Math.sin(i)) };
    const r = computeReadout(lone, s, { lambda: 2, matrices: () => weightMatrices(s, 2, u) });
    expect([...r.values]).toEqual([0, 0, 0, 0, 0]);
    expect(r.features.scalar.some((x) => x !== 0)).toBe(true);
  });

  it('rotates as a λ = 2 (λ = 1) quantity under rotations and a mirror', () => {
    const rng = makeRng(8);
    const cluster = randomCluster(rng, ['O', 'H', 'H', 'O', 'H', 'H', 'O'], 3);
    const s = { ...base, cutoff: 6 };
    for (const lambda of [1, 2] as const) {
      const { u, n } = randomWeights(s, lambda, 21);
      const W = s.centres.map((_, k) => weightMatrices(s, lambda, u, k * n));
      const worst = equivarianceError(
        (f) => ({ y: { data: computeReadout(f, s, { lambda, matrices: (_e, k) => W[k] }).values, axes: [{ lambda, stride: 1 }] } }),
        cluster,
        [...randomRotations(rng, 3), MIRROR],
      );
      expect(worst.y).toBeLessThan(1e-10);
    }
  });

  it('refuses weight vectors of the wrong length', () => {
    expect(() => weightMatrices(base, 2, new Float64Array(10))).toThrow(/weights/);
  });
});

describe('modelPredictor gives the feature route’s predictions', () => {
  const train = frames.slice(0, 5);
  const test = frames.slice(5);
  const models: Record<string, Model> = {};
  beforeAll(async () => {
    const small = { radialFunctions: 4, angularOrder: 3 };
    models.linear = await trainModel(train, { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm', settings: small });
    models.kernel = await trainModel(train, { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'direct', settings: { ...small, kernelExponent: 2, anchorEnvironments: 30 } });
    models.selected = await trainModel(train, { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm', settings: { ...small, maxFeatures: 40 } });
    // a vector target (λ = 1): an invented per-frame vector, only to have a model of that shape
    const withVector = train.map((f, i) => ({ ...f, info: { ...f.info, mu: [Math.sin(i), Math.cos(i), 0.3 * i] } }));
    models.vector = await trainModel(withVector, { tensorKey: 'mu', kind: 'alpha-cm', route: 'cm', settings: small });
  }, 120_000);

  for (const name of ['linear', 'kernel', 'selected', 'vector']) {
    it(`${name} model`, () => {
      const model = models[name];
      const predict = modelPredictor(model);
      const featurise = modelFeaturiser(model);
      test.forEach((f, k) => {
        const fast = predict(f, k);
        const slow = predictWithFeatures(model, f, featurise(f, k), k);
        const scale = Math.max(...Array.from(slow.irreducible, Math.abs));
        expect(scale).toBeGreaterThan(0);
        expect(maxAbsDiff(fast.irreducible, slow.irreducible)).toBeLessThan(1e-12 * scale);
        expect(maxAbsDiff(fast.localIrreducible, slow.localIrreducible)).toBeLessThan(1e-12 * scale);
        expect(fast.applicability.atomDistance).toEqual(slow.applicability.atomDistance);
        expect(fast.applicability.variance).toBeCloseTo(slow.applicability.variance, 14);
        // predictTarget without a featuriser takes the predictor
        expect(predictTarget(model, f, k).irreducible).toEqual(fast.irreducible);
      });
    });
  }

  it('one predictor writes each frame over the previous frame\'s arrays and carries nothing over (frames in turn, one of another size)', () => {
    const model = models.linear;
    const numbers = (p: ReturnType<ReturnType<typeof modelPredictor>>) => {
      const a = p.applicability;
      return [...p.irreducible, ...p.localIrreducible, ...a.atomDistance, ...a.atomScore, a.score, a.variance, a.maxDistance, a.atomsOutside, ...(p.uncertainty?.sd ?? [])];
    };
    const bigger = supercell(test[0], [2, 1, 1]);
    const sequence = [test[0], test[1], bigger, test[0], bigger, test[1]];
    const predict = modelPredictor(model);
    sequence.forEach((f, k) => {
      const reused = numbers(predict(f, k));
      const fresh = numbers(modelPredictor(model)(f, k));
      expect(reused.length).toBe(fresh.length);
      expect(reused.every((v, i) => Object.is(v, fresh[i]))).toBe(true);
    });
  });
});

describe('the register-blocked read-out kernel', () => {
  // Random coefficients (with some exact zeros, as a species absent from an environment gives) and random weight
  // matrices of the stored layout; the kept plain-loop kernel (test/helpers/reference-kernels.ts) is the reference,
  // and since every sum keeps its order the numbers must be the very same.
  const settings: [string, FeatureSettings][] = [
    ['nmax 8, lmax 6 (two species)', { ...base, nmax: 8, lmax: 6 }],
    ['nmax 5, lmax 5, lmaxTensor 5, three species', { ...base, lmaxTensor: 5, species: ['O', 'H', 'C'] }],
    ['nmaxTensor 3 (odd channel count)', { ...base, nmaxTensor: 3, species: ['O'], centres: ['O'] }],
  ];
  for (const lambda of [1, 2] as const) {
    for (const [name, s] of settings) {
      it(`λ = ${lambda}, ${name}: bit-identical to the plain loops`, () => {
        const rng = makeRng(31 + lambda);
        const P = featurePlan(s, [lambda]);
        const T = P.tensors[0];
        const W = weightMatrices(s, lambda, Float64Array.from({ length: T.n }, () => rng.normal()));
        const S = readoutScratch(P, T);
        const nM = 2 * lambda + 1;
        const fast = new Float64Array(nM);
        const plain = new Float64Array(nM);
        for (let trial = 0; trial < 20; trial++) {
          const c = Float64Array.from({ length: P.expander.size }, () => (rng.uniform() < 0.15 ? 0 : rng.normal()));
          readOne(P, T, c, W, S, fast, 0);
          referenceReadOne(P, T, c, W, S, plain, 0);
          expect(Array.from(fast)).toEqual(Array.from(plain));
          expect(fast.some((v) => v !== 0)).toBe(true);
        }
      });
    }
  }
});

describe('the WebAssembly read-out kernel', () => {
  // The kernel (src-main/core/wasm/assembly/descriptors.ts readOut) keeps every sum's order, so its numbers must be the
  // plain loops' bit for bit: with the matrices resident per species (a linear model) and copied per environment
  // (a kernel model), for odd and even channel counts, λ = 1 and 2, degrees up to 6 (every width of its column tiles).
  afterEach(() => setWebAssemblyKernels(true));
  const settings: [string, FeatureSettings][] = [
    ['nmax 8, lmax 6 (two species)', { ...base, nmax: 8, lmax: 6 }],
    ['nmax 5, lmax 5, lmaxTensor 5, three species', { ...base, lmaxTensor: 5, species: ['O', 'H', 'C'] }],
    ['nmaxTensor 3 (odd channel count)', { ...base, nmaxTensor: 3, species: ['O'], centres: ['O'] }],
    ['nmax 8, lmax 6, lmaxTensor 6, nmaxTensor 7 (14 channels)', { ...base, nmax: 8, lmax: 6, lmaxTensor: 6, nmaxTensor: 7 }],
  ];
  it('is available here (Node 20 runs WebAssembly SIMD)', () => {
    expect(descriptorKernels()).not.toBeNull();
  });
  for (const lambda of [1, 2] as const) {
    for (const [name, s] of settings) {
      it(`λ = ${lambda}, ${name}: bit-identical to the plain loops`, () => {
        const rng = makeRng(41 + lambda);
        const P = featurePlan(s, [lambda]);
        const T = P.tensors[0];
        const W = s.centres.map(() => weightMatrices(s, lambda, Float64Array.from({ length: T.n }, () => rng.normal())));
        const S = readoutScratch(P, T);
        const nM = 2 * lambda + 1;
        const trials = 20;
        const cs = Array.from({ length: trials }, () => Float64Array.from({ length: P.expander.size }, () => (rng.uniform() < 0.15 ? 0 : rng.normal())));
        const plain = new Float64Array(trials * nM);
        cs.forEach((c, e) => referenceReadOne(P, T, c, W[e % W.length], S, plain, e * nM));
        const scalar = new Float64Array(trials * P.n0);
        for (const resident of [true, false]) {
          const out = new Float64Array(trials * nM);
          const step = readoutStep(P, T, { lambda, matrices: (_e, k) => W[k].slice(), perSpecies: resident ? W : undefined }, scalar, out);
          cs.forEach((c, e) => step(e, e, c, e % W.length));
          expect(Array.from(out)).toEqual(Array.from(plain));
        }
        expect(plain.some((v) => v !== 0)).toBe(true);
      });
    }
  }

  it('whole predictions are the same bits with the kernels on and off', () => {
    const s = { ...base, nmax: 6, lmax: 4 };
    const { u, n } = randomWeights(s, 2, 17);
    const W = s.centres.map((_, k) => weightMatrices(s, 2, u, k * n));
    // per-species weights: each environment read where its expansion left the coefficients (TensorStep.inPlace)
    const on = computeReadout(frames[2], s, { lambda: 2, matrices: (_e, k) => W[k], perSpecies: W });
    // weights per environment (as a kernel model's): read after the group's rows, from the coefficients copied in
    const perEnvironment = computeReadout(frames[2], s, { lambda: 2, matrices: (_e, k) => W[k].slice() });
    setWebAssemblyKernels(false);
    const off = computeReadout(frames[2], s, { lambda: 2, matrices: (_e, k) => W[k] });
    expect(Array.from(on.values)).toEqual(Array.from(off.values));
    expect(Array.from(perEnvironment.values)).toEqual(Array.from(off.values));
    expect(Array.from(on.features.scalar)).toEqual(Array.from(off.features.scalar));
  });

  it('whole read-outs are the same bits when a centre with more pairs than any before grows the expansion\'s region in the middle of a group', () => {
    // a lone atom, then a dense grid (1.1 Å spacing: 53 pairs within 4.5 Å at its corners, up to 250 at its middle,
    // beyond the 64 the expansion's region first holds) ordered from its corners inwards, so that the pair count rises
    // within each group of environments side by side; each growth places the region anew, without the earlier
    // slots' coefficients, which must then not be read in place. Settings of their own: a fresh expander.
    const centre = 10 + 3 * 1.1;
    const grid: { species: string; at: number[] }[] = [];
    for (let i = 0; i < 7; i++) for (let j = 0; j < 7; j++) for (let k = 0; k < 7; k++) grid.push({ species: (i + j + k) % 3 ? 'H' : 'O', at: [10 + 1.1 * i, 10 + 1.1 * j, 10 + 1.1 * k] });
    const far = (p: { at: number[] }) => Math.hypot(p.at[0] - centre, p.at[1] - centre, p.at[2] - centre);
    grid.sort((a, b) => far(b) - far(a));
    const frame = makeFrame(['O', ...grid.map((p) => p.species)], [40, 40, 40, ...grid.flatMap((p) => p.at)], Float64Array.of(80, 0, 0, 0, 80, 0, 0, 0, 80));
    const s: FeatureSettings = { ...base, nmax: 4, lmax: 4, sigma: 0.41 };
    const T = featurePlan(s, [2]).tensors[0];
    const u = Float64Array.from({ length: 2 * T.n }, (_, i) => Math.sin(i));
    const W = [0, 1].map((k) => weightMatrices(s, 2, u, k * T.n));
    const on = computeReadout(frame, s, { lambda: 2, matrices: (_e, k) => W[k], perSpecies: W });
    setWebAssemblyKernels(false);
    const off = computeReadout(frame, s, { lambda: 2, matrices: (_e, k) => W[k], perSpecies: W });
    expect(Array.from(on.values)).toEqual(Array.from(off.values));
    expect(Array.from(on.features.scalar)).toEqual(Array.from(off.features.scalar));
    expect(off.values.some((v) => Math.abs(v) > 0.1)).toBe(true);
  });

  it('reads each environment in place when the weights are per species, and not otherwise', () => {
    const s = { ...base, nmax: 6, lmax: 4 };
    const P = featurePlan(s, [2]);
    const T = P.tensors[0];
    const W = s.centres.map(() => new Float64Array(T.blocks.length * P.tch * P.tch));
    const values = new Float64Array(5);
    const scalar = new Float64Array(P.n0);
    expect(readoutStep(P, T, { lambda: 2, matrices: (_e, k) => W[k], perSpecies: W }, scalar, values).inPlace).toBeTypeOf('function');
    expect(readoutStep(P, T, { lambda: 2, matrices: (_e, k) => W[k] }, scalar, values).inPlace).toBeUndefined();
    // no coefficients in place (the address is gone): the step says so and writes nothing
    const step = readoutStep(P, T, { lambda: 2, matrices: (_e, k) => W[k], perSpecies: W }, scalar, values);
    values.fill(7);
    expect(step.inPlace?.(0, 0, () => -1)).toBe(false);
    expect(Array.from(values)).toEqual([7, 7, 7, 7, 7]);
  });

  it('whole read-outs are the same bits when the kernels\' memory starts again in the middle of a frame (lowered arena limits)', () => {
    // both kernel modules' arenas (core/wasm/arena.ts) drop their regions and start again past the limit; the
    // descriptor and read-out regions then move between environments and must be written again
    const s = { ...base, nmax: 6, lmax: 4 };
    const { u, n } = randomWeights(s, 2, 19);
    const W = s.centres.map((_, k) => weightMatrices(s, 2, u, k * n));
    setWebAssemblyKernels(false);
    const off = computeReadout(frames[1], s, { lambda: 2, matrices: (_e, k) => W[k] });
    setWebAssemblyKernels(true);
    const before = arenaRestarts();
    try {
      for (const kib of [256, 512, 768, 1024, 2048]) {
        setArenaLimit(kib * 1024);
        const on = computeReadout(frames[1], s, { lambda: 2, matrices: (_e, k) => W[k], perSpecies: W });
        expect(Array.from(on.values), `limit ${kib} KiB`).toEqual(Array.from(off.values));
        expect(Array.from(on.features.scalar), `limit ${kib} KiB`).toEqual(Array.from(off.features.scalar));
      }
    } finally {
      setArenaLimit(null);
    }
    expect(arenaRestarts()).toBeGreaterThan(before);
  });
});
