// Environments per second of computeFeatures on water-like cells (O and H, 0.1 atoms/Å³, jittered molecules),
// r_c 4.5 Å, nmax 8, lmax 6: λ = 0 only and λ = 0 + λ = 2; 1×, 2×, 4× cells to show linear cost; feature counts
// and the time share of neighbour list / density expansion / coupling. Single thread. Figures only.
import { pathToFileURL } from 'node:url';
import { makeFrame, type Frame } from '../src-main/core/frame.ts';
import { supercell } from '../src-main/core/cell.ts';
import { makeRng } from '../src-main/core/random.ts';
import type { FeatureSettings } from '../src-main/core/feature-types.ts';
import { computeFeatures, featureCount, tensorLimits, type FeatureTimings, type Lambda } from '../src-main/core/features.ts';

/** 128 water molecules in a cubic cell at 0.1 atoms/Å³: O at least 2.5 Å apart, H at 0.96 Å, 104.5°, random orientation. */
export function waterCell(seed: number, molecules = 128): Frame {
  const rng = makeRng(seed);
  const L = Math.cbrt((3 * molecules) / 0.1);
  const O: number[] = [];
  const species: string[] = [];
  const pos: number[] = [];
  const minImage = (d: number) => d - L * Math.round(d / L);
  while (O.length < 3 * molecules) {
    const p = [rng.uniform() * L, rng.uniform() * L, rng.uniform() * L];
    let ok = true;
    for (let k = 0; k < O.length && ok; k += 3) {
      if (Math.hypot(minImage(p[0] - O[k]), minImage(p[1] - O[k + 1]), minImage(p[2] - O[k + 2])) < 2.5) ok = false;
    }
    if (ok) O.push(...p);
  }
  const half = (104.5 / 2) * (Math.PI / 180);
  for (let k = 0; k < O.length; k += 3) {
    // Random orthonormal frame (u, v) for the molecule plane.
    const u = [rng.normal(), rng.normal(), rng.normal()];
    const nu = Math.hypot(u[0], u[1], u[2]);
    for (let q = 0; q < 3; q++) u[q] /= nu;
    const w = [rng.normal(), rng.normal(), rng.normal()];
    const dot = u[0] * w[0] + u[1] * w[1] + u[2] * w[2];
    for (let q = 0; q < 3; q++) w[q] -= dot * u[q];
    const nw = Math.hypot(w[0], w[1], w[2]);
    for (let q = 0; q < 3; q++) w[q] /= nw;
    species.push('O', 'H', 'H');
    pos.push(O[k], O[k + 1], O[k + 2]);
    for (const s of [1, -1]) {
      for (let q = 0; q < 3; q++) pos.push(O[k + q] + 0.96 * (Math.cos(half) * u[q] + s * Math.sin(half) * w[q]));
    }
  }
  return makeFrame(species, pos, Float64Array.of(L, 0, 0, 0, L, 0, 0, 0, L));
}

export const benchSettings: FeatureSettings = {
  cutoff: 4.5,
  cutoffWidth: 0.5,
  sigma: 0.4,
  nmax: 8,
  lmax: 6,
  species: ['O', 'H'],
  centres: ['O', 'H'],
};

function measure(frame: Frame, settings: FeatureSettings, lambdas: Lambda[], minMs = 1500) {
  computeFeatures(frame, settings, lambdas); // warm-up: tables, plan, JIT
  const timings: FeatureTimings = { neighbours: 0, expansion: 0, coupling: 0 };
  let envs = 0;
  const t0 = performance.now();
  const cpu0 = process.cpuUsage();
  let reps = 0;
  while (performance.now() - t0 < minMs || reps < 2) {
    envs += computeFeatures(frame, settings, lambdas, undefined, timings).count;
    reps++;
  }
  const total = performance.now() - t0;
  const cpu = process.cpuUsage(cpu0);
  const cpuMs = (cpu.user + cpu.system) / 1000;
  return { envsPerSecond: (envs / total) * 1000, envsPerCpuSecond: (envs / cpuMs) * 1000, total, timings, reps };
}

export async function run(): Promise<void> {
  const s = benchSettings;
  const t = tensorLimits(s);
  console.log(`features bench: r_c ${s.cutoff} Å, width ${s.cutoffWidth} Å, σ ${s.sigma} Å, nmax ${s.nmax}, lmax ${s.lmax}, species ${s.species.join(',')}; λ=2 with nmax ${t.nmax}, lmax ${t.lmax}; one thread, Node ${process.version}`);
  console.log(`feature counts: λ=0 ${featureCount(s, 0)}, λ=2 ${featureCount(s, 2)} (× 5 components), λ=1 ${featureCount(s, 1)} (× 3); λ=2 at lmaxTensor ${s.lmax}: ${featureCount({ ...s, lmaxTensor: s.lmax }, 2)}`);
  console.log('(wall-clock figures depend on the load of the machine; "per CPU-s" divides by this process\'s CPU time)');
  const base = waterCell(1);
  const cells: [string, Frame][] = [
    ['1× (384 atoms)', base],
    ['2× (768 atoms)', supercell(base, [2, 1, 1])],
    ['4× (1536 atoms)', supercell(base, [2, 2, 1])],
  ];
  const variants: [string, Lambda[], FeatureSettings][] = [
    ['λ=0', [0], s],
    ['λ=0+2', [0, 2], s],
    [`λ=0+2 (lmaxTensor ${s.lmax})`, [0, 2], { ...s, lmaxTensor: s.lmax }],
  ];
  for (const [label, lambdas, settings] of variants) {
    for (const [cellLabel, frame] of cells) {
      const m = measure(frame, settings, lambdas, cellLabel.startsWith('1×') ? 2000 : 1000);
      const sum = m.timings.neighbours + m.timings.expansion + m.timings.coupling;
      const share = (x: number) => ((100 * x) / sum).toFixed(0).padStart(2);
      console.log(
        `${label.padEnd(26)} ${cellLabel.padEnd(16)} ${m.envsPerSecond.toFixed(0).padStart(6)} env/s wall, ${m.envsPerCpuSecond.toFixed(0).padStart(6)} per CPU-s  ` +
          `(neighbours ${share(m.timings.neighbours)}%, expansion ${share(m.timings.expansion)}%, coupling ${share(m.timings.coupling)}%; ${m.reps} runs)`,
      );
    }
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  run().catch((error: unknown) => {
    console.error(error);
    process.exitCode = 1;
  });
}
