// Tests of core/dielectric/dipole-model.ts for open clusters: the damping factors against a sympy derivation, the
// two-atom analytic result, a dense numpy solve of a damped cluster, rotation covariance, the catastrophe
// and bad input. Periodic cells are tested in ewald.test.ts.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { cellPolarisability, dampedDipoleTensor, tholeFactors, type DipoleModel } from '../../../src-main/core/dielectric/dipole-model.ts';
import { InputError, PhysicsError } from '../../../src-main/core/errors.ts';
import { makeFrame } from '../../../src-main/core/geometry/frame.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { rotateTensor } from '../../../src-main/core/dielectric/tensor.ts';
import { randomRotation } from '../../../src-main/core/descriptors/wigner.ts';

interface TholeFixture {
  samples: { a: number; scale: number; r: number; l3: number; l5: number }[];
  cluster: { species: string[]; positions: number[]; polarisabilities: Record<string, number>; thole: number; alpha: number[] };
}
// Made by test/fixtures/thole_reference.py (Debian python3-sympy derivation of the damping; python3-numpy
// dense inverse of A⁻¹ − T).
const fixture: TholeFixture = JSON.parse(readFileSync(new URL('../../fixtures/thole_reference.json', import.meta.url), 'utf8'));

function relClose(actual: ArrayLike<number>, expected: ArrayLike<number>, rel: number): void {
  let scale = 0;
  for (let k = 0; k < expected.length; k++) scale = Math.max(scale, Math.abs(expected[k]));
  for (let k = 0; k < expected.length; k++) {
    expect(Math.abs(actual[k] - expected[k]), `component ${k}: ${actual[k]} vs ${expected[k]}`).toBeLessThanOrEqual(rel * scale);
  }
}

describe('Thole damping factors', () => {
  it('match the sympy derivation from the smeared density (3a/4π) e^(−a u³)', () => {
    for (const s of fixture.samples) {
      const f = tholeFactors(s.a, s.r / s.scale);
      expect(Math.abs(f.l3 - s.l3)).toBeLessThan(1e-14);
      expect(Math.abs(f.l5 - s.l5)).toBeLessThan(1e-14);
    }
  });

  it('give the bare tensor 3 r rᵀ/r⁵ − I/r³ when damping is off, and are symmetric', () => {
    const t = dampedDipoleTensor([1, 2, 2], 1, 1, null); // r = 3
    const r = [1, 2, 2];
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) {
      const bare = (3 * r[i] * r[j]) / 243 - (i === j ? 1 / 27 : 0);
      expect(t[3 * i + j]).toBeCloseTo(bare, 15);
      expect(t[3 * i + j]).toBe(t[3 * j + i]);
    }
  });
});

describe('open clusters', () => {
  const undamped = (alpha: number): DipoleModel => ({ polarisabilities: { X: alpha }, thole: null });

  it('two undamped atoms: α∥ = 2α/(1 − 2α/r³), α⊥ = 2α/(1 + α/r³) (standard textbook result)', () => {
    for (const [alpha, r] of [[1.5, 3], [0.8, 1.5], [2.3, 2.0]]) {
      const f = makeFrame(['X', 'X'], [0, 0, 0, 0, 0, r], null);
      const res = cellPolarisability(f, undamped(alpha), { tolerance: 1e-13 });
      const x = alpha / r ** 3;
      expect(res.alpha[8]).toBeCloseTo((2 * alpha) / (1 - 2 * x), 11);
      expect(res.alpha[0]).toBeCloseTo((2 * alpha) / (1 + x), 11);
      expect(res.alpha[4]).toBeCloseTo((2 * alpha) / (1 + x), 11);
      expect(Math.abs(res.alpha[1]) + Math.abs(res.alpha[2]) + Math.abs(res.alpha[5])).toBeLessThan(1e-12);
      expect(res.volumeA3).toBeNull();
    }
  });

  it('a damped two-molecule cluster matches a dense numpy solve', () => {
    const c = fixture.cluster;
    const f = makeFrame(c.species, c.positions, null);
    const res = cellPolarisability(f, { polarisabilities: c.polarisabilities, thole: c.thole }, { tolerance: 1e-13 });
    relClose(res.alpha, c.alpha, 1e-10);
    // The per-atom columns sum to the cluster polarisability.
    const sum = new Float64Array(9);
    for (let i = 0; i < c.species.length; i++) for (let k = 0; k < 9; k++) sum[k] += res.atomAlpha[9 * i + k];
    relClose(sum, c.alpha, 1e-10);
  });

  it('is rotation covariant: α(R r) = R α(r) Rᵀ', () => {
    const c = fixture.cluster;
    const model = { polarisabilities: c.polarisabilities, thole: c.thole };
    const base = cellPolarisability(makeFrame(c.species, c.positions, null), model, { tolerance: 1e-13 });
    const rng = makeRng(11);
    for (let trial = 0; trial < 3; trial++) {
      const R = randomRotation(rng);
      const p = new Float64Array(c.positions.length);
      for (let i = 0; i < c.species.length; i++) {
        for (let a = 0; a < 3; a++) p[3 * i + a] = R[3 * a] * c.positions[3 * i] + R[3 * a + 1] * c.positions[3 * i + 1] + R[3 * a + 2] * c.positions[3 * i + 2];
      }
      const rot = cellPolarisability(makeFrame(c.species, p, null), model, { tolerance: 1e-13 });
      relClose(rot.alpha, rotateTensor(base.alpha, R), 1e-10);
    }
  });

  it('reports the polarisation catastrophe as a PhysicsError, not a number', () => {
    // 2α/r³ = 2·1/1.2³ = 1.16 > 1: the head-to-tail mode is unstable.
    const f = makeFrame(['X', 'X'], [0, 0, 0, 0, 0, 1.2], null);
    expect(() => cellPolarisability(f, undamped(1))).toThrow(PhysicsError);
    expect(() => cellPolarisability(f, undamped(1))).toThrow(/catastrophe/);
    // The same pair is stable with damping.
    const ok = cellPolarisability(f, { polarisabilities: { X: 1 }, thole: 0.45 });
    expect(ok.alpha[8]).toBeGreaterThan(0);
  });

  it('says which element lacks a polarisability, and rejects bad values', () => {
    const f = makeFrame(['O', 'H'], [0, 0, 0, 1, 0, 0], null);
    expect(() => cellPolarisability(f, { polarisabilities: { O: 1.2 }, thole: 0.4 })).toThrow(InputError);
    expect(() => cellPolarisability(f, { polarisabilities: { O: 1.2 }, thole: 0.4 })).toThrow(/element H/);
    expect(() => cellPolarisability(f, { polarisabilities: { O: 1.2, H: -1 }, thole: 0.4 })).toThrow(/positive/);
    expect(() => cellPolarisability(f, { polarisabilities: { O: 1.2, H: 0.4 }, thole: 0.4 }, { boundary: 'conducting' })).toThrow(/periodic/);
  });
});
