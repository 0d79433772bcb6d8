// The whole job on the bundled invented demo data, in one call: cross-validate and draw a learning curve on the
// liquid (Clausius–Mossotti route: the reference ε is turned into α_CM, learnt as a sum of atomic contributions
// and turned back), train on all liquid frames, predict the crystal with its applicability flags, and write the
// CSV of dielectric tensors, the model, the validation figures and a short summary. Used by `polarweave demo`.
import { mkdir } from 'node:fs/promises';
import { existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { CancelledError, InputError } from '../core/errors.ts';
import type { Mat3 } from '../core/geometry/frame.ts';
import type { ErrorFigures, FramePrediction, ModelSettings, TrainRequest, ValidationReport } from '../core/learning/model-types.ts';
import { trainModel, type Model } from '../core/learning/model.ts';
import { validate, errorFigures, tensorFeaturiser } from '../core/learning/validation.ts';
import { mat3Mean, toIrreducible, tensorFromValues } from '../core/dielectric/tensor.ts';
import { readAllStructures } from '../io/read-structures.ts';
import { saveModel } from '../io/model-file.ts';
import { predictionCsvOptions, writeTensorCsv, type TensorRow } from '../io/prediction/prediction-format.ts';
import { loadedModel, predictFrames } from '../app/predict/prediction.ts';
import { predictedRow, type PredictedFrame } from '../app/predict/predict-frame.ts';
import { writeFileAtomic } from '../io/atomic.ts';
import { demoSummary } from './summary.ts';
import { clusterToBulkText, demoClusterToBulk, type ClusterToBulk } from './clusters.ts';

/** Where the generator (scripts/generate-demo.ts) puts the bundled data. */
export const BUNDLED_DEMO_DIR = fileURLToPath(new URL('../../resources/demo', import.meta.url));
export const DEMO_LIQUID = 'liquid.extxyz.gz';
export const DEMO_CRYSTAL = 'crystal.extxyz.gz';

export interface DemoOptions {
  dataDir?: string;
  outDir: string;
  /** A reduced run for tests: every 10th liquid frame and every 4th crystal frame. */
  quick?: boolean;
  signal?: AbortSignal;
  log?: (line: string) => void;
}

export interface DemoResult {
  files: { csv: string; model: string; summary: string; validation: string; clusters: string };
  liquidFrames: number;
  crystalFrames: number;
  validation: ValidationReport;
  crystalErrors: ErrorFigures;
  crystalOutsideFrames: number;
  crystalMeanEps: { predicted: Mat3; reference: Mat3 };
  /** A model trained on clusters cut from the liquid, beside the liquid-trained one (clusters.ts). */
  clusterToBulk: ClusterToBulk;
  seconds: number;
}

/** A light feature set keeps the whole demo within two minutes on two cores; the regulariser is still chosen by
 * cross-validation inside every training. */
export const DEMO_SETTINGS: Partial<ModelSettings> = { radialFunctions: 4, angularOrder: 3 };
/** Use every LIQUID_STRIDE-th liquid frame (see runDemo). */
export const LIQUID_STRIDE = 2;
const REQUEST: TrainRequest = { tensorKey: 'eps_ref', kind: 'eps', route: 'cm', settings: DEMO_SETTINGS };

export async function runDemo(options: DemoOptions): Promise<DemoResult> {
  const started = Date.now();
  const log = options.log ?? (() => {});
  const dataDir = resolve(options.dataDir ?? BUNDLED_DEMO_DIR);
  const outDir = resolve(options.outDir);
  const liquidPath = join(dataDir, DEMO_LIQUID);
  const crystalPath = join(dataDir, DEMO_CRYSTAL);
  for (const p of [liquidPath, crystalPath]) {
    if (!existsSync(p)) throw new InputError('demo data file not found', { file: p }, 'regenerate it with `npm run demo:generate`, or point --data at a folder holding it');
  }
  const check = (): void => { if (options.signal?.aborted) throw new CancelledError(); };
  let liquid = await readAllStructures(liquidPath, { signal: options.signal });
  let crystal = await readAllStructures(crystalPath, { signal: options.signal });
  const allLiquid = liquid.length;
  // Successive Monte Carlo frames are correlated, and the learning curve flattens well below 100 frames: every
  // second liquid frame keeps the whole job within two minutes on two cores at no visible loss.
  const stride = options.quick ? 10 : LIQUID_STRIDE;
  liquid = liquid.filter((_, i) => i % stride === 0);
  if (options.quick) crystal = crystal.filter((_, i) => i % 4 === 0);
  log(`demo: using ${liquid.length} of ${allLiquid} liquid frames (every ${stride === 2 ? 'second' : `${stride}th`}) and ${crystal.length} crystal frames from ${dataDir}`);
  check();

  const folds = 3;
  const minTrain = Math.floor((liquid.length * (folds - 1)) / folds);
  // Learning curve at 1/8, 1/4 and 1/2 of a training fold; the full fold is the main cross-validation.
  const curve = [0.125, 0.25, 0.5].map((f) => Math.max(4, Math.round(f * minTrain))).filter((v, i, a) => a.indexOf(v) === i);
  log(`demo: ${folds}-fold cross-validation on the liquid, learning curve at ${curve.join(', ')} training frames`);
  const features = tensorFeaturiser(liquid, REQUEST); // computed once, for the validation and the final training
  const report = await validate(liquid, REQUEST, { folds, learningCurve: curve, featurise: features }, {
    signal: options.signal,
    onProgress: (p) => log(`demo: validate, ${p.stage} (${p.done}/${p.total})`),
  });
  check();

  log(`demo: training on the ${liquid.length} liquid frames`);
  const model: Model = await trainModel(liquid, REQUEST, { signal: options.signal }, features);
  check();

  await mkdir(outDir, { recursive: true });
  const files = {
    csv: join(outDir, 'crystal-eps.csv'),
    model: join(outDir, 'liquid-model.json'),
    summary: join(outDir, 'summary.md'),
    validation: join(outDir, 'liquid-validation.json'),
    clusters: join(outDir, 'clusters.extxyz'),
  };
  log(`demo: predicting ${crystal.length} crystal frames`);
  // the predict use case with the demo's sink: typed predictions in memory, then predict's table
  const predictions: FramePrediction[] = [];
  const ones: PredictedFrame[] = [];
  await predictFrames(loadedModel(model, files.model), crystal, {
    frame(_f, one) {
      ones.push(one);
      predictions.push(one.tensor as FramePrediction); // the crystal is periodic
    },
  }, { signal: options.signal });
  const refEps = crystal.map((f, i) => tensorFromValues(f.info.eps_ref as number[], { file: crystalPath, frame: f.source?.index ?? i }));
  const crystalErrors = errorFigures(refEps.map((t) => toIrreducible(t)), predictions.map((p) => toIrreducible(p.eps)));
  const outsideFrames = predictions.filter((p) => p.applicability.outside).length;

  await saveModel(files.model, model);
  // the prediction table of `predict`, with the reference ε of the invented data beside it; tag = state point
  const rows: TensorRow[] = crystal.map((f, i) => predictedRow(model, f, ones[i], { reference: refEps[i], tagKey: 'state_point' }));
  await writeTensorCsv(files.csv, rows, predictionCsvOptions(model, files.model, {
    title: 'Polarweave demo: predicted optical dielectric tensors of the invented crystal',
    source: `demo model ${files.model} trained on the invented liquid (route cm); eps_ref_* from the invented data (interacting point-dipole model)`,
    reference: true,
  }));
  await writeFileAtomic(files.validation, JSON.stringify(report, null, 1) + '\n');

  const predictedMean = mat3Mean(predictions.map((p) => p.eps));
  const referenceMean = mat3Mean(refEps);
  const seconds = (Date.now() - started) / 1000;
  const bulk = await demoClusterToBulk({ dataDir, liquid, crystal, model, quick: !!options.quick, clustersFile: files.clusters, signal: options.signal, log });
  const summary = demoSummary({ liquid, crystal, report, crystalErrors, outsideFrames, predictions, predictedMean, referenceMean, model, seconds, quick: !!options.quick, files }) + '\n' + clusterToBulkText(bulk);
  await writeFileAtomic(files.summary, summary);
  return {
    files, liquidFrames: liquid.length, crystalFrames: crystal.length, validation: report, crystalErrors,
    crystalOutsideFrames: outsideFrames, crystalMeanEps: { predicted: predictedMean, reference: referenceMean }, clusterToBulk: bulk, seconds,
  };
}
