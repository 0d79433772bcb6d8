// The `predict` command end to end at the conditions of the prediction speed target: 384-atom water-like cells (two
// species, 0.1 atoms/Å³), r_c 4.5 Å, 8 radial functions, angular order 6 (λ=2 at its default angular order 4), a
// tensor model trained on 30 synthetic frames as in prediction.bench.ts; extended XYZ in, CSV out, through the
// pre-built command (bin/polarweave.mjs, built here into a scratch folder with its own cache folder) on 1 and on 2
// worker threads, alternating, RUNS rounds. For each run and as medians it prints the wall time, the CPU time of the
// whole process (main thread, workers and V8's own threads), environments per second in all and per worker thread,
// and the peak RSS (from /proc, every 50 ms); then the targets (at least 25,000 environments per second per thread;
// peak RSS under 400 MiB with 2 threads) against the medians. The main thread's reading and writing share the same
// cores as the workers, as they do for a user.
// With PW_BENCH_BASELINE=<git ref>: that ref's pre-built command runs alternately with this tree's on the same model
// and input, with the ratio of the medians and whether the two CSV files are byte-identical.
// Figures only, never asserted. Env: PW_BENCH_COMMAND_FRAMES (2000), PW_BENCH_COMMAND_THREADS ("1,2"),
// PW_BENCH_COMMAND_RUNS (2), PW_BENCH_BASELINE.
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { cpus, tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { trainModel } from '../src-main/core/learning/model.ts';
import { saveModel } from '../src-main/io/model-file.ts';
import { waterLikeFrames, writeFrames } from './water-like.ts';
import { baselineCheckout, loadText, measuredRun, median, scratchCheckout } from './command-runs.ts';

const FRAMES = Number(process.env.PW_BENCH_COMMAND_FRAMES ?? 2000);
const THREADS = (process.env.PW_BENCH_COMMAND_THREADS ?? '1,2').split(',').map(Number);
const RUNS = Number(process.env.PW_BENCH_COMMAND_RUNS ?? 2);
/** The targets, in environments per second per worker thread and bytes of peak RSS with 2 threads. */
const TARGET_PER_THREAD = 25_000;
const TARGET_RSS_2 = 400 * 2 ** 20;

type Run = { seconds: number; cpuSeconds: number; peakRss: number };

const mib = (b: number) => (Number.isFinite(b) ? `${(b / 2 ** 20).toFixed(0)} MiB` : 'n/a');

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'pw-command-bench-'));
  const cacheBefore = process.env.POLARWEAVE_CACHE_DIR;
  process.env.POLARWEAVE_CACHE_DIR = join(dir, 'cache'); // the children's cache folder (code caches, radial tables)
  try {
    const train = waterLikeFrames(30, 7);
    const model = await trainModel(train, { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm', settings: { radialFunctions: 8, angularOrder: 6 } });
    const modelPath = join(dir, 'model.json');
    await saveModel(modelPath, model);
    const pool = waterLikeFrames(100, 11);
    const atoms = pool[0].species.length;
    const input = join(dir, 'frames.extxyz');
    const warm = join(dir, 'warm.extxyz');
    await writeFrames(input, pool, FRAMES);
    await writeFrames(warm, pool, 4);
    const programs: Record<string, string> = { now: scratchCheckout(dir).bin };
    const ref = process.env.PW_BENCH_BASELINE;
    if (ref) {
      const b = baselineCheckout(ref, dir);
      if (typeof b === 'string') programs[ref] = b;
      else console.log(`baseline ${ref}: could not extract or build it (${b.error}); this tree alone`);
    }
    const out = (who: string, threads: number) => join(dir, `${who === 'now' ? 'now' : 'baseline'}-${threads}.csv`);
    const args = (program: string, file: string, output: string, threads: number) => [program, 'predict', modelPath, file, '-o', output, '--threads', String(threads), '--restart'];
    // one short run of each program first: each fills its code caches and radial tables
    for (const program of Object.values(programs)) await measuredRun(args(program, warm, join(dir, 'warm.csv'), 1));

    console.log(`predict command bench: ${cpus().length} cores (${cpus()[0]?.model ?? 'unknown'}), Node ${process.version}; ${FRAMES} frames × ${atoms} atoms, ` +
      `model of ${train.length} training frames (file ${(readFileSync(modelPath).length / 1e6).toFixed(1)} MB); ${RUNS} alternating round${RUNS > 1 ? 's' : ''}; load average before ${loadText()}`);
    const runs: Record<string, Record<number, Run[]>> = Object.fromEntries(Object.keys(programs).map((w) => [w, Object.fromEntries(THREADS.map((t) => [t, []]))]));
    for (let round = 0; round < RUNS; round++) {
      for (const threads of THREADS) {
        for (const [who, program] of Object.entries(programs)) {
          const r = await measuredRun(args(program, input, out(who, threads), threads));
          runs[who][threads].push(r);
          const envs = (FRAMES * atoms) / r.seconds;
          console.log(`  ${who === 'now' ? 'this tree' : who}, ${threads} thread${threads > 1 ? 's' : ' '}: ${r.seconds.toFixed(1)} s wall, ${r.cpuSeconds.toFixed(1)} s CPU, ` +
            `${envs.toFixed(0)} env/s = ${(envs / threads).toFixed(0)} per thread, peak RSS ${mib(r.peakRss)} (load ${loadText()})`);
        }
      }
    }
    console.log(`medians (load average after ${loadText()}):`);
    for (const threads of THREADS) {
      const m = (who: string) => {
        const rs = runs[who][threads];
        const seconds = median(rs.map((r) => r.seconds));
        return { seconds, cpu: median(rs.map((r) => r.cpuSeconds)), perThread: (FRAMES * atoms) / seconds / threads, rss: median(rs.map((r) => r.peakRss)) };
      };
      const now = m('now');
      const targets = [`per thread ${now.perThread >= TARGET_PER_THREAD ? 'meets' : 'is under'} the ${TARGET_PER_THREAD.toLocaleString('en')} env/s target`];
      if (threads === 2) targets.push(Number.isFinite(now.rss) ? `peak RSS ${now.rss < TARGET_RSS_2 ? 'under' : 'over'} the ${mib(TARGET_RSS_2)} target` : 'peak RSS not measured here (no /proc)');
      console.log(`  ${threads} thread${threads > 1 ? 's' : ' '}: this tree ${now.seconds.toFixed(1)} s wall, ${now.cpu.toFixed(1)} s CPU, ${now.perThread.toFixed(0)} env/s per thread, peak RSS ${mib(now.rss)} (${targets.join('; ')})`);
      if (ref && programs[ref]) {
        const then = m(ref);
        const same = readFileSync(out(ref, threads)).equals(readFileSync(out('now', threads)));
        console.log(`             ${ref} ${then.seconds.toFixed(1)} s wall, ${then.cpu.toFixed(1)} s CPU, ${then.perThread.toFixed(0)} env/s per thread, peak RSS ${mib(then.rss)}; ` +
          `×${(then.seconds / now.seconds).toFixed(2)} wall, ×${(then.cpu / now.cpu).toFixed(2)} CPU; CSV bytes ${same ? 'identical' : 'DIFFER'}`);
      }
    }
  } finally {
    if (cacheBefore === undefined) delete process.env.POLARWEAVE_CACHE_DIR;
    else process.env.POLARWEAVE_CACHE_DIR = cacheBefore;
    rmSync(dir, { recursive: true, force: true });
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
