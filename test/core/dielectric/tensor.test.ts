import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import fc from 'fast-check';
import { InputError } from '../../../src-main/core/errors.ts';
import { realSphericalHarmonics } from '../../../src-main/core/descriptors/harmonics.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import {
  anisotropy,
  fromIrreducible,
  fromIrreducibleAt,
  isotropicMean,
  mat3,
  mat3Determinant,
  mat3Inverse,
  mat3Multiply,
  mat3Transpose,
  rotateTensor,
  symmetricEigen,
  symmetricFunction,
  tensorFromValues,
  tensorToVoigt,
  toIrreducible,
} from '../../../src-main/core/dielectric/tensor.ts';
import { randomRotation, rotationAboutAxis, wignerDReal } from '../../../src-main/core/descriptors/wigner.ts';

const eighFixture = JSON.parse(readFileSync(new URL('../../fixtures/symmetric-eigen-numpy.json', import.meta.url), 'utf8')) as {
  cases: { tensor: number[]; values: number[]; vectors: number[] }[];
};

const finite = fc.double({ min: -100, max: 100, noNaN: true, noDefaultInfinity: true });
const symmetric = fc.tuple(finite, finite, finite, finite, finite, finite).map(([xx, yy, zz, yz, xz, xy]) => Float64Array.of(xx, xy, xz, xy, yy, yz, xz, yz, zz));

function maxDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let d = 0;
  for (let i = 0; i < a.length; i++) d = Math.max(d, Math.abs(a[i] - b[i]));
  return d;
}

describe('mat3 helpers', () => {
  it('multiply, transpose, determinant and inverse agree with hand-worked cases', () => {
    const A = Float64Array.of(2, 0, 1, 1, 3, 0, 0, 1, 4);
    expect(mat3Determinant(A)).toBe(2 * 12 - 0 + 1 * 1); // cofactor expansion by hand: 25
    const inv = mat3Inverse(A);
    expect(maxDiff(mat3Multiply(A, inv), mat3.identity())).toBeLessThan(1e-15);
    expect(Array.from(mat3Transpose(A))).toEqual([2, 1, 0, 0, 3, 1, 1, 0, 4]);
    expect(mat3.trace(A)).toBe(9);
    expect(Array.from(mat3.scale(mat3.add(A, A), 0.5))).toEqual(Array.from(A));
    expect(() => mat3Inverse(Float64Array.of(1, 2, 3, 2, 4, 6, 0, 0, 1), 'cell')).toThrow(/cell is singular/);
  });
});

describe('irreducible parts', () => {
  it('are orthonormal: Σ parts² = ‖T‖²_F, and round-trip', () => {
    fc.assert(
      fc.property(symmetric, (T) => {
        const p = toIrreducible(T);
        let s = 0;
        for (const v of p) s += v * v;
        expect(s).toBeCloseTo(mat3.norm(T) ** 2, 8);
        expect(maxDiff(fromIrreducible(p), T)).toBeLessThan(1e-12 * (1 + mat3.norm(T)));
      }),
    );
  });

  it('fromIrreducibleAt writes fromIrreducible times the scale, bit for bit, at any place of a longer array', () => {
    const rng = makeRng(5);
    const parts = Float64Array.from({ length: 4 * 6 }, () => rng.normal() * 10);
    parts[7] = -0; // signs of zero kept
    for (const scale of [1, (4 * Math.PI) / 317.3, -2.5]) {
      const out = new Float64Array(4 * 9 + 2).fill(NaN);
      for (let i = 0; i < 4; i++) fromIrreducibleAt(parts, i * 6, out, 1 + i * 9, scale);
      for (let i = 0; i < 4; i++) {
        const t = fromIrreducible(parts.subarray(i * 6, i * 6 + 6));
        for (let q = 0; q < 9; q++) expect(Object.is(out[1 + i * 9 + q], t[q] * scale)).toBe(true);
      }
      expect(Number.isNaN(out[0]) && Number.isNaN(out[37])).toBe(true); // nothing written outside its place
    }
  });

  it('follow the formulas of science.md §3 on a hand-made tensor', () => {
    const T = Float64Array.of(1, 2, 3, 2, 5, 6, 3, 6, 9);
    const p = toIrreducible(T);
    expect(p[0]).toBeCloseTo(15 / Math.sqrt(3), 14);
    expect(p[1]).toBeCloseTo(2 * Math.SQRT2, 14);
    expect(p[2]).toBeCloseTo(6 * Math.SQRT2, 14);
    expect(p[3]).toBeCloseTo((18 - 6) / Math.sqrt(6), 14);
    expect(p[4]).toBeCloseTo(3 * Math.SQRT2, 14);
    expect(p[5]).toBeCloseTo(-4 / Math.SQRT2, 14);
  });

  it('T = r⊗r gives T²_μ = √(8π/15) r² Y_2μ(r̂): one common factor', () => {
    // The factor follows from r̂ = ẑ: T²₀ = 2/√6, Y₂₀ = √(5/4π) (textbook); the test checks it is common to all μ, r.
    const k = Math.sqrt((8 * Math.PI) / 15);
    const rng = makeRng(4);
    for (let t = 0; t < 20; t++) {
      const r = [rng.normal(), rng.normal(), rng.normal()];
      const T = Float64Array.from({ length: 9 }, (_, i) => r[Math.floor(i / 3)] * r[i % 3]);
      const p = toIrreducible(T);
      const Y = realSphericalHarmonics(2, r[0], r[1], r[2]);
      const r2 = r[0] ** 2 + r[1] ** 2 + r[2] ** 2;
      for (let mu = 0; mu < 5; mu++) expect(p[1 + mu]).toBeCloseTo(k * r2 * Y[4 + mu], 12);
    }
  });

  it('R T Rᵀ acts as D²(R) on the λ=2 part and leaves λ=0 alone (random rotations, 1e-12)', () => {
    const rng = makeRng(12);
    fc.assert(
      fc.property(symmetric, fc.integer({ min: 0, max: 1000 }), (T, seed) => {
        const R = randomRotation(makeRng(seed + rng.int(1000)));
        const p = toIrreducible(T);
        const q = toIrreducible(rotateTensor(T, R));
        const D = wignerDReal(2, R);
        const scale = 1 + mat3.norm(T);
        expect(Math.abs(q[0] - p[0])).toBeLessThan(1e-12 * scale);
        for (let m = 0; m < 5; m++) {
          let s = 0;
          for (let k = 0; k < 5; k++) s += D[m * 5 + k] * p[1 + k];
          expect(Math.abs(q[1 + m] - s)).toBeLessThan(1e-12 * scale);
        }
      }),
      { numRuns: 200 },
    );
  });
});

function checkEigen(T: Float64Array): void {
  const { values, vectors: Q } = symmetricEigen(T);
  const scale = 1 + mat3.norm(T);
  expect(values[0]).toBeLessThanOrEqual(values[1]);
  expect(values[1]).toBeLessThanOrEqual(values[2]);
  expect(maxDiff(mat3Multiply(mat3Transpose(Q), Q), mat3.identity())).toBeLessThan(1e-13);
  expect(mat3Determinant(Q)).toBeCloseTo(1, 13);
  const rebuilt = mat3Multiply(mat3Multiply(Q, Float64Array.of(values[0], 0, 0, 0, values[1], 0, 0, 0, values[2])), mat3Transpose(Q));
  expect(maxDiff(rebuilt, T)).toBeLessThan(1e-13 * scale);
}

describe('symmetricEigen', () => {
  it('reconstructs random tensors with orthonormal right-handed eigenvectors', () => {
    fc.assert(fc.property(symmetric, (T) => checkEigen(T)), { numRuns: 300 });
  });

  it('agrees with numpy.linalg.eigh (fixture, incl. near-degenerate cases)', () => {
    // Source: test/fixtures/make-symmetric-eigen.py (Debian numpy, LAPACK).
    for (const c of eighFixture.cases) {
      const T = Float64Array.from(c.tensor);
      const { values, vectors } = symmetricEigen(T);
      const scale = Math.max(...c.values.map(Math.abs));
      for (let k = 0; k < 3; k++) expect(Math.abs(values[k] - c.values[k])).toBeLessThan(1e-13 * scale);
      // Eigenvectors of well-separated values agree up to sign.
      for (let k = 0; k < 3; k++) {
        const gap = Math.min(...[0, 1, 2].filter((j) => j !== k).map((j) => Math.abs(c.values[j] - c.values[k])));
        if (gap < 1e-3 * scale) continue;
        let dot = 0;
        for (let i = 0; i < 3; i++) dot += vectors[3 * i + k] * c.vectors[3 * i + k];
        expect(Math.abs(Math.abs(dot) - 1)).toBeLessThan(1e-10);
      }
      checkEigen(T);
    }
  });

  it('handles analytic cases: diagonal, degenerate, the 2×2 block [[2,1],[1,2]] → 1, 3', () => {
    const d = symmetricEigen(Float64Array.of(3, 0, 0, 0, -1, 0, 0, 0, 2));
    expect(Array.from(d.values)).toEqual([-1, 2, 3]);
    const b = symmetricEigen(Float64Array.of(2, 1, 0, 1, 2, 0, 0, 0, 7));
    expect(b.values[0]).toBeCloseTo(1, 15);
    expect(b.values[1]).toBeCloseTo(3, 15);
    expect(b.values[2]).toBeCloseTo(7, 15);
    expect(Math.abs(b.vectors[0])).toBeCloseTo(Math.SQRT1_2, 15); // (1, −1, 0)/√2 for λ = 1
    expect(b.vectors[0]).toBeCloseTo(-b.vectors[3], 15);
    const iso = symmetricEigen(Float64Array.of(4, 0, 0, 0, 4, 0, 0, 0, 4));
    expect(Array.from(iso.values)).toEqual([4, 4, 4]);
    checkEigen(Float64Array.of(0, 0, 0, 0, 0, 0, 0, 0, 0));
    expect(() => symmetricEigen(Float64Array.of(NaN, 0, 0, 0, 1, 0, 0, 0, 1))).toThrow(RangeError);
  });

  it('symmetricFunction gives the matrix square root and inverse', () => {
    const T = rotateTensor(Float64Array.of(1, 0, 0, 0, 4, 0, 0, 0, 9), rotationAboutAxis(1, 2, -1, 0.7));
    const root = symmetricFunction(T, Math.sqrt);
    expect(maxDiff(mat3Multiply(root, root), T)).toBeLessThan(1e-13);
    expect(maxDiff(symmetricFunction(T, (x) => 1 / x), mat3Inverse(T))).toBeLessThan(1e-14);
  });
});

describe('invariants', () => {
  it('isotropicMean is tr/3 and anisotropy is √(½Σ(λi−λj)²), |b−a| for an axial tensor', () => {
    const R = rotationAboutAxis(0.3, 1, 0.2, 1.1);
    const T = rotateTensor(Float64Array.of(1, 0, 0, 0, 2, 0, 0, 0, 4), R);
    expect(isotropicMean(T)).toBeCloseTo(7 / 3, 14);
    expect(anisotropy(T)).toBeCloseTo(Math.sqrt(0.5 * (1 + 4 + 9)), 13);
    expect(anisotropy(Float64Array.of(2, 0, 0, 0, 2, 0, 0, 0, 5))).toBeCloseTo(3, 14);
    expect(anisotropy(mat3.scale(mat3.identity(), 3))).toBe(0);
    fc.assert(
      fc.property(symmetric, (S) => {
        const [a, b, c] = symmetricEigen(S).values;
        expect(anisotropy(S)).toBeCloseTo(Math.sqrt(0.5 * ((a - b) ** 2 + (b - c) ** 2 + (c - a) ** 2)), 9);
      }),
    );
  });
});

describe('tensorFromValues / tensorToVoigt', () => {
  it('reads 9 row-major and 6 Voigt numbers (xx yy zz yz xz xy)', () => {
    const T = tensorFromValues([1, 6, 5, 6, 2, 4, 5, 4, 3]);
    expect(Array.from(tensorFromValues([1, 2, 3, 4, 5, 6]))).toEqual(Array.from(T));
    expect(Array.from(tensorToVoigt(T))).toEqual([1, 2, 3, 4, 5, 6]);
  });

  it('symmetrises tiny asymmetry and refuses larger asymmetry with where and a hint', () => {
    const T = tensorFromValues([10, 1 + 1e-7, 0, 1, 10, 0, 0, 0, 10]);
    expect(T[1]).toBe(T[3]);
    expect(T[1]).toBeCloseTo(1 + 5e-8, 15);
    let err: unknown;
    try {
      tensorFromValues([10, 1.01, 0, 1, 10, 0, 0, 0, 10], { file: 'a.xyz', line: 7, frame: 2 });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect(String((err as Error).message)).toMatch(/a\.xyz, line 7, frame 2: tensor is not symmetric: xy = 1\.01 but yx = 1/);
    expect(() => tensorFromValues([1, 2, 3, 4, 5])).toThrow(InputError);
    expect(() => tensorFromValues([1, 2, 3, 4, 5, NaN])).toThrow(/component 6/);
  });
});
