import { describe, expect, it } from 'vitest';
import { realSphericalHarmonics } from '../../../src-main/core/descriptors/harmonics.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { realBasisTransform } from '../../../src-main/core/descriptors/real-basis.ts';
import { randomRotation, rotationAboutAxis, wignerDReal, wignerDRealUpTo } from '../../../src-main/core/descriptors/wigner.ts';

function mul3(A: Float64Array, B: Float64Array): Float64Array {
  const C = new Float64Array(9);
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) for (let k = 0; k < 3; k++) C[3 * i + j] += A[3 * i + k] * B[3 * k + j];
  return C;
}

function mul(A: Float64Array, B: Float64Array, n: number): Float64Array {
  const C = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) for (let j = 0; j < n; j++) C[i * n + j] += A[i * n + k] * B[k * n + j];
  return C;
}

function det3(R: Float64Array): number {
  return R[0] * (R[4] * R[8] - R[5] * R[7]) - R[1] * (R[3] * R[8] - R[5] * R[6]) + R[2] * (R[3] * R[7] - R[4] * R[6]);
}

describe('wignerDReal', () => {
  it('satisfies its definition Y_l(R r̂) = D^l(R) Y_l(r̂) at random points, l ≤ 10', () => {
    const rng = makeRng(3);
    for (let t = 0; t < 5; t++) {
      const R = randomRotation(rng);
      const Ds = wignerDRealUpTo(10, R);
      const r = [rng.normal(), rng.normal(), rng.normal()];
      const Rr = [0, 1, 2].map((i) => R[3 * i] * r[0] + R[3 * i + 1] * r[1] + R[3 * i + 2] * r[2]);
      const y = realSphericalHarmonics(10, r[0], r[1], r[2]);
      const yR = realSphericalHarmonics(10, Rr[0], Rr[1], Rr[2]);
      for (let l = 0; l <= 10; l++) {
        const n = 2 * l + 1;
        for (let m = 0; m < n; m++) {
          let s = 0;
          for (let k = 0; k < n; k++) s += Ds[l][m * n + k] * y[l * l + k];
          expect(Math.abs(s - yR[l * l + m])).toBeLessThan(1e-12);
        }
      }
    }
  });

  it('is orthogonal (DᵀD = I) and a homomorphism D(R1R2) = D(R1)D(R2)', () => {
    const rng = makeRng(11);
    for (let t = 0; t < 4; t++) {
      const R1 = randomRotation(rng), R2 = randomRotation(rng);
      for (const l of [1, 2, 3, 6]) {
        const n = 2 * l + 1;
        const D1 = wignerDReal(l, R1), D2 = wignerDReal(l, R2), D12 = wignerDReal(l, mul3(R1, R2));
        const prod = mul(D1, D2, n);
        for (let i = 0; i < n * n; i++) expect(Math.abs(prod[i] - D12[i])).toBeLessThan(1e-12);
        for (let i = 0; i < n; i++) {
          for (let j = 0; j < n; j++) {
            let s = 0;
            for (let k = 0; k < n; k++) s += D1[k * n + i] * D1[k * n + j];
            expect(Math.abs(s - (i === j ? 1 : 0))).toBeLessThan(1e-12);
          }
        }
      }
    }
  });

  it('is the identity for R = I and (−1)^l I for the inversion', () => {
    const I = Float64Array.of(1, 0, 0, 0, 1, 0, 0, 0, 1);
    const P = Float64Array.of(-1, 0, 0, 0, -1, 0, 0, 0, -1);
    for (const l of [0, 1, 2, 5]) {
      const n = 2 * l + 1;
      const D = wignerDReal(l, I), Dp = wignerDReal(l, P);
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++) {
          expect(D[i * n + j]).toBeCloseTo(i === j ? 1 : 0, 14);
          expect(Dp[i * n + j]).toBeCloseTo(i === j ? (-1) ** l : 0, 14);
        }
      }
    }
  });

  it('D^1 is R with rows and columns in (y, z, x) order', () => {
    const R = randomRotation(makeRng(8));
    const D = wignerDReal(1, R);
    const p = [1, 2, 0];
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) expect(D[i * 3 + j]).toBeCloseTo(R[3 * p[i] + p[j]], 14);
  });

  it('gives the PDG small-d values at β = π/3 through d^l(β) = U† D^l_real(R_y(β)) U', () => {
    // Source: Particle Data Group, "Clebsch-Gordan coefficients, spherical harmonics, and d functions"
    // (PTEP 2020, 083C01), via checks.md: d¹₁₀ = −sinβ/√2, d²₀₀, d²₁₀, d²₂₀.
    const beta = Math.PI / 3;
    const R = rotationAboutAxis(0, 1, 0, beta);
    const small = (l: number) => {
      const n = 2 * l + 1;
      const D = wignerDReal(l, R);
      const U = realBasisTransform(l);
      // d = U† D U (complex), D real.
      const re = new Float64Array(n * n), im = new Float64Array(n * n);
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++) {
          let sr = 0, si = 0;
          for (let a = 0; a < n; a++) {
            for (let b = 0; b < n; b++) {
              // conj(U[a][i]) D[a][b] U[b][j]
              const ur = U.re[a * n + i], ui = -U.im[a * n + i];
              const vr = U.re[b * n + j], vi = U.im[b * n + j];
              const d = D[a * n + b];
              sr += d * (ur * vr - ui * vi);
              si += d * (ur * vi + ui * vr);
            }
          }
          re[i * n + j] = sr;
          im[i * n + j] = si;
        }
      }
      for (const v of im) expect(Math.abs(v)).toBeLessThan(1e-13);
      return (m: number, mp: number) => re[(m + l) * n + mp + l];
    };
    const d1 = small(1), d2 = small(2);
    expect(d1(1, 0)).toBeCloseTo(-Math.sin(beta) / Math.SQRT2, 13);
    expect(d1(1, 0)).toBeCloseTo(-0.6123724, 7);
    expect(d1(1, 1)).toBeCloseTo((1 + Math.cos(beta)) / 2, 13); // PDG d¹₁₁ = (1+cosβ)/2
    expect(d2(0, 0)).toBeCloseTo(-0.125, 13);
    expect(d2(1, 0)).toBeCloseTo(-0.5303301, 7);
    expect(d2(2, 0)).toBeCloseTo(0.4592793, 7);
  });

  it('refuses a matrix that is not orthogonal', () => {
    expect(() => wignerDReal(2, Float64Array.of(1, 0.1, 0, 0, 1, 0, 0, 0, 1))).toThrow(/orthogonal/);
  });
});

describe('randomRotation', () => {
  it('gives proper rotations, uniformly distributed (Haar moments E[R_ij] = 0, E[R_ij²] = 1/3, E[(tr R)²] = 1)', () => {
    const rng = makeRng(99);
    const n = 4000;
    const mean = new Float64Array(9), sq = new Float64Array(9);
    let tr2 = 0;
    for (let t = 0; t < n; t++) {
      const R = randomRotation(rng);
      expect(det3(R)).toBeCloseTo(1, 13);
      for (let i = 0; i < 9; i++) {
        mean[i] += R[i] / n;
        sq[i] += (R[i] * R[i]) / n;
      }
      tr2 += (R[0] + R[4] + R[8]) ** 2 / n;
    }
    // Haar measure on SO(3): tr R = 1 + 2cos θ with density (1−cos θ)/π; E[(tr R)²] = 1 (character orthogonality).
    for (let i = 0; i < 9; i++) {
      expect(Math.abs(mean[i])).toBeLessThan(0.05);
      expect(Math.abs(sq[i] - 1 / 3)).toBeLessThan(0.03);
    }
    expect(Math.abs(tr2 - 1)).toBeLessThan(0.1);
  });
});
