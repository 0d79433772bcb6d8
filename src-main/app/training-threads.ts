// Worker threads for the first pass of training (core/learning/model.ts FramePassRunner): the features of the
// frames, their design rows, the sampled environments and the domain statistics, computed in worker threads
// (training-worker.ts serves the 'training-frames' task) and merged by trainModel in frame order, so that the model is
// the one a single thread trains, bit for bit. The workers are kept for the whole pass (jobs/runner.ts
// reuseWorkers: the task leaves no state behind) and ended by close().
import type { FramePassRunner, FrameSummary } from '../core/learning/model.ts';
import { JobRunner } from '../jobs/runner.ts';
import { tsWorkerFactory } from '../jobs/spawn-ts.ts';

/**
 * A FramePassRunner on `threads` worker threads, started on its first batch; close() ends them. `minAtoms`: see
 * FramePassRunner (tests lower it to run small sets on threads).
 */
export function trainingThreads(threads: number, options: { minAtoms?: number } = {}): FramePassRunner & { close(): Promise<void> } {
  let runner: JobRunner | null = null;
  return {
    threads,
    minAtoms: options.minAtoms,
    run(batch, signal) {
      runner ??= new JobRunner({ spawn: tsWorkerFactory(new URL('./training-worker.ts', import.meta.url)), concurrency: threads, reuseWorkers: true });
      return runner.run<FrameSummary[]>('training-frames', batch, { signal });
    },
    async close() {
      await runner?.close();
    },
  };
}
