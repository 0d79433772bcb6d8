import { describe, expect, it } from 'vitest';
import { blockAverage, runningMean } from '../../../src-main/core/trajectory/statistics.ts';

// A small seeded generator local to the test (mulberry32 + Box–Muller), so the test owns its data.
function rng(seed: number) {
  let a = seed >>> 0;
  const u = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  return () => Math.sqrt(-2 * Math.log(u() + 1e-300)) * Math.cos(2 * Math.PI * u());
}

function ar1(n: number, phi: number, seed: number): Float64Array {
  const g = rng(seed);
  const xs = new Float64Array(n);
  let x = 0;
  for (let i = 0; i < 1000; i++) x = phi * x + g();
  for (let i = 0; i < n; i++) {
    x = phi * x + g();
    xs[i] = x;
  }
  return xs;
}

describe('block averaging', () => {
  it('gives the naive standard error for uncorrelated samples', () => {
    const xs = ar1(1 << 14, 0, 1);
    const r = blockAverage(xs);
    expect(r.plateau).toBe(true);
    // SE = σ/√N for independent samples (definition); σ = 1 here.
    expect(r.standardError).toBeCloseTo(1 / Math.sqrt(xs.length), 3);
    expect(r.inefficiency).toBeGreaterThan(0.7);
    expect(r.inefficiency).toBeLessThan(1.4);
  });

  it('recovers the statistical inefficiency of an AR(1) process', () => {
    // Analytic result for x_t = φ x_{t−1} + noise: g = (1 + φ)/(1 − φ) (standard time-series result,
    // e.g. Flyvbjerg & Petersen, J. Chem. Phys. 91, 461 (1989), for exponentially correlated data).
    const phi = 0.8;
    const xs = ar1(1 << 16, phi, 7);
    const r = blockAverage(xs);
    expect(r.plateau).toBe(true);
    const expected = (1 + phi) / (1 - phi); // 9
    expect(r.inefficiency).toBeGreaterThan(0.7 * expected);
    expect(r.inefficiency).toBeLessThan(1.3 * expected);
    // The standard error is larger than the naive one.
    expect(r.standardError).toBeGreaterThan(r.levels[0].standardError * 2);
  });

  it('says when a series is too short for its correlation time', () => {
    const xs = ar1(256, 0.995, 3);
    const r = blockAverage(xs);
    expect(r.plateau).toBe(false);
    expect(r.plateauBlockSize).toBeNull();
    expect(r.standardError).toBeGreaterThanOrEqual(Math.max(...r.levels.map((l) => l.standardError)));
  });

  it('refuses a series of one sample', () => {
    expect(() => blockAverage([1])).toThrow(/at least 2/);
  });

  it('running mean ends at the mean', () => {
    const xs = [1, 2, 3, 4, 10];
    const rm = runningMean(xs);
    expect(Array.from(rm)).toEqual([1, 1.5, 2, 2.5, 4]);
  });
});
