// Worker threads for a training (core/learning/model.ts TrainingThreads): the first pass (the features of the
// frames, their design rows, the sampled environments and the domain statistics) and a linear model's
// applicability beside the fit, computed in worker threads (training-worker.ts serves the 'training-frames' and
// 'training-applicability' tasks) and merged by trainModel in frame order, so that the model is the one a single
// thread trains, bit for bit. The workers are kept for the whole pass (jobs/runner.ts
// reuseWorkers: the task leaves no state behind) and ended by close().
import type { FrameSummary, Model, TrainingThreads } from '../core/learning/model.ts';
import { JobRunner } from '../jobs/runner.ts';
import { tsWorkerFactory } from '../jobs/spawn-ts.ts';

/**
 * A TrainingThreads on `threads` worker threads, started on its first batch; close() ends them. `minAtoms`: see
 * TrainingThreads (tests lower it to run small sets on threads).
 */
export function trainingThreads(threads: number, options: { minAtoms?: number } = {}): TrainingThreads & { close(): Promise<void> } {
  let runner: JobRunner | null = null;
  const jobs = () => (runner ??= new JobRunner({ spawn: tsWorkerFactory(new URL('./training-worker.ts', import.meta.url)), concurrency: threads, reuseWorkers: true }));
  return {
    threads,
    minAtoms: options.minAtoms,
    frames(batch, signal) {
      return jobs().run<FrameSummary[]>('training-frames', batch, { signal });
    },
    applicability(input, signal) {
      return jobs().run<Model['applicability']>('training-applicability', input, { signal });
    },
    async close() {
      await runner?.close();
    },
  };
}
