// Extended XYZ throughput: writes a large file in /tmp (384-atom periodic frames with a 9-number tensor key,
// coordinates with 6 decimals as MD/DFT codes print them), then streams it back, reporting MB/s, frames/s and
// the peak resident memory sampled during the read (it must stay flat, independent of the file size), the
// index scan rate, random access with readFrameAt, the formatter rate and gzip reading. The file is removed.
// Size: POLARWEAVE_BENCH_MB (default 1024 MB). Run: `npx tsx bench/extxyz.bench.ts` or `npm run bench -- extxyz`.
import { mkdtempSync, rmSync, statSync, createWriteStream, createReadStream } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pipeline } from 'node:stream/promises';
import { createGzip } from 'node:zlib';
import { fileURLToPath } from 'node:url';
import { makeFrame, type Frame } from '../src-main/core/geometry/frame.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { formatExtxyzFrame, indexExtxyz, readExtxyz, readFrameAt } from '../src-main/io/extxyz.ts';
import { atomicWriteStream } from '../src-main/io/atomic.ts';

const ATOMS = 384;
const MB = 1e6;

function templateFrames(count: number): Frame[] {
  const rng = makeRng(20261202);
  const frames: Frame[] = [];
  const L = 15.66;
  for (let k = 0; k < count; k++) {
    const species: string[] = [];
    const pos = new Float64Array(3 * ATOMS);
    for (let i = 0; i < ATOMS; i++) {
      species.push(i % 3 === 0 ? 'O' : 'H');
      for (let d = 0; d < 3; d++) pos[3 * i + d] = Math.round(rng.uniform() * L * 1e6) / 1e6;
    }
    const f = makeFrame(species, pos, [L, 0, 0, 0, L, 0, 0, 0, L]);
    const e = Array.from({ length: 9 }, (_, j) => (j % 4 === 0 ? 1.55 : 0) + Math.round((rng.uniform() - 0.5) * 1e6) / 1e8);
    f.info = { tag: `frame-${k}`, energy_hartree: -2205.123456 + k * 1e-6, eps_inf: e };
    frames.push(f);
  }
  return frames;
}

/** Wall-clock and CPU seconds of this process since `start` (CPU time is the fairer figure on a shared machine). */
function clock(): () => { wall: number; cpu: number; text: (mb: number) => string } {
  const t0 = performance.now();
  const c0 = process.cpuUsage();
  return () => {
    const wall = (performance.now() - t0) / 1000;
    const c = process.cpuUsage(c0);
    const cpu = (c.user + c.system) / 1e6;
    return { wall, cpu, text: (mb: number) => `${wall.toFixed(1)} s wall = ${(mb / wall).toFixed(0)} MB/s (${cpu.toFixed(1)} s CPU = ${(mb / cpu).toFixed(0)} MB per CPU-s)` };
  };
}

function rssMB(): number {
  return process.memoryUsage().rss / MB;
}

export async function run(): Promise<void> {
  console.log(`conditions: node ${process.version}, one thread, ${os.cpus().length} cores shared with other work (load average ${os.loadavg()[0].toFixed(1)})`);
  const targetMB = Number(process.env.POLARWEAVE_BENCH_MB ?? 1024);
  const dir = mkdtempSync(path.join(os.tmpdir(), 'pw-bench-extxyz-'));
  const file = path.join(dir, 'big.extxyz');
  try {
    const templates = templateFrames(16);
    const texts = templates.map(formatExtxyzFrame);
    const frameBytes = texts.reduce((s, t) => s + Buffer.byteLength(t), 0) / texts.length;
    const nFrames = Math.max(2, Math.round((targetMB * MB) / frameBytes));

    // formatter rate (a sample; the big file repeats 16 formatted frames to save time)
    for (let k = 0; k < 200; k++) formatExtxyzFrame(templates[k % 16]); // warm-up (compilation)
    let c = clock();
    const sample = Math.min(nFrames, 3000);
    let chars = 0;
    for (let k = 0; k < sample; k++) chars += formatExtxyzFrame(templates[k % 16]).length;
    let r = c();
    console.log(`format   : ${sample} frames × ${ATOMS} atoms in ${r.text(chars / MB)}, ${(sample / r.cpu).toFixed(0)} frames per CPU-s`);

    c = clock();
    const out = atomicWriteStream(file);
    for (let k = 0; k < nFrames; k++) await out.write(texts[k % 16]);
    await out.commit();
    r = c();
    const bytes = statSync(file).size;
    const fileMB = bytes / MB;
    console.log(`write    : ${fileMB.toFixed(0)} MB, ${nFrames} frames (${ATOMS} atoms each) via atomicWriteStream in ${r.text(fileMB)}`);

    // streamed read with memory sampling
    if (global.gc) global.gc();
    const rss0 = rssMB();
    let peak = rss0;
    const sampler = setInterval(() => (peak = Math.max(peak, rssMB())), 50);
    c = clock();
    let frames = 0;
    let atoms = 0;
    let checksum = 0;
    for await (const f of readExtxyz(file)) {
      frames++;
      atoms += f.species.length;
      checksum += f.positions[0];
      if (frames === 1 || frames % 5000 === 0) peak = Math.max(peak, rssMB());
    }
    r = c();
    clearInterval(sampler);
    peak = Math.max(peak, rssMB());
    console.log(
      `read     : ${frames} frames, ${(atoms / 1e6).toFixed(1)} M atoms in ${r.text(fileMB)}; ${(frames / r.wall).toFixed(0)} frames/s wall, ` +
        `${(frames / r.cpu).toFixed(0)} frames per CPU-s; RSS before ${rss0.toFixed(0)} MB, peak during read ${peak.toFixed(0)} MB (checksum ${checksum.toFixed(3)})`,
    );
    if (frames !== nFrames) console.log(`!! read ${frames} frames, wrote ${nFrames}`);

    // every 100th frame only (range skips the others without parsing numbers)
    c = clock();
    let picked = 0;
    for await (const _f of readExtxyz(file, { range: { step: 100 } })) picked++;
    r = c();
    console.log(`range    : every 100th frame (${picked} frames) in ${r.text(fileMB)} scanned`);

    c = clock();
    const idx = await indexExtxyz(file);
    r = c();
    console.log(`index    : ${idx.frames} frames in ${r.text(fileMB)}, ${(idx.frames / r.wall).toFixed(0)} frames/s wall`);

    c = clock();
    const rng = makeRng(7);
    const picks = 200;
    for (let k = 0; k < picks; k++) await readFrameAt(file, idx, Math.floor(rng.uniform() * idx.frames));
    r = c();
    console.log(`random   : readFrameAt ${picks} random frames in ${r.wall.toFixed(2)} s = ${((r.wall / picks) * 1000).toFixed(2)} ms per frame wall (${((r.cpu / picks) * 1000).toFixed(2)} ms CPU)`);

    // gzip: compress the first ~10 % and stream it back
    const gz = path.join(dir, 'part.extxyz.gz');
    const gzWanted = Math.max(1, Math.floor(idx.frames / 10));
    const plain = idx.offsets[gzWanted];
    await pipeline(createReadStream(file, { start: 0, end: plain - 1 }), createGzip({ level: 1 }), createWriteStream(gz));
    rmSync(file);
    c = clock();
    let gzFrames = 0;
    for await (const _f of readExtxyz(gz)) gzFrames++;
    r = c();
    console.log(`gzip read: ${gzFrames} frames (${(plain / MB).toFixed(0)} MB of text, ${(statSync(gz).size / MB).toFixed(0)} MB compressed) in ${r.text(plain / MB)} of text`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  await run();
}
