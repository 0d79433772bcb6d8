import { describe, expect, it } from 'vitest';
import { choleskyInPlace, choleskySolve, choleskyWithJitter, gramOfColumns, gramOfRows } from '../../../src-main/core/numerics/cholesky.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';

describe('Cholesky on Float64Array', () => {
  it('factors the textbook 3×3 example', () => {
    // A = [[4,12,-16],[12,37,-43],[-16,-43,98]] has L = [[2,0,0],[6,1,0],[-8,5,3]]
    // (a common worked example of the Cholesky factorisation; from memory, checked by multiplying out L Lᵀ).
    const a = Float64Array.of(4, 12, -16, 12, 37, -43, -16, -43, 98);
    expect(choleskyInPlace(a, 3)).toBe(true);
    const lower = [a[0], a[3], a[4], a[6], a[7], a[8]];
    expect(lower).toEqual([2, 6, 1, -8, 5, 3]);
  });

  it('solves a random SPD system to round-off', () => {
    const rng = makeRng(3);
    const n = 40;
    const m = new Float64Array(n * 60);
    for (let i = 0; i < m.length; i++) m[i] = rng.normal();
    const a = gramOfRows(m, n, 60); // M Mᵀ, full rank
    const x = Float64Array.from({ length: n }, () => rng.normal());
    const b = new Float64Array(n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) b[i] += a[i * n + j] * x[j];
    const { factor, jitter } = choleskyWithJitter(a, n);
    expect(jitter).toBe(0);
    const sol = choleskySolve(factor, n, b);
    for (let i = 0; i < n; i++) expect(sol[i]).toBeCloseTo(x[i], 8);
  });

  it('rejects an indefinite matrix and regularises a singular one with a jitter', () => {
    expect(choleskyInPlace(Float64Array.of(1, 2, 2, 1), 2)).toBe(false);
    const singular = Float64Array.of(1, 1, 1, 1);
    const { jitter } = choleskyWithJitter(singular, 2);
    expect(jitter).toBeGreaterThan(0);
    expect(() => choleskyWithJitter(Float64Array.of(-1, 0, 0, -1), 2)).toThrow(/not positive definite/);
  });

  it('gram of columns and of rows agree with explicit products', () => {
    const phi = Float64Array.of(1, 2, 3, 4, 5, 6); // 2×3
    expect([...gramOfRows(phi, 2, 3)]).toEqual([14, 32, 32, 77]);
    expect([...gramOfColumns(phi, 2, 3)]).toEqual([17, 22, 27, 22, 29, 36, 27, 36, 45]);
  });
});
