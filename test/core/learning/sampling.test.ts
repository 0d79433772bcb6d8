// Training's sampling through the WebAssembly kernels (core/learning/sampling.ts) against the plain loops kept in
// test/helpers/reference-kernels.ts and against sparse.ts's JavaScript: the same choices, distances and nearest
// choices, bit for bit, on real water features (the DFT frames of test/fixtures, from /work/shared/data, jittered),
// with repeated rows, few and many representatives.
import { afterEach, describe, expect, it } from 'vitest';
import { farthestSample, nearestOthers } from '../../../src-main/core/learning/sampling.ts';
import { anchorsOf, farthestPointSample, nearestOtherDistances } from '../../../src-main/core/learning/sparse.ts';
import { samplingKernels } from '../../../src-main/core/wasm/sampling-kernels.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';
import { referenceFarthestPointSample, referenceNearestOtherDistances } from '../../helpers/reference-kernels.ts';
import { waterFeaturePool } from '../../helpers/trajectory.ts';

afterEach(() => setWebAssemblyKernels(true));

const same = (a: ArrayLike<number>, b: ArrayLike<number>) => a.length === b.length && Array.from(a).every((v, i) => Object.is(v, b[i]));

describe('training sampling through the kernels', () => {
  it('the kernels are available here (so the comparisons below test them)', () => {
    expect(samplingKernels()).not.toBeNull();
  });

  it('farthest-point sampling: the plain loop\'s choices and distances and the JavaScript\'s nearest choices, bit for bit', () => {
    const { pool, groups } = waterFeaturePool(8, 60);
    expect(groups.every((g) => g.length >= 64)).toBe(true); // large enough for the kernel
    for (const cand of groups) {
      for (const m of [1, 17, 120, cand.length]) {
        const fast = farthestSample(pool.p, pool.n0, cand, m);
        const plain = referenceFarthestPointSample(pool.p, pool.n0, cand, m);
        setWebAssemblyKernels(false);
        const js = farthestPointSample(pool.p, pool.n0, cand, m);
        setWebAssemblyKernels(true);
        expect(same(fast.chosen, plain.chosen)).toBe(true);
        expect(same(fast.distance, plain.distance)).toBe(true);
        expect(same(fast.nearest, js.nearest)).toBe(true);
        // with every candidate asked for, the repeated rows end the sampling early
        if (m === cand.length) expect(fast.chosen.length).toBeLessThan(cand.length);
      }
    }
  });

  it('leave-frame-out and leave-self-out distances: the plain loop\'s, bit for bit, with the sampling\'s coordinates or new ones', () => {
    const { pool, frame, groups } = waterFeaturePool(8, 60);
    for (const m of [1, 17, 120]) {
      const samples = groups.map((g) => farthestSample(pool.p, pool.n0, g, m));
      const reps = Int32Array.from(samples.flatMap((s) => [...s.chosen]));
      for (const frameOf of [frame, undefined]) {
        const plain = referenceNearestOtherDistances(pool, reps, frameOf);
        const anchors = anchorsOf(pool.count, groups, samples);
        // the groups just sampled (their coordinates kept), and copies of them (coordinates made anew)
        expect(same(nearestOthers(pool, reps, groups, frameOf, anchors), plain)).toBe(true);
        expect(same(nearestOthers(pool, reps, groups.map((g) => Int32Array.from(g)), frameOf, anchors), plain)).toBe(true);
        setWebAssemblyKernels(false);
        expect(same(nearestOtherDistances(pool, reps, frameOf, anchors), plain)).toBe(true);
        setWebAssemblyKernels(true);
      }
    }
  });

  it('groups that do not cover the pool by species take the JavaScript loops, with the same numbers', () => {
    const { pool, frame, groups } = waterFeaturePool(4, 0);
    const reps = Int32Array.from(groups.flatMap((g) => [...farthestSample(pool.p, pool.n0, g, 10).chosen]));
    const plain = referenceNearestOtherDistances(pool, reps, frame);
    expect(same(nearestOthers(pool, reps, [groups[1], groups[0]], frame), plain)).toBe(true);
    expect(same(nearestOthers(pool, reps, [groups[0]], frame), plain)).toBe(true);
  });
});
