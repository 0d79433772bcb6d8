// Prediction speed at the conditions of the learning-engine target: 384-atom water-like cells (two species,
// 0.1 atoms/Å³), r_c 4.5 Å, nmax 8, lmax 6 (λ=2 at the default lmaxTensor 4), ζ = 1, a tensor model trained
// on synthetic frames (bench/water-like.ts). It prints
//   1. one thread, in process: environments/s of the whole per-frame work (neighbour list, density expansion,
//      λ=0 power spectrum, λ=2 read-out, model, variance, applicability search), split by stage, against the
//      feature route (computeFeatures with λ=2 + dot products) that prediction used before the read-out;
//   2. the same on 1×, 2×, 4× cells (384, 768, 1536 atoms), to show the cost is linear in the atoms;
//   3. streamed end to end (extended XYZ in, CSV out, worker threads) with 1 and 2 threads: the rate over the
//      whole run (worker start-up included) and the marginal rate (extra frames / extra seconds between a
//      short and a long run, i.e. with start-up removed), by wall time and by CPU time of the whole process
//      (every thread), with the process RSS before and at its peak; with PW_BENCH_BASELINE also the ref's
//      streamed prediction beside this tree's, each run in a fresh process (bench/stream-rate.ts), alternating,
//      with the ratios and whether the CSV bytes are identical.
//   4. with PW_BENCH_BASELINE=<git ref> (e.g. a release tag, or the commit before a speed change): the whole
//      in-process prediction of that ref's source beside this tree's, each in its own process on the same model
//      (bench/prediction-rate.ts), alternating, with the ratio and whether the outputs are identical.
// Figures only, never asserted. Env: PW_BENCH_TRAIN_FRAMES (30), PW_BENCH_STREAM_FRAMES (120), PW_BENCH_BASELINE.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { serialize } from 'node:v8';
import { availableParallelism, cpus, loadavg, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { supercell } from '../src-main/core/geometry/cell.ts';
import type { Frame } from '../src-main/core/geometry/frame.ts';
import { modelFeaturiser, modelPredictor, predictWithFeatures, trainModel, type Model } from '../src-main/core/learning/model.ts';
import { saveModel } from '../src-main/io/model-file.ts';
import { predictionCsvOptions } from '../src-main/io/prediction/prediction-format.ts';
import { streamPredict } from '../src-main/app/predict/stream-predict.ts';
import { waterLikeFrames, writeFrames } from './water-like.ts';
import { describeSettings } from '../src-main/core/settings-table.ts';
import { setWebAssemblyKernels } from '../src-main/core/wasm/load.ts';
import { extractBaseline } from './baseline.ts';

const TRAIN = Number(process.env.PW_BENCH_TRAIN_FRAMES ?? 30);
const STREAM = Number(process.env.PW_BENCH_STREAM_FRAMES ?? 120);

const cpuMs = () => {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
};

/** Best of `rounds` passes over the frames: environments per wall second and per CPU second. */
function rate(frames: Frame[], work: (f: Frame, i: number) => unknown, rounds = 3): { wall: number; cpu: number } {
  const envs = frames.reduce((s, f) => s + f.species.length, 0);
  let best = { wall: 0, cpu: 0 };
  for (let r = 0; r < rounds; r++) {
    const t0 = performance.now();
    const c0 = cpuMs();
    frames.forEach((f, i) => work(f, i));
    const wall = (envs / (performance.now() - t0)) * 1000;
    const cpu = (envs / (cpuMs() - c0)) * 1000;
    if (wall > best.wall) best = { wall, cpu };
  }
  return best;
}

function inProcess(model: Model): void {
  const test = waterLikeFrames(8, 99);
  const predict = modelPredictor(model);
  const featurise = modelFeaturiser(model);
  // warm-up: tables, JIT, the search's preparation, and the kernels' optimised tier (V8 compiles it in the
  // background; until then they run on the baseline tier, several times slower)
  for (let r = 0; r < 3; r++) test.forEach((f, i) => predict(f, i));
  const whole = rate(test, (f, i) => predict(f, i));
  const oldRoute = rate(test, (f, i) => predictWithFeatures(model, f, featurise(f, i), i));
  console.log('1. one thread, in process, 8 frames × 384 atoms (best of 3 passes):');
  console.log(`   whole prediction (read-out route):      ${whole.wall.toFixed(0).padStart(6)} env/s wall, ${whole.cpu.toFixed(0).padStart(6)} env per CPU-s`);
  console.log(`   feature route (λ=2 features + dot):     ${oldRoute.wall.toFixed(0).padStart(6)} env/s wall, ${oldRoute.cpu.toFixed(0).padStart(6)} env per CPU-s  (×${(whole.wall / oldRoute.wall).toFixed(2)} faster now)`);
  // stage split: features alone (λ=0 only, as the read-out computes them) and the model part alone
  const lambda0 = modelFeaturiser({ ...model, target: { ...model.target, shape: 'scalar' } });
  const feats = rate(test, (f, i) => lambda0(f, i));
  const fe = test.map((f, i) => featurise(f, i));
  const modelPart = rate(test, (f, i) => predictWithFeatures(model, f, fe[i], i));
  // the WebAssembly kernels on and off (their JavaScript paths), alternating pass by pass, and whether every
  // predicted number is the same
  const passes = { on: { wall: 0, cpu: 0 }, off: { wall: 0, cpu: 0 } };
  const numbers = (on: boolean) => {
    setWebAssemblyKernels(on);
    const out = test.map((f, i) => predict(f, i));
    return out.flatMap((p) => [...p.irreducible, ...p.localIrreducible, ...p.applicability.atomDistance, ...p.applicability.atomScore, p.applicability.variance, ...(p.uncertainty?.sd ?? [])]);
  };
  const js = numbers(false);
  const wasm = numbers(true);
  const same = js.length === wasm.length && js.every((v, k) => Object.is(v, wasm[k]));
  for (let r = 0; r < 3; r++) {
    for (const on of [false, true]) {
      setWebAssemblyKernels(on);
      const x = rate(test, (f, i) => predict(f, i), 1);
      const key = on ? 'on' : 'off';
      if (x.wall > passes[key].wall) passes[key] = x;
    }
  }
  setWebAssemblyKernels(true);
  console.log(`   WebAssembly kernels off / on (alternating, best of 3): ${passes.off.wall.toFixed(0)} / ${passes.on.wall.toFixed(0)} env/s wall, ` +
    `${passes.off.cpu.toFixed(0)} / ${passes.on.cpu.toFixed(0)} env per CPU-s, ×${(passes.on.cpu / passes.off.cpu).toFixed(2)} (CPU); outputs ${same ? 'identical (every number, bit for bit)' : 'DIFFER'}`);
  console.log(`   of which: λ=0 features (neighbours, expansion, power spectrum) ${feats.wall.toFixed(0)} env/s alone; ` +
    `model part of the feature route (dot products, variance, applicability) ${modelPart.wall.toFixed(0)} env/s alone`);
}

function linearCost(model: Model): void {
  const predict = modelPredictor(model);
  const base = waterLikeFrames(2, 55);
  console.log('2. cost against cell size (one thread, best of 3):');
  for (const [label, rep] of [['1× (384 atoms)', [1, 1, 1]], ['2× (768 atoms)', [2, 1, 1]], ['4× (1536 atoms)', [2, 2, 1]]] as const) {
    const frames = base.map((f) => supercell(f, [...rep]));
    frames.forEach((f, i) => predict(f, i)); // warm-up at this size
    const r = rate(frames, (f, i) => predict(f, i));
    console.log(`   ${label.padEnd(16)} ${r.wall.toFixed(0).padStart(6)} env/s wall, ${r.cpu.toFixed(0).padStart(6)} env per CPU-s`);
  }
}

async function streamed(model: Model, dir: string, baseline: { ref: string; root: string } | null): Promise<void> {
  const modelPath = join(dir, 'model.json');
  await saveModel(modelPath, model);
  const pool = waterLikeFrames(20, 123);
  const short = Math.max(8, Math.round(STREAM / 4));
  const inputs = { short: join(dir, 'short.extxyz'), long: join(dir, 'long.extxyz') };
  await writeFrames(inputs.short, pool, short);
  await writeFrames(inputs.long, pool, STREAM);
  const atoms = pool[0].species.length;
  console.log(`3. streamed end to end (extended XYZ → CSV, worker threads, ${availableParallelism()} cores): ${short} and ${STREAM} frames × ${atoms} atoms`);
  for (const threads of [1, 2]) {
    const seconds: Record<string, number> = {};
    const cpu: Record<string, number> = {};
    const before = process.memoryUsage().rss;
    let peak = before;
    const timer = setInterval(() => (peak = Math.max(peak, process.memoryUsage().rss)), 100);
    for (const [name, path] of Object.entries(inputs)) {
      const c0 = process.cpuUsage();
      const r = await streamPredict({ modelPath, input: path, output: join(dir, `${name}-${threads}.csv`), csvOptions: predictionCsvOptions(model, modelPath), threads, mode: 'restart' });
      const c = process.cpuUsage(c0);
      seconds[name] = r.seconds;
      cpu[name] = (c.user + c.system) / 1e6;
    }
    clearInterval(timer);
    const whole = (STREAM * atoms) / seconds.long;
    const marginal = ((STREAM - short) * atoms) / (seconds.long - seconds.short);
    const marginalCpu = ((STREAM - short) * atoms) / (cpu.long - cpu.short);
    console.log(`   ${threads} thread${threads > 1 ? 's' : ' '}: ${STREAM} frames in ${seconds.long.toFixed(1)} s = ${whole.toFixed(0)} env/s (start-up included), ${cpu.long.toFixed(1)} s CPU; ` +
      `marginal ${marginal.toFixed(0)} env/s, ${marginalCpu.toFixed(0)} env per CPU-s (${short} frames took ${seconds.short.toFixed(1)} s); process RSS (main thread and workers) ${(before / 2 ** 20).toFixed(0)} MiB before, peak ${(peak / 2 ** 20).toFixed(0)} MiB`);
  }
  if (baseline) streamedAgainstBaseline(modelPath, inputs, { short, long: STREAM }, atoms, baseline, dir);
}

/**
 * Section 3 against a baseline: the streamed prediction of this tree and of the ref's source, each run in a fresh
 * process (bench/stream-rate.ts; workers loaded from each tree's sources through tsx alike), alternating tree by
 * tree in 2 rounds, on the same model and inputs: mean seconds and CPU seconds, the marginal rates and the ratios.
 */
function streamedAgainstBaseline(modelPath: string, inputs: { short: string; long: string }, frames: { short: number; long: number }, atoms: number, baseline: { ref: string; root: string }, dir: string): void {
  const here = join(dirname(fileURLToPath(import.meta.url)), '..');
  type Run = { seconds: number; cpuSeconds: number; hash: string };
  const child = (root: string, input: string, threads: number): Run | { error: string } => {
    const r = spawnSync(process.execPath, [...process.execArgv, join(here, 'bench/stream-rate.ts'), root, modelPath, input, join(dir, 'stream-child.csv'), String(threads)], { encoding: 'utf8' });
    if (r.status !== 0) return { error: (r.stderr || '').trim().split('\n').slice(-1)[0] };
    return JSON.parse(r.stdout.trim().split('\n').slice(-1)[0]) as Run;
  };
  console.log(`   against ${baseline.ref}, each run a fresh process, alternating, mean of 2 rounds (load average ${loadavg().map((x) => x.toFixed(1)).join(' ')} before):`);
  for (const threads of [1, 2]) {
    const sum = { now: { short: [0, 0], long: [0, 0] }, then: { short: [0, 0], long: [0, 0] } };
    const hashes = { now: new Set<string>(), then: new Set<string>() };
    for (let round = 0; round < 2; round++) {
      for (const [who, root] of [['now', here], ['then', baseline.root]] as const) {
        for (const size of ['short', 'long'] as const) {
          const r = child(root, inputs[size], threads);
          if ('error' in r) {
            console.log(`   ${who === 'now' ? 'this tree' : baseline.ref}: a child failed: ${r.error}`);
            return;
          }
          sum[who][size][0] += r.seconds / 2;
          sum[who][size][1] += r.cpuSeconds / 2;
          if (size === 'long') hashes[who].add(r.hash);
        }
      }
    }
    const extra = (frames.long - frames.short) * atoms;
    const rates = (w: 'now' | 'then') => ({
      wall: extra / (sum[w].long[0] - sum[w].short[0]),
      cpu: extra / (sum[w].long[1] - sum[w].short[1]),
      seconds: sum[w].long[0],
      cpuSeconds: sum[w].long[1],
    });
    const now = rates('now');
    const then = rates('then');
    const same = hashes.now.size === 1 && hashes.then.size === 1 && [...hashes.now][0] === [...hashes.then][0];
    console.log(`   ${threads} thread${threads > 1 ? 's' : ' '}: ${frames.long} frames ${baseline.ref} ${then.seconds.toFixed(1)} s, ${then.cpuSeconds.toFixed(1)} s CPU; this tree ${now.seconds.toFixed(1)} s, ${now.cpuSeconds.toFixed(1)} s CPU ` +
      `(×${(then.seconds / now.seconds).toFixed(2)} wall, ×${(then.cpuSeconds / now.cpuSeconds).toFixed(2)} CPU); marginal ${then.wall.toFixed(0)} → ${now.wall.toFixed(0)} env/s, ` +
      `${then.cpu.toFixed(0)} → ${now.cpu.toFixed(0)} env per CPU-s; CSV bytes ${same ? 'identical' : 'DIFFER'}`);
  }
  console.log(`   (load average ${loadavg().map((x) => x.toFixed(1)).join(' ')} after)`);
}

/** Section 4: this tree against the source of git ref `ref` (extracted at `base`), each in its own process, on the same model. */
function againstBaseline(model: Model, ref: string, base: string, dir: string): void {
  const here = join(dirname(fileURLToPath(import.meta.url)), '..');
  const modelFile = join(dir, 'model.v8');
  writeFileSync(modelFile, serialize(model));
  const child = (root: string) => {
    const r = spawnSync(process.execPath, [...process.execArgv, join(here, 'bench/prediction-rate.ts'), root, modelFile], { encoding: 'utf8' });
    if (r.status !== 0) return { error: (r.stderr || '').trim().split('\n').slice(-1)[0] };
    return JSON.parse(r.stdout.trim().split('\n').slice(-1)[0]) as { rate: number; hash: string };
  };
  let now = { rate: 0, hash: '' };
  let then = { rate: 0, hash: '' };
  for (let round = 0; round < 3; round++) {
    const a = child(here);
    const b = child(base);
    if ('error' in a || 'error' in b) {
      console.log(`4. baseline ${ref}: a child failed: ${'error' in a ? a.error : ''} ${'error' in b ? b.error : ''}`);
      return;
    }
    if (a.rate > now.rate) now = a;
    if (b.rate > then.rate) then = b;
  }
  console.log(`4. whole prediction in process, 8 frames × 384 atoms, one thread, CPU time, best of 3 alternating processes (load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}):`);
  console.log(`   baseline ${ref}: ${then.rate.toFixed(0)} env per CPU-s; this tree: ${now.rate.toFixed(0)} env per CPU-s; ×${(now.rate / then.rate).toFixed(2)}; ` +
    `outputs ${now.hash === then.hash ? 'identical (same hash of every predicted number at full precision)' : 'DIFFER'}`);
}

export async function run(): Promise<void> {
  console.log(`prediction bench: ${cpus().length} cores (${cpus()[0]?.model ?? 'unknown'}), load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}, Node ${process.version}`);
  const frames = waterLikeFrames(TRAIN, 7);
  const t0 = performance.now();
  const model = await trainModel(frames, { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm', settings: { radialFunctions: 8, angularOrder: 6 } });
  const s = model.settings;
  console.log(`model: ${TRAIN} training frames × ${frames[0].species.length} atoms (trained in ${((performance.now() - t0) / 1000).toFixed(1)} s), ${describeSettings(s)}, ` +
    `λ=2 at ${model.tensorLimits.nmax} radial functions / angular order ${model.tensorLimits.lmax}, species ${model.species.join(',')}; ` +
    `features per environment λ=0 ${model.featureSizes.n0}, λ=2 ${model.parts.find((p) => p.order === 2)?.n} × 5`);
  inProcess(model);
  linearCost(model);
  const dir = mkdtempSync(join(tmpdir(), 'pw-predict-bench-'));
  const ref = process.env.PW_BENCH_BASELINE;
  const base = ref ? extractBaseline(ref) : null;
  try {
    await streamed(model, dir, ref && base ? { ref, root: base.root } : null);
    if (ref && base) againstBaseline(model, ref, base.root, dir);
  } finally {
    base?.remove();
    rmSync(dir, { recursive: true, force: true });
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
