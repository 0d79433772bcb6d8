// Choosing frames in bounded memory (core/trajectory/frame-choice.ts): the pool's two policies keep what they
// promise whatever the number of frames offered, farthest-point sampling finds separated groups, and the time-gap
// and near-duplicate rules hold. Check values are built into the synthetic inputs (groups, times, scores).
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { CandidatePool, chooseDiverse, chooseHighest, featureSpread } from '../../../src-main/core/trajectory/frame-choice.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';

const noRules = { minGap: 0, duplicate: 0 };

/** `groups` groups of `per` points in `dim` dimensions: centres 10 apart on the axes, jitter 0.1. */
function groupedPool(groups: number, per: number, dim = 4, seed = 3): CandidatePool {
  const rng = makeRng(seed);
  const pool = new CandidatePool(dim, groups * per, 'spread');
  let frame = 0;
  for (let k = 0; k < per; k++) {
    for (let g = 0; g < groups; g++) {
      const v = Array.from({ length: dim }, (_, d) => (d === g % dim ? 10 * (1 + Math.floor(g / dim)) : 0) + 0.1 * rng.normal());
      pool.offer({ frame, time: frame, score: 0 }, v);
      frame++;
    }
  }
  return pool;
}

function groupOf(pool: CandidatePool, i: number, groups: number): number {
  return pool.candidate(i).frame % groups;
}

describe('candidate pool', () => {
  it('spread policy: never more than its capacity, evenly thinned over the whole run', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 3000 }), fc.integer({ min: 2, max: 200 }), (n, capacity) => {
        const pool = new CandidatePool(2, capacity, 'spread');
        for (let k = 0; k < n; k++) pool.offer({ frame: k, time: k, score: 0 }, [k, 0]);
        expect(pool.count).toBeLessThanOrEqual(capacity);
        const frames = Array.from({ length: pool.count }, (_, i) => pool.candidate(i).frame);
        // exactly the multiples of the thinning factor, which is a power of two
        expect(Math.log2(pool.thin) % 1).toBe(0);
        expect(frames).toEqual(Array.from({ length: Math.ceil(n / pool.thin) }, (_, i) => i * pool.thin));
        // the rows travelled with their frames
        frames.forEach((f, i) => expect(pool.rows()[2 * i]).toBe(f));
      }),
      { numRuns: 60 },
    );
  });

  it('score policy: the highest scores of the whole run survive, within capacity', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -1e3, max: 1e3, noNaN: true }), { minLength: 1, maxLength: 2000 }), fc.integer({ min: 4, max: 100 }), (scores, capacity) => {
        const pool = new CandidatePool(1, capacity, 'score');
        scores.forEach((s, k) => pool.offer({ frame: k, time: k, score: s }, [s]));
        expect(pool.count).toBeLessThanOrEqual(capacity);
        const kept = new Set(Array.from({ length: pool.count }, (_, i) => pool.candidate(i).frame));
        const half = Math.floor(capacity / 2);
        const top = scores.map((s, k) => [s, k] as const).sort((a, b) => b[0] - a[0]).slice(0, half);
        // every frame strictly above the half-capacity-th best score is kept
        const cut = top[top.length - 1][0];
        for (const [s, k] of top) if (s > cut) expect(kept.has(k)).toBe(true);
      }),
      { numRuns: 60 },
    );
  });

  it('refuses a feature of the wrong length and a score that is not finite', () => {
    const pool = new CandidatePool(3, 4, 'score');
    expect(() => pool.offer({ frame: 0, time: 0, score: 1 }, [1, 2])).toThrow(/length 2, expected 3/);
    expect(() => pool.offer({ frame: 0, time: 0, score: NaN }, [1, 2, 3])).toThrow(/no finite score/);
  });
});

describe('farthest-point choice', () => {
  it('takes one frame from each of well-separated groups before a second from any', () => {
    for (const groups of [2, 3, 5, 8]) {
      const pool = groupedPool(groups, 30);
      const c = chooseDiverse(pool, groups, noRules);
      expect(new Set(c.chosen.map((i) => groupOf(pool, i, groups))).size).toBe(groups);
    }
  });

  it('with known frames, avoids the groups they already cover', () => {
    const pool = groupedPool(4, 20);
    const rows = pool.rows();
    // the known frames: one member each of groups 0 and 1
    const known = new Float64Array([...rows.subarray(0, 4), ...rows.subarray(4, 8)]);
    const c = chooseDiverse(pool, 2, { minGap: 0, duplicate: 0, known });
    expect(c.chosen.map((i) => groupOf(pool, i, 4)).sort()).toEqual([2, 3]);
  });

  it('keeps the minimum time gap between the frames it takes, and says when it runs out', () => {
    const pool = groupedPool(3, 40);
    const c = chooseDiverse(pool, 50, { minGap: 7.5, duplicate: 0 });
    const times = c.chosen.map((i) => pool.candidate(i).time).sort((a, b) => a - b);
    for (let k = 1; k < times.length; k++) expect(times[k] - times[k - 1]).toBeGreaterThanOrEqual(7.5);
    expect(c.chosen.length).toBeLessThan(50);
    expect(c.short).toBe('gap');
  });

  it('stops at near duplicates: identical frames give one choice', () => {
    const pool = new CandidatePool(2, 10, 'spread');
    for (let k = 0; k < 10; k++) pool.offer({ frame: k, time: k, score: 0 }, [1, 2]);
    const c = chooseDiverse(pool, 3, noRules);
    expect(c.chosen.length).toBe(1);
    expect(c.short).toBe('duplicate');
  });

  it('distances of successive choices never grow (the farthest is always taken first)', () => {
    const pool = groupedPool(6, 15, 6, 11);
    const c = chooseDiverse(pool, 40, noRules);
    for (let k = 2; k < c.distance.length; k++) expect(c.distance[k]).toBeLessThanOrEqual(c.distance[k - 1] + 1e-12);
  });
});

describe('choice by score', () => {
  it('highest scores first, skipping near duplicates of each other and of the known frames', () => {
    const pool = new CandidatePool(1, 10, 'score');
    // frames 0 and 1 are near duplicates (0.001 apart); frame 2 sits on a known frame
    const xs = [0, 0.001, 5, 10, 20];
    const scores = [9, 8, 7, 6, 1];
    xs.forEach((x, k) => pool.offer({ frame: k, time: k, score: scores[k] }, [x]));
    const c = chooseHighest(pool, 3, { minGap: 0, duplicate: 0.5, known: new Float64Array([5.2]) });
    expect(c.chosen.map((i) => pool.candidate(i).frame)).toEqual([0, 3, 4]);
    expect(c.short).toBe(null);
    const fewer = chooseHighest(pool, 5, { minGap: 0, duplicate: 0.5, known: new Float64Array([5.2]) });
    expect(fewer.chosen.length).toBe(3);
    expect(fewer.short).toBe('duplicate');
  });

  it('feature spread is the RMS distance from the mean (two points 2 apart: 1)', () => {
    expect(featureSpread(new Float64Array([0, 0, 2, 0]), 2)).toBeCloseTo(1, 14);
  });
});
