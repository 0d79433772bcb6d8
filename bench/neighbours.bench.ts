// Benchmark of core/geometry/neighbours.ts: one large liquid-density cell (100,000 atoms, 5 Å) and many small cells of the
// learning engine's size (384 atoms, 4.5 Å), the latter side by side with the kept first version
// (test/helpers/reference-neighbours.ts) in one process, alternating, and with the search in JavaScript (WebAssembly
// kernels off) beside the default search in WebAssembly. Prints figures; asserts nothing.
import { createHash } from 'node:crypto';
import os from 'node:os';
import { pathToFileURL } from 'node:url';
import { cellFromParameters, toCartesian } from '../src-main/core/geometry/cell.ts';
import { makeFrame, type Frame } from '../src-main/core/geometry/frame.ts';
import { neighbourList, type NeighbourList } from '../src-main/core/geometry/neighbours.ts';
import { referenceNeighbourList } from '../test/helpers/reference-neighbours.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { setWebAssemblyKernels } from '../src-main/core/wasm/load.ts';

/** Uniformly random atoms at a number density (atoms/Å³) in a cell of the given angles (degrees). */
function randomFrame(atoms: number, density: number, angles: [number, number, number], seed: number): Frame {
  const unit = cellFromParameters(1, 1, 1, ...angles);
  const unitVolume = unit[0] * unit[4] * unit[8];
  const a = Math.cbrt(atoms / density / unitVolume);
  const cell = cellFromParameters(a, a, a, ...angles);
  const rng = makeRng(seed);
  const frac = new Float64Array(3 * atoms);
  for (let k = 0; k < frac.length; k++) frac[k] = rng.uniform();
  return makeFrame(new Array<string>(atoms).fill('X'), toCartesian(cell, frac), cell);
}

/** `run()` with the WebAssembly kernels off (the search in JavaScript). */
function jsSearch<T>(run: () => T): T {
  setWebAssemblyKernels(false);
  try {
    return run();
  } finally {
    setWebAssemblyKernels(true);
  }
}

function mb(bytes: number): string {
  return (bytes / 2 ** 20).toFixed(0);
}

export async function run(): Promise<void> {
  console.log('neighbours: full neighbour list (both directions), random positions at 0.1 atoms/Å³, one thread');
  const shapes: [string, [number, number, number]][] = [
    ['cubic', [90, 90, 90]],
    ['triclinic 75/85/105°', [75, 85, 105]],
  ];
  for (const [name, angles] of shapes) {
    const frame = randomFrame(100_000, 0.1, angles, 1);
    neighbourList(randomFrame(2000, 0.1, angles, 2), 5); // warm-up
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    const nl = neighbourList(frame, 5);
    const seconds = (performance.now() - t0) / 1000;
    const cpu = process.cpuUsage(cpu0);
    const cpuSeconds = (cpu.user + cpu.system) / 1e6;
    const bytes = [nl.start, nl.neighbour, nl.vectors, nl.distances, nl.shifts].reduce((acc, a) => acc + a.buffer.byteLength, 0);
    console.log(
      `  ${name.padEnd(22)} atoms 100000  cutoff 5 Å  pairs ${nl.count}  ${seconds.toFixed(2)} s wall ` +
        `(${cpuSeconds.toFixed(2)} s CPU)  ${(nl.count / seconds / 1e6).toFixed(2)} M pairs/s wall  ` +
        `list ${mb(bytes)} MB  process peak RSS so far ${(process.resourceUsage().maxRSS / 1024).toFixed(0)} MB`,
    );
  }
  // The learning engine's cells: 384 atoms at liquid density, 4.5 Å: this version (fresh arrays, and with the
  // previous list handed back for reuse as training does) against the kept first version, alternating batches.
  const frames = Array.from({ length: 50 }, (_, k) => randomFrame(384, 0.1, [90, 90, 90], 100 + k));
  let spare: NeighbourList | undefined;
  const ways: [string, (f: Frame) => NeighbourList][] = [
    ['first version (kept copy)', (f) => referenceNeighbourList(f, 4.5) as NeighbourList],
    ['this version', (f) => neighbourList(f, 4.5)],
    ['this version, reuse', (f) => (spare = neighbourList(f, 4.5, { reuse: spare }))],
    ['this version, JavaScript search', (f) => jsSearch(() => neighbourList(f, 4.5))],
    ['this version, JS search, reuse', (f) => jsSearch(() => (spare = neighbourList(f, 4.5, { reuse: spare })))],
  ];
  const hashes = ways.map(([, list]) => {
    const hash = createHash('sha256');
    for (const f of frames) {
      const nl = list(f);
      for (const a of [nl.start, nl.neighbour, nl.vectors, nl.distances, nl.shifts]) hash.update(new Uint8Array(a.buffer, a.byteOffset, a.byteLength));
    }
    return hash.digest('hex').slice(0, 16);
  });
  const best = ways.map(() => ({ wall: Infinity, cpu: Infinity }));
  let pairs = 0;
  const repeats = 4;
  for (let round = 0; round < 6; round++) {
    ways.forEach(([, list], w) => {
      const cpu0 = process.cpuUsage();
      const t0 = performance.now();
      pairs = 0;
      for (let r = 0; r < repeats; r++) for (const f of frames) pairs += list(f).count;
      const cpu = process.cpuUsage(cpu0);
      best[w].wall = Math.min(best[w].wall, (performance.now() - t0) / (repeats * frames.length));
      best[w].cpu = Math.min(best[w].cpu, (cpu.user + cpu.system) / 1000 / (repeats * frames.length));
    });
  }
  console.log(`  384-atom cubic cells, cutoff 4.5 Å, ${(pairs / (repeats * frames.length)).toFixed(0)} pairs each, best of 6 alternating batches of ${repeats * frames.length} lists:`);
  ways.forEach(([name], w) => {
    console.log(`    ${name.padEnd(26)} ${best[w].wall.toFixed(2)} ms/list wall, ${best[w].cpu.toFixed(2)} ms CPU  ×${(best[0].cpu / best[w].cpu).toFixed(2)} (CPU)  hash ${hashes[w]}${w > 0 ? (hashes[w] === hashes[0] ? ' (same bits)' : ' DIFFERS') : ''}`);
  });
  console.log(`  (load average ${os.loadavg()[0].toFixed(1)} on ${os.cpus().length} cores while measuring)`);
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  await run();
}
