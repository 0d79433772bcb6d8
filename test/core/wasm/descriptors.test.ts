// The descriptor kernels' own arithmetic that has no JavaScript loop beside it: each pair's length, which the
// kernel computes with the operations of the engine's Math.hypot (V8's builtin: the largest magnitude, the
// magnitudes scaled by it, their squares summed with Kahan's compensation, √sum · largest) instead of calling it.
// Compared with Math.hypot itself, bit for bit, on vectors of every scale and sign, with zero and equal components.
// And normaliseMany, which sums the squares of several blocks side by side: each block must come out as
// features.ts normalise leaves it, bit for bit. The expansion's numbers are compared with the JavaScript path in
// test/core/descriptors/density.test.ts.
import { describe, expect, it } from 'vitest';
import { descriptorKernels } from '../../../src-main/core/wasm/descriptors.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { normalise } from '../../../src-main/core/descriptors/features.ts';

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

  it('pairTerms writes each pair the length Math.hypot gives, two pairs per vector and the odd last one alone (zero vectors included)', () => {
    const K = descriptorKernels()!;
    const rng = makeRng(47);
    const count = 20_001;
    const owner = {};
    // par (8 doubles per pair), Y and R (2 per pair), a one-interval radial table of zeros, chan, order, chanStart
    const doubles = count * 8 + count * 2 + count * 2 + 8 + count + 8;
    const r = K.region(owner, doubles * 8 + 64)!;
    const parAt = r.at, yAt = parAt + count * 64, rAt = yAt + count * 16, coefAt = rAt + count * 16, chanAt = coefAt + 64, orderAt = chanAt + count * 4, startAt = orderAt + count * 4;
    const par = K.module.f64(parAt, count * 8);
    const want = new Float64Array(count);
    for (let p = 0; p < count; p++) {
      const scale = p % 3 === 0 ? 4.5 : 10 ** (rng.uniform() * 600 - 300);
      const v = [rng.normal() * scale, rng.normal() * scale, rng.normal() * scale];
      if (p % 7 === 1) v[p % 3] = 0;
      if (p % 11 === 2) v[(p + 1) % 3] = v[p % 3];
      if (p % 97 === 5) v.fill(p % 2 ? 0 : -0);
      par.set([v[0], v[1], v[2], NaN, 1, 0, 0, 0], 8 * p);
      want[p] = Math.hypot(v[0], v[1], v[2]);
    }
    K.module.f64(coefAt, 8).fill(0);
    new Int32Array(K.module.f64(0, 0).buffer, chanAt, count).fill(0);
    K.pairTerms(parAt, chanAt, count, 1, 0, 2, coefAt, coefAt, coefAt, 0.25, coefAt, yAt, rAt, orderAt, startAt);
    const got = K.module.f64(parAt, count * 8);
    let first = '';
    for (let p = 0; p < count && first === ''; p++) if (!Object.is(got[8 * p + 3], want[p])) first = `pair ${p}: kernel ${got[8 * p + 3]}, Math.hypot ${want[p]}`;
    expect(first).toBe('');
  });

  it('keeps Math.hypot\'s answers for the non-finite: ∞ wins over NaN, NaN otherwise', () => {
    const K = descriptorKernels()!;
    for (const [x, y, z] of [[Infinity, NaN, 1], [NaN, 1, 2], [1, -Infinity, 0], [NaN, NaN, NaN], [0, 0, NaN]]) {
      expect(Object.is(K.hypot3(x, y, z), Math.hypot(x, y, z))).toBe(true);
    }
  });
});

describe('descriptor kernels: normaliseMany', () => {
  it('gives every block the squared norm and scaling of normalise, bit for bit (1–19 blocks, odd and even lengths, zero and non-finite blocks)', () => {
    const K = descriptorKernels()!;
    const rng = makeRng(43);
    const owner = {};
    for (const len of [1, 2, 7, 952]) {
      for (const count of [1, 2, 3, 7, 8, 9, 16, 19]) {
        const r = K.region(owner, count * (len + 2) * 8);
        expect(r).not.toBeNull();
        const at = r!.at;
        const stride = len + 1; // blocks not back to back
        const blocks = Array.from({ length: count }, (_, j) =>
          Float64Array.from({ length: len }, () => (j === 2 ? 0 : j === 4 && len > 1 ? Infinity : rng.normal() * 10 ** (3 * rng.normal()))));
        const mem = K.module.f64(at, count * stride + count);
        blocks.forEach((b, j) => mem.set(b, j * stride));
        K.normaliseMany(at, len, count, stride * 8, at + count * stride * 8);
        const out = K.module.f64(at, count * stride + count);
        for (let j = 0; j < count; j++) {
          const want = Float64Array.from(blocks[j]);
          const s = normalise(want, 0, len);
          expect(Object.is(out[count * stride + j], s)).toBe(true);
          for (let i = 0; i < len; i++) if (!Object.is(out[j * stride + i], want[i])) expect(`block ${j} at ${i}: ${out[j * stride + i]}`).toBe(`${want[i]}`);
        }
      }
    }
  });
});
