import { describe, expect, it } from 'vitest';
import { makeRng } from '../../src-main/core/random.ts';

describe('makeRng', () => {
  it('is reproducible from its seed and differs between seeds', () => {
    const a = makeRng(42), b = makeRng(42), c = makeRng(43);
    const xa = Array.from({ length: 5 }, () => a.uniform());
    const xb = Array.from({ length: 5 }, () => b.uniform());
    const xc = Array.from({ length: 5 }, () => c.uniform());
    expect(xa).toEqual(xb);
    expect(xa).not.toEqual(xc);
  });

  it('gives uniform values in [0,1) with mean ½ and variance 1/12, normals with mean 0 and variance 1', () => {
    const rng = makeRng(7);
    const n = 20000;
    let s = 0, s2 = 0, g = 0, g2 = 0, outside = 0;
    for (let i = 0; i < n; i++) {
      const u = rng.uniform();
      if (!(u >= 0 && u < 1)) outside++;
      s += u;
      s2 += u * u;
      const v = rng.normal();
      g += v;
      g2 += v * v;
    }
    expect(outside).toBe(0);
    // 5-sigma bounds from the standard errors of the sample moments.
    expect(Math.abs(s / n - 0.5)).toBeLessThan(5 * Math.sqrt(1 / 12 / n));
    expect(Math.abs(s2 / n - (s / n) ** 2 - 1 / 12)).toBeLessThan(0.005);
    expect(Math.abs(g / n)).toBeLessThan(5 / Math.sqrt(n));
    expect(Math.abs(g2 / n - 1)).toBeLessThan(5 * Math.sqrt(2 / n));
  });

  it('int(n) covers 0…n−1 evenly and refuses bad n', () => {
    const rng = makeRng(1);
    const counts = new Array(6).fill(0);
    for (let i = 0; i < 6000; i++) counts[rng.int(6)]++;
    for (const c of counts) expect(Math.abs(c - 1000)).toBeLessThan(150);
    expect(() => rng.int(0)).toThrow(RangeError);
    expect(() => rng.int(2.5)).toThrow(RangeError);
    expect(() => makeRng(NaN)).toThrow(RangeError);
  });
});
