import { describe, expect, it } from 'vitest';
import { localContributions } from '../../../src-main/core/learning/kernels.ts';
import { fitRidge, primalWeights, ridgeFitPredict, type Design } from '../../../src-main/core/learning/regression.ts';
import {
  farthestPointSample,
  foldSparseWeights,
  nearestOtherDistances,
  anchorsOf,
  rowDistance,
  projectRows,
  representativeFactor,
  representativeKernel,
  representativesFrom,
  structureToRepresentatives,
} from '../../../src-main/core/learning/sparse.ts';
import { structureKernel } from '../../../src-main/core/learning/kernels.ts';
import { makeRng, syntheticFeatures } from '../../helpers/synthetic-features.ts';
import { referenceFarthestPointSample, referenceNearestOtherDistances } from '../../helpers/reference-kernels.ts';
import { waterFeaturePool } from '../../helpers/trajectory.ts';

describe('farthest-point sampling', () => {
  it('picks the extremes of points on a circle arc first, then fills the largest gap', () => {
    // unit vectors at angles 0, 10, 20, …, 90 degrees: mean direction 45°; the farthest from the mean are 0°
    // and 90°, then the point in the middle of the gap (40° or 50°).
    const angles = [0, 10, 20, 30, 40, 50, 60, 70, 80, 90];
    const p = new Float64Array(angles.length * 2);
    angles.forEach((a, i) => {
      p[2 * i] = Math.cos((a * Math.PI) / 180);
      p[2 * i + 1] = Math.sin((a * Math.PI) / 180);
    });
    const { chosen, distance } = farthestPointSample(p, 2, Int32Array.from(angles.keys()), 3);
    const picked = [...chosen].map((i) => angles[i]);
    expect(new Set(picked.slice(0, 2))).toEqual(new Set([0, 90]));
    expect([40, 50]).toContain(picked[2]);
    for (const i of chosen) expect(distance[i]).toBe(0);
    // the largest remaining distance is the chord of 20°
    expect(Math.max(...distance)).toBeCloseTo(2 * Math.sin((20 * Math.PI) / 360), 12);
  });

  it('stops early when candidates repeat', () => {
    const p = Float64Array.of(1, 0, 1, 0, 0, 1);
    expect(farthestPointSample(p, 2, Int32Array.of(0, 1, 2), 3).chosen.length).toBe(2);
  });

  it('the pruned searches give the plain loops\' choices and distances bit for bit (real water features, repeats)', () => {
    // λ=0 rows of the DFT water frames, jittered (test/fixtures, from /work/shared/data), and some rows repeated
    const { pool, frame: frames } = waterFeaturePool(6, 40);
    const { n0, p, species: speciesOf } = pool;
    const species = Array.from(speciesOf);
    const frame = Array.from(frames);
    const reps: number[] = [];
    const samples: Record<number, ReturnType<typeof farthestPointSample>[]> = { 1: [], 17: [], 120: [] };
    const candidates: Int32Array[] = [];
    for (const s of [0, 1]) {
      const cand = Int32Array.from(species.flatMap((x, i) => (x === s ? [i] : [])));
      candidates.push(cand);
      for (const m of [1, 17, 120, cand.length]) {
        const fast = farthestPointSample(p, n0, cand, m);
        const plain = referenceFarthestPointSample(p, n0, cand, m);
        expect(fast.chosen).toEqual(plain.chosen);
        expect(Array.from(fast.distance, (d, i) => Object.is(d, plain.distance[i])).every(Boolean)).toBe(true);
        // the nearest chosen row it reports is at the reported distance
        for (let c = 0; c < cand.length; c++) {
          expect(Object.is(rowDistance(p, cand[c], p, fast.chosen[fast.nearest[c]], n0), fast.distance[c])).toBe(true);
        }
        if (m === 120) reps.push(...fast.chosen);
        if (m in samples) samples[m].push(fast);
      }
    }
    const repIndex = Int32Array.from(reps);
    for (const frameOf of [undefined, Int32Array.from(frame)]) {
      const plain = referenceNearestOtherDistances(pool, repIndex, frameOf);
      const fast = nearestOtherDistances(pool, repIndex, frameOf);
      expect(Array.from(fast, (d, i) => Object.is(d, plain[i])).every(Boolean)).toBe(true);
      // started from the sampling's nearest representative, the same bits
      const anchored = nearestOtherDistances(pool, repIndex, frameOf, anchorsOf(pool.count, candidates, samples[120]));
      expect(Array.from(anchored, (d, i) => Object.is(d, plain[i])).every(Boolean)).toBe(true);
    }
    // with fewer representatives (1 and 17 per species), too
    for (const m of [1, 17]) {
      const few = Int32Array.from(samples[m].flatMap((r) => [...r.chosen]));
      const plain = referenceNearestOtherDistances(pool, few, Int32Array.from(frame));
      const anchored = nearestOtherDistances(pool, few, Int32Array.from(frame), anchorsOf(pool.count, candidates, samples[m]));
      expect(Array.from(anchored, (d, i) => Object.is(d, plain[i])).every(Boolean)).toBe(true);
    }
  });

  it('leave-self-out distances exclude the environment itself', () => {
    const p = Float64Array.of(1, 0, 0, 1, Math.SQRT1_2, Math.SQRT1_2);
    const pool = { n0: 2, count: 3, species: Int32Array.of(0, 0, 0), p };
    const d = nearestOtherDistances(pool, Int32Array.of(0, 1));
    expect(d[0]).toBeCloseTo(Math.SQRT2, 12);
    expect(d[2]).toBeCloseTo(Math.sqrt(2 - Math.SQRT2), 12);
  });
});

describe('projected-process (sparse) form', () => {
  it('with every environment as a representative it reproduces exact kernel ridge', () => {
    const rng = makeRng(4);
    const frames = Array.from({ length: 6 }, (_, f) => syntheticFeatures(rng, { count: 3, n0: 5, tensor: { 2: 3 }, frame: f }));
    // pool = every environment
    const count = 18;
    const p = new Float64Array(count * 5);
    const blocks = new Float64Array(count * 15);
    const species = new Int32Array(count);
    frames.forEach((fe, f) => {
      p.set(fe.scalar, f * 15);
      blocks.set(fe.tensor[2]!.data, f * 45);
      species.set(fe.centreSpecies, f * 3);
    });
    const pool = { n0: 5, count, species, p, blocks: { order: 2 as const, n: 3, data: blocks } };
    for (const order of [0, 2] as const) {
      const w = 2 * order + 1;
      const zeta = 2;
      const reps = representativesFrom(order === 0 ? { ...pool, blocks: undefined } : pool, Int32Array.from({ length: count }, (_, i) => i), order);
      const size = count * w;
      const l = representativeFactor(representativeKernel(reps, zeta), size);
      const rows = frames.length * w;
      const phi = new Float64Array(rows * size);
      frames.forEach((fe, f) => phi.set(projectRows(structureToRepresentatives(fe, reps, zeta), w, l, size), f * w * size));
      const y = Float64Array.from({ length: rows }, () => rng.normal());
      const group = Int32Array.from({ length: rows }, (_, r) => Math.floor(r / w));
      const sparse: Design = { rows, group, y, phi, features: size };
      const gram = new Float64Array(rows * rows);
      frames.forEach((a, i) =>
        frames.forEach((b, j) => {
          const k = structureKernel(a, b, order, zeta);
          for (let mu = 0; mu < w; mu++) for (let nu = 0; nu < w; nu++) gram[(i * w + mu) * rows + j * w + nu] = k[mu * w + nu];
        }),
      );
      const exact: Design = { rows, group, y, gram };
      const lambda = 0.05;
      const all = Int32Array.from({ length: rows }, (_, i) => i);
      const [pe] = ridgeFitPredict(exact, all, all, [lambda]);
      const [ps] = ridgeFitPredict(sparse, all, all, [lambda]);
      for (let r = 0; r < rows; r++) expect(ps[r]).toBeCloseTo(pe[r], 6);
      // and the folded expansion gives the same frame predictions as sums of local contributions
      const fit = fitRidge(sparse, lambda / (sparse.phi!.reduce((s, v) => s + v * v, 0) / rows), null);
      const exp = foldSparseWeights(reps, l, primalWeights(sparse, fit), zeta);
      frames.forEach((fe, f) => {
        const loc = localContributions(fe, order, { kernel: exp });
        for (let mu = 0; mu < w; mu++) {
          let s = 0;
          for (let e = 0; e < fe.count; e++) s += loc[e * w + mu];
          expect(s).toBeCloseTo(pe[f * w + mu], 5);
        }
      });
    }
  });
});
