// Trajectory chart and learning curve geometry: decimation keeps every column's extremes and the global ones,
// running statistics (running mean, block-averaged standard error against known results), log-axis ranges.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { decimateMinMax, lowerBound } from '../../src-renderer/components/charts/decimate.ts';
import { runningError } from '../../src-renderer/components/charts/trajectory-stats.ts';
import { learningLines, logDomain, logLogSlope } from '../../src-renderer/components/charts/learning-geometry.ts';
import type { ErrorFigures } from '../../src-main/core/learning/model-types.ts';

describe('decimateMinMax', () => {
  it('keeps the global extremes and every column’s min and max, with ≤ 4 points a column', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -100, max: 100, noNaN: true }), { minLength: 50, maxLength: 3000 }), fc.integer({ min: 3, max: 40 }), (y, cols) => {
        const x = Float64Array.from(y, (_, i) => i);
        const idx = decimateMinMax(x, y, 0, y.length - 1, cols);
        expect(idx.length).toBeLessThanOrEqual(4 * (cols + 1) + 2);
        const kept = Array.from(idx, (i) => y[i]);
        expect(Math.max(...kept)).toBe(Math.max(...y));
        expect(Math.min(...kept)).toBe(Math.min(...y));
        for (let k = 1; k < idx.length; k++) expect(idx[k]).toBeGreaterThan(idx[k - 1]);
        if (y.length > 4 * cols) {
          // per column: the kept samples reach the column's own extremes
          const w = (y.length - 1) / cols;
          for (let c = 0; c < cols; c++) {
            const inCol = y.map((v, i) => [i, v]).filter(([i]) => Math.min(cols - 1, Math.floor(i / w)) === c || (c === cols - 1 && i === y.length - 1));
            if (inCol.length === 0) continue;
            const colMax = Math.max(...inCol.map(([, v]) => v));
            const keptCol = Array.from(idx).filter((i) => inCol.some(([j]) => j === i)).map((i) => y[i]);
            expect(keptCol).toContain(colMax);
          }
        }
      }),
      { numRuns: 60 },
    );
  });

  it('keeps a single spike among 10⁵ flat samples, with 200 columns', () => {
    const n = 100_000;
    const y = new Float64Array(n).fill(1);
    y[54321] = 9;
    const x = Float64Array.from({ length: n }, (_, i) => i);
    const idx = decimateMinMax(x, y, 0, n - 1, 200);
    expect(idx.length).toBeLessThanOrEqual(4 * 201);
    expect(Array.from(idx)).toContain(54321);
  });

  it('draws only the visible range plus one sample either side, and returns everything when short', () => {
    const x = Float64Array.from({ length: 1000 }, (_, i) => i * 0.5);
    const y = Float64Array.from(x, (v) => Math.sin(v));
    const idx = decimateMinMax(x, y, 100, 110, 100);
    expect(x[idx[0]]).toBeLessThan(100);
    expect(x[idx[idx.length - 1]]).toBeGreaterThan(110);
    expect(idx.length).toBe(23); // 21 samples in [100, 110] at 0.5 spacing, plus one each side
    expect(lowerBound(x, 100)).toBe(200);
  });
});

// The chart computes no statistics of its own: running means and block-averaged errors come from the service
// (core/trajectory/, tested in test/core/trajectory/ and test/app/trajectory-stats.test.ts).
describe('running error band', () => {
  it('running error scales as 1/√t and equals the final error at t = n', () => {
    expect(runningError(0.01, 400, 400)).toBeCloseTo(0.01, 15);
    expect(runningError(0.01, 400, 100)).toBeCloseTo(0.02, 15);
  });
});

describe('learning curve geometry', () => {
  const fig = (p: number, r: number): ErrorFigures => ({ rmseIso: r, rmseAniso: 2 * r, percentIso: p, percentAniso: 2 * p, r2Iso: 0.9, r2Aniso: 0.8, count: 10 });

  it('one line per route and part, sorted by size, with non-positive values skipped and counted', () => {
    const { lines, skipped } = learningLines(
      [
        { route: 'cm', learningCurve: [ { trainSize: 40, errors: fig(10, 0.1) }, { trainSize: 10, errors: fig(20, 0.2) }, { trainSize: 20, errors: fig(0, 0) } ] },
        { route: 'direct', learningCurve: [{ trainSize: 10, errors: fig(30, 0.3) }] },
      ],
      'percent',
    );
    expect(lines.map((l) => `${l.route}/${l.part}`)).toEqual(['cm/iso', 'cm/aniso', 'direct/iso', 'direct/aniso']);
    expect(lines[0].points).toEqual([ { n: 10, value: 20 }, { n: 40, value: 10 } ]);
    expect(lines[1].points.map((p) => p.value)).toEqual([40, 20]);
    expect(skipped).toBe(2);
  });

  it('log domain covers all values with padding; slope of a power law is its exponent', () => {
    const [lo, hi] = logDomain([3, 30, 300], 0.1);
    expect(lo).toBeCloseTo(3 / 10 ** 0.1, 12);
    expect(hi).toBeCloseTo(300 * 10 ** 0.1, 9);
    const pts = [10, 20, 40, 80].map((n) => ({ n, value: 5 * n ** -0.5 }));
    expect(logLogSlope(pts)).toBeCloseTo(-0.5, 12);
  });
});
