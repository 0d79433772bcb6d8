// Learning curves from repeated random splits (core/learning/curve-splits.ts and validate()).
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { curveTrend, meanOfRepeats, type CurvePoint } from '../../../src-main/core/learning/curve-splits.ts';
import type { ErrorFigures } from '../../../src-main/core/learning/model-types.ts';
import { validate } from '../../../src-main/core/learning/validation.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';

const fig = (percentIso: number, percentAniso = percentIso): ErrorFigures => ({ rmseIso: percentIso / 100, rmseAniso: percentAniso / 100, percentIso, percentAniso, r2Iso: 0, r2Aniso: 0, count: 10 });

describe('meanOfRepeats', () => {
  it('gives the mean and the sample standard deviation over the repeats (worked by hand)', () => {
    // 10, 20, 30 %: mean 20, sample SD √((100 + 0 + 100)/2) = 10
    const p = meanOfRepeats(8, [fig(10), fig(20), fig(30)]);
    expect(p.errors.percentIso).toBeCloseTo(20, 12);
    expect(p.spread!.percentIso).toBeCloseTo(10, 12);
    expect(p.repeats).toBe(3);
  });
});

describe('curveTrend', () => {
  const pt = (n: number, m: number, sd: number): CurvePoint => ({ trainSize: n, errors: fig(m), spread: { percentIso: sd, percentAniso: sd, rmseIso: 0, rmseAniso: 0 }, repeats: 3 });
  it('says more data would help only when the last drop exceeds the spread', () => {
    expect(curveTrend([pt(10, 60, 3), pt(20, 40, 3)]).trend).toBe('falling');
    expect(curveTrend([pt(10, 60, 3), pt(20, 40, 3)]).text).toMatch(/more training data of the same kind would likely help/);
    // 67 % then 90 % with a spread of 20 %: within the noise, not a rise and not a fall
    expect(curveTrend([pt(4, 67, 20), pt(6, 90, 20)]).trend).toBe('flat');
    expect(curveTrend([pt(10, 30, 1), pt(20, 40, 1)]).trend).toBe('rising');
    expect(curveTrend([pt(10, 30, 1)]).trend).toBe('unknown');
    // a curve ending at the full fold's size compares its own last two points, not a point with itself
    expect(curveTrend([pt(40, 60, 3), pt(80, 40, 3)], { trainSize: 80, errors: fig(40) }).text).toMatch(/from 40 to 80 training frames/);
  });
});

describe('validate with a learning curve', () => {
  it('repeats the random subsets at each size and reports their spread (real DFT frames)', async () => {
    const frames = parseExtxyz(readFileSync(new URL('../../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water.extxyz');
    const r = await validate(frames, { tensorKey: 'eps_inf', kind: 'eps', route: 'cm', settings: { radialFunctions: 4, angularOrder: 3 } }, { folds: 2, learningCurve: [2], curveRepeats: 3 });
    expect(r.learningCurve).toHaveLength(1);
    const p = r.learningCurve[0];
    expect(p.repeats).toBe(3);
    // different random pairs of frames give different errors: a spread above zero
    expect(p.spread!.percentIso).toBeGreaterThan(0);
    expect(r.curveTrend).toMatch(/from 2 to 4 training frames/);
  }, 120_000);
});
