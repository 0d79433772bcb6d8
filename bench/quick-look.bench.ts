// The window's Quick look against the CLI demo, side by side on the same machine in one run (issue: "Quick means
// quick: no longer than the CLI demo"). Alternately, RUNS times each:
//   1. `polarweave demo -o DIR` as a user runs it (a child process: the pre-built command or the sources);
//   2. the window's Quick look on the demo liquid through the app service, as the Model view sends it (the preset's
//      folds, frames and learning-curve choice from src-renderer/lib/settings.ts; every frame offered, the default
//      hold-out of every 5th frame): the train job, then the prediction of the frames used — what the user waits
//      for until the model and its checks are shown;
//   3. then, separately, the learning curve drawn on request from Checks (a validate job on the model's frames).
// Prints wall times with the load average before each run. Figures only, never asserted.
// Env: PW_BENCH_QUICK_RUNS (1); PW_BENCH_QUICK_CURVE=0 leaves out step 3.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { createAppService } from '../src-main/app/wiring.ts';
import { tsWorkerFactory } from '../src-main/jobs/spawn-ts.ts';
import { curveSizes, framePlan, presets } from '../src-renderer/lib/settings.ts';

const RUNS = Number(process.env.PW_BENCH_QUICK_RUNS ?? 1);
const CURVE = process.env.PW_BENCH_QUICK_CURVE !== '0';
const root = fileURLToPath(new URL('../', import.meta.url));
const load = () => loadavg().map((l) => l.toFixed(1)).join(' ');

function cliDemo(dir: string): number {
  const t0 = performance.now();
  execFileSync(process.execPath, [join(root, 'bin/polarweave.mjs'), 'demo', '-o', dir], { stdio: 'ignore' });
  return (performance.now() - t0) / 1000;
}

async function quickLook(): Promise<{ shown: number; curve: number | null; frames: number }> {
  const service = createAppService({ spawn: tsWorkerFactory(new URL('../src-main/app/worker.ts', import.meta.url)), demoDir: join(root, 'resources/demo') });
  try {
    const quick = presets.find((p) => p.id === 'quick');
    if (!quick?.checks) throw new Error('no Quick look preset');
    const state = await service.loadDemo();
    const liquid = state.datasets.find((d) => /^liquid/.test(d.name));
    if (!liquid) throw new Error('no demo liquid');
    const { folds, maxFrames, learningCurve } = quick.checks;
    const plan = framePlan(liquid.frames, 5, maxFrames);
    const settings = { ...state.defaultSettings, ...quick.settings, regularisation: null };
    const request = { tensorKey: 'eps_ref', kind: 'eps' as const, route: 'cm' as const, settings };
    const t0 = performance.now();
    const trained = await service.waitForJob(
      (await service.startJob({ kind: 'train', params: { datasetId: liquid.id, frames: plan.train, testFrames: plan.test, request, folds, learningCurve: learningCurve ? curveSizes(plan.train.length, folds) : [] } })).jobId,
    );
    if (trained.result?.kind !== 'train') throw new Error(`training failed: ${trained.error?.message}`);
    const model = trained.result.model;
    const used = [...plan.train, ...plan.test].sort((a, b) => a - b);
    const predicted = await service.waitForJob((await service.startJob({ kind: 'predict', params: { modelId: model.id, datasetId: liquid.id, frames: used } })).jobId);
    if (predicted.state !== 'done') throw new Error(`prediction failed: ${predicted.error?.message}`);
    const shown = (performance.now() - t0) / 1000;
    if (!CURVE) return { shown, curve: null, frames: plan.train.length };
    const t1 = performance.now();
    const curve = await service.waitForJob(
      (await service.startJob({ kind: 'validate', params: { datasetId: liquid.id, frames: plan.train, request, folds, learningCurve: curveSizes(plan.train.length, folds), modelId: model.id } })).jobId,
    );
    if (curve.state !== 'done') throw new Error(`learning curve failed: ${curve.error?.message}`);
    return { shown, curve: (performance.now() - t1) / 1000, frames: plan.train.length };
  } finally {
    service.dispose();
  }
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'pw-quick-bench-'));
  try {
    for (let r = 0; r < RUNS; r++) {
      const l1 = load();
      const demo = cliDemo(join(dir, `demo-${r}`));
      console.log(`run ${r + 1}: polarweave demo                         ${demo.toFixed(0).padStart(5)} s wall (load ${l1})`);
      const l2 = load();
      const q = await quickLook();
      console.log(`run ${r + 1}: window Quick look, model and checks shown ${q.shown.toFixed(0).padStart(5)} s wall (load ${l2}; ${q.frames} training frames)`);
      if (q.curve !== null) console.log(`run ${r + 1}:   then the learning curve from Checks     ${q.curve.toFixed(0).padStart(5)} s wall (load ${load()})`);
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
