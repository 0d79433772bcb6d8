// Child process of the side-by-side runs of bench/features.bench.ts and bench/training.bench.ts against a baseline
// (PW_BENCH_BASELINE=<git ref>): loads the code of one source tree (argv[2]: this tree, or a baseline extracted from
// git) and prints one JSON line with its figures and a hash of every number it computed, so that the two trees'
// outputs can be compared bit for bit.
//   feature-rate.ts ROOT features LMAX_TENSOR REPEATS   environments per CPU-second of computeFeatures, λ = 0 + 2, as training calls it
//   feature-rate.ts ROOT training FRAMES [THREADS]       trainModel at default settings on water-like frames (THREADS > 1:
//                                                        its first pass on worker threads, app/training-threads.ts, where the tree has it)
import { createHash } from 'node:crypto';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { serialize } from 'node:v8';

const [root, mode] = [process.argv[2], process.argv[3]];
const load = async <T>(path: string) => (await import(pathToFileURL(join(root, path)).href)) as T;

function cpuMs(): number {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
}

type Features = { count: number; scalar: Float64Array; tensor: Partial<Record<1 | 2, { data: Float64Array }>> };

async function features(lmaxTensor: number, repeats: number): Promise<void> {
  // called as training calls it: the frame before's arrays handed back to be written over (a baseline from before
  // that argument ignores it and allocates, as training then did)
  const { computeFeatures } = await load<{ computeFeatures: (frame: unknown, s: unknown, l: number[], n?: unknown, t?: unknown, reuse?: Features) => Features }>('src-main/core/descriptors/features.ts');
  const { supercell } = await load<{ supercell: (f: unknown, r: number[]) => unknown }>('src-main/core/geometry/cell.ts');
  // the cell maker of this tree (the same seeded frames in both)
  const { waterCell, benchSettings } = await import('./features.bench.ts');
  const base = waterCell(1);
  const frame = repeats === 1 ? base : supercell(base, repeats === 4 ? [2, 2, 1] : [2, 1, 1]);
  const settings = { ...benchSettings, lmaxTensor };
  const first = computeFeatures(frame, settings, [0, 2]);
  const hash = createHash('sha256');
  hash.update(new Uint8Array(first.scalar.buffer, first.scalar.byteOffset, first.scalar.byteLength));
  const t = first.tensor[2]!.data;
  hash.update(new Uint8Array(t.buffer, t.byteOffset, t.byteLength));
  let best = Infinity;
  let spare = computeFeatures(frame, settings, [0, 2]);
  for (let batch = 0; batch < 5; batch++) {
    const c0 = cpuMs();
    const t0 = performance.now();
    let calls = 0;
    do {
      spare = computeFeatures(frame, settings, [0, 2], undefined, undefined, spare);
      calls++;
    } while (performance.now() - t0 < 300);
    best = Math.min(best, (cpuMs() - c0) / calls);
  }
  console.log(JSON.stringify({ rate: (first.count / best) * 1000, hash: hash.digest('hex').slice(0, 16) }));
}

async function training(frames: number, threads: number): Promise<void> {
  const { trainModel } = await load<{ trainModel: (f: unknown[], r: unknown, hooks?: unknown) => Promise<Record<string, unknown>> }>('src-main/core/learning/model.ts');
  const { waterLikeFrames } = await import('./water-like.ts');
  const data = waterLikeFrames(frames, 7);
  type Pool = { close: () => Promise<void> };
  const pool = threads > 1 && existsSync(join(root, 'src-main/app/training-threads.ts'))
    ? (await load<{ trainingThreads: (n: number) => Pool }>('src-main/app/training-threads.ts')).trainingThreads(threads)
    : undefined;
  const c0 = cpuMs();
  const t0 = performance.now();
  const model = await trainModel(data, { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm' }, { threads: pool });
  await pool?.close();
  const wall = (performance.now() - t0) / 1000;
  // the process's CPU time: every thread's, the workers' included
  const cpu = (cpuMs() - c0) / 1000;
  // everything the model computed (not its creation date)
  const { createdAt: _, ...numbers } = model;
  const hash = createHash('sha256').update(serialize(numbers)).digest('hex').slice(0, 16);
  console.log(JSON.stringify({ wall, cpu, peakMiB: process.resourceUsage().maxRSS / 1024, hash }));
}

if (mode === 'features') await features(Number(process.argv[4]), Number(process.argv[5]));
else if (mode === 'training') await training(Number(process.argv[4]), Number(process.argv[5] ?? 1));
else throw new Error(`feature-rate.ts: unknown mode ${mode}`);
