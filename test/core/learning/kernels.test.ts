import { describe, expect, it } from 'vitest';
import { designLeverageKernel, environmentKernel, linearDesignRows, linearScalarPass, localContributions, structureKernel } from '../../../src-main/core/learning/kernels.ts';
import { designLeverage } from '../../../src-main/core/learning/regression.ts';
import { choleskyWithJitter } from '../../../src-main/core/numerics/cholesky.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';
import { predictKernels } from '../../../src-main/core/wasm/prediction-kernels.ts';
import { foldCoefficients, type Representatives } from '../../../src-main/core/learning/sparse.ts';
import { makeRng, syntheticFeatures } from '../../helpers/synthetic-features.ts';
import { referenceLinearContributions, referenceLinearDesignRows } from '../../helpers/reference-kernels.ts';

describe('environment and structure kernels', () => {
  const rng = makeRng(21);
  const a = syntheticFeatures(rng, { count: 6, n0: 7, tensor: { 2: 4 } });
  const b = syntheticFeatures(rng, { count: 5, n0: 7, tensor: { 2: 4 } });

  it('scalar kernel is (p·p)^ζ within a species and 0 across species', () => {
    const dot = (i: number, j: number) => {
      let s = 0;
      for (let f = 0; f < 7; f++) s += a.scalar[i * 7 + f] * b.scalar[j * 7 + f];
      return s;
    };
    expect(environmentKernel(a, 0, b, 0, 0, 2)[0]).toBeCloseTo(dot(0, 0) ** 2, 14);
    expect(environmentKernel(a, 2, b, 4, 0, 3)[0]).toBeCloseTo(dot(2, 4) ** 3, 14);
    expect(environmentKernel(a, 0, b, 1, 0, 1)[0]).toBe(0); // species 0 vs 1
  });

  it('tensor kernel block is ξ(i) ξ(j)ᵀ (p_i·p_j)^(ζ−1) and symmetric under exchange', () => {
    const k = environmentKernel(a, 1, b, 3, 2, 2);
    const kt = environmentKernel(b, 3, a, 1, 2, 2);
    for (let mu = 0; mu < 5; mu++) for (let nu = 0; nu < 5; nu++) expect(k[mu * 5 + nu]).toBeCloseTo(kt[nu * 5 + mu], 14);
    let pp = 0;
    for (let f = 0; f < 7; f++) pp += a.scalar[7 + f] * b.scalar[3 * 7 + f];
    let d = 0;
    for (let f = 0; f < 4; f++) d += a.tensor[2]!.data[(1 * 5 + 2) * 4 + f] * b.tensor[2]!.data[(3 * 5 + 4) * 4 + f];
    expect(k[2 * 5 + 4]).toBeCloseTo(d * pp, 14);
  });

  it('with ζ = 1 the structure kernel is the dot product of the linear design rows', () => {
    for (const order of [0, 2] as const) {
      const w = 2 * order + 1;
      const K = structureKernel(a, b, order, 1);
      const ra = linearDesignRows(a, order, 2);
      const rb = linearDesignRows(b, order, 2);
      const cols = ra.length / w;
      for (let mu = 0; mu < w; mu++) {
        for (let nu = 0; nu < w; nu++) {
          let s = 0;
          for (let c = 0; c < cols; c++) s += ra[mu * cols + c] * rb[nu * cols + c];
          expect(K[mu * w + nu]).toBeCloseTo(s, 12);
        }
      }
    }
  });

  it('folded kernel expansion equals the direct sum Σ_m K(i,m) x_m', () => {
    const reps: Representatives = {
      order: 2,
      n0: 7,
      n: 4,
      width: 5,
      species: b.centreSpecies,
      p: b.scalar,
      blocks: b.tensor[2]!.data,
    };
    const x = Float64Array.from({ length: 5 * 5 }, () => rng.normal());
    for (const zeta of [1, 2, 3]) {
      const exp = foldCoefficients(reps, x, zeta);
      const local = localContributions(a, 2, { kernel: exp });
      for (let e = 0; e < a.count; e++) {
        for (let mu = 0; mu < 5; mu++) {
          let s = 0;
          for (let m = 0; m < b.count; m++) {
            const k = environmentKernel(a, e, b, m, 2, zeta);
            for (let nu = 0; nu < 5; nu++) s += k[mu * 5 + nu] * x[m * 5 + nu];
          }
          expect(local[e * 5 + mu]).toBeCloseTo(s, 12);
        }
      }
    }
  });

  it('design rows and linear local contributions are the plain loops\' numbers bit for bit (blocked over environments and rows)', () => {
    const r = makeRng(77);
    const same = (x: Float64Array, y: Float64Array) => x.length === y.length && x.every((v, i) => Object.is(v, y[i]));
    // counts around the blocks of four, three species in an irregular order (runs, gaps, one species absent)
    for (const count of [1, 3, 4, 5, 9, 31]) {
      for (const n0 of [1, 7, 13]) {
        const centreSpecies = Array.from({ length: count }, (_, e) => (e * 7 + (e >> 2)) % 3 === 2 && count > 5 ? 0 : (e * 7 + (e >> 2)) % 3);
        const fe = syntheticFeatures(r, { count, n0, species: 3, centreSpecies, tensor: { 2: 5 } });
        for (const order of [0, 2] as const) {
          const width = 2 * order + 1;
          const n = order === 0 ? n0 : 5;
          const data = order === 0 ? fe.scalar : fe.tensor[2]!.data;
          expect(same(linearDesignRows(fe, order, 3), referenceLinearDesignRows(data, count, width, n, fe.centreSpecies, 3))).toBe(true);
          const weights = Float64Array.from({ length: 3 * n }, () => r.normal());
          expect(same(localContributions(fe, order, { linear: weights }), referenceLinearContributions(data, count, width, n, fe.centreSpecies, weights))).toBe(true);
        }
      }
    }
  });

  it('the one-pass linear λ=0 part (linearScalarPass) gives the numbers of localContributions and linearDesignRows bit for bit, kernels on and off', () => {
    expect(predictKernels()).not.toBeNull();
    const r = makeRng(78);
    const same = (x: Float64Array, y: Float64Array) => x.length === y.length && x.every((v, i) => Object.is(v, y[i]));
    // odd and even counts, more rows than one kernel call takes (256), n0 odd and even, a species absent, runs of one
    // species, signed zeros in the rows (0 + (−0) is +0: the sums must start from zero as the loops do)
    for (const count of [1, 2, 5, 257, 600]) {
      for (const n0 of [1, 6, 13]) {
        const centreSpecies = Array.from({ length: count }, (_, e) => (e % 11 < 6 ? 0 : e % 3 === 0 ? 2 : 0));
        const fe = syntheticFeatures(r, { count, n0, species: 3, centreSpecies });
        for (let i = 0; i < fe.scalar.length; i += 17) fe.scalar[i] = -0;
        const weights = Float64Array.from({ length: 3 * n0 + 3 }, () => r.normal());
        const want = { contributions: localContributions(fe, 0, { linear: weights }), sums: linearDesignRows(fe, 0, 3) };
        for (const kernels of [true, false]) {
          setWebAssemblyKernels(kernels);
          const got = linearScalarPass(fe, weights, 3);
          expect(same(got.contributions, want.contributions)).toBe(true);
          expect(same(got.sums, want.sums)).toBe(true);
        }
        setWebAssemblyKernels(true);
      }
    }
  });
});

describe('the leverage against an explicit design through the kernels', () => {
  it('gives designLeverage’s JavaScript numbers bit for bit (rows 1–9 around the four-row blocks, even and odd f, a design used again, kernels off)', () => {
    expect(predictKernels()).not.toBeNull();
    const rng = makeRng(71);
    for (const f of [1, 2, 7, 64, 301]) {
      for (const rows of [1, 3, 4, 5, 8, 9]) {
        // a design with rows of very different scale (the leverage is a sum of squares over both passes)
        const design = Float64Array.from({ length: rows * f }, (_, i) => rng.normal() * 10 ** ((i % 5) - 2));
        const lambda = 0.3;
        const g = new Float64Array(rows * rows);
        for (let a = 0; a < rows; a++) {
          for (let b = 0; b < rows; b++) {
            let s = 0;
            for (let j = 0; j < f; j++) s += design[a * f + j] * design[b * f + j];
            g[a * rows + b] = s + (a === b ? lambda : 0);
          }
        }
        const { factor } = choleskyWithJitter(g, rows);
        for (let t = 0; t < 3; t++) {
          const phi = Float64Array.from({ length: f }, () => rng.normal());
          const js = designLeverage(design, rows, f, factor, lambda, phi);
          const kernel = designLeverage(design, rows, f, factor, lambda, phi, true);
          expect(Object.is(kernel, js)).toBe(true);
          setWebAssemblyKernels(false);
          expect(Object.is(designLeverage(design, rows, f, factor, lambda, phi, true), js)).toBe(true);
          setWebAssemblyKernels(true);
          expect(designLeverageKernel(design, rows, f, phi, () => {})).not.toBeNull();
        }
      }
    }
  });
});
