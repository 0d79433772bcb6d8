// Checks of the bundled demo data in resources/demo as shipped: sizes, frame counts, keys, provenance, the
// consecutive trajectory, and the optics the README promises (an isotropic liquid, a birefringent crystal).
import { readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { readAllStructures } from '../../src-main/io/read-structures.ts';
import { convertTensor, birefringence } from '../../src-main/core/dielectric/clausius-mossotti.ts';
import { cellVolume } from '../../src-main/core/geometry/cell.ts';
import type { Frame } from '../../src-main/core/geometry/frame.ts';

const dir = join(__dirname, '../../resources/demo');

function meanEps(frames: Frame[]): Float64Array {
  const m = new Float64Array(9);
  for (const f of frames) (f.info.eps_ref as number[]).forEach((v, k) => (m[k] += v / frames.length));
  return m;
}

describe('bundled demo data', () => {
  it('fits the size budget (≤ 15 MB in total)', () => {
    const total = readdirSync(dir).reduce((s, f) => s + statSync(join(dir, f)).size, 0);
    expect(total).toBeLessThan(15e6);
  });

  it('liquid and crystal: enough frames, 100–400 atoms, references consistent through Clausius–Mossotti', async () => {
    const liquid = await readAllStructures(join(dir, 'liquid.extxyz.gz'));
    const crystal = await readAllStructures(join(dir, 'crystal.extxyz.gz'));
    expect(liquid.length).toBeGreaterThanOrEqual(200);
    expect(crystal.length).toBeGreaterThanOrEqual(50);
    for (const f of [...liquid, ...crystal]) {
      expect(f.species.length).toBeGreaterThanOrEqual(100);
      expect(f.species.length).toBeLessThanOrEqual(400);
      expect(String(f.info.data_origin)).toMatch(/INVENTED/);
    }
    for (const f of [liquid[0], liquid[liquid.length - 1], crystal[0]]) {
      const V = cellVolume(f.cell!);
      const cm = convertTensor(Float64Array.from(f.info.eps_ref as number[]), 'eps', 'alpha-cm', V);
      (f.info.alpha_cm_ref_A3 as number[]).forEach((v, k) => expect(cm[k]).toBeCloseTo(v, 5));
    }
    expect(new Set(liquid.map((f) => f.info.state_point)).size).toBe(3);
    expect(new Set(crystal.map((f) => f.info.temperature_K)).size).toBe(2);
    // The liquid averages to nearly isotropic; the layered crystal is strongly birefringent.
    expect(birefringence(meanEps(liquid)).delta).toBeLessThan(0.01);
    expect(birefringence(meanEps(crystal)).delta).toBeGreaterThan(0.05);
  });

  it('trajectory: ≥ 500 consecutive frames with the time step in every frame', async () => {
    const traj = await readAllStructures(join(dir, 'liquid-trajectory.extxyz.gz'));
    expect(traj.length).toBeGreaterThanOrEqual(500);
    const dt = traj[0].info.frame_interval_fs as number;
    expect(traj[0].info.timestep_fs).toBeGreaterThan(0);
    for (let k = 1; k < traj.length; k++) expect((traj[k].info.time_fs as number) - (traj[k - 1].info.time_fs as number)).toBeCloseTo(dt, 6);
    expect(traj.every((f) => Array.isArray(f.info.eps_ref))).toBe(true);
  });
});
