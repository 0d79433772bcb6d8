// Small trajectories and a small model for the trajectory tests: the real DFT water frames (test/fixtures,
// from /work/shared/data) with seeded random displacements, and a model trained on the unperturbed frames.
import { readFileSync } from 'node:fs';
import type { Frame } from '../../src-main/core/geometry/frame.ts';
import { trainModel, type Model } from '../../src-main/core/learning/model.ts';
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

export function trajectoryText(frames: Frame[]): string {
  return frames.map(formatExtxyzFrame).join('');
}

export function smallModel(): Promise<Model> {
  return trainModel(waterFrames(), { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm', settings: { radialFunctions: 4, angularOrder: 3 } });
}
