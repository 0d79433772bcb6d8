// Environments per second of computeFeatures on water-like cells (O and H, 0.1 atoms/Å³, jittered molecules),
// r_c 4.5 Å, nmax 8, lmax 6: λ = 0 only and λ = 0 + λ = 2; 1×, 2×, 4× cells to show linear cost; feature counts
// and the time share of neighbour list / density expansion / coupling. Each configuration runs in its own
// process, single thread. Figures only.
import { spawnSync } from 'node:child_process';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { makeFrame, type Frame } from '../src-main/core/geometry/frame.ts';
import { supercell } from '../src-main/core/geometry/cell.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import type { FeatureSettings } from '../src-main/core/descriptors/feature-types.ts';
import { computeFeatures, featureCount, tensorLimits, type FeatureTimings, type Lambda } from '../src-main/core/descriptors/features.ts';
import { loadavg } from 'node:os';
import { neighbourList } from '../src-main/core/geometry/neighbours.ts';
import { extractBaseline, rateChild, thisTree } from './baseline.ts';

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

/**
 * Figures for computeFeatures (neighbour list included) on one frame: the best of several batches in CPU time
 * of this process (robust on a loaded machine), and the stage shares from the same batch's timings.
 */
function measure(frame: Frame, settings: FeatureSettings, lambdas: Lambda[], batches = 5, minBatchMs = 250) {
  let spare = computeFeatures(frame, settings, lambdas); // warm-up: tables, plan, JIT
  const envs = spare.count;
  let best = { cpu: Infinity, wall: Infinity, timings: { neighbours: 0, expansion: 0, coupling: 0 } as FeatureTimings };
  for (let b = 0; b < batches; b++) {
    const timings: FeatureTimings = { neighbours: 0, expansion: 0, coupling: 0 };
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    let calls = 0;
    do {
      // as training calls it: the previous frame's arrays written over (fresh arrays cost the system's zeroing of
      // their pages, per environment more at 1536 atoms than at 384)
      spare = computeFeatures(frame, settings, lambdas, undefined, timings, spare);
      calls++;
    } while (performance.now() - t0 < minBatchMs);
    const cpu = process.cpuUsage(cpu0);
    const cpuMs = (cpu.user + cpu.system) / 1000 / calls;
    if (cpuMs < best.cpu) best = { cpu: cpuMs, wall: (performance.now() - t0) / calls, timings };
  }
  const { neighbours, expansion, coupling } = best.timings;
  const sum = neighbours + expansion + coupling;
  return {
    envs,
    perCpuSecond: (envs / best.cpu) * 1000,
    perWallSecond: (envs / best.wall) * 1000,
    shares: { neighbours: neighbours / sum, expansion: expansion / sum, coupling: coupling / sum },
  };
}

const CELLS: [string, [number, number, number]][] = [
  ['1× (384 atoms)', [1, 1, 1]],
  ['2× (768 atoms)', [2, 1, 1]],
  ['4× (1536 atoms)', [2, 2, 1]],
];

function variants(s: FeatureSettings): [string, Lambda[], FeatureSettings][] {
  return [
    ['λ=0', [0], s],
    ['λ=0+2', [0, 2], s],
    [`λ=0+2 (lmaxTensor ${s.lmax})`, [0, 2], { ...s, lmaxTensor: s.lmax }],
  ];
}

/** One line of figures for variant v on cell c (run in its own process: one settings per process, as in use). */
function measureOne(v: number, c: number): string {
  const [label, lambdas, settings] = variants(benchSettings)[v];
  const [cellLabel, repeats] = CELLS[c];
  const base = waterCell(1);
  const frame = c === 0 ? base : supercell(base, repeats);
  const m = measure(frame, settings, lambdas);
  const share = (x: number) => (100 * x).toFixed(0).padStart(2);
  return (
    `${label.padEnd(26)} ${cellLabel.padEnd(16)} ${m.perCpuSecond.toFixed(0).padStart(6)} env per CPU-s, ${m.perWallSecond.toFixed(0).padStart(6)} env/s wall  ` +
    `(neighbour list ${share(m.shares.neighbours)}%, expansion ${share(m.shares.expansion)}%, power spectrum + coupling ${share(m.shares.coupling)}%)`
  );
}

export async function run(): Promise<void> {
  const s = benchSettings;
  const t = tensorLimits(s);
  console.log(`features bench: r_c ${s.cutoff} Å, width ${s.cutoffWidth} Å, σ ${s.sigma} Å, nmax ${s.nmax}, lmax ${s.lmax}, species ${s.species.join(',')}; λ=2 with nmax ${t.nmax}, lmax ${t.lmax}; one thread, Node ${process.version}`);
  console.log(`feature counts: λ=0 ${featureCount(s, 0)}, λ=2 ${featureCount(s, 2)} (× 5 components), λ=1 ${featureCount(s, 1)} (× 3); λ=2 at lmaxTensor ${s.lmax}: ${featureCount({ ...s, lmaxTensor: s.lmax }, 2)}`);
  console.log('(each line in a fresh process; best of 5 batches; "per CPU-s" divides by the process\'s CPU time, wall figures depend on the machine\'s load; neighbour list included; each call writes over the previous call\'s arrays, as training does)');
  const self = fileURLToPath(import.meta.url);
  for (let v = 0; v < variants(s).length; v++) {
    for (let c = 0; c < CELLS.length; c++) {
      // A fresh process per configuration: mixing settings in one process makes the JIT's code for the hot loop
      // polymorphic and slower than in real use (one settings per run).
      const child = spawnSync(process.execPath, [...process.execArgv, self, '--one', String(v), String(c)], { encoding: 'utf8' });
      if (child.status === 0) console.log(child.stdout.trim());
      else console.log(`${measureOne(v, c)}  [in-process: child failed: ${(child.stderr || '').trim().split('\n')[0]}]`);
    }
  }
  sizeScaling();
  const ref = process.env.PW_BENCH_BASELINE;
  if (ref) againstBaseline(ref);
  else console.log('(set PW_BENCH_BASELINE=<git ref> to time λ=0+2 features side by side with that ref)');
}

/**
 * Cost per environment at 1536 atoms against 384 (λ = 0 + 2 at lmaxTensor 6), in one process, alternating: the
 * neighbour list alone, computeFeatures into fresh arrays, and into the arrays of the call before (as training).
 */
export function sizeScaling(): void {
  const settings = { ...benchSettings, lmaxTensor: benchSettings.lmax };
  const small = waterCell(1);
  const big = supercell(small, [2, 2, 1]);
  const cpuMs = () => {
    const c = process.cpuUsage();
    return (c.user + c.system) / 1000;
  };
  const time = (f: () => void) => {
    const c0 = cpuMs();
    const t0 = performance.now();
    let k = 0;
    do {
      f();
      k++;
    } while (performance.now() - t0 < 300);
    return (cpuMs() - c0) / k;
  };
  let spareSmall = computeFeatures(small, settings, [0, 2]);
  let spareBig = computeFeatures(big, settings, [0, 2]);
  const best = { listS: Infinity, listB: Infinity, freshS: Infinity, freshB: Infinity, reuseS: Infinity, reuseB: Infinity };
  for (let round = 0; round < 5; round++) {
    best.listS = Math.min(best.listS, time(() => neighbourList(small, settings.cutoff)) / 384);
    best.listB = Math.min(best.listB, time(() => neighbourList(big, settings.cutoff)) / 1536);
    best.freshS = Math.min(best.freshS, time(() => computeFeatures(small, settings, [0, 2])) / 384);
    best.freshB = Math.min(best.freshB, time(() => computeFeatures(big, settings, [0, 2])) / 1536);
    best.reuseS = Math.min(best.reuseS, time(() => (spareSmall = computeFeatures(small, settings, [0, 2], undefined, undefined, spareSmall))) / 384);
    best.reuseB = Math.min(best.reuseB, time(() => (spareBig = computeFeatures(big, settings, [0, 2], undefined, undefined, spareBig))) / 1536);
  }
  const us = (ms: number) => (1000 * ms).toFixed(1);
  console.log(`per environment at 1536 atoms against 384, λ=0+2 at lmaxTensor ${settings.lmaxTensor}, one process, CPU time, best of 5 alternating rounds (load average ${loadavg()[0].toFixed(1)}):`);
  console.log(`  neighbour list ${us(best.listS)} / ${us(best.listB)} µs (×${(best.listB / best.listS).toFixed(2)}); features into fresh arrays ${us(best.freshS)} / ${us(best.freshB)} µs (×${(best.freshB / best.freshS).toFixed(2)}); ` +
    `into the previous call's arrays ${us(best.reuseS)} / ${us(best.reuseB)} µs (×${(best.reuseB / best.reuseS).toFixed(2)})`);
}

/**
 * λ = 0 + 2 features (neighbour list included) of this tree and of `ref`, in alternating child processes, best of
 * three each: environments per CPU-second, the ratio, and whether every feature is the same number.
 */
export function againstBaseline(ref: string): void {
  const base = extractBaseline(ref);
  if (!base) return;
  try {
    console.log(`side by side with ${ref} (load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}; one thread; CPU time; best of 3 alternating processes, each best of 5 batches):`);
    for (const [lmaxTensor, repeats] of [[6, 1], [6, 4], [4, 1], [4, 4]]) {
      type Rate = { rate: number; hash: string };
      let now: Rate = { rate: 0, hash: '' };
      let then: Rate = { rate: 0, hash: '' };
      for (let round = 0; round < 3; round++) {
        const a = rateChild<Rate>(thisTree, ['features', String(lmaxTensor), String(repeats)]);
        const b = rateChild<Rate>(base.root, ['features', String(lmaxTensor), String(repeats)]);
        if ('error' in a || 'error' in b) {
          console.log(`  a child failed: ${'error' in a ? a.error : ''} ${'error' in b ? b.error : ''}`);
          return;
        }
        if (a.rate > now.rate) now = a;
        if (b.rate > then.rate) then = b;
      }
      console.log(`  λ=0+2 at lmaxTensor ${lmaxTensor}, ${384 * repeats} atoms: ${ref} ${then.rate.toFixed(0)} env per CPU-s, this tree ${now.rate.toFixed(0)}; ×${(now.rate / then.rate).toFixed(2)}; ` +
        `features ${now.hash === then.hash ? 'bit-identical (same hash)' : 'DIFFER'}`);
    }
  } finally {
    base.remove();
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const one = process.argv.indexOf('--one');
  if (one >= 0) {
    console.log(measureOne(Number(process.argv[one + 1]), Number(process.argv[one + 2])));
  } else {
    run().catch((error: unknown) => {
      console.error(error);
      process.exitCode = 1;
    });
  }
}
