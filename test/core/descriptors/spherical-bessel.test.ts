// Scaled modified spherical Bessel functions against closed forms and against scipy.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { scaledSphericalBesselI } from '../../../src-main/core/descriptors/spherical-bessel.ts';

const fixture = JSON.parse(readFileSync(new URL('../../fixtures/radial-reference.json', import.meta.url), 'utf8')) as {
  bessel: { l: number; x: number; ive: number; spherical_in?: number }[];
};

describe('scaledSphericalBesselI', () => {
  it('matches the closed forms i_0 = sinh x / x and i_1 = (x cosh x − sinh x)/x² (DLMF 10.49.8)', () => {
    const out = new Float64Array(3);
    for (const x of [0.05, 0.7, 3, 12, 29, 31, 60]) {
      scaledSphericalBesselI(2, x, out);
      const i0 = Math.sinh(x) / x;
      const i1 = (x * Math.cosh(x) - Math.sinh(x)) / (x * x);
      const i2 = ((x * x + 3) * Math.sinh(x) - 3 * x * Math.cosh(x)) / (x * x * x); // DLMF 10.49.8, n = 2
      expect(out[0]).toBeCloseTo(Math.exp(-x) * i0, 14);
      expect(Math.abs(out[1] / (Math.exp(-x) * i1) - 1)).toBeLessThan(1e-12);
      if (x > 0.5) expect(Math.abs(out[2] / (Math.exp(-x) * i2) - 1)).toBeLessThan(1e-10);
    }
  });

  it('is 1, 0, 0… at x = 0', () => {
    const out = new Float64Array(4).fill(7);
    scaledSphericalBesselI(3, 0, out);
    expect([...out]).toEqual([1, 0, 0, 0]);
  });

  it('matches scipy.special.spherical_in and ive (test/fixtures/radial-reference.py) to 1e-12 relative', () => {
    const out = new Float64Array(13);
    let worst = 0;
    for (const row of fixture.bessel) {
      scaledSphericalBesselI(row.l, row.x, out);
      const ref = row.ive;
      if (row.spherical_in !== undefined && ref > 1e-250) {
        expect(Math.abs(row.spherical_in / ref - 1)).toBeLessThan(1e-11); // the two scipy routes agree
      }
      if (ref < 1e-280) {
        expect(Math.abs(out[row.l])).toBeLessThan(1e-270);
        continue;
      }
      const rel = Math.abs(out[row.l] / ref - 1);
      worst = Math.max(worst, rel);
      expect(rel, `l=${row.l} x=${row.x}`).toBeLessThan(1e-12);
    }
    expect(worst).toBeLessThan(1e-12);
  });

  it('rejects negative or non-finite x', () => {
    const out = new Float64Array(2);
    expect(() => scaledSphericalBesselI(1, -1, out)).toThrow(RangeError);
    expect(() => scaledSphericalBesselI(1, Number.NaN, out)).toThrow(RangeError);
  });
});
