import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { errorFigures, validate, validateValues, valueErrorFigures } from '../../../src-main/core/learning/validation.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';

describe('error figures of the irreducible parts', () => {
  it('follow the documented definitions (values worked by hand)', () => {
    // reference T⁰: 1, 2, 3 (mean 2, population SD sqrt(2/3)); predicted 1, 2, 4 → RMSE sqrt(1/3)
    // reference T²: (1,0,0,0,0), (0,1,0,0,0), (0,0,0,0,0); predicted all zero →
    //   RMSE λ=2 = sqrt((1 + 1 + 0)/3) = sqrt(2/3); mean T² = (1/3, 1/3, 0, 0, 0),
    //   SD λ=2 = sqrt(mean Σ_μ (T²_μ − mean_μ)²) = sqrt(((4/9 + 1/9) + (1/9 + 4/9) + (1/9 + 1/9))/3) = sqrt(4/9)
    const ref = [
      [1, 1, 0, 0, 0, 0],
      [2, 0, 1, 0, 0, 0],
      [3, 0, 0, 0, 0, 0],
    ];
    const pred = [
      [1, 0, 0, 0, 0, 0],
      [2, 0, 0, 0, 0, 0],
      [4, 0, 0, 0, 0, 0],
    ];
    const e = errorFigures(ref, pred);
    expect(e.count).toBe(3);
    expect(e.rmseIso).toBeCloseTo(Math.sqrt(1 / 3), 14);
    expect(e.percentIso).toBeCloseTo((100 * Math.sqrt(1 / 3)) / Math.sqrt(2 / 3), 12);
    expect(e.r2Iso).toBeCloseTo(1 - 1 / 2, 14);
    expect(e.rmseAniso).toBeCloseTo(Math.sqrt(2 / 3), 14);
    expect(e.percentAniso).toBeCloseTo((100 * Math.sqrt(2 / 3)) / Math.sqrt(4 / 9), 12);
    expect(e.r2Aniso).toBeCloseTo(1 - 2 / (4 / 3), 14);
  });

  it('never gives NaN for a constant reference', () => {
    const e = errorFigures([[1, 0, 0, 0, 0, 0], [1, 0, 0, 0, 0, 0]], [[1, 0, 0, 0, 0, 0], [1.5, 0, 0, 0, 0, 0]]);
    expect(e.percentIso).toBe(Infinity);
    expect(e.percentAniso).toBe(0);
    expect(e.r2Aniso).toBe(1);
  });
});

describe('error figures of a vector or scalar target', () => {
  it('follow the documented definitions (values worked by hand)', () => {
    // reference vectors (1,0,0), (0,1,0), (0,0,0): mean (1/3, 1/3, 0);
    //   SD = sqrt(mean |v − mean|²) = sqrt(((4/9 + 1/9) + (1/9 + 4/9) + (1/9 + 1/9))/3) = 2/3
    // predicted (1,0,0), (0,0,0), (0,0,1): errors 0, 1, 1 → RMSE sqrt(2/3), largest 1, R² = 1 − 2/(4/3) = −0.5
    const f = valueErrorFigures([[1, 0, 0], [0, 1, 0], [0, 0, 0]], [[1, 0, 0], [0, 0, 0], [0, 0, 1]]);
    expect(f.rmse).toBeCloseTo(Math.sqrt(2 / 3), 14);
    expect(f.percent).toBeCloseTo((100 * Math.sqrt(2 / 3)) / (2 / 3), 12);
    expect(f.r2).toBeCloseTo(-0.5, 14);
    expect(f.maxError).toBe(1);
    expect(f.count).toBe(3);
    // scalars 1, 2, 3 predicted 1, 2, 4: RMSE sqrt(1/3), SD sqrt(2/3), R² = 1 − 1/2
    const s = valueErrorFigures([[1], [2], [3]], [[1], [2], [4]]);
    expect(s.rmse).toBeCloseTo(Math.sqrt(1 / 3), 14);
    expect(s.percent).toBeCloseTo(100 * Math.sqrt(1 / 2), 12);
    expect(s.r2).toBeCloseTo(0.5, 14);
    // a constant reference gives infinite %RMSE, never NaN
    expect(valueErrorFigures([[2], [2]], [[2], [3]]).percent).toBe(Infinity);
    expect(valueErrorFigures([[2], [2]], [[2], [2]]).percent).toBe(0);
  });

  it('validateValues refuses a tensor and a property whose size changes between frames', async () => {
    const frames = parseExtxyz(readFileSync(new URL('../../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water.extxyz');
    await expect(validateValues(frames, { tensorKey: 'eps_inf', kind: 'eps', route: 'cm' }, { folds: 2 })).rejects.toThrow(/3×3 tensor/);
    const mixed = frames.map((f, i) => ({ ...f, info: { ...f.info, v: i === 3 ? [1, 2] : [1, 2, 3] } }));
    await expect(validateValues(mixed, { tensorKey: 'v', kind: 'eps', route: 'cm' }, { folds: 2 })).rejects.toThrow(/has 2 numbers here but 3/);
  });
});

describe('validate on the real DFT water frames', () => {
  const frames = parseExtxyz(readFileSync(new URL('../../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water');
  it('cross-validates every frame once, on ε and on α_CM, with a learning curve', async () => {
    const report = await validate(frames, { tensorKey: 'eps_inf', kind: 'eps', route: 'cm', settings: { radialFunctions: 4, angularOrder: 3 } }, { folds: 4, learningCurve: [2, 4, 7] });
    expect(report.target).toBe('eps');
    expect(report.points.map((p) => p.frame)).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
    expect(report.points[0].label).toBe('sample-001');
    expect(report.learningCurve.map((l) => l.trainSize)).toEqual([2, 4]);
    expect(report.skippedSizes).toEqual([7]);
    // parity points hold the reference ε of the file
    const eps0 = frames[0].info.eps_inf as number[];
    expect(report.points[0].reference[0]).toBeCloseTo((eps0[0] + eps0[4] + eps0[8]) / Math.sqrt(3), 12);
    // held-out ε within a few thousandths (the frames' ε spread is about 0.01)
    expect(report.errors.rmseIso).toBeLessThan(0.01);
    expect(report.alsoOn[0].target).toMatch(/alpha-cm/);
    expect(report.alsoOn[0].errors.rmseIso).toBeGreaterThan(0);
  }, 120_000);

  it('refuses too few frames for the folds', async () => {
    await expect(validate(frames.slice(0, 3), { tensorKey: 'eps_inf', kind: 'eps', route: 'cm' }, { folds: 5 })).rejects.toThrow(/3 frames for 5 folds/);
  });
});
