// Environments per second of computeFeatures on water-like cells (O and H, 0.1 atoms/Å³, jittered molecules),
// r_c 4.5 Å, nmax 8, lmax 6: λ = 0 only and λ = 0 + λ = 2; 1×, 2×, 4× cells to show linear cost; feature counts
// and the time share of neighbour list / density expansion / coupling (each timed on its own, in CPU time).
// Single thread. Figures only.
import { pathToFileURL } from 'node:url';
import { makeFrame, type Frame } from '../src-main/core/frame.ts';
import { supercell } from '../src-main/core/cell.ts';
import { makeRng } from '../src-main/core/random.ts';
import type { FeatureSettings } from '../src-main/core/feature-types.ts';
import { computeFeatures, featureCount, tensorLimits, type Lambda } from '../src-main/core/features.ts';
import { makeDensityExpander } from '../src-main/core/density.ts';
import { neighbourList } from '../src-main/core/neighbours.ts';

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

/** CPU time (ms) of this process for one call of fn: the best of several batches (robust on a loaded machine). */
function bestCpuMs(fn: () => void, batches = 5, minBatchMs = 250): { best: number; wall: number } {
  fn(); // warm-up: tables, plan, JIT
  let best = Infinity;
  let wall = Infinity;
  for (let b = 0; b < batches; b++) {
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    let calls = 0;
    do {
      fn();
      calls++;
    } while (performance.now() - t0 < minBatchMs);
    const cpu = process.cpuUsage(cpu0);
    best = Math.min(best, (cpu.user + cpu.system) / 1000 / calls);
    wall = Math.min(wall, (performance.now() - t0) / calls);
  }
  return { best, wall };
}

function measure(frame: Frame, settings: FeatureSettings, lambdas: Lambda[]) {
  const nl = neighbourList(frame, settings.cutoff);
  const envs = computeFeatures(frame, settings, lambdas, nl).count;
  const neighbours = bestCpuMs(() => neighbourList(frame, settings.cutoff)).best;
  const speciesIndex = new Map(settings.species.map((x, i) => [x, i]));
  const channelOf = Int32Array.from(frame.species, (x) => speciesIndex.get(x)!);
  const expander = makeDensityExpander({ ...settings, channels: settings.species.length });
  const c = new Float64Array(expander.size);
  const expansion = bestCpuMs(() => {
    for (let i = 0; i < frame.species.length; i++) expander.expand(nl, i, channelOf[i], channelOf, c);
  }).best;
  const features = bestCpuMs(() => computeFeatures(frame, settings, lambdas, nl));
  const total = neighbours + features.best;
  return {
    envs,
    perCpuSecond: (envs / total) * 1000,
    perWallSecond: (envs / (neighbours + features.wall)) * 1000,
    shares: { neighbours: neighbours / total, expansion: expansion / total, coupling: (features.best - expansion) / total },
  };
}

export async function run(): Promise<void> {
  const s = benchSettings;
  const t = tensorLimits(s);
  console.log(`features bench: r_c ${s.cutoff} Å, width ${s.cutoffWidth} Å, σ ${s.sigma} Å, nmax ${s.nmax}, lmax ${s.lmax}, species ${s.species.join(',')}; λ=2 with nmax ${t.nmax}, lmax ${t.lmax}; one thread, Node ${process.version}`);
  console.log(`feature counts: λ=0 ${featureCount(s, 0)}, λ=2 ${featureCount(s, 2)} (× 5 components), λ=1 ${featureCount(s, 1)} (× 3); λ=2 at lmaxTensor ${s.lmax}: ${featureCount({ ...s, lmaxTensor: s.lmax }, 2)}`);
  console.log('(best of 5 batches; "per CPU-s" divides by this process\'s CPU time, wall figures depend on the machine\'s load; neighbour list included)');
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
      const m = measure(frame, settings, lambdas);
      const share = (x: number) => (100 * x).toFixed(0).padStart(2);
      console.log(
        `${label.padEnd(26)} ${cellLabel.padEnd(16)} ${m.perCpuSecond.toFixed(0).padStart(6)} env per CPU-s, ${m.perWallSecond.toFixed(0).padStart(6)} env/s wall  ` +
          `(neighbour list ${share(m.shares.neighbours)}%, expansion ${share(m.shares.expansion)}%, power spectrum + coupling ${share(m.shares.coupling)}%)`,
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
