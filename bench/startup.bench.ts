// Start-up of the command: the pre-built JavaScript (scripts/build-cli.mjs, built here into a scratch folder) side
// by side with the TypeScript sources through tsx (the path before the bundles, kept as the fallback), alternating
// runs so that both see the same machine load. Prints the median wall time of
//   1. `polarweave --help`: bin/polarweave.mjs printing the stored help text, the pre-built program, the sources (and a
//      bare `node -e ''` for the floor);
//   2. predicting one frame end to end (read the model, predict — in process: one frame is one small batch — write the CSV): a 384-atom water-like cell
//      with a model trained here on 5 such frames at cutoff 4.5 Å, 8 radial functions, angular order 6; through bin
//      with the code cache (main.cjs, bin/load-program.mjs), bin without it (main.mjs), the sources, and bare node;
//   3. with PW_BENCH_BASELINE=<git ref> (e.g. the commit before a start-up change): the same one-frame predict (default
//      threads) with that ref's command (its bin/polarweave.mjs and pre-built program) beside this tree's and a bare
//      `node -e ''` (the floor: this machine's Node start), alternating, with the ratio, the CPU time of each (user +
//      system, from /proc: Linux only), the load average before and after, and whether the two outputs (CSV and
//      extended XYZ) are byte-identical. The command's cache folder (radial tables, code caches) is a scratch folder:
//      the first run of each fills it.
// Figures only, never asserted. Env: PW_BENCH_STARTUP_RUNS (9), PW_BENCH_BASELINE, PW_BENCH_STARTUP_SECTIONS (the
// sections to run, e.g. "3"; default all).
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { trainModel } from '../src-main/core/learning/model.ts';
import { formatExtxyzFrame } from '../src-main/io/extxyz.ts';
import { saveModel } from '../src-main/io/model-file.ts';
import { waterLikeFrames } from './water-like.ts';
import { baselineCheckout, loadText, median, scratchCheckout, timed } from './command-runs.ts';

const RUNS = Number(process.env.PW_BENCH_STARTUP_RUNS ?? 9);
const SECTIONS = (process.env.PW_BENCH_STARTUP_SECTIONS ?? '1,2,3').split(',').map((x) => x.trim());
const root = new URL('../', import.meta.url);

function wallMs(args: string[], env: NodeJS.ProcessEnv = process.env): number {
  return timed(args, env).wall;
}

/** Median wall times of each way, run alternately RUNS times. */
function sideBySide(ways: Record<string, () => number>): Record<string, number> {
  const times: Record<string, number[]> = Object.fromEntries(Object.keys(ways).map((k) => [k, []]));
  for (let r = 0; r < RUNS; r++) for (const [k, f] of Object.entries(ways)) times[k].push(f());
  return Object.fromEntries(Object.entries(times).map(([k, v]) => [k, median(v)]));
}

/** Section 3: one-frame predict (default threads) with the pre-built program of git ref `ref` beside this tree's. */
function againstBaseline(ref: string, dir: string, bin: string, modelPath: string, input: string): void {
  const baseRun = baselineCheckout(ref, dir);
  if (typeof baseRun !== 'string') {
    console.log(`3. baseline ${ref}: could not extract or build it (${baseRun.error})`);
    return;
  }
  const out = (name: string, ext: string) => join(dir, `${name}.${ext}`);
  const args = (program: string, name: string, ext = 'csv') => [program, 'predict', modelPath, input, '--restart', '-o', out(name, ext)];
  // one run of each first: each stores what it keeps in the cache folder (radial tables, a code cache)
  for (const [program, name] of [[baseRun, 'baseline'], [bin, 'now']]) for (const ext of ['csv', 'extxyz']) timed(args(program, name, ext));
  const same = ['csv', 'extxyz'].map((ext) => `${ext} ${readFileSync(out('baseline', ext)).equals(readFileSync(out('now', ext))) ? 'byte-identical' : 'DIFFERS'}`).join(', ');
  const before = loadText();
  const runs: Record<'baseline' | 'now' | 'node', { wall: number; cpu: number }[]> = { baseline: [], now: [], node: [] };
  for (let r = 0; r < RUNS; r++) {
    runs.baseline.push(timed(args(baseRun, 'baseline')));
    runs.now.push(timed(args(bin, 'now')));
    runs.node.push(timed(['-e', '']));
  }
  const m = (k: keyof typeof runs, what: 'wall' | 'cpu') => median(runs[k].map((x) => x[what]));
  const ms = (x: number) => (Number.isFinite(x) ? `${x.toFixed(0)} ms` : 'n/a');
  console.log(
    `3. predict one 384-atom frame, default threads, pre-built programs, median of ${RUNS} alternating runs (load average before ${before}, after ${loadText()}): ` +
      `baseline ${ref} ${ms(m('baseline', 'wall'))} wall, ${ms(m('baseline', 'cpu'))} CPU; this tree ${ms(m('now', 'wall'))} wall, ${ms(m('now', 'cpu'))} CPU ` +
      `(×${(m('baseline', 'wall') / m('now', 'wall')).toFixed(2)} faster wall, ×${(m('baseline', 'cpu') / m('now', 'cpu')).toFixed(2)} CPU); ` +
      `floor, bare node -e '': ${ms(m('node', 'wall'))} wall, ${ms(m('node', 'cpu'))} CPU; outputs: ${same}`,
  );
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'pw-startup-bench-'));
  // the command's cache folder (radial tables) in the scratch folder: the first predict run builds it
  const cacheBefore = process.env.POLARWEAVE_CACHE_DIR;
  process.env.POLARWEAVE_CACHE_DIR = join(dir, 'cache');
  try {
    // a checkout in the scratch folder: bin/, the sources (linked, for bin's freshness check) and the bundle
    const { bin, bundle } = scratchCheckout(dir);
    const bundled = join(bundle, 'run.mjs');
    writeFileSync(bundled, "const { main } = await import('./main.mjs');\nawait main();\n");
    const source = new URL('bin/polarweave.mjs', root).pathname;
    const fromSource = { ...process.env, POLARWEAVE_FROM_SOURCE: '1' };
    console.log(`startup bench: load average ${loadText()}, Node ${process.version}, median of ${RUNS} alternating runs`);

    if (SECTIONS.includes('1')) {
      const help = sideBySide({
        node: () => wallMs(['-e', '']),
        stored: () => wallMs([bin, '--help']),
        bundled: () => wallMs([bundled, '--help']),
        source: () => wallMs([source, '--help'], fromSource),
      });
      console.log(`1. polarweave --help: stored help text (bin/polarweave.mjs, out/cli/help.json) ${help.stored.toFixed(0)} ms; loading the pre-built program ` +
        `${help.bundled.toFixed(0)} ms (×${(help.bundled / help.stored).toFixed(1)}); sources through tsx ${help.source.toFixed(0)} ms (×${(help.source / help.stored).toFixed(1)}); bare node ${help.node.toFixed(0)} ms`);
    }

    const train = waterLikeFrames(5, 3);
    const model = await trainModel(train, { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm', settings: { radialFunctions: 8, angularOrder: 6 } });
    const modelPath = join(dir, 'model.json');
    await saveModel(modelPath, model);
    const input = join(dir, 'one.extxyz');
    writeFileSync(input, formatExtxyzFrame({ ...waterLikeFrames(1, 77)[0], info: { step: 0 }, arrays: {} }));
    const args = ['predict', modelPath, input, '--threads', '1', '--restart', '-o', join(dir, 'one.csv')];
    const noCodeCache = { ...process.env, POLARWEAVE_NO_CODE_CACHE: '1' };
    if (SECTIONS.includes('2')) {
      wallMs([bin, ...args]); // the first run through bin stores the code cache (bin/load-program.mjs)
      const one = sideBySide({
        cached: () => wallMs([bin, ...args]),
        bundled: () => wallMs([bin, ...args], noCodeCache),
        source: () => wallMs([source, ...args], fromSource),
        node: () => wallMs(['-e', '']),
      });
      console.log(`2. predict one 384-atom frame (--threads 1, model file ${(statSync(modelPath).size / 1e6).toFixed(1)} MB): ` +
        `bin/polarweave.mjs with the code cache (main.cjs) ${one.cached.toFixed(0)} ms; the pre-built modules (main.mjs) ${one.bundled.toFixed(0)} ms (×${(one.bundled / one.cached).toFixed(2)}); ` +
        `sources through tsx ${one.source.toFixed(0)} ms (×${(one.source / one.cached).toFixed(1)}); bare node ${one.node.toFixed(0)} ms`);
    }
    const baseline = process.env.PW_BENCH_BASELINE;
    if (!SECTIONS.includes('3')) return;
    if (baseline) againstBaseline(baseline, dir, bin, modelPath, input);
    else console.log('3. (set PW_BENCH_BASELINE=<git ref> to time one-frame predict against that ref\'s pre-built program)');
  } finally {
    if (cacheBefore === undefined) delete process.env.POLARWEAVE_CACHE_DIR;
    else process.env.POLARWEAVE_CACHE_DIR = cacheBefore;
    rmSync(dir, { recursive: true, force: true });
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
