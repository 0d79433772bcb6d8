// Training and prediction speed of the learning engine with default settings on 200 synthetic water-like
// frames of 384 atoms (bench/water-like.ts), peak memory, prediction environments per second (one thread), and
// the dense Cholesky solve: our Float64Array code against ml-matrix. Figures are printed, never asserted.
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { pathToFileURL } from 'node:url';
import { choleskySolve, choleskyWithJitter, gramOfRows } from '../src-main/core/numerics/cholesky.ts';
import { modelFeaturiser, predictFrame, predictWithFeatures, trainModel } from '../src-main/core/learning/model.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { waterLikeFrames } from './water-like.ts';
import { describeSettings } from '../src-main/core/settings-table.ts';
import { availableParallelism, loadavg } from 'node:os';
import { readFileSync } from 'node:fs';
import { extractBaseline, rateChild, thisTree } from './baseline.ts';

const FRAMES = Number(process.env.PW_BENCH_FRAMES ?? 200);

function peakMiB(): number {
  return process.resourceUsage().maxRSS / 1024;
}

/**
 * The main thread's own clock from Linux's scheduler statistics (/proc/self/schedstat: nanoseconds on a CPU, then
 * nanoseconds ready but waiting for one), in ms; null elsewhere. Wall time minus the two is time asleep (timers,
 * waits); process CPU time minus `run` is the other threads' (the collector's helpers, the compiler).
 */
function mainThreadClock(): { run: number; wait: number } | null {
  try {
    const [run, wait] = readFileSync('/proc/self/schedstat', 'utf8').split(' ').map(Number);
    return Number.isFinite(run) && Number.isFinite(wait) ? { run: run / 1e6, wait: wait / 1e6 } : null;
  } catch {
    return null;
  }
}

async function training(): Promise<void> {
  const frames = waterLikeFrames(FRAMES, 7);
  const atoms = frames[0].species.length;
  const stages = new Map<string, number>();
  const stagesCpu = new Map<string, number>();
  const cpuNow = () => {
    const c = process.cpuUsage();
    return (c.user + c.system) / 1000;
  };
  const stagesRun = new Map<string, number>();
  const stagesWait = new Map<string, number>();
  let lastCpu = cpuNow();
  let last = performance.now();
  let lastStage = 'start';
  let lastClock = mainThreadClock();
  const clock0 = lastClock;
  const t0 = last;
  const cpu0 = process.cpuUsage();
  const model = await trainModel(frames, { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm' }, {
    onProgress: (p) => {
      const now = performance.now();
      const stage = p.stage.startsWith('fit') ? 'fit (CV + solve)' : p.stage;
      stages.set(lastStage, (stages.get(lastStage) ?? 0) + now - last);
      const c = cpuNow();
      stagesCpu.set(lastStage, (stagesCpu.get(lastStage) ?? 0) + c - lastCpu);
      lastCpu = c;
      const clock = mainThreadClock();
      if (clock && lastClock) {
        stagesRun.set(lastStage, (stagesRun.get(lastStage) ?? 0) + clock.run - lastClock.run);
        stagesWait.set(lastStage, (stagesWait.get(lastStage) ?? 0) + clock.wait - lastClock.wait);
      }
      lastClock = clock;
      last = now;
      lastStage = stage;
    },
  });
  const total = (performance.now() - t0) / 1000;
  const cpu = process.cpuUsage(cpu0);
  const cpuSeconds = (cpu.user + cpu.system) / 1e6;
  console.log(`training, defaults (${describeSettings(model.settings)}), ${FRAMES} frames × ${atoms} atoms, one thread:`);
  console.log(`  total ${total.toFixed(1)} s wall, ${cpuSeconds.toFixed(1)} s CPU (the wall time includes waiting when the machine is shared); peak RSS ${peakMiB().toFixed(0)} MiB`);
  const clock1 = mainThreadClock();
  if (clock0 && clock1) {
    const run = (clock1.run - clock0.run) / 1000;
    const wait = (clock1.wait - clock0.wait) / 1000;
    console.log(`  main thread (Linux scheduler statistics): ${run.toFixed(1)} s on a CPU, ${wait.toFixed(1)} s ready but waiting for a CPU, ` +
      `${Math.max(0, total - run - wait).toFixed(1)} s asleep; other threads ${Math.max(0, cpuSeconds - run).toFixed(1)} s CPU`);
  }
  const secs = (ms: number | undefined) => ((ms ?? 0) / 1000).toFixed(1);
  for (const [stage, ms] of stages) {
    if (stage !== 'start' && stage !== 'done') {
      console.log(`  ${stage.padEnd(18)} ${secs(ms)} s wall, ${secs(stagesCpu.get(stage))} s CPU` +
        (clock0 ? ` (main thread ${secs(stagesRun.get(stage))} s on a CPU, ${secs(stagesWait.get(stage))} s waiting for one)` : ''));
    }
  }
  for (const p of model.parts) console.log(`  λ=${p.order}: ${p.method}, ${p.n} features/species, regulariser ${p.regularisation.relative.toExponential(0)}, CV RMSE ${Math.sqrt(p.regularisation.cvError).toPrecision(3)} Å³`);

  // prediction: features + model, and the model part alone
  const test = waterLikeFrames(10, 99);
  const featurise = modelFeaturiser(model);
  let t = performance.now();
  let c0 = cpuNow();
  for (const f of test) predictFrame(model, f);
  const whole = (performance.now() - t) / 1000;
  const wholeCpu = (cpuNow() - c0) / 1000;
  const feats = test.map((f, i) => featurise(f, i));
  t = performance.now();
  c0 = cpuNow();
  for (let i = 0; i < test.length; i++) predictWithFeatures(model, test[i], feats[i], i);
  const modelOnly = (performance.now() - t) / 1000;
  const modelCpu = (cpuNow() - c0) / 1000;
  const envs = test.length * atoms;
  console.log(`prediction, ${test.length} frames × ${atoms} atoms, one thread:`);
  console.log(`  with features ${(envs / whole).toFixed(0)} environments/s wall, ${(envs / wholeCpu).toFixed(0)} per CPU-second (${((1000 * wholeCpu) / test.length).toFixed(0)} ms CPU/frame)`);
  console.log(`  model only (dot products, variance, applicability) ${(envs / modelOnly).toFixed(0)} environments/s wall, ${(envs / modelCpu).toFixed(0)} per CPU-second`);
}

function cholesky(): void {
  console.log('dense SPD solve (factorise + solve), one thread:');
  const rng = makeRng(1);
  for (const n of [500, 1000]) {
    const m = Float64Array.from({ length: n * (n + 20) }, () => rng.normal());
    const a = gramOfRows(m, n, n + 20);
    const b = Float64Array.from({ length: n }, () => rng.normal());
    let t = performance.now();
    const { factor } = choleskyWithJitter(a, n);
    const x = choleskySolve(factor, n, b);
    const own = (performance.now() - t) / 1000;
    const rows: number[][] = [];
    for (let i = 0; i < n; i++) rows.push(Array.from(a.subarray(i * n, (i + 1) * n)));
    t = performance.now();
    const chol = new CholeskyDecomposition(new Matrix(rows));
    const y = chol.solve(Matrix.columnVector(Array.from(b)));
    const ml = (performance.now() - t) / 1000;
    let diff = 0;
    for (let i = 0; i < n; i++) diff = Math.max(diff, Math.abs(y.get(i, 0) - x[i]));
    console.log(`  n = ${n}: own Float64Array ${own.toFixed(2)} s, ml-matrix ${ml.toFixed(2)} s (×${(ml / own).toFixed(1)}), max difference ${diff.toExponential(1)}`);
  }
}

/**
 * Training at default settings on this tree and on `ref`, in alternating child processes (two rounds each): CPU and
 * wall seconds, the ratios, and whether the two models hold the same numbers (a hash of everything but the date).
 */
export function trainingAgainstBaseline(ref: string, frames = FRAMES): void {
  // PW_BENCH_THREADS: worker threads of the extra run of this tree (default the number of cores; 1 skips it)
  const base = extractBaseline(ref);
  if (!base) return;
  try {
    type Run = { wall: number; cpu: number; peakMiB: number; hash: string };
    const best = (runs: Run[]) => runs.reduce((a, b) => (b.cpu < a.cpu ? b : a));
    const now: Run[] = [];
    const then: Run[] = [];
    for (let round = 0; round < 2; round++) {
      for (const [root, into] of [[thisTree, now], [base.root, then]] as const) {
        const r = rateChild<Run>(root, ['training', String(frames)]);
        if ('error' in r) {
          console.log(`  a child failed: ${r.error}`);
          return;
        }
        into.push(r);
      }
    }
    const a = best(now);
    const b = best(then);
    console.log(`training side by side with ${ref}, ${frames} frames × 384 atoms, defaults, one thread, best of 2 alternating processes (load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}):`);
    console.log(`  ${ref}: ${b.cpu.toFixed(1)} s CPU, ${b.wall.toFixed(1)} s wall, peak ${b.peakMiB.toFixed(0)} MiB; this tree: ${a.cpu.toFixed(1)} s CPU, ${a.wall.toFixed(1)} s wall, peak ${a.peakMiB.toFixed(0)} MiB; ` +
      `CPU ×${(b.cpu / a.cpu).toFixed(2)}, wall ×${(b.wall / a.wall).toFixed(2)}; models ${a.hash === b.hash && now.every((r) => r.hash === a.hash) && then.every((r) => r.hash === b.hash) ? 'identical (same hash of every number)' : 'DIFFER'}`);
    // this tree again on threads (train --threads: its first pass shared with workers, a linear model's applicability
    // beside the fit), against the same one-thread runs
    const threads = Number(process.env.PW_BENCH_THREADS ?? availableParallelism());
    if (threads > 1) {
      const many: Run[] = [];
      for (let round = 0; round < 2; round++) {
        const r = rateChild<Run>(thisTree, ['training', String(frames), String(threads)]);
        if ('error' in r) {
          console.log(`  a child failed: ${r.error}`);
          return;
        }
        many.push(r);
      }
      const c = many.reduce((x, y) => (y.wall < x.wall ? y : x));
      console.log(`  this tree on ${threads} threads (train --threads ${threads}: this thread and ${threads - 1} worker${threads === 2 ? '' : 's'}; best wall of 2, load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}): ${c.wall.toFixed(1)} s wall, ${c.cpu.toFixed(1)} s CPU of all threads, peak ${c.peakMiB.toFixed(0)} MiB; ` +
        `wall ×${(b.wall / c.wall).toFixed(2)} against ${ref}, ×${(a.wall / c.wall).toFixed(2)} against one thread; model ${many.every((r) => r.hash === a.hash) ? 'identical to one thread’s' : 'DIFFERS from one thread’s'}`);
    }
  } finally {
    base.remove();
  }
}

export async function run(): Promise<void> {
  cholesky();
  await training();
  const ref = process.env.PW_BENCH_BASELINE;
  if (ref) trainingAgainstBaseline(ref);
  else console.log('(set PW_BENCH_BASELINE=<git ref> to time training side by side with that ref)');
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
