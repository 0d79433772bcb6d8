// Prediction's applicability figures on the real DFT water frames (test/fixtures/water-dft-sample.extxyz, see its
// README) are unchanged by the bounded nearest-representative search: every atom's distance, the largest
// distance and the count of atoms outside equal those of the plain scan (sparse.ts nearestDistance), also for a
// compressed cell whose atoms lie outside. The plain scan is the reference; no outside values are involved.
import { readFileSync } from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import type { Frame } from '../../../src-main/core/geometry/frame.ts';
import { modelFeaturiser, predictFrame, trainModel, type Model } from '../../../src-main/core/learning/model.ts';
import { nearestDistance } from '../../../src-main/core/learning/sparse.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';

const frames: Frame[] = parseExtxyz(readFileSync(new URL('../../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water-dft-sample.extxyz');
let model: Model;

beforeAll(async () => {
  model = await trainModel(frames.slice(0, 4), { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm' });
}, 60_000);

/** The applicability figures computed with the plain scan, by the rule of docs/learning-engine.md. */
function plainFigures(frame: Frame): { atomDistance: Float64Array; maxDistance: number; atomsOutside: number } {
  const a = model.applicability;
  const fe = modelFeaturiser(model)(frame, 0);
  const atomDistance = new Float64Array(frame.species.length);
  let maxDistance = 0;
  let atomsOutside = 0;
  for (let e = 0; e < fe.count; e++) {
    let d = nearestDistance(fe.scalar, e, a.p, a.species, fe.centreSpecies[e], a.n0);
    if (!Number.isFinite(d)) d = 2;
    atomDistance[fe.centre[e]] = d;
    maxDistance = Math.max(maxDistance, d);
    if (d > a.perSpecies[fe.centreSpecies[e]]) atomsOutside++;
  }
  return { atomDistance, maxDistance, atomsOutside };
}

describe('applicability on real DFT water: bounded search against the plain scan', () => {
  it('gives the same per-atom distances, largest distance and atoms outside', () => {
    const squeezed: Frame = { ...frames[6], positions: frames[6].positions.map((x) => 0.8 * x), cell: frames[6].cell!.map((x) => 0.8 * x) };
    const cases = [frames[4], frames[6], frames[7], squeezed];
    for (const frame of cases) {
      const got = predictFrame(model, frame).applicability;
      const want = plainFigures(frame);
      expect(got.atomDistance.length).toBe(want.atomDistance.length);
      for (let i = 0; i < want.atomDistance.length; i++) expect(got.atomDistance[i]).toBe(want.atomDistance[i]);
      expect(got.maxDistance).toBe(want.maxDistance);
      // atoms beyond the feature-distance threshold (atomsOutside also counts the geometric checks of domain.ts)
      const centre = (i: number) => model.centres.indexOf(frame.species[i]);
      const beyond = [...got.atomDistance].filter((d, i) => d > model.applicability.perSpecies[centre(i)]).length;
      expect(beyond).toBe(want.atomsOutside);
    }
    // the comparison covers both sides of the threshold: held-out frames inside, the compressed cell outside
    expect(plainFigures(frames[6]).atomsOutside).toBe(0);
    expect(plainFigures(squeezed).atomsOutside).toBeGreaterThan(0);
  });
});
