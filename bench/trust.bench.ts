// Cost of the error bars and the out-of-domain check at prediction (issue target: at most 25 % of the prediction
// time at the default settings). A tensor model of 30 water-like frames of 384 atoms (bench/water-like.ts), default
// settings (nmax 6, lmax 4, ζ = 1) and, for reference, nmax 8, lmax 6; held-out frames predicted in process on one
// thread with the whole per-frame work (modelPredictor), then with copies of the same model stripped of
//   - everything the error bars and the check need (λ=0 posterior, calibration, applicability representatives,
//     domain ranges): the bare prediction;
//   - only the applicability representatives and domain ranges: prediction + error bars.
// Overhead = time(full) / time(bare) − 1. Best of 3 passes each; figures only, never asserted.
import { cpus, loadavg } from 'node:os';
import { pathToFileURL } from 'node:url';
import type { Frame } from '../src-main/core/geometry/frame.ts';
import { modelPredictor, trainModel, type Model } from '../src-main/core/learning/model.ts';
import type { ModelSettings } from '../src-main/core/learning/model-types.ts';
import { framePredictionFrom } from '../src-main/core/learning/model.ts';
import { waterLikeFrames } from './water-like.ts';

function seconds(frames: Frame[], work: (f: Frame, i: number) => unknown, rounds = 3): number {
  let best = Infinity;
  for (let r = 0; r < rounds; r++) {
    const t0 = performance.now();
    frames.forEach((f, i) => work(f, i));
    best = Math.min(best, (performance.now() - t0) / 1000);
  }
  return best;
}

function withoutChecks(model: Model): Model {
  return { ...model, domain: undefined, applicability: { ...model.applicability, species: new Int32Array(0), p: new Float64Array(0) } };
}

function bare(model: Model): Model {
  return { ...withoutChecks(model), calibration: undefined, leverage: undefined, parts: model.parts.map((p) => ({ ...p, posterior: undefined })) };
}

async function one(label: string, settings: Partial<ModelSettings>): Promise<void> {
  const model = await trainModel(waterLikeFrames(30, 7), { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm', settings });
  const test = waterLikeFrames(8, 99);
  const envs = test.reduce((s, f) => s + f.species.length, 0);
  const time = (m: Model) => {
    const predict = modelPredictor(m);
    predict(test[0], 0); // warm-up
    return seconds(test, (f, i) => framePredictionFrom(m, f, predict(f, i), i));
  };
  // interleave to share the machine's load fairly
  const tBare = time(bare(model));
  const tBars = time(withoutChecks(model));
  const tFull = time(model);
  const pct = (t: number) => `${(100 * (t / tBare - 1)).toFixed(1)} %`;
  console.log(`${label}: ${test.length} frames × ${test[0].species.length} atoms, best of 3`);
  console.log(`   bare prediction             ${tBare.toFixed(3)} s (${(envs / tBare).toFixed(0)} env/s)`);
  console.log(`   + error bars                ${tBars.toFixed(3)} s  (+${pct(tBars)})`);
  console.log(`   + error bars + domain check ${tFull.toFixed(3)} s  (+${pct(tFull)} of the bare prediction time)`);
}

export async function run(): Promise<void> {
  console.log(`trust bench: ${cpus().length} cores, load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}, Node ${process.version}`);
  await one('default settings (nmax 6, lmax 4, ζ 1)', {});
  await one('nmax 8, lmax 6, ζ 1', { radialFunctions: 8, angularOrder: 6 });
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
