// Worker entry for the streaming predictor: serves the 'predict-chunk' task (app/predict/predict-tasks.ts).
// The app's own worker entry can serve the same task by spreading `predictTasks` into its registry.
// Pre-built, this runs as one script compiled with a code cache (out/cli/predict-worker.mjs, scripts/build-cli.mjs),
// which is stored after the worker's first batch: by then the functions a batch runs are compiled, so that the next
// runs' workers skip compiling them. The loader leaves globalThis.__polarweaveAfterFirstTask for that; in any other
// thread (the sources, the window) there is none and nothing happens.
import { predictTasks } from './predict-tasks.ts';
import { serveTasks } from '../../jobs/serve.ts';
import { useRadialTableCache } from '../../io/radial-table-store.ts';
import type { TaskRegistry } from '../../jobs/task.ts';
import { compilePredictionKernelsAhead } from '../../core/wasm/ahead.ts';

// radial tables from the command's cache folder (each thread has its own module state, so each sets its own)
useRadialTableCache();
// this thread's kernels compile in the background while it waits for its first batch
compilePredictionKernelsAhead();

/**
 * Once, after the first task: the code cache, stored before its result goes back (the parent may end the worker
 * right after it). The pre-built worker (scripts/build-cli.mjs) always leaves the hook; its afterRun() stores a cache
 * only when there was none or V8 refused it, i.e. once per build; a cache only: the loader ignores any trouble.
 */
function afterFirstTask(): void {
  const store = (globalThis as { __polarweaveAfterFirstTask?: unknown }).__polarweaveAfterFirstTask;
  delete (globalThis as { __polarweaveAfterFirstTask?: unknown }).__polarweaveAfterFirstTask;
  if (typeof store === 'function') store();
}

const tasks: TaskRegistry = Object.fromEntries(
  Object.entries(predictTasks).map(([name, task]) => [
    name,
    async (input: unknown, ctx: Parameters<typeof task>[1]) => {
      const out = await task(input, ctx);
      afterFirstTask();
      return out;
    },
  ]),
);
serveTasks(tasks);
