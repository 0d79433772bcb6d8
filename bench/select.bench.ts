// `polarweave select` benchmark: choosing 50 frames by diversity from a 100,000-frame trajectory of small water
// cells (4 molecules of a real DFT water frame in its cell, jittered 0.05 Å per frame, written through a stream and
// never held in memory), streamed from disk. Prints the wall time, frames per second, the candidates kept and the
// effective stride, and the process RSS before and at its peak while choosing (sampled every 50 ms), for stride 1 (the
// pool fills and thins) and stride 10. POLARWEAVE_BENCH_SELECT_FRAMES sets the frame count. Figures are printed,
// never asserted.
import { createWriteStream, mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import { availableParallelism, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { makeFrame, type Frame } from '../src-main/core/geometry/frame.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { formatExtxyzFrame, parseExtxyz } from '../src-main/io/extxyz.ts';
import { chosenFrames, fileSource, selectFrames } from '../src-main/app/select-frames.ts';

const mib = (b: number) => (b / 2 ** 20).toFixed(0);

/** The first 4 molecules (12 atoms) of the fixture's first water frame, in its own cubic cell (low density). */
function smallWater(): Frame {
  const w = parseExtxyz(readFileSync(new URL('../test/fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water')[0];
  const o = w.species.map((s, i) => [s, i] as const).filter(([s]) => s === 'O').slice(0, 4).map(([, i]) => i);
  const species: string[] = [];
  const pos: number[] = [];
  for (const i of o) {
    // the two H nearest this O (the fixture's molecules), by minimum image in its cubic cell
    const a = w.cell![0];
    const d = (j: number) => Math.hypot(...[0, 1, 2].map((k) => { const x = w.positions[3 * j + k] - w.positions[3 * i + k]; return x - a * Math.round(x / a); }));
    const hs = w.species.map((s, j) => [s, j] as const).filter(([s]) => s === 'H').map(([, j]) => j).sort((p, q) => d(p) - d(q)).slice(0, 2);
    for (const j of [i, ...hs]) {
      species.push(w.species[j]);
      for (let k = 0; k < 3; k++) { const x = w.positions[3 * j + k] - w.positions[3 * i + k]; pos.push(w.positions[3 * i + k] + x - a * Math.round(x / a)); }
    }
  }
  const a = w.cell![0];
  return makeFrame(species, pos, [a, 0, 0, 0, a, 0, 0, 0, a]);
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'pw-select-bench-'));
  try {
    const count = Number(process.env.POLARWEAVE_BENCH_SELECT_FRAMES ?? 100_000);
    const base = smallWater();
    const rng = makeRng(5);
    const input = join(dir, 'long.extxyz');
    const out = createWriteStream(input);
    for (let k = 0; k < count; k++) {
      const f: Frame = { ...base, positions: Float64Array.from(base.positions, (x) => x + 0.05 * rng.normal()), info: { time_fs: 0.5 * k }, arrays: {} };
      if (!out.write(formatExtxyzFrame(f))) await new Promise<void>((r) => out.once('drain', () => r()));
    }
    await new Promise<void>((res, rej) => out.end((e?: Error | null) => (e ? rej(e) : res())));
    console.log(`trajectory: ${count} frames of ${base.species.length} atoms (${mib(statSync(input).size)} MiB on disk), ${availableParallelism()} cores, load average ${loadavg()[0].toFixed(1)} at start (other work on the machine slows the figures)`);
    for (const stride of [1, 10]) {
      global.gc?.();
      const before = process.memoryUsage().rss;
      let peak = before;
      const timer = setInterval(() => (peak = Math.max(peak, process.memoryUsage().rss)), 50);
      const t0 = performance.now();
      const source = fileSource(input);
      const r = await selectFrames(source, { count: 50, stride, minGapFs: 100 });
      const t1 = performance.now();
      const frames = await chosenFrames(source, r);
      const t2 = performance.now();
      clearInterval(timer);
      peak = Math.max(peak, process.memoryUsage().rss);
      console.log(`  stride ${stride}: chose ${frames.length} of 50 (min gap 100 fs) from ${r.considered} frames read in ${((t1 - t0) / 1000).toFixed(1)} s ` +
        `(${(r.considered / ((t1 - t0) / 1000)).toFixed(0)} frames/s described), second pass ${((t2 - t1) / 1000).toFixed(1)} s; ` +
        `${r.candidates} candidates kept, effective stride ${r.effectiveStride}; RSS ${mib(before)} MiB before, peak ${mib(peak)} MiB`);
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
