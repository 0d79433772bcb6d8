// The job runner: starts tasks in worker threads (one worker per job, at most `concurrency` at once, the
// rest queued), forwards progress, and cancels by sending 'abort' and terminating the worker after a grace
// period. Generic: it knows task names only; what a task does lives in the worker's TaskRegistry.
import { availableParallelism } from 'node:os';
import type { Worker } from 'node:worker_threads';
import { CancelledError } from '../core/errors.ts';
import type { Progress } from '../core/model-types.ts';
import { reviveError, type FromWorker, type ToWorker } from './protocol.ts';

/** Makes a fresh worker thread whose entry calls `serveTasks(registry)`. */
export type WorkerFactory = () => Worker;

export type JobState = 'queued' | 'running' | 'done' | 'failed' | 'cancelled';

export interface JobOptions {
  onProgress?: (p: Progress) => void;
  onLog?: (text: string) => void;
  /** Aborting it cancels the job (same as handle.cancel()). */
  signal?: AbortSignal;
}

export interface JobHandle<O = unknown> {
  readonly id: string;
  readonly task: string;
  /** Resolves with the task's value; rejects with its (revived, typed) error or CancelledError. */
  readonly result: Promise<O>;
  state(): JobState;
  /** Last progress reported, if any. */
  progress(): Progress | null;
  cancel(): void;
}

export interface RunnerOptions {
  spawn: WorkerFactory;
  /** Jobs running at once (default: the number of cores). */
  concurrency?: number;
  /** How long a cancelled task may take to stop by itself before its worker is terminated (ms). */
  graceMs?: number;
}

interface Entry {
  id: string;
  task: string;
  input: unknown;
  opts: JobOptions;
  state: JobState;
  progress: Progress | null;
  worker: Worker | null;
  cancelRequested: boolean;
  resolve: (v: unknown) => void;
  reject: (e: unknown) => void;
}

let nextId = 1;

export class JobRunner {
  private readonly spawn: WorkerFactory;
  private readonly concurrency: number;
  private readonly graceMs: number;
  private readonly queue: Entry[] = [];
  private readonly running = new Set<Entry>();

  constructor(options: RunnerOptions) {
    this.spawn = options.spawn;
    this.concurrency = Math.max(1, options.concurrency ?? availableParallelism());
    this.graceMs = options.graceMs ?? 2000;
  }

  start<O = unknown>(task: string, input: unknown, opts: JobOptions = {}): JobHandle<O> {
    let resolve!: (v: unknown) => void;
    let reject!: (e: unknown) => void;
    const result = new Promise<unknown>((res, rej) => {
      resolve = res;
      reject = rej;
    });
    const entry: Entry = {
      id: `job-${nextId++}`,
      task,
      input,
      opts,
      state: 'queued',
      progress: null,
      worker: null,
      cancelRequested: false,
      resolve,
      reject,
    };
    if (opts.signal) {
      if (opts.signal.aborted) queueMicrotask(() => this.cancel(entry));
      else opts.signal.addEventListener('abort', () => this.cancel(entry), { once: true });
    }
    this.queue.push(entry);
    this.pump();
    return {
      id: entry.id,
      task,
      result: result as Promise<O>,
      state: () => entry.state,
      progress: () => entry.progress,
      cancel: () => this.cancel(entry),
    };
  }

  /** Start and wait: the runner as an async function (for the CLI). */
  run<O = unknown>(task: string, input: unknown, opts: JobOptions = {}): Promise<O> {
    return this.start<O>(task, input, opts).result;
  }

  /** Cancels every queued and running job (e.g. when the window closes). */
  cancelAll(): void {
    for (const e of [...this.queue, ...this.running]) this.cancel(e);
  }

  private pump(): void {
    while (this.running.size < this.concurrency && this.queue.length > 0) {
      const entry = this.queue.shift() as Entry;
      this.launch(entry);
    }
  }

  private finish(entry: Entry, state: JobState, value: unknown): void {
    if (entry.state === 'done' || entry.state === 'failed' || entry.state === 'cancelled') return;
    entry.state = state;
    this.running.delete(entry);
    const w = entry.worker;
    entry.worker = null;
    if (w) void w.terminate();
    if (state === 'done') entry.resolve(value);
    else entry.reject(value);
    this.pump();
  }

  private launch(entry: Entry): void {
    entry.state = 'running';
    this.running.add(entry);
    let worker: Worker;
    try {
      worker = this.spawn();
    } catch (e) {
      this.finish(entry, 'failed', e);
      return;
    }
    entry.worker = worker;
    worker.on('message', (m: FromWorker) => {
      switch (m.type) {
        case 'progress':
          entry.progress = m.progress;
          entry.opts.onProgress?.(m.progress);
          break;
        case 'log':
          entry.opts.onLog?.(m.text);
          break;
        case 'result':
          if (entry.cancelRequested) this.finish(entry, 'cancelled', new CancelledError());
          else this.finish(entry, 'done', m.value);
          break;
        case 'error': {
          const err = reviveError(m.error);
          if (entry.cancelRequested || err instanceof CancelledError) this.finish(entry, 'cancelled', new CancelledError());
          else this.finish(entry, 'failed', err);
          break;
        }
      }
    });
    worker.on('error', (e) => {
      this.finish(entry, entry.cancelRequested ? 'cancelled' : 'failed', entry.cancelRequested ? new CancelledError() : e);
    });
    worker.on('exit', (code) => {
      if (entry.cancelRequested) this.finish(entry, 'cancelled', new CancelledError());
      else this.finish(entry, 'failed', new Error(`the worker for job ${entry.id} (${entry.task}) stopped unexpectedly (exit code ${code})`));
    });
    const run: ToWorker = { type: 'run', task: entry.task, input: entry.input };
    worker.postMessage(run);
  }

  private cancel(entry: Entry): void {
    if (entry.state === 'queued') {
      const i = this.queue.indexOf(entry);
      if (i >= 0) this.queue.splice(i, 1);
      entry.state = 'cancelled';
      entry.reject(new CancelledError());
      return;
    }
    if (entry.state !== 'running' || entry.cancelRequested) return;
    entry.cancelRequested = true;
    const w = entry.worker;
    if (!w) return;
    const abort: ToWorker = { type: 'abort' };
    w.postMessage(abort);
    const timer = setTimeout(() => this.finish(entry, 'cancelled', new CancelledError()), this.graceMs);
    timer.unref?.();
  }
}
