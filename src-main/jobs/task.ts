// What a job task is: an async function of plain (structured-clone safe) input that reports progress and
// stops when its signal is aborted. Tasks are registered by name in a TaskRegistry and run in a worker thread.
import type { Progress } from '../core/learning/model-types.ts';

export interface TaskContext {
  /** Report progress; the runner forwards it (throttled) to whoever started the job. */
  progress(p: Progress): void;
  /** A line of log text for the job's event list. */
  log(text: string): void;
  /** Aborted when the job is cancelled; long loops check it and throw CancelledError. */
  signal: AbortSignal;
}

export type Task<I = any, O = any> = (input: I, ctx: TaskContext) => Promise<O> | O;

export type TaskRegistry = Record<string, Task>;
