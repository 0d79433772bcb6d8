// The orthonormal radial basis: orthonormality by quadrature, and values against an exact sympy Gram–Schmidt.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { radialBasis } from '../../../src-main/core/descriptors/radial-basis.ts';
import { panelRule } from '../../../src-main/core/descriptors/density.ts';

const fixture = JSON.parse(readFileSync(new URL('../../fixtures/radial-reference.json', import.meta.url), 'utf8')) as {
  basis: { cutoff: number; nmax: number; r: number[]; values: number[][] };
};

function overlap(nmax: number, cutoff: number): Float64Array {
  const basis = radialBasis(nmax, cutoff);
  // Independent check: 4 panels × 24 Gauss–Legendre points integrate polynomials up to degree 47 exactly.
  const { nodes, weights } = panelRule(0, cutoff, 4, 24);
  const values = new Float64Array(nmax);
  const s = new Float64Array(nmax * nmax);
  for (let k = 0; k < nodes.length; k++) {
    basis.evaluate(nodes[k], values);
    const w = weights[k] * nodes[k] * nodes[k];
    for (let a = 0; a < nmax; a++) for (let b = 0; b < nmax; b++) s[a * nmax + b] += w * values[a] * values[b];
  }
  return s;
}

describe('radialBasis', () => {
  it.each([
    [1, 3.0],
    [4, 5.0],
    [8, 4.5],
    [12, 6.0],
  ])('nmax %i, r_c %f: ∫ r² R_n R_m dr = δ_nm to 1e-10', (nmax, cutoff) => {
    const s = overlap(nmax, cutoff);
    for (let a = 0; a < nmax; a++) for (let b = 0; b < nmax; b++) expect(Math.abs(s[a * nmax + b] - (a === b ? 1 : 0))).toBeLessThan(1e-10);
  });

  it('equals the exact Gram–Schmidt of (r_c − r)^(n+2) from sympy (test/fixtures/radial-reference.py)', () => {
    const { cutoff, nmax, r, values } = fixture.basis;
    const basis = radialBasis(nmax, cutoff);
    const out = new Float64Array(nmax);
    r.forEach((x, k) => {
      basis.evaluate(x, out);
      for (let n = 0; n < nmax; n++) expect(out[n]).toBeCloseTo(values[n][k], 10);
    });
  });

  it('vanishes at and beyond the cutoff, with zero slope at r_c', () => {
    const basis = radialBasis(6, 4);
    const a = new Float64Array(6);
    basis.evaluate(4, a);
    expect([...a].every((v) => v === 0)).toBe(true);
    basis.evaluate(7, a);
    expect([...a].every((v) => v === 0)).toBe(true);
    basis.evaluate(4 - 1e-4, a);
    for (const v of a) expect(Math.abs(v)).toBeLessThan(1e-5); // O(h²) near r_c
  });

  it('rejects bad sizes', () => {
    expect(() => radialBasis(0, 4)).toThrow(RangeError);
    expect(() => radialBasis(3, -1)).toThrow(RangeError);
  });
});
