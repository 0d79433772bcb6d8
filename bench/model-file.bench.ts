// The model file with the variance in its smaller form (format version 3: the λ=0 design and a frames × frames
// factor) side by side with the form before (version 2: the columns × columns primal factor of ΦᵀΦ + λI, rebuilt
// here from the same design exactly as training built it then — the kept old path). Conditions of issue 16: a model
// trained here on PW_BENCH_MODEL_FRAMES (10) water-like cells of 384 atoms (cutoff 4.5 Å, 8 radial functions,
// angular order 6, two species). Prints file size, parse time, variance time per frame and the largest relative
// difference of the error bars over 10 test frames. Figures only, never asserted.
import { loadavg } from 'node:os';
import { pathToFileURL } from 'node:url';
import { modelFeaturiser, predictWithFeatures, trainModel, type Model } from '../src-main/core/learning/model.ts';
import { choleskyWithJitter, gramOfColumns } from '../src-main/core/numerics/cholesky.ts';
import { parseModel, serialiseModel } from '../src-main/io/model-file.ts';
import { waterLikeFrames } from './water-like.ts';

const FRAMES = Number(process.env.PW_BENCH_MODEL_FRAMES ?? 10);

/** The same model with its λ=0 variance as the primal factor of ΦᵀΦ + λI (what version 2 stored). */
function withPrimalFactor(model: Model): Model {
  const part = model.parts[0];
  const post = part.posterior;
  if (!post || post.form !== 'design') throw new Error('expected the design form');
  const f = post.size;
  const rows = post.rows as number;
  const g = gramOfColumns(post.design as Float64Array, rows, f);
  const lambda = part.regularisation.lambda;
  for (let i = 0; i < f; i++) g[i * f + i] += lambda;
  const primal = { form: 'primal' as const, size: f, factor: choleskyWithJitter(g, f).factor, noise: post.noise, lambda };
  return { ...model, parts: [{ ...part, posterior: primal }, ...model.parts.slice(1)] };
}

function best(f: () => void, runs = 3): number {
  let t = Infinity;
  for (let r = 0; r < runs; r++) {
    const t0 = performance.now();
    f();
    t = Math.min(t, performance.now() - t0);
  }
  return t;
}

export async function run(): Promise<void> {
  const model = await trainModel(waterLikeFrames(FRAMES, 7), { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm', settings: { radialFunctions: 8, angularOrder: 6 } });
  const old = withPrimalFactor(model);
  const texts = { 'design form (version 3)': serialiseModel(model), 'primal factor (version 2 form)': serialiseModel(old) };
  console.log(`model file bench: ${FRAMES} frames × 384 atoms, ${model.parts[0].posterior?.size} λ=0 design columns, load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}, Node ${process.version}`);
  const test = waterLikeFrames(10, 99);
  const featurise = modelFeaturiser(model);
  const feats = test.map((f, i) => featurise(f, i));
  const figures: Record<string, { mb: number; parseMs: number; predictMs: number; sd: number[] }> = {};
  for (const [name, text] of Object.entries(texts)) {
    let back: Model = model;
    const parseMs = best(() => (back = parseModel(text, 'bench.json')));
    const sd: number[] = [];
    const predictMs = best(() => {
      sd.length = 0;
      for (let i = 0; i < test.length; i++) sd.push(predictWithFeatures(back, test[i], feats[i], i).uncertainty?.sd[0] ?? NaN);
    }) / test.length;
    figures[name] = { mb: text.length / 1e6, parseMs, predictMs, sd };
  }
  const [a, b] = Object.values(figures);
  for (const [name, x] of Object.entries(figures)) console.log(`   ${name.padEnd(31)} ${x.mb.toFixed(2)} MB, parse ${x.parseMs.toFixed(0)} ms, model part of a prediction (variance included) ${x.predictMs.toFixed(1)} ms/frame`);
  const diff = Math.max(...a.sd.map((v, i) => Math.abs(v / b.sd[i] - 1)));
  console.log(`   ratio: ×${(b.mb / a.mb).toFixed(1)} smaller, parse ×${(b.parseMs / a.parseMs).toFixed(1)} faster, prediction ×${(b.predictMs / a.predictMs).toFixed(1)}; error bars differ by at most ${diff.toExponential(1)} relative (the design form is the exact one to round-off: test/core/learning/regression.test.ts)`);
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
