// Parity chart geometry: what is plotted for each part (in the tensor's own units), the common axis range, and
// the error figures (the engine's function, whichever way the anisotropic part is drawn).
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import type { ParityPoint } from '../../src-main/core/learning/model-types.ts';
import {
  anisoNorm,
  paritySeries,
  parityDomain,
  pointFigures,
  worstFrames,
} from '../../src-renderer/components/charts/parity-geometry.ts';
import { toIrreducible } from '../../src-main/core/dielectric/tensor.ts';
import { errorFigures } from '../../src-main/core/learning/error-figures.ts';
import { parseExtxyz } from '../../src-main/io/extxyz.ts';

const irr = (T: number[]) => Array.from(toIrreducible(Float64Array.from(T)));

const six = fc.array(fc.double({ min: -1e3, max: 1e3, noNaN: true }), { minLength: 6, maxLength: 6 });
const pointArb = fc.record({ frame: fc.nat(1000), reference: six, predicted: six });

describe('paritySeries', () => {
  it('plots one dot a frame for tr/3 and for the anisotropy, six for the pooled anisotropic components', () => {
    fc.assert(
      fc.property(fc.array(pointArb, { maxLength: 40 }), (points: ParityPoint[]) => {
        expect(paritySeries(points, 'iso').data).toHaveLength(points.length);
        expect(paritySeries(points, 'aniso', 'norm').data).toHaveLength(points.length);
        expect(paritySeries(points, 'aniso', 'components').data).toHaveLength(6 * points.length);
      }),
    );
  });

  it('shows tr/3 and the Cartesian components of T − (tr/3) I, worked by hand', () => {
    // reference ε = [[1, 0.5, 0], [0.5, 2, 0], [0, 0, 3]]: tr/3 = 2; anisotropic part diag(−1, 0, 1), xy 0.5
    const ref = [1, 0.5, 0, 0.5, 2, 0, 0, 0, 3];
    const pred = ref.map((v) => 2 * v);
    const p: ParityPoint = { frame: 4, reference: irr(ref), predicted: irr(pred) };
    const iso = paritySeries([p], 'iso').data[0];
    expect(iso).toMatchObject({ frame: 4, component: null });
    expect(iso.x).toBeCloseTo(2, 14);
    expect(iso.y).toBeCloseTo(4, 14);
    const c = paritySeries([p], 'aniso').data;
    expect(c.map((d) => d.component)).toEqual(['xx', 'yy', 'zz', 'xy', 'xz', 'yz']);
    [-1, 0, 1, 0.5, 0, 0].forEach((v, k) => {
      expect(c[k].x).toBeCloseTo(v, 14);
      expect(c[k].y).toBeCloseTo(2 * v, 14);
    });
  });

  it('the isotropic axis of the water sample reads ε_iso ≈ 1.55 (tr/3), not T⁰ = tr/√3 ≈ 2.7', () => {
    // test/fixtures/water-dft-sample.extxyz: eps_inf of 8 DFT frames (its README: ε∞ ≈ 1.55 in that basis)
    const frames = parseExtxyz(readFileSync(new URL('../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water-dft-sample.extxyz');
    const points: ParityPoint[] = frames.map((f, i) => {
      const e = irr(f.info.eps_inf as number[]);
      return { frame: i, reference: e, predicted: e };
    });
    for (const d of paritySeries(points, 'iso').data) {
      expect(d.x).toBeGreaterThan(1.5);
      expect(d.x).toBeLessThan(1.6);
    }
  });

  it('the anisotropy of an axial tensor diag(a, a, b) is |b − a| (the CSV\'s eps_aniso)', () => {
    expect(anisoNorm(irr([1.5, 0, 0, 0, 1.5, 0, 0, 0, 1.6]))).toBeCloseTo(0.1, 14);
  });

  it('groups by the given labels in order of first appearance, else by point label', () => {
    const mk = (frame: number, label?: string): ParityPoint => ({ frame, label, reference: [frame, 0, 0, 0, 0, 0], predicted: [frame, 0, 0, 0, 0, 0] });
    const pts = [mk(0, 'a'), mk(1, 'b'), mk(2, 'a'), mk(3)];
    const s = paritySeries(pts, 'iso');
    expect(s.groups).toEqual(['a', 'b', 'all']);
    expect(s.data.map((d) => d.group)).toEqual([0, 1, 0, 2]);
    const t = paritySeries(pts, 'iso', 'components', ['test', 'fold', 'fold', 'test']);
    expect(t.groups).toEqual(['test', 'fold']);
    expect(() => paritySeries(pts, 'iso', 'components', ['x'])).toThrow(/4 points but 1 group/);
  });

  it('skips non-finite values and says which frame, and rejects wrong lengths', () => {
    const bad: ParityPoint = { frame: 9, reference: [NaN, 0, 0, 0, 0, 0], predicted: [1, 0, 0, 0, 0, 0] };
    const s = paritySeries([bad], 'iso');
    expect(s.data).toHaveLength(0);
    expect(s.skipped[0].frame).toBe(9);
    expect(() => paritySeries([{ frame: 2, reference: [1], predicted: [1] }], 'iso')).toThrow(/frame 2.*6 numbers/);
  });
});

describe('parityDomain', () => {
  it('covers every x and every y with one range for both axes', () => {
    fc.assert(
      fc.property(fc.array(pointArb, { minLength: 1, maxLength: 40 }), fc.constantFrom<'iso' | 'aniso'>('iso', 'aniso'), (points, part) => {
        const data = paritySeries(points, part).data;
        const [lo, hi] = parityDomain(data);
        expect(lo).toBeLessThan(hi);
        for (const d of data) {
          expect(d.x).toBeGreaterThanOrEqual(lo);
          expect(d.y).toBeGreaterThanOrEqual(lo);
          expect(d.x).toBeLessThanOrEqual(hi);
          expect(d.y).toBeLessThanOrEqual(hi);
        }
      }),
    );
  });

  it('pads by the given fraction: x in [1,2], y in [0,3], pad 0.1 gives [−0.3, 3.3]', () => {
    const [lo, hi] = parityDomain([{ x: 1, y: 0 }, { x: 2, y: 3 }], 0.1);
    expect(lo).toBeCloseTo(-0.3, 12);
    expect(hi).toBeCloseTo(3.3, 12);
  });

  it('widens a zero span and has a default for no data', () => {
    const [lo, hi] = parityDomain([{ x: 5, y: 5 }]);
    expect(lo).toBeLessThan(5);
    expect(hi).toBeGreaterThan(5);
    expect(parityDomain([])).toEqual([0, 1]);
  });
});

describe('pointFigures', () => {
  it('are the engine\'s error figures of the points, in both views of the anisotropic part', () => {
    fc.assert(
      fc.property(fc.array(pointArb, { minLength: 1, maxLength: 20 }), (points: ParityPoint[]) => {
        const e = errorFigures(points.map((p) => p.reference), points.map((p) => p.predicted));
        expect(pointFigures(points, 'iso')).toEqual({ rmse: e.rmseIso, percent: e.percentIso, r2: e.r2Iso, count: points.length });
        expect(pointFigures(points, 'aniso')).toEqual({ rmse: e.rmseAniso, percent: e.percentAniso, r2: e.r2Aniso, count: points.length });
      }),
    );
  });

  it('match a hand computation of the isotropic part', () => {
    // tr/3 of the reference 1, 2, 3 (mean 2, population variance 2/3), predicted 1, 2, 3.3: RMSE = sqrt(0.09/3)
    const p = (r: number, q: number): ParityPoint => ({ frame: 0, reference: irr([r, 0, 0, 0, r, 0, 0, 0, r]), predicted: irr([q, 0, 0, 0, q, 0, 0, 0, q]) });
    const f = pointFigures([p(1, 1), p(2, 2), p(3, 3.3)], 'iso');
    expect(f.rmse).toBeCloseTo(Math.sqrt(0.03), 12);
    expect(f.percent).toBeCloseTo((100 * Math.sqrt(0.03)) / Math.sqrt(2 / 3), 10);
    expect(f.r2).toBeCloseTo(1 - 0.09 / 2, 12);
    expect(f.count).toBe(3);
  });
});

describe('worstFrames', () => {
  it('sorts frames by |Δ(tr/3)| or by the anisotropy of the error, largest first', () => {
    const p = (frame: number, d0: number, d2: number[]): ParityPoint => ({
      frame,
      reference: [0, 0, 0, 0, 0, 0],
      predicted: [d0, ...d2],
    });
    const pts = [p(10, 0.1, [3, 4, 0, 0, 0]), p(11, -0.5, [0, 0, 1, 0, 0]), p(12, 0.2, [0, 0, 0, 0, 2])];
    expect(worstFrames(pts, 'iso').map((e) => e.frame)).toEqual([11, 12, 10]);
    expect(worstFrames(pts, 'iso')[0].error).toBeCloseTo(0.5 / Math.sqrt(3), 14);
    const a = worstFrames(pts, 'aniso', 2);
    expect(a.map((e) => e.frame)).toEqual([10, 12]);
    expect(a[0].error).toBeCloseTo(5 * Math.sqrt(1.5), 12);
  });
});
