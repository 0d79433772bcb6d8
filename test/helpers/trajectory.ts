// Small trajectories and a small model for the trajectory tests: the real DFT water frames (test/fixtures,
// from /work/shared/data) with seeded random displacements, and a model trained on the unperturbed frames.
import { readFileSync } from 'node:fs';
import type { Frame } from '../../src-main/core/geometry/frame.ts';
import { trainModel, type Model } from '../../src-main/core/learning/model.ts';
import { computeFeatures } from '../../src-main/core/descriptors/features.ts';
import { makeRng } from '../../src-main/core/numerics/random.ts';
import { formatExtxyzFrame, parseExtxyz } from '../../src-main/io/extxyz.ts';

export function waterFrames(): Frame[] {
  return parseExtxyz(readFileSync(new URL('../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water-dft-sample.extxyz');
}

/** `count` frames: water frame k mod 8, every atom moved by a seeded Gaussian of width `jitter` Å. */
export function jitteredTrajectory(count: number, jitter = 0.05, seed = 7): Frame[] {
  const base = waterFrames();
  const rng = makeRng(seed);
  const out: Frame[] = [];
  for (let k = 0; k < count; k++) {
    const b = base[k % base.length];
    const positions = Float64Array.from(b.positions, (x) => x + jitter * rng.normal());
    out.push({ ...b, positions, info: { tag: `t${k}` }, arrays: { ...b.arrays } });
  }
  return out;
}

/**
 * λ=0 rows of `frames` jittered water frames (nmax 4, lmax 3) as a pool of environments, `repeats` of them repeated
 * from earlier ones at the end: the rows (p), their species and frames, and the rows of each species (H, O).
 */
export function waterFeaturePool(frames: number, repeats: number) {
  const settings = { cutoff: 4, cutoffWidth: 0.5, sigma: 0.4, nmax: 4, lmax: 3, species: ['H', 'O'], centres: ['H', 'O'] };
  const feats = jitteredTrajectory(frames, 0.05, 3).map((f) => computeFeatures(f, settings, [0]));
  const n0 = feats[0].n0;
  const rows: Float64Array[] = [];
  const species: number[] = [];
  const frame: number[] = [];
  feats.forEach((fe, f) => {
    for (let e = 0; e < fe.count; e++) {
      rows.push(fe.scalar.subarray(e * n0, (e + 1) * n0));
      species.push(fe.centreSpecies[e]);
      frame.push(f);
    }
  });
  for (let k = 0; k < repeats; k++) {
    rows.push(rows[(k * 7) % rows.length]);
    species.push(species[(k * 7) % species.length]);
    frame.push(frame[(k * 7) % frame.length]);
  }
  const p = new Float64Array(rows.length * n0);
  rows.forEach((r, i) => p.set(r, i * n0));
  const groups = [0, 1].map((s) => Int32Array.from(species.flatMap((x, i) => (x === s ? [i] : []))));
  return { pool: { n0, count: rows.length, species: Int32Array.from(species), p }, frame: Int32Array.from(frame), groups };
}

export function trajectoryText(frames: Frame[]): string {
  return frames.map(formatExtxyzFrame).join('');
}

export function smallModel(): Promise<Model> {
  return trainModel(waterFrames(), { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm', settings: { radialFunctions: 4, angularOrder: 3 } });
}
