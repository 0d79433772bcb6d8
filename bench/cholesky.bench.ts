// Dense algebra of core/numerics/cholesky.ts: the blocked Cholesky factorisation against the unblocked code it
// replaced (kept in bench/cholesky-unblocked.ts) and against ml-matrix, and many triangular solves at once
// (forwardSubstituteRows, as the sparse model projects its rows) against one solve per right-hand side. Random
// SPD matrices (M Mᵀ, M n × (n + 20) standard normal), one thread. Figures in GFLOP/s of CPU time (n³/3 for a
// factorisation, rows·n² for the solves), so that a busy machine's waiting does not count; wall times beside them.
// Figures only, never asserted. Env: PW_BENCH_CHOLESKY_N (500,1000,1500).
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { loadavg } from 'node:os';
import { pathToFileURL } from 'node:url';
import { choleskyInPlace, forwardSubstitute, forwardSubstituteRows, gramOfRows } from '../src-main/core/numerics/cholesky.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { choleskyInPlaceUnblocked } from './cholesky-unblocked.ts';

const SIZES = (process.env.PW_BENCH_CHOLESKY_N ?? '500,1000,1500').split(',').map(Number);

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

export async function run(): Promise<void> {
  console.log(`dense algebra bench: load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}, Node ${process.version}, best of 3 (2 for ml-matrix)`);
  const rng = makeRng(1);
  for (const n of SIZES) {
    const m = Float64Array.from({ length: n * (n + 20) }, () => rng.normal());
    const a = gramOfRows(m, n, n + 20);
    const flops = n ** 3 / 3;
    let blocked = a;
    const tb = time(() => {
      blocked = Float64Array.from(a);
      if (!choleskyInPlace(blocked, n)) throw new Error('not positive definite');
    }, 3);
    let old = a;
    const to = time(() => {
      old = Float64Array.from(a);
      if (!choleskyInPlaceUnblocked(old, n)) throw new Error('not positive definite');
    }, 3);
    const rows = Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, (i + 1) * n)));
    const tm = time(() => void new CholeskyDecomposition(new Matrix(rows)), 2);
    let diff = 0;
    let scale = 0;
    for (let i = 0; i < n; i++) {
      scale = Math.max(scale, Math.abs(old[i * n + i]));
      for (let j = 0; j <= i; j++) diff = Math.max(diff, Math.abs(blocked[i * n + j] - old[i * n + j]));
    }
    console.log(`  Cholesky n = ${n}:`);
    console.log(`    blocked (now)   ${rate(flops, tb)}`);
    console.log(`    unblocked (old) ${rate(flops, to)}`);
    console.log(`    ml-matrix       ${rate(flops, tm)}`);
    console.log(`    ratio: ×${(to.cpu / tb.cpu).toFixed(2)} the old code, ×${(tm.cpu / tb.cpu).toFixed(2)} ml-matrix; largest factor difference to the old ${(diff / scale).toExponential(1)} of its largest pivot`);
    // triangular solves: 64 right-hand sides (a sparse model's rows), together and one by one
    const nr = 64;
    const b = Float64Array.from({ length: nr * n }, () => rng.normal());
    let together: Float64Array = b;
    const tt = time(() => void (together = forwardSubstituteRows(blocked, n, Float64Array.from(b), nr)), 3);
    const single = Float64Array.from(b);
    const ts = time(() => {
      single.set(b);
      for (let r = 0; r < nr; r++) forwardSubstitute(blocked, n, single.subarray(r * n, (r + 1) * n));
    }, 3);
    const same = together.every((v, i) => v === single[i]);
    console.log(`  ${nr} triangular solves n = ${n}: four at a time ${rate(nr * n * n, tt)}; one at a time ${rate(nr * n * n, ts)}; ratio ×${(ts.cpu / tt.cpu).toFixed(2)}, ${same ? 'the same bits' : 'DIFFERENT results'}`);
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
