// Renderer work that scales with the data, measured without a browser: building the structure view's scene
// (bond search, ellipsoid eigen-decompositions, length scale) and one redraw's projection of every ellipsoid,
// and decimating a long trajectory for drawing. Figures only; the browser redraw time of a 972-atom frame is
// printed by `node scripts/gallery-screenshot.mjs --only none --perf`.
import { buildScene, ellipsoidLengthScale } from '../src-renderer/components/structure/structure-scene.ts';
import { ellipsoidRing, projectEllipsoid, semiAxisMatrix, distinctAxis, polylinePath } from '../src-renderer/components/structure/ellipsoid-projection.ts';
import { rawSemiAxes } from '../src-renderer/components/structure/structure-scene.ts';
import { axisRotation } from '../src-renderer/components/structure/linear3.ts';
import { decimateMinMax } from '../src-renderer/components/charts/decimate.ts';

function waterLike(molecules: number): { species: string[]; positions: Float64Array; cell: Float64Array; tensors: Float64Array } {
  // molecules on a cubic grid 3.1 Å apart (liquid-water density), each O with two H; isotropic-ish tensors
  const side = Math.ceil(Math.cbrt(molecules));
  const L = side * 3.1;
  const species: string[] = [];
  const pos: number[] = [];
  const tens: number[] = [];
  let made = 0;
  for (let i = 0; i < side && made < molecules; i++)
    for (let j = 0; j < side && made < molecules; j++)
      for (let k = 0; k < side && made < molecules; k++, made++) {
        const o = [i * 3.1 + 0.2, j * 3.1 + 0.3, k * 3.1 + 0.1];
        species.push('O', 'H', 'H');
        pos.push(...o, o[0] + 0.76, o[1] + 0.59, o[2], o[0] - 0.76, o[1] + 0.59, o[2]);
        tens.push(1.3, 0.05, 0, 0.05, 1.1, 0.02, 0, 0.02, 0.9, 0.3, 0, 0, 0, 0.2, 0, 0, 0, 0.25, 0.3, 0, 0, 0, 0.2, 0, 0, 0, 0.25);
      }
  return { species, positions: Float64Array.from(pos), cell: Float64Array.of(L, 0, 0, 0, L, 0, 0, 0, L), tensors: Float64Array.from(tens) };
}

/** Median of `reps` timed calls after two warm-up calls (the machine is shared: medians resist the noise). */
function time(f: () => void, reps: number): number {
  f();
  f();
  const t: number[] = [];
  for (let r = 0; r < reps; r++) {
    const t0 = performance.now();
    f();
    t.push(performance.now() - t0);
  }
  t.sort((a, b) => a - b);
  return t[Math.floor(reps / 2)];
}

export async function run(): Promise<void> {
  console.log('(median of several runs; ellipsoids per atom, rings sampled 24 segments)');
  for (const molecules of [100, 333, 1000]) {
    const w = waterLike(molecules);
    const n = w.species.length;
    const build = time(() => buildScene(w, 'atom'), 7);
    const scene = buildScene(w, 'atom');
    const scale = ellipsoidLengthScale(scene.ellipsoids, 'linear', w.cell);
    const view = { R: axisRotation([1, 2, 3], 0.4), scale: 12, ox: 400, oy: 300, centre: scene.centre };
    const redraw = time(() => {
      for (const e of scene.ellipsoids) {
        const s = rawSemiAxes(e.values, 'linear').map((x) => x * scale.factor);
        const A = semiAxisMatrix(e.vectors, s);
        projectEllipsoid(e.centre, A, view);
        const ring = ellipsoidRing(e.centre, A, distinctAxis(s), view, 24);
        polylinePath(ring.front);
        polylinePath(ring.back);
      }
    }, 9);
    console.log(
      `structure scene, ${n} atoms (${scene.bonds.length / 2} bonds, binned search): build ${build.toFixed(1)} ms; ` +
        `projection of ${scene.ellipsoids.length} ellipsoids with rings ${redraw.toFixed(1)} ms per redraw`,
    );
  }
  const frames = 100_000;
  const x = Float64Array.from({ length: frames }, (_, i) => i);
  const y = Float64Array.from(x, (v) => Math.sin(v / 50) + 0.1 * Math.sin(v * 1.7));
  const dec = time(() => decimateMinMax(x, y, 0, frames - 1, 800), 21);
  console.log(`trajectory decimation, ${frames} frames to 800 pixel columns: ${dec.toFixed(2)} ms (${decimateMinMax(x, y, 0, frames - 1, 800).length} points kept)`);
}
