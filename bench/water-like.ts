// Synthetic water-like periodic cells for benchmarks: rigid molecules (O–H 0.957 Å, 104.5°, from memory) on a
// jittered 4×4×8 grid at about liquid density, randomly oriented, with an additive reference α_CM (invented,
// for timing only): each molecule contributes 1.47 Å³ isotropic plus 0.1 Å³ along its H–H axis.
import { createWriteStream } from 'node:fs';
import { makeFrame, type Frame } from '../src-main/core/geometry/frame.ts';
import { formatExtxyzFrame } from '../src-main/io/extxyz.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { randomRotation } from '../src-main/core/descriptors/wigner.ts';

export function waterLikeFrames(count: number, seed = 1): Frame[] {
  const rng = makeRng(seed);
  const nx = 4, ny = 4, nz = 8;
  const a = 12.42, c = 24.84; // 128 molecules in 3832 Å³ ≈ 0.997 g/cm³
  const cell = [a, 0, 0, 0, a, 0, 0, 0, c];
  const h = [
    [0, 0, 0],
    [0.757, 0.586, 0],
    [-0.757, 0.586, 0],
  ];
  const frames: Frame[] = [];
  for (let f = 0; f < count; f++) {
    const species: string[] = [];
    const pos: number[] = [];
    const alpha = new Float64Array(9);
    for (let i = 0; i < nx; i++)
      for (let j = 0; j < ny; j++)
        for (let k = 0; k < nz; k++) {
          const centre = [(i + 0.5) * (a / nx), (j + 0.5) * (a / ny), (k + 0.5) * (c / nz)].map((x) => x + 0.3 * (2 * rng.uniform() - 1));
          const R = randomRotation(rng);
          const atoms = h.map((v) => [0, 1, 2].map((r) => centre[r] + R[3 * r] * v[0] + R[3 * r + 1] * v[1] + R[3 * r + 2] * v[2]));
          species.push('O', 'H', 'H');
          for (const at of atoms) pos.push(...at);
          const axis = [0, 1, 2].map((r) => atoms[1][r] - atoms[2][r]);
          const n = Math.hypot(...axis);
          for (let p = 0; p < 3; p++) for (let q = 0; q < 3; q++) alpha[3 * p + q] += (p === q ? 1.47 : 0) + (0.1 * axis[p] * axis[q]) / (n * n);
        }
    const frame = makeFrame(species, pos, cell);
    frame.info.alpha_cm = [...alpha];
    frames.push(frame);
  }
  return frames;
}

/** Writes `count` frames to an extended XYZ file, cycling through `frames`, each with its step number as `step`. */
export async function writeFrames(path: string, frames: Frame[], count: number): Promise<void> {
  const out = createWriteStream(path);
  for (let k = 0; k < count; k++) {
    const f = frames[k % frames.length];
    if (!out.write(formatExtxyzFrame({ ...f, info: { step: k }, arrays: {} }))) await new Promise<void>((r) => out.once('drain', () => r()));
  }
  await new Promise<void>((res, rej) => out.end((e?: Error | null) => (e ? rej(e) : res())));
}
