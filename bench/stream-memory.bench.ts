// Memory while streaming: predicts 10⁵ small frames (two water-like molecules in a 6 Å periodic box, 6 atoms) in one
// streamed run (extended XYZ → CSV, worker threads) and prints the process RSS (main thread and workers) once 10⁴
// frames are written and at the end, after a garbage collection when --expose-gc is given. A flat run keeps the
// ratio near 1 (target: within 5 %). Figures only, never asserted. Env: PW_BENCH_MEMORY_FRAMES (100000),
// PW_BENCH_MEMORY_THREADS (1).
import { createWriteStream, mkdtempSync, rmSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { makeFrame, type Frame } from '../src-main/core/geometry/frame.ts';
import { trainModel } from '../src-main/core/learning/model.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { formatExtxyzFrame } from '../src-main/io/extxyz.ts';
import { saveModel } from '../src-main/io/model-file.ts';
import { streamPredict } from '../src-main/app/predict/stream-predict.ts';

const FRAMES = Number(process.env.PW_BENCH_MEMORY_FRAMES ?? 100000);
const THREADS = Number(process.env.PW_BENCH_MEMORY_THREADS ?? 1);

/** Two rigid water-like molecules (O–H 0.957 Å, from memory), jittered, in a 6 Å cube; α_CM invented for timing. */
function smallFrames(count: number, seed: number): Frame[] {
  const rng = makeRng(seed);
  const out: Frame[] = [];
  for (let k = 0; k < count; k++) {
    const pos: number[] = [];
    for (const c of [[1.5, 1.5, 1.5], [4.5, 4.2, 3.9]]) {
      const j = () => 0.2 * (2 * rng.uniform() - 1);
      pos.push(c[0] + j(), c[1] + j(), c[2] + j(), c[0] + 0.757 + j(), c[1] + 0.586 + j(), c[2] + j(), c[0] - 0.757 + j(), c[1] + 0.586 + j(), c[2] + j());
    }
    const f = makeFrame(['O', 'H', 'H', 'O', 'H', 'H'], pos, [6, 0, 0, 0, 6, 0, 0, 0, 6]);
    f.info.alpha_cm = [2.94 + 0.1 * rng.uniform(), 0, 0, 0, 2.94, 0, 0, 0, 2.94 + 0.1 * rng.uniform()];
    out.push(f);
  }
  return out;
}

const mib = (b: number) => (b / 2 ** 20).toFixed(0);

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'pw-memory-bench-'));
  try {
    const model = await trainModel(smallFrames(40, 1), { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm', settings: { radialFunctions: 4, angularOrder: 2, regularisation: 1e-3 } });
    const modelPath = join(dir, 'model.json');
    await saveModel(modelPath, model);
    const pool = smallFrames(100, 2);
    const input = join(dir, 'many.extxyz');
    const out = createWriteStream(input);
    for (let k = 0; k < FRAMES; k++) {
      if (!out.write(formatExtxyzFrame({ ...pool[k % pool.length], info: { step: k }, arrays: {} }))) await new Promise<void>((r) => out.once('drain', () => r()));
    }
    await new Promise<void>((res, rej) => out.end((e?: Error | null) => (e ? rej(e) : res())));
    const gc = (globalThis as { gc?: () => void }).gc;
    console.log(`stream memory bench: ${FRAMES} frames × 6 atoms, ${THREADS} thread(s), load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}, Node ${process.version}${gc ? ', with gc' : ''}`);
    const marks: { frames: number; rss: number }[] = [];
    let next = FRAMES / 10;
    const r = await streamPredict({
      modelPath,
      input,
      output: join(dir, 'many.csv'),
      threads: THREADS,
      mode: 'restart',
      batchSeconds: 1,
      onProgress: (p) => {
        if (p.done < next && p.fraction !== 1) return;
        gc?.();
        marks.push({ frames: p.done, rss: process.memoryUsage().rss });
        next = p.done >= FRAMES / 10 ? Math.max(next * 2, p.done + 1) : next;
      },
    });
    const first = marks[0];
    const last = marks[marks.length - 1];
    console.log(`   ${r.frames} frames in ${r.seconds.toFixed(1)} s (${(r.frames / r.seconds).toFixed(0)} frames/s); RSS ${marks.map((m) => `${mib(m.rss)} MiB at ${m.frames}`).join(', ')}`);
    console.log(`   RSS at the end / RSS after ${first.frames} frames: ×${(last.rss / first.rss).toFixed(3)}`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
