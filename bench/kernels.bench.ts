// The hot kernels of prediction and featurisation, each timed against its kept plain version
// (test/helpers/reference-kernels.ts) on the same inputs in the same run: 384-atom water-like cells
// (bench/water-like.ts), r_c 4.5 Å, nmax 8, lmax 6, two species, λ=2 at the default lmaxTensor 4 (the conditions of
// the prediction target). One thread, CPU time of this process, best of several rounds with the two versions
// alternating, so that a busy machine slows both alike. Prints µs per environment, the ratio, and whether the
// outputs agree (bit for bit, or the largest relative difference where the summation order changed).
// Figures only, never asserted.
import { cpus, loadavg } from 'node:os';
import { pathToFileURL } from 'node:url';
import { featurise, powerSpectrum, prepare, tensorFeatures, type Plan } from '../src-main/core/descriptors/features.ts';
import type { FeatureSettings } from '../src-main/core/descriptors/feature-types.ts';
import { makeWeightMatrices, readOne, readoutScratch, readoutStep } from '../src-main/core/learning/tensor-readout.ts';
import { setWebAssemblyKernels } from '../src-main/core/wasm/load.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { referenceDensityExpander, referencePowerSpectrum, referenceReadOne, referenceTensorFeatures } from '../test/helpers/reference-kernels.ts';
import { waterLikeFrames } from './water-like.ts';
import { descriptorKernels } from '../src-main/core/wasm/descriptors.ts';

const ROUNDS = 25;
const MIN_ROUND_MS = 40;

export const kernelSettings: FeatureSettings = { cutoff: 4.5, cutoffWidth: 0.5, sigma: 0.4, nmax: 8, lmax: 6, species: ['O', 'H'], centres: ['O', 'H'] };

function cpuMs(): number {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
}

/** CPU ms per call of each function, best of ROUNDS rounds; the functions alternate within every round. */
function timeSideBySide(fns: (() => void)[]): number[] {
  for (const f of fns) f(); // warm-up
  const best = fns.map(() => Infinity);
  for (let r = 0; r < ROUNDS; r++) {
    fns.forEach((f, k) => {
      const c0 = cpuMs();
      const t0 = performance.now();
      let calls = 0;
      do {
        f();
        calls++;
      } while (performance.now() - t0 < MIN_ROUND_MS);
      best[k] = Math.min(best[k], (cpuMs() - c0) / calls);
    });
  }
  return best;
}

function line(name: string, envs: number, [oldMs, newMs]: number[], agreement: string): void {
  const us = (ms: number) => ((1000 * ms) / envs).toFixed(2).padStart(7);
  console.log(`  ${name.padEnd(34)} plain ${us(oldMs)} µs/env   now ${us(newMs)} µs/env   ×${(oldMs / newMs).toFixed(2)}   ${agreement}`);
}

function agreement(a: Float64Array, b: Float64Array): string {
  let worst = 0;
  let same = a.length === b.length;
  for (let i = 0; i < a.length && same; i++) {
    if (Object.is(a[i], b[i])) continue;
    const scale = Math.max(Math.abs(a[i]), Math.abs(b[i]));
    worst = Math.max(worst, Math.abs(a[i] - b[i]) / (scale || 1));
  }
  if (!same) return 'DIFFERENT LENGTHS';
  return worst === 0 ? 'outputs bit-identical' : `largest relative difference ${worst.toExponential(1)}`;
}

/** The density coefficients of every centre of a frame (what the read-out and the power spectrum start from). */
function coefficientsOf(P: Plan, prep: ReturnType<typeof prepare>): Float64Array[] {
  const out: Float64Array[] = [];
  featurise(prep, new Float64Array(P.n0), () => 0, (_e, _k, c) => out.push(c.slice()), null, undefined);
  return out;
}

function expansionPair(prep: ReturnType<typeof prepare>): void {
  const { P, channelOf, centres, pairs } = prep;
  const plain = referenceDensityExpander(P.expander.settings);
  const envs = centres.length;
  const size = P.expander.size;
  const cOld = new Float64Array(envs * size);
  const cNew = new Float64Array(envs * size);
  // timed as featurisation runs it: every centre into the one reused coefficient block; compared separately
  const block = new Float64Array(size);
  const times = timeSideBySide([
    () => centres.forEach((i) => plain.expand(pairs, i, channelOf[i], channelOf, block)),
    () => centres.forEach((i) => P.expander.expand(pairs, i, channelOf[i], channelOf, block)),
  ]);
  centres.forEach((i, e) => {
    plain.expand(pairs, i, channelOf[i], channelOf, block);
    cOld.set(block, e * size);
    P.expander.expand(pairs, i, channelOf[i], channelOf, block);
    cNew.set(block, e * size);
  });
  let neighbours = 0;
  centres.forEach((i) => (neighbours += pairs.start[i + 1] - pairs.start[i]));
  line(`density expansion (${(neighbours / envs).toFixed(0)} pairs per env)`, envs, times, agreement(cOld, cNew));
}

function powerSpectrumPair(P: Plan, coefficients: Float64Array[]): void {
  const envs = coefficients.length;
  const rowsOld = new Float64Array(envs * P.n0);
  const rowsNew = new Float64Array(envs * P.n0);
  const times = timeSideBySide([
    () => coefficients.forEach((c, e) => referencePowerSpectrum(P, c, rowsOld, e * P.n0)),
    () => coefficients.forEach((c, e) => powerSpectrum(P, c, rowsNew, e * P.n0)),
  ]);
  line(`λ=0 power spectrum (${P.n0} features)`, envs, times, agreement(rowsOld, rowsNew));
}

function couplingPair(P: Plan, coefficients: Float64Array[]): void {
  const T = P.tensors[0];
  const envs = coefficients.length;
  const size = 5 * T.n;
  const old = new Float64Array(envs * size);
  const now = new Float64Array(envs * size);
  const times = timeSideBySide([
    () => coefficients.forEach((c, e) => referenceTensorFeatures(P, T, c, old, e)),
    () => coefficients.forEach((c, e) => tensorFeatures(P, T, c, now, e)),
  ]);
  line(`λ=2 features, training (${T.n} × 5)`, envs, times, agreement(old, now));
}

function readoutPair(prep: ReturnType<typeof prepare>, coefficients: Float64Array[]): void {
  const P = prep.P;
  const T = P.tensors[0];
  const rng = makeRng(5);
  const W = makeWeightMatrices(kernelSettings, 2)(Float64Array.from({ length: T.n }, () => rng.normal()));
  const S = readoutScratch(P, T);
  const envs = coefficients.length;
  const yOld = new Float64Array(5 * envs);
  const yNew = new Float64Array(5 * envs);
  const times = timeSideBySide([
    () => coefficients.forEach((c, e) => referenceReadOne(P, T, c, W, S, yOld, 5 * e)),
    () => coefficients.forEach((c, e) => readOne(P, T, c, W, S, yNew, 5 * e)),
  ]);
  line('λ=2 read-out (per environment)', envs, times, agreement(yOld, yNew));
  // the same read-out through the WebAssembly kernel (readoutStep with the kernels on), against the JavaScript one
  const yWasm = new Float64Array(5 * envs);
  const scalar = new Float64Array(envs * P.n0);
  const wasm = readoutStep(P, T, { lambda: 2, matrices: () => W, perSpecies: [W, W] }, scalar, yWasm);
  const js = (() => {
    setWebAssemblyKernels(false);
    try {
      return readoutStep(P, T, { lambda: 2, matrices: () => W }, scalar, yNew);
    } finally {
      setWebAssemblyKernels(true);
    }
  })();
  const pair = timeSideBySide([() => coefficients.forEach((c, e) => js(e, e, c, 0)), () => coefficients.forEach((c, e) => wasm(e, e, c, 0))]);
  console.log(`  ${'  JavaScript vs WebAssembly'.padEnd(34)} js    ${((1000 * pair[0]) / envs).toFixed(2).padStart(7)} µs/env   wasm ${((1000 * pair[1]) / envs).toFixed(2).padStart(7)} µs/env   ×${(pair[0] / pair[1]).toFixed(2)}   ${agreement(yNew, yWasm)}`);
}

export async function run(): Promise<void> {
  console.log(`kernels bench: ${cpus().length} cores, load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}, Node ${process.version}; ` +
    `one 384-atom water-like cell, r_c ${kernelSettings.cutoff} Å, nmax ${kernelSettings.nmax}, lmax ${kernelSettings.lmax}, λ=2 at lmaxTensor 4; ` +
    `one thread, CPU time, best of ${ROUNDS} alternating rounds; "now" runs the WebAssembly kernels (${descriptorKernels() ? 'available here' : 'NOT available here: the JavaScript path'})`);
  const frame = waterLikeFrames(1, 99)[0];
  const prep = prepare(frame, kernelSettings, [0, 2], undefined, undefined);
  const coefficients = coefficientsOf(prep.P, prep);
  expansionPair(prep);
  powerSpectrumPair(prep.P, coefficients);
  couplingPair(prep.P, coefficients);
  readoutPair(prep, coefficients);
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
