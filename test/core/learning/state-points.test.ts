// State points and the errors within them (core/learning/state-points.ts). Check values worked by hand below.
import { describe, expect, it } from 'vitest';
import { headlineErrors, statePointErrors, statePointsOf } from '../../../src-main/core/learning/state-points.ts';
import { errorFigures, verdict } from '../../../src-main/core/learning/error-figures.ts';

const S3 = Math.sqrt(3);
/** An isotropic tensor of isotropic value x as irreducible parts (T⁰ = tr/√3 = √3·x). */
const iso = (x: number) => [S3 * x, 0, 0, 0, 0, 0];
const frame = (atoms: number, info: Record<string, unknown> = {}) => ({ info, species: new Array(atoms).fill('O') });

describe('statePointsOf', () => {
  it('groups by the state_point property', () => {
    const frames = ['a', 'a', 'b', 'b', 'c', 'c'].map((t) => frame(3, { state_point: t }));
    const sp = statePointsOf(frames, frames.map(() => 100));
    expect(sp?.source).toBe('property');
    expect(sp?.labels).toEqual(['a', 'a', 'b', 'b', 'c', 'c']);
  });
  it('clusters number densities separated by gaps, and not the small fluctuations of one state point', () => {
    const frames = Array.from({ length: 8 }, () => frame(100));
    // two densities 1.000 and 1.100 /Å³·100 with 0.1 % fluctuations
    const volumes = [100, 100.1, 99.9, 100.05, 90.9, 91.0, 90.95, 90.85];
    const sp = statePointsOf(frames, volumes);
    expect(sp?.source).toBe('density');
    expect(new Set(sp!.labels).size).toBe(2);
    expect(sp!.labels.slice(0, 4).every((l) => l === sp!.labels[0])).toBe(true);
    expect(statePointsOf(frames, [100, 100.1, 99.9, 100.05, 100.2, 99.95, 100, 100.1])).toBeNull();
  });
  it('needs two frames in every group (one frame has no spread)', () => {
    const frames = ['a', 'a', 'a', 'b'].map((t) => frame(3, { state_point: t }));
    expect(statePointsOf(frames, [1, 1, 1, 1])).toBeNull();
  });
});

describe('statePointErrors', () => {
  it('gives the error relative to the spread within the state points (worked by hand)', () => {
    // state point A: isotropic values 1, 3; B: 11, 13. Every prediction 0.5 too high: RMSE 0.5.
    // Within: deviations ±1 in each → pooled standard deviation 1 → 50 %.
    // Overall: deviations from the mean 7 are −6, −4, 4, 6 → standard deviation √26 = 5.099 → 9.81 %.
    const ref = [1, 3, 11, 13].map(iso);
    const pred = [1.5, 3.5, 11.5, 13.5].map(iso);
    const labels = ['A', 'A', 'B', 'B'];
    const sp = statePointErrors(ref, pred, { source: 'property', what: 'state_point' }, labels)!;
    expect(sp.within.rmseIso).toBeCloseTo(0.5, 12);
    expect(sp.within.percentIso).toBeCloseTo(50, 10);
    const overall = errorFigures(ref, pred);
    expect(overall.percentIso).toBeCloseTo((100 * 0.5) / Math.sqrt(26), 10);
    expect(sp.groups.map((g) => g.label)).toEqual(['A', 'B']);
    for (const g of sp.groups) expect(g.errors.percentIso).toBeCloseTo(50, 10);
    // the headline and the verdict follow the within-state figure, not the flattering overall one
    const head = headlineErrors({ errors: overall, statePoints: sp });
    expect(head.errors.percentIso).toBeCloseTo(50, 10);
    expect(verdict({ ...overall, percentAniso: 0 })).toMatch(/^good/);
    expect(verdict({ ...head.errors, percentAniso: 0 })).toMatch(/^poor/);
  });
});
