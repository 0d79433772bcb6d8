// Dense algebra of core/numerics/cholesky.ts, side by side in one run: the blocked Cholesky factorisation with its
// WebAssembly SIMD kernels and on its JavaScript path (setWebAssemblyKernels(false), the same bits), against the
// unblocked code it replaced (kept in bench/cholesky-unblocked.ts) and against ml-matrix; then many triangular
// solves at once (forwardSubstituteRows, as the sparse model projects its rows) on both paths, one solve per
// right-hand side, and the back substitution, each single solve also as the plain loop it replaced. Random SPD matrices (M Mᵀ, M n × (n + 20) standard normal), one thread. Figures in GFLOP/s of
// CPU time (n³/3 for a factorisation, rows·n² for the solves), so that a busy machine's waiting does not count;
// wall times beside them; last, the Gram matrices Φ Φᵀ and Φᵀ Φ on both paths. Figures only, never asserted.
// Env: PW_BENCH_CHOLESKY_N (1000,1500,2000).
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { loadavg } from 'node:os';
import { pathToFileURL } from 'node:url';
import { backSubstitute, choleskyInPlace, forwardSubstitute, forwardSubstituteRows, gramOfColumns, gramOfRows } from '../src-main/core/numerics/cholesky.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { denseKernels } from '../src-main/core/wasm/dense.ts';
import { setWebAssemblyKernels } from '../src-main/core/wasm/load.ts';
import { referenceBackSubstitute, referenceForwardSubstitute } from '../test/helpers/reference-kernels.ts';
import { choleskyInPlaceUnblocked } from './cholesky-unblocked.ts';

const SIZES = (process.env.PW_BENCH_CHOLESKY_N ?? '1000,1500,2000').split(',').map(Number);

/** Best CPU and wall milliseconds of `runs` calls. */
function time(f: () => void, runs: number): { cpu: number; wall: number } {
  let cpu = Infinity;
  let wall = Infinity;
  for (let r = 0; r < runs; r++) {
    const c0 = process.cpuUsage();
    const t0 = performance.now();
    f();
    wall = Math.min(wall, performance.now() - t0);
    const c = process.cpuUsage(c0);
    cpu = Math.min(cpu, (c.user + c.system) / 1000);
  }
  return { cpu, wall };
}

const rate = (flops: number, t: { cpu: number; wall: number }) => `${(flops / t.cpu / 1e6).toFixed(2)} GFLOP/s (${t.cpu.toFixed(0)} ms CPU, ${t.wall.toFixed(0)} ms wall)`;
const load = () => loadavg().map((x) => x.toFixed(1)).join(' ');

/** `f` with the WebAssembly kernels switched on or off. */
function withKernels<T>(on: boolean, f: () => T): T {
  setWebAssemblyKernels(on);
  try {
    return f();
  } finally {
    setWebAssemblyKernels(true);
  }
}

const sameBits = (x: Float64Array, y: Float64Array) => x.length === y.length && x.every((v, i) => Object.is(v, y[i]));

/**
 * K = Φ Φᵀ of a 1,000 × 1,488 design (the size the default training forms), and G = Φᵀ Φ of a 2,000 × 782 one (the
 * primal form, more frames than features), both paths side by side.
 */
function gram(): void {
  const rows = 1000;
  const f = 1488;
  const rng = makeRng(2);
  const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
  const flops = rows * rows * f; // half of the entries, two operations each
  const runs = (on: boolean) => {
    let out: Float64Array = new Float64Array(0);
    const t = withKernels(on, () => time(() => void (out = gramOfRows(phi, rows, f)), 2));
    return { out, t };
  };
  const js = runs(false);
  const wasm = runs(true);
  console.log(`  gram of rows Φ Φᵀ, ${rows} × ${f} (load ${load()}):`);
  console.log(`    WebAssembly           ${rate(flops, wasm.t)}`);
  console.log(`    JavaScript            ${rate(flops, js.t)}`);
  console.log(`    ratio: WebAssembly ×${(js.t.cpu / wasm.t.cpu).toFixed(2)} the JavaScript path; ${sameBits(wasm.out, js.out) ? 'the same bits' : 'DIFFERENT results'}`);
  // the primal form's Φᵀ Φ: more frames than features
  const tall = 2000;
  const cols = 782;
  const psi = Float64Array.from({ length: tall * cols }, () => rng.normal());
  const columns = (on: boolean) => {
    let out: Float64Array = new Float64Array(0);
    const t = withKernels(on, () => time(() => void (out = gramOfColumns(psi, tall, cols)), 2));
    return { out, t };
  };
  const cj = columns(false);
  const cw = columns(true);
  console.log(`  gram of columns Φᵀ Φ, ${tall} × ${cols} (load ${load()}):`);
  console.log(`    WebAssembly           ${rate(tall * cols * cols, cw.t)}`);
  console.log(`    JavaScript            ${rate(tall * cols * cols, cj.t)}`);
  console.log(`    ratio: WebAssembly ×${(cj.t.cpu / cw.t.cpu).toFixed(2)} the JavaScript path; ${sameBits(cw.out, cj.out) ? 'the same bits' : 'DIFFERENT results'}`);
}

export async function run(): Promise<void> {
  const kernels = denseKernels() !== null;
  console.log(`dense algebra bench: load average ${load()}, Node ${process.version}, one thread, WebAssembly kernels ${kernels ? 'available' : 'UNAVAILABLE (both columns are the JavaScript path)'}; best of 3 (1 for the unblocked code and ml-matrix)`);
  const rng = makeRng(1);
  for (const n of SIZES) {
    const m = Float64Array.from({ length: n * (n + 20) }, () => rng.normal());
    const a = gramOfRows(m, n, n + 20);
    const flops = n ** 3 / 3;
    const factor = (on: boolean) => {
      let out: Float64Array = a;
      const t = withKernels(on, () =>
        time(() => {
          out = Float64Array.from(a);
          if (!choleskyInPlace(out, n)) throw new Error('not positive definite');
        }, 3),
      );
      return { out, t };
    };
    // alternate the two paths so that a change in the machine's load falls on both
    const js = factor(false);
    const wasm = factor(true);
    const js2 = factor(false);
    const wasm2 = factor(true);
    const tj = js2.t.cpu < js.t.cpu ? js2.t : js.t;
    const tw = wasm2.t.cpu < wasm.t.cpu ? wasm2.t : wasm.t;
    let old = a;
    const to = time(() => {
      old = Float64Array.from(a);
      if (!choleskyInPlaceUnblocked(old, n)) throw new Error('not positive definite');
    }, 1);
    const rows = Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, (i + 1) * n)));
    const tm = time(() => void new CholeskyDecomposition(new Matrix(rows)), 1);
    let diff = 0;
    let scale = 0;
    for (let i = 0; i < n; i++) {
      scale = Math.max(scale, Math.abs(old[i * n + i]));
      for (let j = 0; j <= i; j++) diff = Math.max(diff, Math.abs(wasm.out[i * n + j] - old[i * n + j]));
    }
    console.log(`  Cholesky n = ${n} (load ${load()}):`);
    console.log(`    blocked, WebAssembly  ${rate(flops, tw)}`);
    console.log(`    blocked, JavaScript   ${rate(flops, tj)}`);
    console.log(`    unblocked (old)       ${rate(flops, to)}`);
    console.log(`    ml-matrix             ${rate(flops, tm)}`);
    console.log(`    ratio: WebAssembly ×${(tj.cpu / tw.cpu).toFixed(2)} the JavaScript path (${sameBits(wasm.out, js.out) ? 'the same bits' : 'DIFFERENT results'}), ×${(to.cpu / tw.cpu).toFixed(2)} the unblocked code, ×${(tm.cpu / tw.cpu).toFixed(2)} ml-matrix; largest factor difference to the unblocked code ${(diff / scale).toExponential(1)} of its largest pivot`);
    // triangular solves: 64 right-hand sides (a sparse model's rows), together on both paths and one by one
    const l = wasm.out;
    const nr = 64;
    const b = Float64Array.from({ length: nr * n }, () => rng.normal());
    const together = (on: boolean) => {
      let out: Float64Array = b;
      const t = withKernels(on, () => time(() => void (out = forwardSubstituteRows(l, n, Float64Array.from(b), nr)), 3));
      return { out, t };
    };
    const sj = together(false);
    const sw = together(true);
    const single = Float64Array.from(b);
    const ts = time(() => {
      single.set(b);
      for (let r = 0; r < nr; r++) forwardSubstitute(l, n, single.subarray(r * n, (r + 1) * n));
    }, 3);
    const plain = Float64Array.from(b);
    const tp = time(() => {
      plain.set(b);
      for (let r = 0; r < nr; r++) referenceForwardSubstitute(l, n, plain.subarray(r * n, (r + 1) * n));
    }, 3);
    const back = Float64Array.from(b);
    const tb = time(() => {
      back.set(b);
      for (let r = 0; r < nr; r++) backSubstitute(l, n, back.subarray(r * n, (r + 1) * n));
    }, 3);
    const backPlain = Float64Array.from(b);
    const tbp = time(() => {
      backPlain.set(b);
      for (let r = 0; r < nr; r++) referenceBackSubstitute(l, n, backPlain.subarray(r * n, (r + 1) * n));
    }, 3);
    const same = sameBits(sw.out, sj.out) && sameBits(sj.out, single) && sameBits(single, plain);
    console.log(`  ${nr} triangular solves L z = b, n = ${n}:`);
    console.log(`    together, WebAssembly ${rate(nr * n * n, sw.t)}`);
    console.log(`    together, JavaScript  ${rate(nr * n * n, sj.t)} (four at a time)`);
    console.log(`    one at a time         ${rate(nr * n * n, ts)} (forwardSubstitute, four rows of L side by side)`);
    console.log(`    one at a time, plain  ${rate(nr * n * n, tp)} (one row after the other, test/helpers/reference-kernels.ts)`);
    console.log(`    ratio: WebAssembly ×${(sj.t.cpu / sw.t.cpu).toFixed(2)} the JavaScript path, ×${(ts.cpu / sw.t.cpu).toFixed(2)} one at a time; one at a time ×${(tp.cpu / ts.cpu).toFixed(2)} the plain loop; ${same ? 'the same bits' : 'DIFFERENT results'}`);
    console.log(`  ${nr} back substitutions Lᵀ x = z, n = ${n}, one at a time: ${rate(nr * n * n, tb)} (two rows of L per pass over z); plain ${rate(nr * n * n, tbp)}; ratio ×${(tbp.cpu / tb.cpu).toFixed(2)}, ${sameBits(back, backPlain) ? 'the same bits' : 'DIFFERENT results'}`);
  }
  gram();
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
