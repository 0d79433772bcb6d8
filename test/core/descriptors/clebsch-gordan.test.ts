import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import {
  clebschGordan,
  coupleReal,
  realClebschGordan,
  realClebschGordanSparse,
  wigner3j,
} from '../../../src-main/core/descriptors/clebsch-gordan.ts';
import { harmonicIndex, realSphericalHarmonics } from '../../../src-main/core/descriptors/harmonics.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { randomRotation, wignerDReal } from '../../../src-main/core/descriptors/wigner.ts';

const sympyFixture = JSON.parse(readFileSync(new URL('../../fixtures/clebsch-gordan-sympy.json', import.meta.url), 'utf8')) as {
  rows: number[][];
};

describe('clebschGordan (complex basis)', () => {
  it('matches the Particle Data Group table rows of checks.md', () => {
    // Source: Particle Data Group, "Clebsch-Gordan coefficients, spherical harmonics, and d functions",
    // Review of Particle Physics (PTEP 2020, 083C01), tables 1×1, 2×1, 2×2 (signed squares), via checks.md.
    const pdg: [number, number, number, number, number, number, number][] = [
      [1, 1, 1, -1, 2, 0, Math.sqrt(1 / 6)],
      [1, 0, 1, 0, 2, 0, Math.sqrt(2 / 3)],
      [1, 0, 1, 0, 0, 0, -Math.sqrt(1 / 3)],
      [1, 1, 1, -1, 0, 0, Math.sqrt(1 / 3)],
      [1, 0, 1, 0, 1, 0, 0],
      [2, 1, 1, -1, 2, 0, Math.sqrt(1 / 2)],
      [2, 0, 1, 0, 1, 0, -Math.sqrt(2 / 5)],
      [2, 0, 2, 0, 2, 0, -Math.sqrt(2 / 7)],
      [2, 1, 2, -1, 2, 0, Math.sqrt(1 / 14)],
      [2, 0, 2, 0, 0, 0, Math.sqrt(1 / 5)],
    ];
    for (const [j1, m1, j2, m2, J, M, v] of pdg) expect(clebschGordan(j1, m1, j2, m2, J, M)).toBeCloseTo(v, 14);
    // Source: checks.md rows "not in PDG", from sympy.physics.quantum.cg.CG.
    expect(clebschGordan(3, 0, 1, 0, 2, 0)).toBeCloseTo(-Math.sqrt(3 / 7), 14);
    expect(clebschGordan(3, 0, 3, 0, 2, 0)).toBeCloseTo(Math.sqrt(4 / 21), 14);
  });

  it('gives the Wigner 3j values of checks.md (sympy.physics.wigner.wigner_3j)', () => {
    expect(wigner3j(1, 1, 2, 0, 0, 0)).toBeCloseTo(Math.sqrt(30) / 15, 14);
    expect(wigner3j(2, 2, 2, 0, 0, 0)).toBeCloseTo(-Math.sqrt(70) / 35, 14);
    expect(wigner3j(2, 6, 4, 0, 0, 0)).toBeCloseTo(Math.sqrt(715) / 143, 14); // sympy documentation example
  });

  it(`matches sympy CG(...).doit() on ${sympyFixture.rows.length} coefficients (fixture, incl. half-integers)`, () => {
    // Source: test/fixtures/make-clebsch-gordan.py (Debian sympy).
    let worst = 0;
    for (const [j1, m1, j2, m2, J, M, v] of sympyFixture.rows) worst = Math.max(worst, Math.abs(clebschGordan(j1, m1, j2, m2, J, M) - v));
    expect(worst).toBeLessThan(1e-14);
  });

  it('is zero for forbidden combinations and refuses non-half-integers', () => {
    expect(clebschGordan(1, 1, 1, 0, 2, 0)).toBe(0); // M ≠ m1 + m2
    expect(clebschGordan(1, 0, 1, 0, 3, 0)).toBe(0); // triangle
    expect(clebschGordan(1, 2, 1, -2, 2, 0)).toBe(0); // |m| > j
    expect(() => clebschGordan(1.3, 0, 1, 0, 1, 0)).toThrow(RangeError);
  });

  it('obeys both orthogonality relations (j1, j2 ≤ 4)', () => {
    for (let j1 = 0; j1 <= 4; j1++) {
      for (let j2 = 0; j2 <= 4; j2++) {
        // Σ_{m1,m2} ⟨..|J M⟩⟨..|J' M⟩ = δ_JJ'
        for (let J = Math.abs(j1 - j2); J <= j1 + j2; J++) {
          for (let Jp = Math.abs(j1 - j2); Jp <= j1 + j2; Jp++) {
            for (let M = -Math.min(J, Jp); M <= Math.min(J, Jp); M++) {
              let s = 0;
              for (let m1 = -j1; m1 <= j1; m1++) s += clebschGordan(j1, m1, j2, M - m1, J, M) * clebschGordan(j1, m1, j2, M - m1, Jp, M);
              expect(s).toBeCloseTo(J === Jp ? 1 : 0, 13);
            }
          }
        }
        // Σ_{J,M} ⟨m1 m2|J M⟩⟨m1' m2'|J M⟩ = δ δ (with M fixed by m1 + m2)
        for (let m1 = -j1; m1 <= j1; m1++) {
          for (let m2 = -j2; m2 <= j2; m2++) {
            for (let m1p = -j1; m1p <= j1; m1p++) {
              const m2p = m1 + m2 - m1p;
              if (Math.abs(m2p) > j2) continue;
              let s = 0;
              for (let J = Math.abs(j1 - j2); J <= j1 + j2; J++) s += clebschGordan(j1, m1, j2, m2, J, m1 + m2) * clebschGordan(j1, m1p, j2, m2p, J, m1 + m2);
              expect(s).toBeCloseTo(m1 === m1p ? 1 : 0, 13);
            }
          }
        }
      }
    }
  });

  it('stays accurate for large momenta (orthonormality at j1 = 25, j2 = 20)', () => {
    const j1 = 25, j2 = 20, J = 30, M = 3;
    let s = 0;
    for (let m1 = -j1; m1 <= j1; m1++) s += clebschGordan(j1, m1, j2, M - m1, J, M) ** 2;
    expect(s).toBeCloseTo(1, 12);
  });
});

function matVec(D: Float64Array, v: Float64Array): Float64Array {
  const n = v.length;
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) out[i] += D[i * n + j] * v[j];
  return out;
}

function randomVector(n: number, rng: ReturnType<typeof makeRng>): Float64Array {
  return Float64Array.from({ length: n }, () => rng.normal());
}

describe('realClebschGordan (real-harmonic basis)', () => {
  it('is orthogonal like the complex coefficients: Σ_{m1m2} C[m1,m2,M] C[m1,m2,M\'] = δ_MM\'', () => {
    for (const [l1, l2, L] of [[1, 1, 0], [1, 1, 2], [2, 2, 2], [2, 3, 3], [3, 3, 4], [4, 2, 6]]) {
      const C = realClebschGordan(l1, l2, L);
      const n1 = 2 * l1 + 1, n2 = 2 * l2 + 1, nL = 2 * L + 1;
      for (let M = 0; M < nL; M++) {
        for (let Mp = 0; Mp < nL; Mp++) {
          let s = 0;
          for (let a = 0; a < n1; a++) for (let b = 0; b < n2; b++) s += C[a * n2 * nL + b * nL + M] * C[a * n2 * nL + b * nL + Mp];
          expect(s).toBeCloseTo(M === Mp ? 1 : 0, 13);
        }
      }
    }
  });

  it('KEY PROPERTY: couples D^l1 a and D^l2 b into D^L ξ for random rotations (to 1e-12)', () => {
    const rng = makeRng(2024);
    for (let trial = 0; trial < 6; trial++) {
      const R = randomRotation(rng);
      for (let l1 = 0; l1 <= 4; l1++) {
        for (let l2 = 0; l2 <= 4; l2++) {
          const a = randomVector(2 * l1 + 1, rng), b = randomVector(2 * l2 + 1, rng);
          const Ra = matVec(wignerDReal(l1, R), a), Rb = matVec(wignerDReal(l2, R), b);
          for (let L = Math.abs(l1 - l2); L <= l1 + l2; L++) {
            const allowOdd = (l1 + l2 + L) % 2 === 1;
            const xi = coupleReal(l1, l2, L, a, b, undefined, { allowOdd });
            const xiRot = coupleReal(l1, l2, L, Ra, Rb, undefined, { allowOdd });
            const expected = matVec(wignerDReal(L, R), xi);
            for (let M = 0; M < 2 * L + 1; M++) expect(Math.abs(xiRot[M] - expected[M])).toBeLessThan(1e-12);
          }
        }
      }
    }
  });

  it('couples Y_l1(r̂) ⊗ Y_l2(r̂) into √[(2l1+1)(2l2+1)/(4π(2L+1))] ⟨l1 0 l2 0|L 0⟩ Y_L(r̂)', () => {
    // Textbook product formula of spherical harmonics (Gaunt), which the real basis must inherit.
    const rng = makeRng(5);
    for (let trial = 0; trial < 10; trial++) {
      const [x, y, z] = [rng.normal(), rng.normal(), rng.normal()];
      const Y = realSphericalHarmonics(8, x, y, z);
      for (let l1 = 0; l1 <= 4; l1++) {
        for (let l2 = 0; l2 <= 4; l2++) {
          for (let L = Math.abs(l1 - l2); L <= l1 + l2; L += 2) {
            const xi = coupleReal(l1, l2, L, Y.subarray(l1 * l1, (l1 + 1) ** 2), Y.subarray(l2 * l2, (l2 + 1) ** 2));
            const c = Math.sqrt(((2 * l1 + 1) * (2 * l2 + 1)) / (4 * Math.PI * (2 * L + 1))) * clebschGordan(l1, 0, l2, 0, L, 0);
            for (let M = -L; M <= L; M++) expect(xi[M + L]).toBeCloseTo(c * Y[harmonicIndex(L, M)], 13);
          }
        }
      }
    }
  });

  it('reduces (1,1,0) to −(a·b)/√3 in the (y,z,x) order and refuses odd sums unless asked', () => {
    const C = realClebschGordan(1, 1, 0);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) expect(C[i * 3 + j]).toBeCloseTo(i === j ? -1 / Math.sqrt(3) : 0, 15);
    expect(() => realClebschGordan(1, 1, 1)).toThrow(/odd/);
    expect(() => realClebschGordan(1, 1, 3)).toThrow(/triangle/);
    // (1,1,1) imaginary part: proportional to the cross product.
    const K = realClebschGordan(1, 1, 1, { allowOdd: true });
    const a = Float64Array.of(0.3, -1.2, 0.7), b = Float64Array.of(2.1, 0.4, -0.5); // (y, z, x) order
    const xi = coupleReal(1, 1, 1, a, b, undefined, { allowOdd: true });
    const [ay, az, ax] = a, [by, bz, bx] = b;
    const cross = [az * bx - ax * bz, ax * by - ay * bx, ay * bz - az * by]; // (y, z, x) components of a×b
    const ratio = xi[0] / cross[0];
    expect(Math.abs(ratio)).toBeCloseTo(1 / Math.sqrt(2), 14);
    for (let k = 0; k < 3; k++) expect(xi[k]).toBeCloseTo(ratio * cross[k], 14);
    expect(K.length).toBe(27);
  });

  it('lists the same non-zero entries sparsely', () => {
    const C = realClebschGordan(3, 2, 3);
    const s = realClebschGordanSparse(3, 2, 3);
    let norm = 0;
    for (let k = 0; k < s.value.length; k++) {
      expect(C[s.i1[k] * 5 * 7 + s.i2[k] * 7 + s.iL[k]]).toBe(s.value[k]);
      norm += s.value[k] ** 2;
    }
    let dense = 0;
    for (const v of C) dense += v * v;
    expect(norm).toBeCloseTo(dense, 14);
  });
});
