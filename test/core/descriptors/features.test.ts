// Symmetry-adapted features: counts, symmetries (rotation, mirror/inversion, permutation, translation),
// continuity at the cutoff, unit norm, and the stored (unique-pair, √2-weighted) layout against a plain sum over
// all ordered pairs built with core/descriptors/clebsch-gordan.ts's coupleReal.
import { afterEach, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { makeFrame, type Frame } from '../../../src-main/core/geometry/frame.ts';
import type { FeatureSettings } from '../../../src-main/core/descriptors/feature-types.ts';
import { computeFeatures, concatenateFeatures, describeFeatures, featureCount, featurePlan, forEachEnvironment, powerSpectrum, tensorFeatures, tensorLimits } from '../../../src-main/core/descriptors/features.ts';
import { referencePowerSpectrum, referenceTensorFeatures } from '../../helpers/reference-kernels.ts';
import { makeDensityExpander } from '../../../src-main/core/descriptors/density.ts';
import { coupleReal } from '../../../src-main/core/descriptors/clebsch-gordan.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';
import { arenaRestarts, setArenaLimit } from '../../../src-main/core/wasm/arena.ts';
import { descriptorKernels } from '../../../src-main/core/wasm/descriptors.ts';
import { InputError } from '../../../src-main/core/errors.ts';
import {
  INVERSION,
  MIRROR,
  equivarianceError,
  permuteFrame,
  randomCluster,
  randomPeriodicFrame,
  randomRotations,
  translateFrame,
  type Equivariant,
} from '../../helpers/equivariance-harness.ts';
import { neighbourList } from '../../../src-main/core/geometry/neighbours.ts';
import { waterFrames } from '../../helpers/trajectory.ts';
import { linearDesignRows } from '../../../src-main/core/learning/kernels.ts';

const settings: FeatureSettings = {
  cutoff: 3.2,
  cutoffWidth: 0.6,
  sigma: 0.45,
  nmax: 4,
  lmax: 4,
  species: ['O', 'H'],
  centres: ['O', 'H'],
  lmaxTensor: 3,
};

function asEquivariant(frame: Frame, s: FeatureSettings = settings): Record<string, Equivariant> {
  const f = computeFeatures(frame, s, [0, 1, 2]);
  return {
    scalar: { data: f.scalar, axes: [] },
    dipole: { data: f.tensor[1]!.data, axes: [{ lambda: 1, stride: f.tensor[1]!.n }] },
    tensor: { data: f.tensor[2]!.data, axes: [{ lambda: 2, stride: f.tensor[2]!.n }] },
  };
}

/** Largest |x_k − y_k| (one assertion instead of thousands). */
function maxDiff(x: ArrayLike<number>, y: ArrayLike<number>): number {
  if (x.length !== y.length) throw new Error(`maxDiff: lengths ${x.length} and ${y.length} differ`);
  let d = 0;
  for (let k = 0; k < x.length; k++) d = Math.max(d, Math.abs(x[k] - y[k]));
  return Number.isNaN(d) ? Infinity : d;
}

const water = (n: number) => Array.from({ length: n }, (_, i) => (i % 3 === 0 ? 'O' : 'H'));

describe('feature counts', () => {
  it('match hand counts for 2 species, nmax 3, lmax 2 (λ=2: blocks (0,2), (1,1), (2,2); λ=1: (0,1), (1,2))', () => {
    const s: FeatureSettings = { ...settings, nmax: 3, lmax: 2, lmaxTensor: 2 };
    // 6 channels: 21 unique pairs; λ = 0: 21 × 3 degrees = 63.
    expect(featureCount(s, 0)).toBe(63);
    // λ = 2: (1,1) and (2,2) 21 pairs each, (0,2) all 36 ordered pairs → 78.
    expect(featureCount(s, 2)).toBe(78);
    // λ = 1: (0,1) and (1,2), 36 each → 72.
    expect(featureCount(s, 1)).toBe(72);
    for (const l of [0, 1, 2] as const) expect(describeFeatures(s, l).length).toBe(featureCount(s, l));
  });

  it('prints the counts of the benchmark settings (2 species, nmax 8, lmax 6)', () => {
    const s: FeatureSettings = { ...settings, nmax: 8, lmax: 6, lmaxTensor: undefined };
    const full: FeatureSettings = { ...s, lmaxTensor: 6 };
    // 16 channels: 136 unique pairs × 7 degrees.
    expect(featureCount(s, 0)).toBe(952);
    // λ = 2, lmaxTensor 6: l = l' for l = 1…6 (136 each) and l' = l + 2 for l = 0…4 (256 each).
    expect(featureCount(full, 2)).toBe(6 * 136 + 5 * 256);
    console.log(`features (2 species, nmax 8, lmax 6): λ=0 ${featureCount(s, 0)}, λ=1 ${featureCount(full, 1)}, λ=2 ${featureCount(full, 2)} at lmaxTensor 6, λ=2 ${featureCount(s, 2)} at the default lmaxTensor ${tensorLimits(s).lmax}`);
  });

  it('match the computed array sizes', () => {
    const f = computeFeatures(randomCluster(makeRng(1), water(9), 2.5), settings, [0, 1, 2]);
    expect(f.count).toBe(9);
    expect(f.scalar.length).toBe(9 * featureCount(settings, 0));
    expect(f.tensor[1]!.data.length).toBe(9 * 3 * featureCount(settings, 1));
    expect(f.tensor[2]!.data.length).toBe(9 * 5 * featureCount(settings, 2));
  });
});

describe('symmetries', () => {
  const rng = makeRng(20261202);

  it('random clusters: λ=0 invariant, λ=1 and λ=2 transform with D^λ under random rotations (1e-10)', () => {
    for (let trial = 0; trial < 3; trial++) {
      const frame = randomCluster(rng, water(12), 2.6);
      const worst = equivarianceError((f) => asEquivariant(f), frame, randomRotations(rng, 3));
      for (const v of Object.values(worst)) expect(v).toBeLessThan(1e-10);
    }
  });

  it('periodic triclinic cells smaller than the cutoff (several images): same, to 1e-10', () => {
    for (let trial = 0; trial < 2; trial++) {
      const frame = randomPeriodicFrame(rng, water(6), [2.9, 3.3, 3.1]);
      const worst = equivarianceError((f) => asEquivariant(f), frame, randomRotations(rng, 2));
      for (const v of Object.values(worst)) expect(v).toBeLessThan(1e-10);
    }
  });

  it('mirror and inversion: proper tensors transform with D^λ of the improper matrix (λ=1 flips under inversion)', () => {
    const frame = randomCluster(rng, water(10), 2.4);
    const worst = equivarianceError((f) => asEquivariant(f), frame, [MIRROR, INVERSION]);
    for (const v of Object.values(worst)) expect(v).toBeLessThan(1e-10);
    const a = computeFeatures(frame, settings, [1, 2]);
    const b = computeFeatures(translateFrame({ ...frame, positions: frame.positions.map((x) => -x) }, [0, 0, 0]), settings, [1, 2]);
    const a1 = a.tensor[1]!.data, b1 = b.tensor[1]!.data, a2 = a.tensor[2]!.data, b2 = b.tensor[2]!.data;
    expect(maxDiff(b1, a1.map((x) => -x))).toBeLessThan(1e-12);
    expect(Math.max(...a1.map(Math.abs))).toBeGreaterThan(1e-3); // not trivially zero
    expect(maxDiff(b2, a2)).toBeLessThan(1e-12);
  });

  it('permuting atoms permutes the environments and changes nothing else', () => {
    const frame = randomPeriodicFrame(rng, water(9), [4, 4.2, 3.8]);
    const order = [4, 0, 8, 2, 7, 1, 3, 6, 5];
    const a = computeFeatures(frame, settings, [0, 2]);
    const b = computeFeatures(permuteFrame(frame, order), settings, [0, 2]);
    const n0 = a.n0, n2 = a.tensor[2]!.n;
    order.forEach((j, k) => {
      expect(b.centre[k]).toBe(k);
      expect(maxDiff(b.scalar.subarray(k * n0, (k + 1) * n0), a.scalar.subarray(j * n0, (j + 1) * n0))).toBeLessThan(1e-13);
      expect(maxDiff(b.tensor[2]!.data.subarray(k * 5 * n2, (k + 1) * 5 * n2), a.tensor[2]!.data.subarray(j * 5 * n2, (j + 1) * 5 * n2))).toBeLessThan(1e-13);
    });
  });

  it('translating every atom (by a non-lattice vector) changes nothing', () => {
    for (const frame of [randomCluster(rng, water(8), 2.5), randomPeriodicFrame(rng, water(6), [3.4, 3.6, 3.5])]) {
      const a = computeFeatures(frame, settings, [0, 2]);
      const b = computeFeatures(translateFrame(frame, [1.37, -20.2, 5.05]), settings, [0, 2]);
      expect(maxDiff(b.scalar, a.scalar)).toBeLessThan(1e-12);
      expect(maxDiff(b.tensor[2]!.data, a.tensor[2]!.data)).toBeLessThan(1e-12);
    }
  });
});

describe('continuity and normalisation', () => {
  it('features change smoothly (O(step), no jump) as a neighbour crosses r_c', () => {
    const base = [0, 0, 0, 0.96, 0, 0, -0.3, 0.9, 0.1];
    const at = (r: number) => {
      const frame = makeFrame(['O', 'H', 'H', 'O'], [...base, r * 0.48, r * 0.6, r * 0.64], null);
      return computeFeatures(frame, settings, [0, 2]);
    };
    const rc = settings.cutoff;
    const diff = (x: ReturnType<typeof at>, y: ReturnType<typeof at>) => {
      let d = 0;
      for (let k = 0; k < x.n0; k++) d = Math.max(d, Math.abs(x.scalar[k] - y.scalar[k]));
      const n = 5 * x.tensor[2]!.n;
      for (let k = 0; k < n; k++) d = Math.max(d, Math.abs(x.tensor[2]!.data[k] - y.tensor[2]!.data[k]));
      return d;
    };
    // Step of 1e-4 Å across r_c: f_c and R_n vanish with zero slope there, so the change is O(step²).
    expect(diff(at(rc - 5e-5), at(rc + 5e-5))).toBeLessThan(1e-7);
    // Beyond the cutoff the atom no longer matters at all.
    expect(diff(at(rc + 1e-6), at(rc + 1))).toBe(0);
    // But inside it does (the test can see the atom).
    expect(diff(at(rc - 0.7), at(rc + 1))).toBeGreaterThan(1e-3);
  });

  it('every environment block has unit norm; an isolated atom keeps a unit λ=0 row and a zero λ=2 block', () => {
    const f = computeFeatures(randomCluster(makeRng(5), water(7), 2.2), settings, [0, 1, 2]);
    for (let e = 0; e < f.count; e++) {
      let s0 = 0;
      for (let k = 0; k < f.n0; k++) s0 += f.scalar[e * f.n0 + k] ** 2;
      expect(s0).toBeCloseTo(1, 13);
      for (const l of [1, 2] as const) {
        const { n, data } = f.tensor[l]!;
        let s = 0;
        for (let k = 0; k < (2 * l + 1) * n; k++) s += data[e * (2 * l + 1) * n + k] ** 2;
        expect(s).toBeCloseTo(1, 13);
      }
    }
    const lone = computeFeatures(makeFrame(['O', 'H'], [0, 0, 0, 10, 0, 0], null), settings, [2]);
    let s0 = 0;
    for (let k = 0; k < lone.n0; k++) s0 += lone.scalar[k] ** 2;
    expect(s0).toBeCloseTo(1, 13);
    expect(lone.tensor[2]!.data.every((v) => v === 0)).toBe(true);
  });
});

describe('stored layout', () => {
  it('dot products of stored features equal those of the full ordered-pair sums built with coupleReal', () => {
    const s: FeatureSettings = { ...settings, nmax: 3, lmax: 3, lmaxTensor: 3, nmaxTensor: 2 };
    const rng = makeRng(9);
    const frames = [randomCluster(rng, water(6), 2.0), randomCluster(rng, water(6), 2.0)];
    const stored = frames.map((fr) => computeFeatures(fr, s, [0, 1, 2]));
    // Unnormalised full sums from the raw expansion, one centre (atom 0) of each frame.
    const ex = makeDensityExpander({ nmax: 3, lmax: 3, cutoff: s.cutoff, sigma: s.sigma, cutoffWidth: s.cutoffWidth, channels: 2 });
    const full = frames.map((fr) => {
      const c = new Float64Array(ex.size);
      const ch = Int32Array.from(fr.species.map((x) => s.species.indexOf(x)));
      ex.expand(neighbourList(fr, s.cutoff), 0, ch[0], ch, c);
      const vec = (ch1: number, l: number) => c.subarray(ch1 * 16 + l * l, ch1 * 16 + l * l + 2 * l + 1);
      const p: number[] = [];
      for (let c1 = 0; c1 < 6; c1++) for (let c2 = 0; c2 < 6; c2++) for (let l = 0; l <= 3; l++) {
        const a = vec(c1, l), b = vec(c2, l);
        p.push(a.reduce((acc, x, m) => acc + x * b[m], 0) / Math.sqrt(2 * l + 1));
      }
      const t: Record<1 | 2, number[]> = { 1: [], 2: [] };
      const tch = [0, 1, 3, 4]; // n < nmaxTensor = 2 in each species
      for (const lam of [1, 2] as const) {
        for (const c1 of tch) for (const c2 of tch) for (let l = 0; l <= 3; l++) for (let l2 = 0; l2 <= 3; l2++) {
          if (Math.abs(l - l2) > lam || l + l2 < lam || (l + l2 + lam) % 2) continue;
          t[lam].push(...coupleReal(l, l2, lam, vec(c1, l), vec(c2, l2)));
        }
      }
      return { p, t };
    });
    const dot = (x: ArrayLike<number>, y: ArrayLike<number>, n: number) => {
      let d = 0;
      for (let k = 0; k < n; k++) d += x[k] * y[k];
      return d;
    };
    const norm = (x: number[]) => Math.sqrt(dot(x, x, x.length));
    const fullDot = dot(full[0].p, full[1].p, full[0].p.length) / (norm(full[0].p) * norm(full[1].p));
    expect(stored[0].centre[0]).toBe(0);
    expect(dot(stored[0].scalar, stored[1].scalar, stored[0].n0)).toBeCloseTo(fullDot, 12);
    for (const lam of [1, 2] as const) {
      const size = (2 * lam + 1) * stored[0].tensor[lam]!.n;
      const fd = dot(full[0].t[lam], full[1].t[lam], full[0].t[lam].length) / (norm(full[0].t[lam]) * norm(full[1].t[lam]));
      expect(dot(stored[0].tensor[lam]!.data, stored[1].tensor[lam]!.data, size)).toBeCloseTo(fd, 12);
    }
  });

  it('forEachEnvironment hands over exactly the rows and blocks of computeFeatures, one at a time', () => {
    const frame = randomPeriodicFrame(makeRng(12), water(9), [4, 4.1, 3.9]);
    const s: FeatureSettings = { ...settings, centres: ['O'] };
    const all = computeFeatures(frame, s, [0, 1, 2]);
    const seen: number[] = [];
    const count = forEachEnvironment(frame, s, [0, 1, 2], (env) => {
      seen.push(env.centre);
      expect(env.centreSpecies).toBe(0);
      expect([...env.scalar]).toEqual([...all.scalar.subarray(env.index * all.n0, (env.index + 1) * all.n0)]);
      for (const l of [1, 2] as const) {
        const size = (2 * l + 1) * all.tensor[l]!.n;
        expect([...env.tensor[l]!]).toEqual([...all.tensor[l]!.data.subarray(env.index * size, (env.index + 1) * size)]);
      }
    });
    expect(count).toBe(3);
    expect(seen).toEqual([...all.centre]);
    expect(seen).toEqual([0, 3, 6]);
  });

  it('concatenateFeatures stacks frames and numbers them', () => {
    const rng = makeRng(3);
    const parts = [randomCluster(rng, water(3), 1.5), randomCluster(rng, water(6), 2)].map((f) => computeFeatures(f, settings, [2]));
    const all = concatenateFeatures(parts);
    expect(all.count).toBe(9);
    expect([...all.frame]).toEqual([0, 0, 0, 1, 1, 1, 1, 1, 1]);
    expect(all.scalar.subarray(3 * all.n0)).toEqual(parts[1].scalar);
    expect(all.tensor[2]!.data.subarray(3 * 5 * all.tensor[2]!.n)).toEqual(parts[1].tensor[2]!.data);
  });
});

describe('input checks', () => {
  it('an atom of an unknown species is an InputError naming the atom and the frame', () => {
    const frame = makeFrame(['O', 'Na'], [0, 0, 0, 2, 0, 0], null);
    frame.source = { file: 'x.xyz', index: 3, line: 17 };
    expect(() => computeFeatures(frame, settings)).toThrow(InputError);
    expect(() => computeFeatures(frame, settings)).toThrow(/x\.xyz, line 17, frame 3: atom 2 is Na/);
  });

  it('bad settings are InputErrors', () => {
    const frame = makeFrame(['O'], [0, 0, 0], null);
    expect(() => computeFeatures(frame, { ...settings, cutoffWidth: 0 })).toThrow(InputError);
    expect(() => computeFeatures(frame, { ...settings, lmaxTensor: 7 })).toThrow(InputError);
    expect(() => computeFeatures(frame, { ...settings, centres: [] })).toThrow(InputError);
    expect(() => computeFeatures(frame, { ...settings, lmax: 0, lmaxTensor: undefined }, [2])).toThrow(/λ = 2 features need lmaxTensor ≥ 1/);
    expect(computeFeatures(frame, { ...settings, lmax: 0, lmaxTensor: undefined }, [0]).n0).toBe(36); // 8 channels: 36 pairs × 1
  });
});

describe('a dimer along z against scipy and sympy values (test/fixtures/radial-reference.py)', () => {
  // Neighbour on +z: Y_lm(ẑ) = δ_m0 √((2l+1)/4π), so c_nl0 = 4π f_c(d) √((2l+1)/4π) I_nl(d) + δ_l0 √(4π) I_n0(0)
  // with I_nl from scipy's quad; λ=2 then has only μ = 0: w ⟨l 0; l' 0 | 2 0⟩ c_nl0 c_n'l'0 (sympy CG).
  const fx = JSON.parse(readFileSync(new URL('../../fixtures/radial-reference.json', import.meta.url), 'utf8')) as {
    integral: { cutoff: number; sigma: number; nmax: number; lmax: number; rows: { d: number; n: number; l: number; value: number }[] };
    cg20: { l: number; l2: number; value: number }[];
  };
  const { cutoff, sigma, nmax, lmax, rows } = fx.integral;
  const s: FeatureSettings = { cutoff, cutoffWidth: 1, sigma, nmax, lmax, species: ['X'], centres: ['X'], lmaxTensor: lmax };
  const I = (d: number, n: number, l: number) => rows.find((r) => r.d === d && r.n === n && r.l === l)!.value;
  const cg = (l: number, l2: number) => fx.cg20.find((r) => r.l === l && r.l2 === l2)!.value;
  const unit = (x: number[]) => {
    const norm = Math.sqrt(x.reduce((a, v) => a + v * v, 0));
    return x.map((v) => v / norm);
  };

  it.each([1.0, 2.2, 3.7])('d = %f Å: λ=0 and λ=2 features to 1e-8', (d) => {
    const fc = d <= cutoff - 1 ? 1 : 0.5 * (1 + Math.cos(Math.PI * (d - (cutoff - 1)))); // cosine switch, width 1 Å
    const c = (n: number, l: number) => 4 * Math.PI * fc * Math.sqrt((2 * l + 1) / (4 * Math.PI)) * I(d, n, l) + (l === 0 ? Math.sqrt(4 * Math.PI) * I(0, n, 0) : 0);
    const f = computeFeatures(makeFrame(['X', 'X'], [0.3, -0.2, 1.1, 0.3, -0.2, 1.1 + d], null), s, [2]);
    const p = unit(describeFeatures(s, 0).map((q) => (q.weight / Math.sqrt(2 * q.l + 1)) * c(q.n, q.l) * c(q.n2, q.l)));
    expect(maxDiff(f.scalar.subarray(0, f.n0), p)).toBeLessThan(1e-8);
    const labels = describeFeatures(s, 2);
    const xi = unit(labels.map((q) => q.weight * cg(q.l, q.l2) * c(q.n, q.l) * c(q.n2, q.l2)));
    const n2 = f.tensor[2]!.n;
    expect(n2).toBe(labels.length);
    for (let mu = 0; mu < 5; mu++) expect(maxDiff(f.tensor[2]!.data.subarray(mu * n2, (mu + 1) * n2), mu === 2 ? xi : new Array(n2).fill(0))).toBeLessThan(1e-8);
  });
});

describe('the blocked power-spectrum kernel', () => {
  // Random coefficients (some exact zeros, as an absent species gives) for channel counts that are and are not
  // multiples of the blocking; the kept pair-by-pair loop (test/helpers/reference-kernels.ts) is the reference
  // and, every sum keeping its order, the rows and norms must be the very same numbers.
  const cases: [string, FeatureSettings][] = [
    ['2 species, nmax 8, lmax 6', { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 8, lmax: 6, species: ['O', 'H'], centres: ['O', 'H'] }],
    ['3 species, nmax 3, lmax 4 (9 channels)', { cutoff: 4, cutoffWidth: 0.5, sigma: 0.5, nmax: 3, lmax: 4, species: ['O', 'H', 'C'], centres: ['O'] }],
    ['1 species, nmax 2, lmax 0', { cutoff: 4, cutoffWidth: 0.5, sigma: 0.5, nmax: 2, lmax: 0, species: ['O'], centres: ['O'] }],
    ['2 species, nmax 6, lmax 4 (the defaults)', { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 6, lmax: 4, species: ['O', 'H'], centres: ['O', 'H'] }],
    ['3 species, nmax 7, lmax 3 (21 channels)', { cutoff: 4, cutoffWidth: 0.5, sigma: 0.5, nmax: 7, lmax: 3, species: ['O', 'H', 'C'], centres: ['O'] }],
  ];
  afterEach(() => setWebAssemblyKernels(true));
  for (const [name, s] of cases) for (const wasm of [true, false]) {
    it(`${name}, ${wasm ? 'WebAssembly' : 'JavaScript'}: bit-identical to the plain loop`, () => {
      setWebAssemblyKernels(wasm);
      const P = featurePlan(s, []);
      const rng = makeRng(17);
      const fast = new Float64Array(P.n0 + 3);
      const plain = new Float64Array(P.n0 + 3);
      for (let trial = 0; trial < 20; trial++) {
        const c = Float64Array.from({ length: P.expander.size }, () => (rng.uniform() < 0.2 ? 0 : rng.normal()));
        expect(powerSpectrum(P, c, fast, 3)).toBe(referencePowerSpectrum(P, c, plain, 3));
        expect(Array.from(fast)).toEqual(Array.from(plain));
      }
    });
  }
});

describe('the blocked λ > 0 coupling kernel', () => {
  // Two partner channels per pass for λ = 2 in JavaScript, eight per pass in the WebAssembly kernel (core/wasm/
  // assembly/descriptors.ts); the kept one-partner loop (test/helpers/reference-kernels.ts) is the reference, and
  // with every sum in its order the blocks must be the very same numbers (partner counts below, at and above the
  // blocking, odd and even).
  const cases: [string, FeatureSettings][] = [
    ['2 species, nmax 8, lmax 6', { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 8, lmax: 6, species: ['O', 'H'], centres: ['O', 'H'] }],
    ['2 species, nmax 8, lmax 6, lmaxTensor 6', { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 8, lmax: 6, lmaxTensor: 6, species: ['O', 'H'], centres: ['O', 'H'] }],
    ['3 species, nmax 3, lmax 5, lmaxTensor 5 (9 channels)', { cutoff: 4, cutoffWidth: 0.5, sigma: 0.5, nmax: 3, lmax: 5, lmaxTensor: 5, species: ['O', 'H', 'C'], centres: ['O'] }],
    ['1 species, nmax 5, lmax 3 (5 channels)', { cutoff: 4, cutoffWidth: 0.5, sigma: 0.5, nmax: 5, lmax: 3, species: ['O'], centres: ['O'] }],
    ['1 species, nmax 1, lmax 2 (1 channel)', { cutoff: 4, cutoffWidth: 0.5, sigma: 0.5, nmax: 1, lmax: 2, species: ['O'], centres: ['O'] }],
    ['2 species, nmax 8, nmaxTensor 3, lmax 6 (6 tensor channels of 16)', { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 8, nmaxTensor: 3, lmax: 6, species: ['O', 'H'], centres: ['O', 'H'] }],
  ];
  afterEach(() => setWebAssemblyKernels(true));
  for (const [name, s] of cases) {
    for (const [lambda, wasm] of [[1, true], [2, true], [1, false], [2, false]] as const) {
      it(`λ = ${lambda}, ${name}, ${wasm ? 'WebAssembly' : 'JavaScript'}: bit-identical to the one-partner loop`, () => {
        setWebAssemblyKernels(wasm);
        if (wasm) expect(descriptorKernels()).not.toBeNull();
        const P = featurePlan(s, [lambda]);
        const T = P.tensors[0];
        const rng = makeRng(41 + lambda);
        const size = (2 * lambda + 1) * T.n;
        const fast = new Float64Array(2 * size);
        const plain = new Float64Array(2 * size);
        for (let trial = 0; trial < 10; trial++) {
          const c = Float64Array.from({ length: P.expander.size }, () => (rng.uniform() < 0.2 ? 0 : rng.normal()));
          tensorFeatures(P, T, c, fast, 1);
          referenceTensorFeatures(P, T, c, plain, 1);
          expect(Array.from(fast)).toEqual(Array.from(plain));
          expect(fast.subarray(size).some((v) => v !== 0)).toBe(true);
        }
      });
    }
  }
});

/** '' when x and y are the same numbers bit for bit (Object.is), else where and how they first differ. */
function firstDifference(x: Float64Array, y: Float64Array): string {
  if (x.length !== y.length) return `lengths ${x.length} and ${y.length}`;
  for (let k = 0; k < x.length; k++) if (!Object.is(x[k], y[k])) return `at ${k}: ${x[k]} and ${y[k]}`;
  return '';
}

describe('whole features with the WebAssembly kernels on and off', () => {
  // The kernel path chains its steps in the module's memory (pairs sorted by channel, the expansion also written
  // transposed and read from there by the λ = 0 row); computeFeatures must give the very numbers of the JavaScript
  // path. Real DFT water frames (test/fixtures/water-dft-sample.extxyz), a periodic cell smaller than the cutoff
  // (several images of a neighbour), a cluster with a lone far atom (channels without pairs, a zero λ = 2 block),
  // and channel counts that are and are not multiples of the kernels' blocks.
  const cases: [string, FeatureSettings, () => Frame[]][] = [
    ['DFT water, nmax 8, lmax 6, lmaxTensor 6', { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 8, lmax: 6, lmaxTensor: 6, species: ['O', 'H'], centres: ['O', 'H'] }, () => waterFrames().slice(0, 2)],
    ['DFT water, nmax 5, lmax 3, nmaxTensor 2 (10 channels)', { cutoff: 4, cutoffWidth: 0.5, sigma: 0.45, nmax: 5, nmaxTensor: 2, lmax: 3, species: ['O', 'H'], centres: ['O'] }, () => waterFrames().slice(2, 3)],
    ['small periodic cell, 3 species, nmax 3, lmax 4 (9 channels)', { cutoff: 4, cutoffWidth: 0.5, sigma: 0.5, nmax: 3, lmax: 4, species: ['O', 'H', 'C'], centres: ['O', 'H', 'C'] }, () => [randomPeriodicFrame(makeRng(5), ['O', 'H', 'H', 'C', 'O'], [3.1, 3.4, 3.7])]],
    ['cluster with a lone atom, nmax 9, lmax 2', { cutoff: 3.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 9, lmax: 2, species: ['O', 'H', 'C'], centres: ['O', 'H', 'C'] }, () => {
      const c = randomCluster(makeRng(8), water(9), 2.5);
      return [makeFrame([...c.species, 'C'], Float64Array.from([...c.positions, 40, 40, 40]), null)];
    }],
  ];
  afterEach(() => setWebAssemblyKernels(true));
  for (const [name, s, frames] of cases) {
    it(`${name}: the same bits`, () => {
      for (const frame of frames()) {
        setWebAssemblyKernels(true);
        expect(descriptorKernels()).not.toBeNull();
        const on = computeFeatures(frame, s, [0, 2]);
        const onAgain = computeFeatures(frame, s, [0, 1, 2]);
        setWebAssemblyKernels(false);
        const off = computeFeatures(frame, s, [0, 1, 2]);
        expect(firstDifference(on.scalar, off.scalar)).toBe('');
        expect(firstDifference(on.norms!, off.norms!)).toBe('');
        expect(firstDifference(on.tensor[2]!.data, off.tensor[2]!.data)).toBe('');
        expect(firstDifference(onAgain.scalar, off.scalar)).toBe('');
        expect(firstDifference(onAgain.tensor[1]!.data, off.tensor[1]!.data)).toBe('');
        expect(on.scalar.some((v) => v !== 0)).toBe(true);
      }
    });
  }
});

describe('whole features when the kernels\' memory starts again in the middle of a frame', () => {
  // The arena (core/wasm/arena.ts) drops every region and starts from its base when its limit would be passed; a
  // plan's tables, the expander's scratch and a group of eight environments may then move between the steps of
  // one frame (featurise's grouped path and TensorStep.flush make them again). With the limit lowered, restarts
  // happen within a frame: the numbers must still be the JavaScript path's, bit for bit.
  afterEach(() => {
    setArenaLimit(null);
    setWebAssemblyKernels(true);
  });
  it('gives the same bits at every limit, and the arena did start again', () => {
    const s: FeatureSettings = { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 6, lmax: 4, lmaxTensor: 4, species: ['O', 'H'], centres: ['O', 'H'] };
    const [frame] = waterFrames();
    setWebAssemblyKernels(false);
    const off = computeFeatures(frame, s, [0, 2]);
    setWebAssemblyKernels(true);
    let restartsSeen = 0;
    for (const kib of [256, 384, 512, 768, 1024, 1536, 2048, 4096]) {
      setArenaLimit(kib * 1024);
      const before = arenaRestarts();
      const on = computeFeatures(frame, s, [0, 2]);
      restartsSeen += arenaRestarts() - before;
      expect(firstDifference(on.scalar, off.scalar), `limit ${kib} KiB`).toBe('');
      expect(firstDifference(on.norms!, off.norms!), `limit ${kib} KiB`).toBe('');
      expect(firstDifference(on.tensor[2]!.data, off.tensor[2]!.data), `limit ${kib} KiB`).toBe('');
    }
    expect(restartsSeen).toBeGreaterThan(0);
  });
});


describe('computeFeatures with sumsOnly: the λ > 0 orders as per-species sums', () => {
  // A linear model's training needs each frame's λ = 2 features only as linearDesignRows' per-species sums; with
  // sumsOnly the kernels add each normalised block to its species' sums in their memory instead of copying it out.
  // They must be the very numbers linearDesignRows makes from the blocks (each entry summed in environment order),
  // with the kernels on and off, and when the kernels' memory starts again within a frame (the sums are kept
  // outside it after every group of environments).
  afterEach(() => {
    setArenaLimit(null);
    setWebAssemblyKernels(true);
  });
  const s: FeatureSettings = { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 6, lmax: 4, lmaxTensor: 4, species: ['O', 'H'], centres: ['O', 'H'] };
  it('gives linearDesignRows of the blocks bit for bit, with the kernels on and off, and the same λ = 0 rows and norms', () => {
    for (const frame of waterFrames().slice(0, 2)) {
      const full = computeFeatures(frame, s, [0, 2]);
      const want = linearDesignRows(full, 2, 2);
      for (const on of [true, false]) {
        setWebAssemblyKernels(on);
        const sums = computeFeatures(frame, s, [0, 2], undefined, undefined, undefined, true);
        expect(sums.tensor[2]!.n).toBe(full.tensor[2]!.n);
        expect(sums.tensor[2]!.data.length).toBe(0);
        expect(firstDifference(linearDesignRows(sums, 2, 2), want), `kernels ${on ? 'on' : 'off'}`).toBe('');
        expect(firstDifference(sums.scalar, full.scalar)).toBe('');
        expect(firstDifference(sums.norms!, full.norms!)).toBe('');
      }
    }
  });
  it('stays bit for bit when the kernels\' memory starts again within a frame', () => {
    const [frame] = waterFrames();
    const want = linearDesignRows(computeFeatures(frame, s, [0, 2]), 2, 2);
    let restartsSeen = 0;
    for (const kib of [256, 384, 512, 640, 768, 1024, 1536]) {
      setArenaLimit(kib * 1024);
      computeFeatures(frame, { ...s, nmax: 5 }, [0, 2]); // another plan's regions first, so that this call's must be placed again
      const before = arenaRestarts();
      const sums = computeFeatures(frame, s, [0, 2], undefined, undefined, undefined, true);
      restartsSeen += arenaRestarts() - before;
      expect(firstDifference(linearDesignRows(sums, 2, 2), want), `limit ${kib} KiB`).toBe('');
    }
    expect(restartsSeen).toBeGreaterThan(0);
  });
  it('finishes a frame one environment at a time when the memory can no longer hold a group (the same bits)', () => {
    // settings of their own, so that the sums' region is new: placing it in the middle of the frame, under a limit
    // below the plan's tables, drops those tables for good
    const own: FeatureSettings = { ...s, sigma: 0.41 };
    const [frame] = waterFrames();
    const want = linearDesignRows(computeFeatures(frame, own, [0, 2]), 2, 2);
    setArenaLimit(256 * 1024);
    const before = arenaRestarts();
    const sums = computeFeatures(frame, own, [0, 2], undefined, undefined, undefined, true);
    expect(arenaRestarts()).toBeGreaterThan(before);
    expect(firstDifference(linearDesignRows(sums, 2, 2), want)).toBe('');
  });
  it('refuses another number of centre species and concatenation', () => {
    const sums = computeFeatures(waterFrames()[0], s, [0, 2], undefined, undefined, undefined, true);
    expect(() => linearDesignRows(sums, 2, 3)).toThrow(/sums over 2 centre species, not 3/);
    expect(() => concatenateFeatures([sums])).toThrow(/per-species sums/);
  });
});
