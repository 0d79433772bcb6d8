// Trajectory benchmark: end-to-end streamed prediction (read → features → predict → CSV) of a 384-atom
// trajectory with 1 and 2 worker threads (frames/s and speed-up); the same run in small batches with a fresh
// worker per batch against workers kept between batches; the fixed cost of one batch (messages, fsync,
// checkpoint) from many tiny frames in 200 vs 2 batches; and the process RSS sampled while streaming
// many small synthetic frames that are generated on the fly (written through a stream, never held in memory),
// to show that memory stays flat. POLARWEAVE_BENCH_FRAMES sets the frame count of the memory run (100 000).
// Figures are printed, never asserted.
import { createWriteStream, mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import { availableParallelism, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { supercell } from '../src-main/core/geometry/cell.ts';
import type { Frame } from '../src-main/core/geometry/frame.ts';
import { predictFrame, trainModel } from '../src-main/core/learning/model.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { formatExtxyzFrame, parseExtxyz } from '../src-main/io/extxyz.ts';
import { saveModel } from '../src-main/io/model-file.ts';
import { streamPredict } from '../src-main/app/predict/stream-predict.ts';
import { predictionCsvOptions } from '../src-main/io/prediction/prediction-format.ts';
import { describeSettings } from '../src-main/core/settings-table.ts';

const mib = (b: number) => (b / 2 ** 20).toFixed(1);

function water(): Frame[] {
  return parseExtxyz(readFileSync(new URL('../test/fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water');
}

async function writeStreamed(path: string, count: number, make: (k: number) => Frame): Promise<void> {
  const out = createWriteStream(path);
  for (let k = 0; k < count; k++) {
    if (!out.write(formatExtxyzFrame(make(k)))) await new Promise<void>((r) => out.once('drain', () => r()));
  }
  await new Promise<void>((res, rej) => out.end((e?: Error | null) => (e ? rej(e) : res())));
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'pw-traj-bench-'));
  try {
    const base = water();
    const rng = makeRng(3);
    // ---- 384-atom trajectory, end to end ----
    const model = await trainModel(base, { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm' });
    const modelPath = join(dir, 'model.json');
    await saveModel(modelPath, model);
    const big = supercell(base[0], [2, 2, 2]);
    const frames = Number(process.env.POLARWEAVE_BENCH_BIG_FRAMES ?? 16);
    const input = join(dir, 'big.extxyz');
    await writeStreamed(input, frames, () => ({ ...big, positions: Float64Array.from(big.positions, (x) => x + 0.05 * rng.normal()), info: {}, arrays: {} }));
    console.log(`384-atom trajectory: ${frames} frames (water, 2×2×2 supercell of a 48-atom DFT frame, jittered 0.05 Å), ` +
      `model: default settings (${describeSettings(model.settings)}), ${availableParallelism()} cores, load average ignored`);
    const t0 = performance.now();
    predictFrame(model, big);
    console.log(`  in-process predictFrame, one 384-atom frame: ${(performance.now() - t0).toFixed(0)} ms`);
    const rates: number[] = [];
    for (const threads of [1, 2]) {
      const out = join(dir, `big-${threads}.csv`);
      const cpu0 = process.cpuUsage();
      const r = await streamPredict({ modelPath, input, output: out, csvOptions: predictionCsvOptions(model, modelPath), threads, mode: 'restart', batchFrames: Math.ceil(frames / threads) });
      rates.push(r.frames / r.seconds);
      console.log(`  streamed, ${threads} worker thread${threads > 1 ? 's' : ''}: ${r.frames} frames in ${r.seconds.toFixed(1)} s = ${(r.frames / r.seconds).toFixed(2)} frames/s (one batch per thread, worker start-up included); CPU time / wall time ${((process.cpuUsage(cpu0).user + process.cpuUsage(cpu0).system) / 1e6 / r.seconds).toFixed(2)} (cores actually obtained)`);
    }
    console.log(`  speed-up 1 → 2 threads: ${(rates[1] / rates[0]).toFixed(2)}×`);

    // ---- worker reuse: the same 384-atom run in small batches ----
    const load = () => loadavg().map((x) => x.toFixed(2)).join(' ');
    console.log(`worker reuse: the ${frames} frames above, 2 threads, fixed batches (load average before: ${load()})`);
    for (const batchFrames of [1, 2, 4]) {
      for (const reuseWorkers of [false, true]) {
        const out = join(dir, `reuse-${batchFrames}-${reuseWorkers}.csv`);
        let first = 0;
        let batches = 0;
        const t1 = performance.now();
        const r = await streamPredict({ modelPath, input, output: out, csvOptions: predictionCsvOptions(model, modelPath), threads: 2, mode: 'restart', batchFrames, reuseWorkers,
          onProgress: () => ((first ||= performance.now() - t1), batches++) });
        console.log(`  ${batchFrames} frame${batchFrames > 1 ? 's' : ''}/batch (${batches} batches), ${reuseWorkers ? 'workers reused       ' : 'fresh worker per batch'}: ` +
          `${r.seconds.toFixed(1)} s wall = ${(r.frames / r.seconds).toFixed(2)} frames/s, first batch written after ${(first / 1000).toFixed(1)} s`);
      }
    }

    // ---- memory while streaming many small synthetic frames ----
    const count = Number(process.env.POLARWEAVE_BENCH_FRAMES ?? 100_000);
    const small = join(dir, 'small.extxyz');
    const tiny = await trainModel(base, { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm', settings: { radialFunctions: 2, angularOrder: 1, cutoffRadius: 3 } });
    const tinyPath = join(dir, 'tiny.json');
    await saveModel(tinyPath, tiny);
    const mol = { O: [0, 0, 0], H1: [0.96, 0, 0], H2: [-0.24, 0.93, 0] };
    await writeStreamed(small, count, (k) => {
      const j = () => 0.03 * rng.normal();
      const pos = [...mol.O, ...mol.H1, ...mol.H2].map((x) => x + 2 + j());
      return { species: ['O', 'H', 'H'], positions: Float64Array.from(pos), cell: Float64Array.from([6, 0, 0, 0, 6, 0, 0, 0, 6]), pbc: [true, true, true], info: { step: k }, arrays: {} };
    });
    console.log(`memory: ${count} synthetic 3-atom frames (${mib(statSync(small).size)} MiB extended XYZ, written by a generator), tiny model (nmax 2, lmax 1, cutoff 3 Å), 2 threads`);
    const samples: { frames: number; rss: number }[] = [];
    let done = 0;
    let peak = process.memoryUsage().rss;
    const timer = setInterval(() => {
      const rss = process.memoryUsage().rss;
      peak = Math.max(peak, rss);
      samples.push({ frames: done, rss });
    }, 250);
    const before = process.memoryUsage().rss;
    const r = await streamPredict({ modelPath: tinyPath, csvOptions: predictionCsvOptions(tiny, tinyPath), input: small, output: join(dir, 'small.csv'), threads: 2, mode: 'restart', batchSeconds: 5, onProgress: (p) => (done = p.done) });
    clearInterval(timer);
    console.log(`  ${r.frames} frames in ${r.seconds.toFixed(1)} s (${(r.frames / r.seconds).toFixed(0)} frames/s); RSS before ${mib(before)} MiB, peak ${mib(peak)} MiB`);
    const step = Math.max(1, Math.floor(samples.length / 12));
    console.log(`  RSS samples (frames done → MiB): ${samples.filter((_, i) => i % step === 0).map((s) => `${s.frames}→${mib(s.rss)}`).join(', ')}`);
    console.log(`  output ${mib(statSync(join(dir, 'small.csv')).size)} MiB of CSV`);

    // ---- fixed cost of one batch, with workers reused: what bounds how short batches can be ----
    const first = Math.min(count, 4000);
    console.log(`per-batch cost: the first ${first} of those frames, tiny model, 2 threads, workers reused, fixed batches, each size twice (load average before: ${load()})`);
    const walls = new Map<number, number[]>();
    const cpus = new Map<number, number[]>();
    for (const batchFrames of [first / 2, first / 200, first / 2, first / 200]) {
      const cpu0 = process.cpuUsage();
      const r = await streamPredict({ modelPath: tinyPath, csvOptions: predictionCsvOptions(tiny, tinyPath), input: small, output: join(dir, 'cost.csv'), range: { stop: first }, threads: 2, mode: 'restart', batchFrames });
      const cpu = process.cpuUsage(cpu0);
      walls.set(batchFrames, [...(walls.get(batchFrames) ?? []), r.seconds]);
      cpus.set(batchFrames, [...(cpus.get(batchFrames) ?? []), (cpu.user + cpu.system) / 1e6]);
      console.log(`  ${first / batchFrames} batches of ${batchFrames} frames: ${r.seconds.toFixed(2)} s wall, CPU ${((cpu.user + cpu.system) / 1e6).toFixed(2)} s (all threads)`);
    }
    const mean = (xs: number[]) => xs.reduce((x, y) => x + y, 0) / xs.length;
    const perBatch = (m: Map<number, number[]>) => (1000 * (mean(m.get(first / 200) ?? []) - mean(m.get(first / 2) ?? []))) / 198;
    console.log(`  per extra batch (difference of the means / 198): ${perBatch(walls).toFixed(1)} ms wall, ${perBatch(cpus).toFixed(1)} ms CPU ` +
      `(against a default batch of 5 s; under load the wall figure is mostly noise, the CPU figure less so)`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) await run();
