import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import fc from 'fast-check';
import { harmonicIndex, realSphericalHarmonics } from '../../../src-main/core/descriptors/harmonics.ts';
import { sphereProductRule } from '../../../src-main/core/numerics/quadrature.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';

const fixture = JSON.parse(readFileSync(new URL('../../fixtures/real-harmonics-scipy.json', import.meta.url), 'utf8')) as {
  lmax: number;
  points: { vector: number[]; values: number[] }[];
};

/** Legendre polynomial P_l(t) by Bonnet's recurrence (textbook, independent of the code under test). */
function legendre(l: number, t: number): number {
  let p0 = 1, p1 = t;
  if (l === 0) return 1;
  for (let k = 2; k <= l; k++) {
    const p2 = ((2 * k - 1) * t * p1 - (k - 1) * p0) / k;
    p0 = p1;
    p1 = p2;
  }
  return p1;
}

describe('realSphericalHarmonics', () => {
  it('matches the 16 values of checks.md at (1,2,3)/√14', () => {
    // Source: /work/shared/checks.md, computed with scipy.special.sph_harm_y (Condon–Shortley phase).
    const expected = [
      0.2820947918, 0.2611690283, 0.3917535424, 0.1305845141, 0.1560783472, 0.4682350417, 0.2928635963,
      0.2341175208, -0.1170587604, -0.0225279689, 0.3310921732, 0.540952781, 0.0641157236, 0.2704763905,
      -0.2483191299, -0.1239038292,
    ];
    const y = realSphericalHarmonics(3, 1, 2, 3);
    expected.forEach((v, i) => expect(y[i]).toBeCloseTo(v, 9));
  });

  it('matches scipy 1.10 sph_harm up to l = 10 at random points (fixture)', () => {
    // Source: test/fixtures/make-real-harmonics.py (Debian scipy 1.10 scipy.special.sph_harm).
    expect(fixture.points.length).toBeGreaterThan(10);
    for (const p of fixture.points) {
      const y = realSphericalHarmonics(fixture.lmax, p.vector[0], p.vector[1], p.vector[2]);
      for (let i = 0; i < p.values.length; i++) expect(Math.abs(y[i] - p.values[i])).toBeLessThan(1e-12);
    }
  });

  it('puts (Y1,−1, Y10, Y11) along (y, z, x) with √(3/4π)', () => {
    const c = Math.sqrt(3 / (4 * Math.PI)); // textbook normalisation of l = 1
    const y = realSphericalHarmonics(1, 0.3, -0.4, 1.2);
    const r = Math.hypot(0.3, -0.4, 1.2);
    expect(y[1]).toBeCloseTo((c * -0.4) / r, 14);
    expect(y[2]).toBeCloseTo((c * 1.2) / r, 14);
    expect(y[3]).toBeCloseTo((c * 0.3) / r, 14);
  });

  it('is orthonormal on the sphere to 1e-12 up to l = 12 (Gauss–Legendre × uniform φ product rule)', () => {
    const lmax = 12;
    const n = (lmax + 1) ** 2;
    const rule = sphereProductRule(2 * lmax);
    const gram = new Float64Array(n * n);
    const y = new Float64Array(n);
    for (let k = 0; k < rule.count; k++) {
      realSphericalHarmonics(lmax, rule.points[3 * k], rule.points[3 * k + 1], rule.points[3 * k + 2], y);
      const w = rule.weights[k];
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) gram[i * n + j] += w * y[i] * y[j];
    }
    let worst = 0;
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) worst = Math.max(worst, Math.abs(gram[i * n + j] - (i === j ? 1 : 0)));
    expect(worst).toBeLessThan(1e-12);
  });

  it('obeys the addition theorem Σ_m Y_lm(u)Y_lm(w) = (2l+1)/(4π) P_l(u·w)', () => {
    // Textbook addition theorem; checks.md quotes the l = 2 case.
    const lmax = 10;
    fc.assert(
      fc.property(
        fc.tuple(fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true })),
        fc.tuple(fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true })),
        (u, w) => {
          const nu = Math.hypot(...u), nw = Math.hypot(...w);
          if (nu < 1e-3 || nw < 1e-3) return;
          const yu = realSphericalHarmonics(lmax, u[0], u[1], u[2]);
          const yw = realSphericalHarmonics(lmax, w[0], w[1], w[2]);
          const cos = (u[0] * w[0] + u[1] * w[1] + u[2] * w[2]) / (nu * nw);
          for (let l = 0; l <= lmax; l++) {
            let s = 0;
            for (let m = -l; m <= l; m++) s += yu[harmonicIndex(l, m)] * yw[harmonicIndex(l, m)];
            expect(s).toBeCloseTo(((2 * l + 1) / (4 * Math.PI)) * legendre(l, cos), 12);
          }
        },
      ),
      { numRuns: 100 },
    );
  });

  it('stays accurate at high degree: addition theorem and Y_l0 at the pole up to l = 40', () => {
    const lmax = 40;
    const rng = makeRng(21);
    for (let t = 0; t < 10; t++) {
      const u = [rng.normal(), rng.normal(), rng.normal()], w = [rng.normal(), rng.normal(), rng.normal()];
      const yu = realSphericalHarmonics(lmax, u[0], u[1], u[2]);
      const yw = realSphericalHarmonics(lmax, w[0], w[1], w[2]);
      const cos = (u[0] * w[0] + u[1] * w[1] + u[2] * w[2]) / (Math.hypot(u[0], u[1], u[2]) * Math.hypot(w[0], w[1], w[2]));
      for (const l of [20, 30, 40]) {
        let s = 0, self = 0;
        for (let m = -l; m <= l; m++) {
          s += yu[harmonicIndex(l, m)] * yw[harmonicIndex(l, m)];
          self += yu[harmonicIndex(l, m)] ** 2;
        }
        expect(Math.abs(s - ((2 * l + 1) / (4 * Math.PI)) * legendre(l, cos))).toBeLessThan(1e-11);
        expect(self).toBeCloseTo((2 * l + 1) / (4 * Math.PI), 11); // Unsöld's theorem (P_l(1) = 1)
      }
    }
  });

  it('depends only on the direction, not on the length', () => {
    const a = realSphericalHarmonics(8, 0.2, -0.7, 0.1);
    const b = realSphericalHarmonics(8, 2e3, -7e3, 1e3);
    for (let i = 0; i < a.length; i++) expect(b[i]).toBeCloseTo(a[i], 13);
  });

  it('handles the poles and tiny vectors', () => {
    const north = realSphericalHarmonics(6, 0, 0, 1e-200);
    for (let l = 0; l <= 6; l++) {
      for (let m = -l; m <= l; m++) {
        const v = north[harmonicIndex(l, m)];
        if (m === 0) expect(v).toBeCloseTo(Math.sqrt((2 * l + 1) / (4 * Math.PI)), 13);
        else expect(v).toBe(0);
      }
    }
  });

  it('gives the zero vector Y00 only (documented choice)', () => {
    const y = realSphericalHarmonics(4, 0, 0, 0);
    expect(y[0]).toBeCloseTo(1 / Math.sqrt(4 * Math.PI), 15);
    for (let i = 1; i < y.length; i++) expect(y[i]).toBe(0);
  });

  it('writes into a given buffer and refuses a short one or a non-finite vector', () => {
    const buf = new Float64Array(20);
    const y = realSphericalHarmonics(3, 1, 1, 1, buf);
    expect(y).toBe(buf);
    expect(() => realSphericalHarmonics(3, 1, 1, 1, new Float64Array(15))).toThrow(/needs 16/);
    expect(() => realSphericalHarmonics(2, NaN, 0, 1)).toThrow(RangeError);
    expect(() => realSphericalHarmonics(-1, 0, 0, 1)).toThrow(RangeError);
  });
});
