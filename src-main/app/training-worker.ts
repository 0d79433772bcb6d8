// Worker entry of a training on several threads (training-threads.ts): serves the 'training-frames' task (one batch
// of frames through core/learning/model.ts frameSummaries) and the 'training-applicability' task
// (sampledApplicability), and nothing else, so that a worker loads only the learning code (about a quarter of the
// app worker's start-up from the sources, measured).
import { frameSummaries, sampledApplicability, type ApplicabilityInput, type FramePassBatch } from '../core/learning/model.ts';
import { serveTasks } from '../jobs/serve.ts';
import type { TaskContext } from '../jobs/task.ts';
import { useRadialTableCache } from '../io/radial-table-store.ts';

// radial tables from the command's cache folder (each thread has its own module state, so each sets its own)
useRadialTableCache();
serveTasks({
  'training-frames': (input: FramePassBatch, ctx: TaskContext) => frameSummaries(input, ctx.signal),
  'training-applicability': (input: ApplicabilityInput) => sampledApplicability(input),
});
