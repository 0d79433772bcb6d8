// The per-species caveat and the regulariser-at-the-edge warning, as the model records them.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { compositionNote, singleComposition } from '../../../src-main/core/learning/contributions.ts';
import { regulariserEdge, trainModel } from '../../../src-main/core/learning/model.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';

describe('single composition', () => {
  it('is found when the species counts are proportional, not otherwise', () => {
    expect(singleComposition([[16, 32], [8, 16], [1, 2]])).toBe(true);
    expect(singleComposition([[16, 32], [16, 31]])).toBe(false);
    expect(compositionNote(['H', 'O'], [[32, 16], [30, 15]])).toMatch(/not determined by the data/);
    expect(compositionNote(['H', 'O'], [[32, 16], [2, 0]])).toBeNull();
  });
  it('a model of the DFT water frames (one composition) carries the note', async () => {
    const frames = parseExtxyz(readFileSync(new URL('../../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water.extxyz');
    const model = await trainModel(frames, { tensorKey: 'eps_inf', kind: 'eps', route: 'cm', settings: { radialFunctions: 4, angularOrder: 3 } });
    expect(model.notes.join('\n')).toMatch(/same composition \(H:O 32:16\)/);
  }, 60_000);
});

describe('regulariserEdge', () => {
  const grid = [1e-9, 1e-7, 1e-5, 1e-3, 1e-1, 1].map((relative) => ({ relative, error: 1 }));
  it('warns when cross-validation picks the smallest or largest value tried, and only then', () => {
    expect(regulariserEdge({ relative: 1e-9, chosenBy: 'cross-validation', grid })).toMatch(/smallest of the range tried/);
    expect(regulariserEdge({ relative: 1, chosenBy: 'cross-validation', grid })).toMatch(/largest of the range tried/);
    expect(regulariserEdge({ relative: 1e-5, chosenBy: 'cross-validation', grid })).toBeNull();
    expect(regulariserEdge({ relative: 1e-9, chosenBy: 'given', grid: [] })).toBeNull();
  });
});
