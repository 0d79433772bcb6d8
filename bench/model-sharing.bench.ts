// One model per process: the streamed predict with the workers reading the main thread's model from shared memory
// (today) side by side with every worker reading and parsing the model file itself (the path before, kept as
// streamPredict's shareModel: false), each in a fresh process so that its peak RSS is its own, alternating.
// Conditions of issue 16: a model trained here on 10 water-like cells of 384 atoms (cutoff 4.5 Å, 8 radial
// functions, angular order 6, two species), PW_BENCH_SHARING_FRAMES (40) frames, 2 worker threads.
// Prints wall time and peak RSS (main thread and workers) of each, and checks the two outputs are the same bytes.
// Figures only, never asserted.
import { execFileSync } from 'node:child_process';
import { createWriteStream, mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { trainModel } from '../src-main/core/learning/model.ts';
import { formatExtxyzFrame } from '../src-main/io/extxyz.ts';
import { saveModel } from '../src-main/io/model-file.ts';
import { streamPredict } from '../src-main/app/predict/stream-predict.ts';
import { waterLikeFrames } from './water-like.ts';

const FRAMES = Number(process.env.PW_BENCH_SHARING_FRAMES ?? 40);
const ROUNDS = 2;

/** In the child: one streamed run, then its wall seconds and peak RSS (KiB) as JSON on stdout. */
async function child(mode: string, modelPath: string, input: string, output: string): Promise<void> {
  const t0 = performance.now();
  await streamPredict({ modelPath, input, output, threads: 2, mode: 'restart', shareModel: mode === 'shared' });
  process.stdout.write(JSON.stringify({ seconds: (performance.now() - t0) / 1000, maxRssKiB: process.resourceUsage().maxRSS }) + '\n');
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'pw-sharing-bench-'));
  try {
    const model = await trainModel(waterLikeFrames(10, 7), { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm', settings: { radialFunctions: 8, angularOrder: 6 } });
    const modelPath = join(dir, 'model.json');
    await saveModel(modelPath, model);
    const input = join(dir, 'in.extxyz');
    const out = createWriteStream(input);
    const pool = waterLikeFrames(10, 123);
    for (let k = 0; k < FRAMES; k++) out.write(formatExtxyzFrame({ ...pool[k % pool.length], info: { step: k }, arrays: {} }));
    await new Promise<void>((res, rej) => out.end((e?: Error | null) => (e ? rej(e) : res())));
    console.log(`model sharing bench: ${FRAMES} frames × 384 atoms, 2 worker threads, model file ${(statSync(modelPath).size / 1e6).toFixed(1)} MB, ` +
      `load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}, Node ${process.version}`);
    const me = fileURLToPath(import.meta.url);
    const results: Record<string, { seconds: number; maxRssKiB: number }[]> = { shared: [], 'each worker reads': [] };
    for (let r = 0; r < ROUNDS; r++) {
      for (const mode of Object.keys(results)) {
        const text = execFileSync(process.execPath, ['--import', 'tsx', me, 'child', mode === 'shared' ? 'shared' : 'file', modelPath, input, join(dir, `${mode === 'shared' ? 'a' : 'b'}.csv`)], { encoding: 'utf8' });
        results[mode].push(JSON.parse(text.trim().split('\n').pop() as string));
      }
    }
    const best = (k: string) => ({ seconds: Math.min(...results[k].map((x) => x.seconds)), rss: Math.min(...results[k].map((x) => x.maxRssKiB)) / 1024 });
    const a = best('shared');
    const b = best('each worker reads');
    const same = readFileSync(join(dir, 'a.csv'), 'utf8') === readFileSync(join(dir, 'b.csv'), 'utf8');
    console.log(`   shared model:      ${a.seconds.toFixed(1)} s, peak RSS ${a.rss.toFixed(0)} MiB`);
    console.log(`   each worker reads: ${b.seconds.toFixed(1)} s, peak RSS ${b.rss.toFixed(0)} MiB`);
    console.log(`   ratio: ×${(b.seconds / a.seconds).toFixed(2)} faster, ×${(b.rss / a.rss).toFixed(2)} less memory; outputs ${same ? 'the same bytes' : 'DIFFER'} (best of ${ROUNDS})`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

const [, , role, mode, modelPath, input, output] = process.argv;
if (role === 'child') await child(mode, modelPath, input, output);
else if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
