// Radial integrals of the density expansion: quadrature against scipy, the tabulated cubics against the
// quadrature, the cutoff switch, and the expansion of a single neighbour against its closed form.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { cutoffFunction, interpolateRadial, makeDensityExpander, radialIntegral, radialTable } from '../../../src-main/core/descriptors/density.ts';
import { realSphericalHarmonics } from '../../../src-main/core/descriptors/harmonics.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { referenceDensityExpander } from '../../helpers/reference-kernels.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';
import { descriptorKernels } from '../../../src-main/core/wasm/descriptors.ts';

const fixture = JSON.parse(readFileSync(new URL('../../fixtures/radial-reference.json', import.meta.url), 'utf8')) as {
  integral: { cutoff: number; sigma: number; nmax: number; lmax: number; rows: { d: number; n: number; l: number; value: number }[] };
};

describe('radial integrals', () => {
  const { cutoff, sigma, nmax, lmax, rows } = fixture.integral;
  const s = { cutoff, sigma, nmax, lmax };

  it('quadrature matches scipy.integrate.quad with sympy Gram–Schmidt basis (radial-reference.py) to 1e-11', () => {
    const out = new Float64Array(nmax * (lmax + 1));
    let last = -1;
    for (const row of rows) {
      if (row.d !== last) radialIntegral(s, row.d, out);
      last = row.d;
      expect(Math.abs(out[row.n * (lmax + 1) + row.l] - row.value), `d=${row.d} n=${row.n} l=${row.l}`).toBeLessThan(1e-11);
    }
  });

  it('the tabulated cubics agree with the quadrature between grid points to 1e-8 (relative to the largest value)', () => {
    const table = radialTable(s);
    const NL = nmax * (lmax + 1);
    const a = new Float64Array(NL);
    const b = new Float64Array(NL);
    let scale = 0;
    for (let d = 0; d < cutoff; d += 0.05) {
      radialIntegral(s, d, a);
      for (const v of a) scale = Math.max(scale, Math.abs(v));
    }
    for (let i = 0; i < 60; i++) {
      const d = ((i + 0.37) / 60) * cutoff;
      radialIntegral(s, d, a);
      interpolateRadial(table, d, b);
      for (let q = 0; q < NL; q++) expect(Math.abs(a[q] - b[q])).toBeLessThan(1e-8 * scale);
    }
  });

  it('the derivative in d matches a central difference of the quadrature', () => {
    const NL = nmax * (lmax + 1);
    const v = new Float64Array(NL), dv = new Float64Array(NL), p = new Float64Array(NL), m = new Float64Array(NL);
    const h = 1e-4;
    for (const d of [0.2, 1.3, 3.9]) {
      radialIntegral(s, d, v, dv);
      radialIntegral(s, d + h, p);
      radialIntegral(s, d - h, m);
      for (let q = 0; q < NL; q++) expect(Math.abs(dv[q] - (p[q] - m[q]) / (2 * h))).toBeLessThan(1e-7);
    }
  });
});

describe('cutoffFunction', () => {
  it('is 1 inside, 0 outside, ½ at mid-switch, with continuous value and slope at both ends', () => {
    const rc = 4, w = 0.5;
    expect(cutoffFunction(1, rc, w)).toBe(1);
    expect(cutoffFunction(3.5, rc, w)).toBe(1);
    expect(cutoffFunction(3.75, rc, w)).toBeCloseTo(0.5, 14);
    expect(cutoffFunction(4, rc, w)).toBe(0);
    expect(cutoffFunction(5, rc, w)).toBe(0);
    const e = 1e-6;
    for (const x of [rc - w, rc]) {
      expect(Math.abs(cutoffFunction(x + e, rc, w) - cutoffFunction(x - e, rc, w))).toBeLessThan(1e-10);
      const slopeIn = (cutoffFunction(x - e, rc, w) - cutoffFunction(x - 2 * e, rc, w)) / e;
      const slopeOut = (cutoffFunction(x + 2 * e, rc, w) - cutoffFunction(x + e, rc, w)) / e;
      expect(Math.abs(slopeIn - slopeOut)).toBeLessThan(1e-4);
    }
  });
});

describe('makeDensityExpander', () => {
  it('one neighbour gives 4π f_c(d) Y_lm(r̂) I_nl(d), plus the centre term in its own channel', () => {
    const settings = { nmax: 4, lmax: 3, cutoff: 4, sigma: 0.4, cutoffWidth: 1, channels: 2 };
    const ex = makeDensityExpander(settings);
    const v = [1.1, -2.0, 1.7];
    const d = Math.hypot(...v);
    const pairs = {
      start: Int32Array.from([0, 1, 2]),
      neighbour: Int32Array.from([1, 0]),
      vectors: Float64Array.from([...v, ...v.map((x) => -x)]),
      distances: Float64Array.from([d, d]),
    };
    const out = new Float64Array(ex.size);
    ex.expand(pairs, 0, 0, Int32Array.from([0, 1]), out);
    const I = new Float64Array(4 * 4);
    radialIntegral(settings, d, I);
    const I0 = new Float64Array(4 * 4);
    radialIntegral(settings, 0, I0);
    const Y = realSphericalHarmonics(3, v[0], v[1], v[2]);
    const fc = cutoffFunction(d, 4, 1);
    for (let n = 0; n < 4; n++) {
      for (let l = 0; l <= 3; l++) {
        for (let m = -l; m <= l; m++) {
          const lm = l * l + l + m;
          const neighbourTerm = 4 * Math.PI * fc * Y[lm] * I[n * 4 + l];
          expect(out[(1 * 4 + n) * 16 + lm]).toBeCloseTo(neighbourTerm, 9);
          const selfTerm = lm === 0 ? Math.sqrt(4 * Math.PI) * I0[n * 4] : 0;
          expect(out[(0 * 4 + n) * 16 + lm]).toBeCloseTo(selfTerm, 9);
        }
      }
    }
  });

  for (const wasm of [true, false]) it(`equals the first version bit for bit (random neighbours, channels, sizes), ${wasm ? 'WebAssembly sums' : 'JavaScript'}`, () => {
    // The kept first version (test/helpers/reference-kernels.ts) reads the radial table in its own layout; the
    // expander reads a reordered copy with the same operations, and its WebAssembly sums (core/wasm/assembly/
    // descriptors.ts, four pairs per pass) keep each sum's pair order, so the numbers must be identical. Neighbours
    // beyond the cutoff, of no channel (−1) and at distance 0 are included (two side by side, and one among many);
    // odd and even nmax, below and above the kernel's block of eight; lmax 0; odd and even numbers of pairs, so that
    // the kernel's two-pair harmonics meet a lone last pair, a pair at distance 0, and channels with no pairs.
    setWebAssemblyKernels(wasm);
    if (wasm) expect(descriptorKernels()).not.toBeNull();
    const rng = makeRng(29);
    for (const [nmax, lmax, channels] of [[8, 6, 2], [6, 4, 2], [5, 4, 3], [3, 0, 1], [1, 2, 2], [9, 3, 2], [10, 1, 4], [17, 2, 1]]) {
      const settings = { nmax, lmax, cutoff: 4.5, sigma: 0.4, cutoffWidth: 0.5, channels };
      const fast = makeDensityExpander(settings);
      const plain = referenceDensityExpander(settings);
      for (const count of [0, 1, 2, 3, 7, 150]) {
        const vectors = new Float64Array(3 * count);
        const distances = new Float64Array(count);
        for (let p = 0; p < count; p++) {
          const r = p === 3 || p === 4 || p % 37 === 20 ? 0 : 5 * rng.uniform();
          const v = [rng.normal(), rng.normal(), rng.normal()];
          const n = Math.hypot(v[0], v[1], v[2]);
          for (let k = 0; k < 3; k++) vectors[3 * p + k] = (r * v[k]) / n;
          distances[p] = Math.hypot(vectors[3 * p], vectors[3 * p + 1], vectors[3 * p + 2]);
        }
        const pairs = { start: Int32Array.from([0, count]), neighbour: Int32Array.from({ length: count }, (_, p) => p + 1), vectors, distances };
        const channelOf = Int32Array.from({ length: count + 1 }, (_, i) => (i % 5 === 4 ? -1 : rng.int(channels)));
        const a = new Float64Array(fast.size).fill(NaN);
        const b = new Float64Array(plain.size).fill(NaN);
        fast.expand(pairs, 0, channelOf[0], channelOf, a);
        plain.expand(pairs, 0, channelOf[0], channelOf, b);
        expect(Array.from(a)).toEqual(Array.from(b));
        if (count > 1 && lmax > 0) expect(a.some((x, k) => x !== 0 && k % ((lmax + 1) * (lmax + 1)) !== 0)).toBe(true);
      }
    }
    setWebAssemblyKernels(true);
  });

  it('keeps each slot\'s coefficients in the kernels\' memory where coefficientsAt says, until anything is placed there', () => {
    // featurise expands a group of environments into slots 0…7 and reads them afterwards (the λ = 2 read-out)
    const settings = { nmax: 6, lmax: 4, cutoff: 4.5, sigma: 0.4, cutoffWidth: 0.5, channels: 2 };
    const ex = makeDensityExpander(settings);
    const K = descriptorKernels();
    expect(K).not.toBeNull();
    const rng = makeRng(31);
    const count = 12;
    const vectors = Float64Array.from({ length: 3 * count }, () => 1.2 * rng.normal());
    const distances = Float64Array.from({ length: count }, (_, p) => Math.hypot(vectors[3 * p], vectors[3 * p + 1], vectors[3 * p + 2]));
    const pairs = { start: Int32Array.from([0, 6, count]), neighbour: Int32Array.from({ length: count }, (_, p) => p % 2), vectors, distances };
    const channelOf = Int32Array.from([0, 1]);
    const outs = [0, 1].map(() => new Float64Array(ex.size));
    ex.expand(pairs, 0, 0, channelOf, outs[0], 5);
    ex.expand(pairs, 1, 1, channelOf, outs[1], 2);
    for (const [slot, k] of [[5, 0], [2, 1]]) {
      const at = ex.coefficientsAt(slot);
      expect(at).toBeGreaterThan(0);
      expect(Array.from((K as NonNullable<typeof K>).module.f64(at, ex.size))).toEqual(Array.from(outs[k]));
    }
    expect(outs[0]).not.toEqual(outs[1]);
    expect(ex.coefficientsAt(0)).toBe(-1); // nothing expanded into slot 0
    expect(() => ex.expand(pairs, 0, 0, channelOf, outs[0], 8)).toThrow(RangeError);
    (K as NonNullable<typeof K>).region({}, 64); // anything placed: no address is trusted any more
    expect(ex.coefficientsAt(5)).toBe(-1);
  });
});
