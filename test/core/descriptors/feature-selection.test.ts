// Feature-column selection: picks independent columns, skips duplicates, stops at the rank, and the selected
// features keep unit-norm blocks.
import { describe, expect, it } from 'vitest';
import type { EnvironmentFeatures } from '../../../src-main/core/descriptors/feature-types.ts';
import { applyFeatureSelection, selectFeatures } from '../../../src-main/core/descriptors/feature-selection.ts';
import { computeFeatures } from '../../../src-main/core/descriptors/features.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { randomCluster } from '../../helpers/equivariance-harness.ts';

function fromMatrix(rows: number[][]): EnvironmentFeatures {
  const n0 = rows[0].length;
  return {
    count: rows.length,
    centre: Int32Array.from(rows, (_, i) => i),
    centreSpecies: new Int32Array(rows.length),
    frame: new Int32Array(rows.length),
    n0,
    scalar: Float64Array.from(rows.flat()),
    tensor: {},
  };
}

describe('selectFeatures', () => {
  it('never picks a duplicate or a linear combination before an independent column, and stops at the rank', () => {
    const rng = makeRng(4);
    // Columns: 0, 1, 2 random; 3 = copy of 1; 4 = 0 + 2; 5 = 2·1 (rank 3).
    const rows = Array.from({ length: 20 }, () => {
      const a = rng.normal(), b = rng.normal(), c = rng.normal();
      return [a, b, c, b, a + c, 2 * b];
    });
    const chosen = selectFeatures(fromMatrix(rows), 5);
    expect(chosen.length).toBe(3);
    // One column of each independent direction: {0, 2, 4} span two of them, {1, 3, 5} the third.
    expect(chosen.filter((c) => c === 1 || c === 3 || c === 5).length).toBe(1);
    expect(chosen).toEqual([...chosen].sort((x, y) => x - y));
  });

  it('picks the largest column first and returns everything when k ≥ features', () => {
    const f = fromMatrix([
      [1, 5, 0.1],
      [0, 5, 0.2],
    ]);
    expect(selectFeatures(f, 1)).toEqual([1]);
    expect(selectFeatures(f, 3)).toEqual([0, 1, 2]);
  });
});

describe('applyFeatureSelection', () => {
  it('keeps the chosen columns (up to the block scale) with unit-norm blocks, for λ = 0 and λ = 2', () => {
    const frame = randomCluster(makeRng(8), ['O', 'H', 'H', 'O', 'H', 'H'], 2.2);
    const s = { cutoff: 3, cutoffWidth: 0.5, sigma: 0.4, nmax: 3, lmax: 3, species: ['O', 'H'], centres: ['O', 'H'] };
    const f = computeFeatures(frame, s, [0, 2]);
    const sel0 = selectFeatures(f, 5, 0); // 6 environments: rank ≤ 6
    const sel2 = selectFeatures(f, 7, 2);
    expect(sel0.length).toBe(5);
    expect(selectFeatures(f, 10, 0).length).toBe(6);
    expect(sel2.length).toBe(7);
    const g = applyFeatureSelection(f, { 0: sel0, 2: sel2 });
    expect(g.n0).toBe(5);
    expect(g.tensor[2]!.n).toBe(7);
    for (let e = 0; e < g.count; e++) {
      let s0 = 0;
      for (let j = 0; j < 5; j++) s0 += g.scalar[e * 5 + j] ** 2;
      expect(s0).toBeCloseTo(1, 13);
      const ratio = g.scalar[e * 5] / f.scalar[e * f.n0 + sel0[0]];
      for (let j = 0; j < 5; j++) expect(g.scalar[e * 5 + j]).toBeCloseTo(ratio * f.scalar[e * f.n0 + sel0[j]], 13);
      let s2 = 0;
      for (let k = 0; k < 5 * 7; k++) s2 += g.tensor[2]!.data[e * 35 + k] ** 2;
      expect(s2).toBeCloseTo(1, 13);
    }
  });

  it('rejects indices out of range or out of order', () => {
    const f = fromMatrix([[1, 2, 3]]);
    expect(() => applyFeatureSelection(f, { 0: [0, 3] })).toThrow(RangeError);
    expect(() => applyFeatureSelection(f, { 0: [2, 1] })).toThrow(RangeError);
    expect(() => applyFeatureSelection(f, { 2: [0] })).toThrow(RangeError);
  });
});
