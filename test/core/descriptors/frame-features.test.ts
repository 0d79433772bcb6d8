// Frame-level features (core/descriptors/frame-features.ts): invariant under rotations, mirrors, translations and
// atom order (through the one equivariance harness), intensive (a supercell of a frame describes it exactly
// as the frame does: the per-species mean of per-atom rows cannot change when every environment is repeated),
// and they tell different structures apart.
import { describe, expect, it } from 'vitest';
import { frameFeaturiser } from '../../../src-main/core/descriptors/frame-features.ts';
import { supercell } from '../../../src-main/core/geometry/cell.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { equivarianceError, INVERSION, MIRROR, permuteFrame, randomPeriodicFrame, randomRotations, translateFrame } from '../../helpers/equivariance-harness.ts';
import { waterFrames } from '../../helpers/trajectory.ts';

const maxDiff = (a: Float64Array, b: Float64Array) => a.reduce((m, x, i) => Math.max(m, Math.abs(x - b[i])), 0);

describe('frame features', () => {
  const rng = makeRng(21);
  const frame = randomPeriodicFrame(rng, ['O', 'H', 'H', 'O', 'H', 'H', 'O', 'H', 'H', 'Na'], [5.5, 6, 6.5], 1.0);
  const ff = frameFeaturiser(['H', 'O', 'Na']);

  it('are invariants: rotations, mirror, inversion (equivariance harness, λ = 0 axes), translation and atom order', () => {
    const worst = equivarianceError((f) => ({ frame: { data: ff.features(f), axes: [] } }), frame, [...randomRotations(rng, 4), MIRROR, INVERSION]);
    expect(worst.frame).toBeLessThan(1e-10);
    expect(maxDiff(ff.features(translateFrame(frame, [0.7, -1.3, 2.9])), ff.features(frame))).toBeLessThan(1e-10);
    const order = [9, 3, 0, 5, 1, 2, 8, 4, 6, 7];
    expect(maxDiff(ff.features(permuteFrame(frame, order)), ff.features(frame))).toBeLessThan(1e-10);
  });

  it('are intensive: a 2×1×2 supercell has the features of its frame', () => {
    const big = supercell(frame, [2, 1, 2]);
    expect(maxDiff(ff.features(big), ff.features(frame))).toBeLessThan(1e-10);
  });

  it('tell the real DFT water frames apart, and each species block is a mean of unit rows (norm ≤ 1)', () => {
    const w = waterFrames();
    const wf = frameFeaturiser(['H', 'O']);
    const v = w.map((f) => wf.features(f));
    const n0 = wf.length / 2;
    for (const x of v) for (let a = 0; a < 2; a++) {
      const norm = Math.hypot(...x.subarray(a * n0, (a + 1) * n0));
      expect(norm).toBeGreaterThan(0.5);
      expect(norm).toBeLessThanOrEqual(1 + 1e-12);
    }
    for (let i = 0; i < v.length; i++) for (let j = 0; j < i; j++) expect(maxDiff(v[i], v[j])).toBeGreaterThan(1e-6);
  });

  it('a species missing from a frame leaves its block zero; a species not in the list is refused with the frame named', () => {
    const water = frameFeaturiser(['H', 'O', 'Na']).features(waterFrames()[0]);
    const n0 = ff.length / 3;
    const naBlock = ['H', 'Na', 'O'].indexOf('Na');
    expect(Array.from(water.subarray(naBlock * n0, (naBlock + 1) * n0)).every((x) => x === 0)).toBe(true);
    expect(() => frameFeaturiser(['H', 'O']).features(frame, { file: 'run.extxyz', frame: 41 })).toThrow(/run\.extxyz, frame 41: species "Na" is not among/);
  });
});
