import { describe, expect, it } from 'vitest';
import { addToSums, emptySums, isSetSums, setSummary, summaryOfSums } from '../../../src-main/core/learning/set-summary.ts';
import type { TensorErrorBars } from '../../../src-main/core/learning/model-types.ts';

const diag = (a: number, b: number, c: number) => [a, 0, 0, 0, b, 0, 0, 0, c];
const bars = (s: number): TensorErrorBars => ({ epsIso: s, epsPrincipal: [s, s, s], n: [s / 2, s / 2, s / 2], dn: s, alphaCmIso: 10 * s });

describe('set summary', () => {
  it('takes the principal values of the mean ε, not the mean of each frame’s sorted values', () => {
    // Two uniaxial frames with their long axes along x and along y: each has Δn > 0, their mean is uniaxial along z
    // with n = √2, √2, √1.5 — the isotropic-liquid trap of averaging sorted indices frame by frame.
    const s = setSummary([
      { eps: diag(2.5, 1.5, 1.5), outside: false },
      { eps: diag(1.5, 2.5, 1.5), outside: true },
    ]);
    expect(s.frames).toBe(2);
    expect(s.meanEps).toEqual(diag(2, 2, 1.5));
    expect(s.predicted.epsIso).toBeCloseTo(5.5 / 3, 14);
    expect(s.predicted.n[0]).toBeCloseTo(Math.sqrt(1.5), 14);
    expect(s.predicted.n[2]).toBeCloseTo(Math.sqrt(2), 14);
    expect(s.predicted.dn).toBeCloseTo(Math.sqrt(2) - Math.sqrt(1.5), 14);
    expect(s.framesOutside).toBe(1);
    expect(s.errorBars).toBeNull(); // no frame has one
    expect(s.reference).toBeNull();
  });

  it('averages the error bars (they do not shrink with the number of frames), and gives none if one frame lacks them', () => {
    const with2 = setSummary([
      { eps: diag(2, 2, 2), errorBars: bars(0.01), outside: false },
      { eps: diag(2, 2, 2), errorBars: bars(0.03), outside: false },
    ]);
    expect(with2.errorBars!.epsIso).toBeCloseTo(0.02, 15);
    expect(with2.errorBars!.alphaCmIso).toBeCloseTo(0.2, 15);
    const mixed = setSummary([
      { eps: diag(2, 2, 2), errorBars: bars(0.01), outside: false },
      { eps: diag(2, 2, 2), errorBars: null, outside: false },
    ]);
    expect(mixed.errorBars).toBeNull();
  });

  it('summarises the references over the frames that have one', () => {
    const s = setSummary([
      { eps: diag(2, 2, 2), reference: diag(2.2, 2.2, 2.2), outside: false },
      { eps: diag(2, 2, 2), reference: null, outside: false },
      { eps: diag(2, 2, 2), reference: diag(2.4, 2.4, 2.4), outside: false },
    ]);
    expect(s.reference!.frames).toBe(2);
    expect(s.reference!.epsIso).toBeCloseTo(2.3, 14);
  });

  it('running sums survive a round trip through JSON (a checkpoint) and continue to the same figures', () => {
    const frames = [1.7, 1.9, 2.3, 1.6].map((x, k) => ({ eps: diag(x, x + 0.1 * k, x - 0.05), errorBars: bars(0.001 * (k + 1)), outside: k === 2 }));
    const whole = setSummary(frames);
    const half = JSON.parse(JSON.stringify(frames.slice(0, 2).reduce(addToSums, emptySums())));
    expect(isSetSums(half)).toBe(true);
    const resumed = summaryOfSums(frames.slice(2).reduce(addToSums, half));
    expect(resumed).toEqual(whole);
    expect(isSetSums({ ...half, eps: [1, 2] })).toBe(false);
    expect(summaryOfSums(emptySums())).toBeNull();
  });
});
