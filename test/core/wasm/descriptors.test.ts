// The descriptor kernels' own arithmetic that has no JavaScript loop beside it: each pair's length, which the
// kernel computes with the operations of the engine's Math.hypot (V8's builtin: the largest magnitude, the
// magnitudes scaled by it, their squares summed with Kahan's compensation, √sum · largest) instead of calling it.
// Compared with Math.hypot itself, bit for bit, on vectors of every scale and sign, with zero and equal components.
// The expansion's numbers are compared with the JavaScript path in test/core/descriptors/density.test.ts.
import { describe, expect, it } from 'vitest';
import { descriptorKernels } from '../../../src-main/core/wasm/descriptors.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';

describe('descriptor kernels: hypot3', () => {
  it('equals Math.hypot bit for bit on 300,000 vectors (pair vectors of a frame, every scale, zeros, ties, signs)', () => {
    const K = descriptorKernels();
    expect(K).not.toBeNull();
    const rng = makeRng(41);
    const special = [0, -0, 1, -1, 0.5, 3, 4, 5, 1e-310, 5e-324, 1e308, -1e308, 2 ** -1074, Number.MAX_VALUE, Number.MIN_VALUE, 1.0000000000000002, Math.PI];
    const cases: [number, number, number][] = [];
    for (const x of special) for (const y of special) for (const z of special) cases.push([x, y, z]);
    for (let k = 0; k < 300_000; k++) {
      const scale = k % 3 === 0 ? 4.5 : 10 ** (rng.uniform() * 600 - 300);
      const v: [number, number, number] = [rng.normal() * scale, rng.normal() * scale, rng.normal() * scale];
      if (k % 7 === 1) v[k % 3] = 0;
      if (k % 11 === 2) v[(k + 1) % 3] = v[k % 3];
      if (k % 13 === 3) v[(k + 2) % 3] = -v[k % 3];
      cases.push(v);
    }
    let differ = 0;
    let first = '';
    for (const [x, y, z] of cases) {
      const a = K!.hypot3(x, y, z);
      const b = Math.hypot(x, y, z);
      if (!Object.is(a, b)) {
        if (differ === 0) first = `(${x}, ${y}, ${z}): kernel ${a}, Math.hypot ${b}`;
        differ++;
      }
    }
    expect(first).toBe('');
    expect(differ).toBe(0);
    // not the plain root of the sum of squares: that differs from Math.hypot on some of these vectors
    expect(cases.some(([x, y, z]) => !Object.is(Math.sqrt(x * x + y * y + z * z), Math.hypot(x, y, z)))).toBe(true);
  });

  it('keeps Math.hypot\'s answers for the non-finite: ∞ wins over NaN, NaN otherwise', () => {
    const K = descriptorKernels()!;
    for (const [x, y, z] of [[Infinity, NaN, 1], [NaN, 1, 2], [1, -Infinity, 0], [NaN, NaN, NaN], [0, 0, NaN]]) {
      expect(Object.is(K.hypot3(x, y, z), Math.hypot(x, y, z))).toBe(true);
    }
  });
});
