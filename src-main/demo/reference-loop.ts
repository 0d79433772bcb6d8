// The reference loop on the invented demo liquid: which frames to "compute" when every reference costs the same.
// The liquid's frames are split into a pool (the run one would choose from) and held-out frames (to judge the
// models). The pool's labels stand in for DFT: they are the demo's interacting point-dipole model's (computed
// when the data were generated), and the loop reads a frame's label only once it has chosen the frame; the
// choosing itself sees frames without labels.
//   1. choose FIRST frames by diversity (app/select-frames.ts, the use case of `polarweave select`), train;
//   2. choose MORE frames by the model's calibrated error bar, skipping near duplicates of those known, train;
//   3. the same costs spent at random: FIRST random frames, and the FIRST diverse + MORE random ones, over
//      `seeds` seeds.
// The figure of merit is the held-out RMS error of the whole ε tensor (Frobenius norm of ε_pred − ε_ref per
// frame, root mean square over the held-out frames; core/learning/error-figures.ts).
import { join, resolve } from 'node:path';
import { CancelledError } from '../core/errors.ts';
import type { Frame } from '../core/geometry/frame.ts';
import type { TrainRequest } from '../core/learning/model-types.ts';
import { predictFrame, trainModel, type Model } from '../core/learning/model.ts';
import { errorFigures, meanSquaredTensorError } from '../core/learning/error-figures.ts';
import { tensorFromValues, toIrreducible } from '../core/dielectric/tensor.ts';
import { makeRng, shuffleInPlace } from '../core/numerics/random.ts';
import { mean, variance } from '../core/trajectory/statistics.ts';
import { readAllStructures } from '../io/read-structures.ts';
import { memorySource, selectFrames } from '../app/select-frames.ts';
import { loadedModel } from '../app/predict/prediction.ts';
import { BUNDLED_DEMO_DIR, DEMO_LIQUID, DEMO_SETTINGS } from './run-demo.ts';

export interface ReferenceLoopOptions {
  dataDir?: string;
  /** Frames chosen first (by diversity) and added after (by error bar). Defaults 20 and 10. */
  first?: number;
  more?: number;
  /** Seeds of the random baseline (default 10). */
  seeds?: number;
  /** Every held-out-th liquid frame is held out (default 4: a quarter). */
  heldOutEvery?: number;
  signal?: AbortSignal;
  log?: (line: string) => void;
}

export interface SpreadFigure {
  mean: number;
  /** Sample standard deviation over the seeds. */
  sd: number;
  values: number[];
}

export interface ReferenceLoopResult {
  pool: number;
  heldOut: number;
  first: number;
  more: number;
  seeds: number;
  /** Held-out RMS ε error of the model on FIRST frames chosen by diversity, and on FIRST random ones. */
  diversity: number;
  random: SpreadFigure;
  /** The same after adding MORE frames by error bar to the diverse ones, and after adding MORE random ones. */
  errorBar: number;
  randomMore: SpreadFigure;
  /** Pool indices chosen by diversity and by error bar. */
  chosen: { diversity: number[]; errorBar: number[] };
  seconds: number;
}

const REQUEST: TrainRequest = { tensorKey: 'eps_ref', kind: 'eps', route: 'cm', settings: DEMO_SETTINGS };

/** The frame as the chooser sees it: structure only, no reference tensors. */
function unlabelled(f: Frame): Frame {
  const info = Object.fromEntries(Object.entries(f.info).filter(([k]) => !/_ref/.test(k)));
  return { ...f, info };
}

/** Held-out RMS error of ε (Frobenius norm of the error tensor, RMS over frames). */
export function heldOutError(model: Model, frames: readonly Frame[]): number {
  const ref = frames.map((f, i) => toIrreducible(tensorFromValues(f.info.eps_ref as number[], { frame: i })));
  const pred = frames.map((f) => toIrreducible(predictFrame(model, f).eps));
  return Math.sqrt(meanSquaredTensorError(errorFigures(ref, pred)));
}

function spread(values: number[]): SpreadFigure {
  return { mean: mean(values), sd: Math.sqrt(variance(values)), values };
}

/** k distinct indices from `from`, by a seeded shuffle. */
function randomPick(from: number[], k: number, seed: number): number[] {
  return shuffleInPlace(makeRng(seed), [...from]).slice(0, k);
}

export async function runReferenceLoop(options: ReferenceLoopOptions = {}): Promise<ReferenceLoopResult> {
  const started = Date.now();
  const log = options.log ?? (() => {});
  const first = options.first ?? 20;
  const more = options.more ?? 10;
  const seeds = options.seeds ?? 10;
  const every = options.heldOutEvery ?? 4;
  const signal = options.signal;
  const check = (): void => {
    if (signal?.aborted) throw new CancelledError();
  };
  const liquid = await readAllStructures(join(resolve(options.dataDir ?? BUNDLED_DEMO_DIR), DEMO_LIQUID), { signal });
  const pool = liquid.filter((_, i) => i % every !== 0);
  const heldOut = liquid.filter((_, i) => i % every === 0);
  const blind = pool.map(unlabelled);
  const source = memorySource('the demo liquid pool', blind);
  const train = async (idx: number[]): Promise<Model> => {
    check();
    return trainModel(idx.map((i) => pool[i]), REQUEST, { signal });
  };
  log(`reference loop: pool of ${pool.length} liquid frames, ${heldOut.length} held out; choose ${first} by diversity, then ${more} by error bar`);

  const byDiversity = (await selectFrames(source, { count: first }, { signal })).chosen.map((c) => c.frame);
  const m1 = await train(byDiversity);
  const diversity = heldOutError(m1, heldOut);
  log(`reference loop: ${first} diverse frames → held-out RMS ε error ${diversity.toExponential(3)}`);
  const known = byDiversity.map((i) => blind[i]);
  const byError = (await selectFrames(source, { count: more, model: loadedModel(m1, 'the loop model'), by: 'error', known }, { signal })).chosen.map((c) => c.frame);
  const errorBar = heldOutError(await train([...byDiversity, ...byError]), heldOut);
  log(`reference loop: + ${more} by error bar → ${errorBar.toExponential(3)}`);

  const all = pool.map((_, i) => i);
  const rest = all.filter((i) => !byDiversity.includes(i));
  const random: number[] = [];
  const randomMore: number[] = [];
  for (let s = 1; s <= seeds; s++) {
    random.push(heldOutError(await train(randomPick(all, first, 1000 + s)), heldOut));
    randomMore.push(heldOutError(await train([...byDiversity, ...randomPick(rest, more, 2000 + s)]), heldOut));
    log(`reference loop: seed ${s}/${seeds}: ${first} random → ${random[s - 1].toExponential(3)}; ${first} diverse + ${more} random → ${randomMore[s - 1].toExponential(3)}`);
  }
  return {
    pool: pool.length,
    heldOut: heldOut.length,
    first,
    more,
    seeds,
    diversity,
    random: spread(random),
    errorBar,
    randomMore: spread(randomMore),
    chosen: { diversity: byDiversity, errorBar: byError },
    seconds: (Date.now() - started) / 1000,
  };
}

/** The loop's closing note (markdown), with both comparisons and their spread over the seeds. */
export function referenceLoopNote(r: ReferenceLoopResult): string {
  const e = (x: number) => x.toExponential(2);
  const sp = (s: SpreadFigure) => `${e(s.mean)} ± ${e(s.sd)} (mean ± standard deviation over ${s.values.length} seeds; range ${e(Math.min(...s.values))}–${e(Math.max(...s.values))})`;
  return [
    '# Polarweave demo: choosing the frames to compute',
    '',
    '**The demo data is invented**; its reference tensors come from the demo\'s interacting point-dipole model, standing',
    'in for DFT. Errors are the held-out RMS error of the whole ε tensor (Frobenius norm), a model estimate\'s error.',
    '',
    `Pool: ${r.pool} liquid frames; ${r.heldOut} other frames held out. Every model uses the same settings and training.`,
    '',
    `| reference frames | chosen by | held-out RMS ε error |`,
    '|---|---|---|',
    `| ${r.first} | diversity (farthest-point sampling) | ${e(r.diversity)} |`,
    `| ${r.first} | at random | ${sp(r.random)} |`,
    `| ${r.first} + ${r.more} | ${r.first} diverse + ${r.more} by largest error bar | ${e(r.errorBar)} |`,
    `| ${r.first} + ${r.more} | ${r.first} diverse + ${r.more} at random | ${sp(r.randomMore)} |`,
    '',
    `Run time ${r.seconds.toFixed(0)} s.`,
    '',
  ].join('\n');
}
