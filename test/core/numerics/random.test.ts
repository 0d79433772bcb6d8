// Tests of core/numerics/random.ts: the raw stream against an independent transcription of the published reference
// code (fixture), and the distributions against their textbook moments.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { makeRng } from '../../../src-main/core/numerics/random.ts';

// Made by test/fixtures/make_random_fixture.py: xoshiro128** 1.0 and splitmix32 transcribed into Python from
// the published reference C code.
const fixture: { seeds: { seed: number; uint32: number[]; uniform: number[] }[] } = JSON.parse(
  readFileSync(new URL('../../fixtures/random_reference.json', import.meta.url), 'utf8'),
);

describe('makeRng', () => {
  it('reproduces the reference stream and uniform() construction', () => {
    for (const ref of fixture.seeds) {
      const g = makeRng(ref.seed);
      expect(Array.from({ length: 8 }, () => g.nextUint32())).toEqual(ref.uint32);
      const h = makeRng(ref.seed);
      expect(Array.from({ length: 4 }, () => h.uniform())).toEqual(ref.uniform);
    }
  });

  it('is deterministic per seed and differs between seeds', () => {
    const a = makeRng(7), b = makeRng(7), c = makeRng(8);
    const xa = Array.from({ length: 20 }, () => a.uniform());
    expect(Array.from({ length: 20 }, () => b.uniform())).toEqual(xa);
    expect(Array.from({ length: 20 }, () => c.uniform())).not.toEqual(xa);
  });

  it('uniform() lies in [0, 1) with mean 1/2 and variance 1/12', () => {
    const g = makeRng(2024);
    const n = 200_000;
    let s = 0, s2 = 0, lo = 1, hi = 0;
    for (let i = 0; i < n; i++) {
      const u = g.uniform();
      s += u;
      s2 += u * u;
      lo = Math.min(lo, u);
      hi = Math.max(hi, u);
    }
    expect(lo).toBeGreaterThanOrEqual(0);
    expect(hi).toBeLessThan(1);
    const mean = s / n, variance = s2 / n - mean * mean;
    // Standard error of the mean: sqrt(1/12/n) ≈ 6.5e-4; allow 5 of them.
    expect(Math.abs(mean - 0.5)).toBeLessThan(3.3e-3);
    expect(Math.abs(variance - 1 / 12)).toBeLessThan(2e-3);
  });

  it('normal() has mean 0, variance 1, zero skew and kurtosis 3 (textbook moments of N(0,1))', () => {
    const g = makeRng(99);
    const n = 200_000;
    let m1 = 0, m2 = 0, m3 = 0, m4 = 0;
    for (let i = 0; i < n; i++) {
      const x = g.normal();
      m1 += x;
      m2 += x * x;
      m3 += x * x * x;
      m4 += x * x * x * x;
    }
    m1 /= n; m2 /= n; m3 /= n; m4 /= n;
    // Standard errors for n = 2e5: mean 2.2e-3, var 3.2e-3, skew 5.5e-3, 4th moment 0.02.
    expect(Math.abs(m1)).toBeLessThan(0.012);
    expect(Math.abs(m2 - 1)).toBeLessThan(0.016);
    expect(Math.abs(m3)).toBeLessThan(0.03);
    expect(Math.abs(m4 - 3)).toBeLessThan(0.1);
  });

  it('int(n) is uniform over 0..n−1 (chi-square test, 9 degrees of freedom)', () => {
    const g = makeRng(5);
    const k = 10, n = 100_000;
    const counts = new Array(k).fill(0);
    let outOfRange = 0;
    for (let i = 0; i < n; i++) {
      const x = g.int(k);
      if (!(Number.isInteger(x) && x >= 0 && x < k)) outOfRange++;
      else counts[x]++;
    }
    expect(outOfRange).toBe(0);
    const e = n / k;
    const chi2 = counts.reduce((acc, c) => acc + (c - e) ** 2 / e, 0);
    // 99.9th percentile of χ² with 9 degrees of freedom is 27.88 (standard statistical tables).
    expect(chi2).toBeLessThan(27.88);
    // Large n beyond 2³² still works and stays in range.
    for (let i = 0; i < 100; i++) {
      const x = g.int(2 ** 40 + 3);
      expect(x >= 0 && x < 2 ** 40 + 3 && Number.isInteger(x)).toBe(true);
    }
    expect(g.int(1)).toBe(0);
    expect(() => g.int(0)).toThrow(RangeError);
    expect(() => g.int(2.5)).toThrow(RangeError);
    expect(() => makeRng(NaN)).toThrow(RangeError);
  });
});
