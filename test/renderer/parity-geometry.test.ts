// Parity chart geometry: what is plotted for each part, the common axis range, and the figures of the dots.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import type { ParityPoint } from '../../src-main/core/learning/model-types.ts';
import {
  anisoNorm,
  paritySeries,
  parityDomain,
  plottedFigures,
  worstFrames,
} from '../../src-renderer/components/charts/parity-geometry.ts';

const six = fc.array(fc.double({ min: -1e3, max: 1e3, noNaN: true }), { minLength: 6, maxLength: 6 });
const pointArb = fc.record({ frame: fc.nat(1000), reference: six, predicted: six });

describe('paritySeries', () => {
  it('plots one dot a frame for λ=0 and for ‖T²‖, five for pooled λ=2 components', () => {
    fc.assert(
      fc.property(fc.array(pointArb, { maxLength: 40 }), (points: ParityPoint[]) => {
        expect(paritySeries(points, 'iso').data).toHaveLength(points.length);
        expect(paritySeries(points, 'aniso', 'norm').data).toHaveLength(points.length);
        expect(paritySeries(points, 'aniso', 'components').data).toHaveLength(5 * points.length);
      }),
    );
  });

  it('takes T⁰ for λ=0 and T²₋₂…T²₂ in order with μ = −2…2', () => {
    const p: ParityPoint = { frame: 4, reference: [1, 2, 3, 4, 5, 6], predicted: [10, 20, 30, 40, 50, 60] };
    expect(paritySeries([p], 'iso').data[0]).toMatchObject({ x: 1, y: 10, frame: 4, mu: null });
    const c = paritySeries([p], 'aniso').data;
    expect(c.map((d) => d.x)).toEqual([2, 3, 4, 5, 6]);
    expect(c.map((d) => d.y)).toEqual([20, 30, 40, 50, 60]);
    expect(c.map((d) => d.mu)).toEqual([-2, -1, 0, 1, 2]);
  });

  it('‖T²‖ of a hand example: (3,4,0,0,0) has norm 5', () => {
    expect(anisoNorm([9, 3, 4, 0, 0, 0])).toBe(5);
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

describe('plottedFigures', () => {
  it('matches a hand computation', () => {
    // x = 1,2,3 (mean 2, population variance 2/3), y = x + (0, 0, 0.3): RMSE = sqrt(0.09/3) = sqrt(0.03)
    const f = plottedFigures([{ x: 1, y: 1 }, { x: 2, y: 2 }, { x: 3, y: 3.3 }]);
    expect(f.rmse).toBeCloseTo(Math.sqrt(0.03), 12);
    expect(f.percent).toBeCloseTo((100 * Math.sqrt(0.03)) / Math.sqrt(2 / 3), 10);
    expect(f.r2).toBeCloseTo(1 - 0.09 / 2, 12);
    expect(f.count).toBe(3);
  });

  it('R² = 1 − (%RMSE/100)² with the population standard deviation', () => {
    const grid = fc.integer({ min: -1000, max: 1000 }).map((v) => v / 100);
    fc.assert(
      // values on a 0.01 grid: subnormal spreads would only test floating-point underflow
      fc.property(fc.array(fc.record({ x: grid, y: grid }), { minLength: 2, maxLength: 30 }), (data) => {
        const f = plottedFigures(data);
        fc.pre(Number.isFinite(f.percent) && Number.isFinite(f.r2) && f.percent < 1e6);
        expect(f.r2).toBeCloseTo(1 - (f.percent / 100) ** 2, 6);
      }),
    );
  });
});

describe('worstFrames', () => {
  it('sorts frames by |ΔT⁰| or ‖ΔT²‖, largest first', () => {
    const p = (frame: number, d0: number, d2: number[]): ParityPoint => ({
      frame,
      reference: [0, 0, 0, 0, 0, 0],
      predicted: [d0, ...d2],
    });
    const pts = [p(10, 0.1, [3, 4, 0, 0, 0]), p(11, -0.5, [0, 0, 1, 0, 0]), p(12, 0.2, [0, 0, 0, 0, 2])];
    expect(worstFrames(pts, 'iso').map((e) => e.frame)).toEqual([11, 12, 10]);
    const a = worstFrames(pts, 'aniso', 2);
    expect(a.map((e) => e.frame)).toEqual([10, 12]);
    expect(a[0].error).toBe(5);
  });
});
