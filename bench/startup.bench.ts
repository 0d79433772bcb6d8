// Start-up of the command: the pre-built JavaScript (scripts/build-cli.mjs, built here into a scratch folder) side
// by side with the TypeScript sources through tsx (the path before the bundles, kept as the fallback), alternating
// runs so that both see the same machine load. Prints the median wall time of
//   1. `polarweave --help`: bin/polarweave.mjs printing the stored help text, the pre-built program, the sources (and a
//      bare `node -e ''` for the floor);
//   2. predicting one frame end to end (read the model, one worker thread, write the CSV): a 384-atom water-like cell
//      with a model trained here on 5 such frames at cutoff 4.5 Å, 8 radial functions, angular order 6.
// Figures only, never asserted. Env: PW_BENCH_STARTUP_RUNS (5).
import { execFileSync } from 'node:child_process';
import { copyFileSync, mkdirSync, mkdtempSync, rmSync, statSync, symlinkSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { trainModel } from '../src-main/core/learning/model.ts';
import { formatExtxyzFrame } from '../src-main/io/extxyz.ts';
import { saveModel } from '../src-main/io/model-file.ts';
import { waterLikeFrames } from './water-like.ts';

const RUNS = Number(process.env.PW_BENCH_STARTUP_RUNS ?? 5);
const root = new URL('../', import.meta.url);

function wallMs(args: string[], env: NodeJS.ProcessEnv = process.env): number {
  const t0 = performance.now();
  execFileSync(process.execPath, args, { stdio: 'ignore', env });
  return performance.now() - t0;
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

/** Median wall times of each way, run alternately RUNS times. */
function sideBySide(ways: Record<string, () => number>): Record<string, number> {
  const times: Record<string, number[]> = Object.fromEntries(Object.keys(ways).map((k) => [k, []]));
  for (let r = 0; r < RUNS; r++) for (const [k, f] of Object.entries(ways)) times[k].push(f());
  return Object.fromEntries(Object.entries(times).map(([k, v]) => [k, median(v)]));
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'pw-startup-bench-'));
  try {
    // a checkout in the scratch folder: bin/, the sources (linked, for bin's freshness check) and the bundle
    const checkout = join(dir, 'checkout');
    mkdirSync(join(checkout, 'bin'), { recursive: true });
    copyFileSync(new URL('bin/polarweave.mjs', root), join(checkout, 'bin', 'polarweave.mjs'));
    symlinkSync(new URL('src-main', root).pathname, join(checkout, 'src-main'));
    const bundle = join(checkout, 'out', 'cli');
    execFileSync(process.execPath, [new URL('scripts/build-cli.mjs', root).pathname, '--outdir', bundle], { stdio: 'ignore' });
    const bin = join(checkout, 'bin', 'polarweave.mjs');
    const bundled = join(bundle, 'run.mjs');
    writeFileSync(bundled, "const { main } = await import('./main.mjs');\nawait main();\n");
    const source = new URL('bin/polarweave.mjs', root).pathname;
    const fromSource = { ...process.env, POLARWEAVE_FROM_SOURCE: '1' };
    console.log(`startup bench: load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}, Node ${process.version}, median of ${RUNS} alternating runs`);

    const help = sideBySide({
      node: () => wallMs(['-e', '']),
      stored: () => wallMs([bin, '--help']),
      bundled: () => wallMs([bundled, '--help']),
      source: () => wallMs([source, '--help'], fromSource),
    });
    console.log(`1. polarweave --help: stored help text (bin/polarweave.mjs, out/cli/help.json) ${help.stored.toFixed(0)} ms; loading the pre-built program ` +
      `${help.bundled.toFixed(0)} ms (×${(help.bundled / help.stored).toFixed(1)}); sources through tsx ${help.source.toFixed(0)} ms (×${(help.source / help.stored).toFixed(1)}); bare node ${help.node.toFixed(0)} ms`);

    const train = waterLikeFrames(5, 3);
    const model = await trainModel(train, { tensorKey: 'alpha_cm', kind: 'alpha-cm', route: 'cm', settings: { radialFunctions: 8, angularOrder: 6 } });
    const modelPath = join(dir, 'model.json');
    await saveModel(modelPath, model);
    const input = join(dir, 'one.extxyz');
    writeFileSync(input, formatExtxyzFrame({ ...waterLikeFrames(1, 77)[0], info: { step: 0 }, arrays: {} }));
    const args = ['predict', modelPath, input, '--threads', '1', '--restart', '-o', join(dir, 'one.csv')];
    const one = sideBySide({
      bundled: () => wallMs([bundled, ...args]),
      source: () => wallMs([source, ...args], fromSource),
    });
    console.log(`2. predict one 384-atom frame (1 worker thread, model file ${(statSync(modelPath).size / 1e6).toFixed(1)} MB): ` +
      `pre-built ${one.bundled.toFixed(0)} ms, sources through tsx ${one.source.toFixed(0)} ms (×${(one.source / one.bundled).toFixed(1)} faster)`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
