import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { errorFigures, validate } from '../../src-main/core/validation.ts';
import { parseExtxyz } from '../../src-main/io/extxyz.ts';

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

describe('validate on the real DFT water frames', () => {
  const frames = parseExtxyz(readFileSync(new URL('../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water');
  it('cross-validates every frame once, on ε and on α_CM, with a learning curve', async () => {
    const report = await validate(frames, { tensorKey: 'eps_inf', kind: 'eps', route: 'cm', settings: { nmax: 4, lmax: 3 } }, { folds: 4, learningCurve: [2, 4, 7] });
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
