// The job runner: runs tasks in worker threads (at most `concurrency` at once, the rest queued), forwards
// progress, and cancels by sending 'abort' and terminating the worker after a grace period. By default each
// job gets a fresh worker that is terminated when the job ends. With `reuseWorkers`, a worker whose job
// succeeded waits (unref'd, so it never keeps the process alive) for the next job, so start-up (loading code,
// a model, warming up) is paid once per worker instead of once per job; a worker whose job failed, was
// cancelled or that errored or exited is terminated and never reused, since its state is unknown.
// Generic: it knows task names only; what a task does lives in the worker's TaskRegistry.
import { availableParallelism } from 'node:os';
import type { Worker } from 'node:worker_threads';
import { CancelledError } from '../core/errors.ts';
import type { Progress } from '../core/learning/model-types.ts';
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
  /**
   * Keep up to `concurrency` idle workers and give them the next jobs (default false: a fresh worker per job).
   * Only for tasks that leave no state behind that could change a later job's result (caches keyed on their
   * inputs are fine). Call close() when done to terminate the idle workers.
   */
  reuseWorkers?: boolean;
}

/** A worker thread and the job it is running now (null while idle). */
interface Slot {
  worker: Worker;
  entry: Entry | null;
  /** Id of the run it was last given: messages with another id belong to an earlier job and are dropped. */
  runId: number;
  /** Terminated, exited or failed: never given another job. */
  dead: boolean;
  exited: Promise<void>;
}

interface Entry {
  id: string;
  task: string;
  input: unknown;
  opts: JobOptions;
  state: JobState;
  progress: Progress | null;
  slot: Slot | null;
  cancelRequested: boolean;
  resolve: (v: unknown) => void;
  reject: (e: unknown) => void;
  /** Removes the job's abort listener from the caller's signal (one signal may serve thousands of jobs). */
  detach: () => void;
}

let nextId = 1;
let nextRunId = 1;

export class JobRunner {
  private readonly spawn: WorkerFactory;
  private readonly concurrency: number;
  private readonly graceMs: number;
  private readonly reuse: boolean;
  private readonly queue: Entry[] = [];
  private readonly running = new Set<Entry>();
  private readonly idle: Slot[] = [];
  /** Every worker not yet exited (running, idle or being terminated), for close() to wait on. */
  private readonly live = new Set<Slot>();
  private closed = false;

  constructor(options: RunnerOptions) {
    this.spawn = options.spawn;
    this.concurrency = Math.max(1, options.concurrency ?? availableParallelism());
    this.graceMs = options.graceMs ?? 2000;
    this.reuse = options.reuseWorkers ?? false;
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
      slot: null,
      cancelRequested: false,
      resolve,
      reject,
      detach: () => undefined,
    };
    const handle: JobHandle<O> = {
      id: entry.id,
      task,
      result: result as Promise<O>,
      state: () => entry.state,
      progress: () => entry.progress,
      cancel: () => this.cancel(entry),
    };
    if (this.closed) {
      entry.state = 'failed';
      reject(new Error(`job ${entry.id} (${task}): the job runner is closed`));
      return handle;
    }
    if (opts.signal) {
      if (opts.signal.aborted) queueMicrotask(() => this.cancel(entry));
      else {
        const signal = opts.signal;
        const onAbort = () => this.cancel(entry);
        signal.addEventListener('abort', onAbort, { once: true });
        entry.detach = () => signal.removeEventListener('abort', onAbort);
      }
    }
    this.queue.push(entry);
    this.pump();
    return handle;
  }

  /** Start and wait: the runner as an async function (for the CLI). */
  run<O = unknown>(task: string, input: unknown, opts: JobOptions = {}): Promise<O> {
    return this.start<O>(task, input, opts).result;
  }

  /**
   * Cancels every queued and running job (e.g. when the window closes). Idle workers are kept: the runner stays
   * usable, and unref'd idle workers hold no job and do not keep the process alive; close() ends them.
   */
  cancelAll(): void {
    for (const e of [...this.queue, ...this.running]) this.cancel(e);
  }

  /**
   * Cancels all jobs, terminates the idle workers and refuses new jobs; resolves once every worker has exited
   * (running ones after they stop by themselves or the grace period ends).
   */
  async close(): Promise<void> {
    this.closed = true;
    this.cancelAll();
    for (const slot of this.idle.splice(0)) this.kill(slot);
    await Promise.all([...this.live].map((s) => s.exited));
  }

  private pump(): void {
    while (this.running.size < this.concurrency && this.queue.length > 0) {
      const entry = this.queue.shift() as Entry;
      this.launch(entry);
    }
  }

  private kill(slot: Slot): void {
    slot.dead = true;
    slot.entry = null;
    void slot.worker.terminate();
  }

  private finish(entry: Entry, state: JobState, value: unknown): void {
    if (entry.state === 'done' || entry.state === 'failed' || entry.state === 'cancelled') return;
    entry.state = state;
    entry.detach();
    this.running.delete(entry);
    const slot = entry.slot;
    entry.slot = null;
    if (slot) {
      if (state === 'done' && this.reuse && !this.closed && !slot.dead) {
        // a clean finish: park it, unref'd so an idle worker never keeps the process alive
        slot.entry = null;
        slot.worker.unref();
        this.idle.push(slot);
      } else this.kill(slot);
    }
    if (state === 'done') entry.resolve(value);
    else entry.reject(value);
    this.pump();
  }

  /** A new worker with its listeners; they act on whatever job the slot holds when a message arrives. */
  private newSlot(): Slot {
    const worker = this.spawn();
    let exitedResolve!: () => void;
    const slot: Slot = { worker, entry: null, runId: 0, dead: false, exited: new Promise<void>((r) => (exitedResolve = r)) };
    this.live.add(slot);
    worker.on('message', (m: FromWorker) => {
      const entry = slot.entry;
      if (!entry || m.runId !== slot.runId) return;
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
      const entry = slot.entry;
      this.drop(slot);
      if (entry) this.finish(entry, entry.cancelRequested ? 'cancelled' : 'failed', entry.cancelRequested ? new CancelledError() : e);
    });
    worker.on('exit', (code) => {
      const entry = slot.entry;
      this.drop(slot);
      this.live.delete(slot);
      exitedResolve();
      if (!entry) return;
      if (entry.cancelRequested) this.finish(entry, 'cancelled', new CancelledError());
      else this.finish(entry, 'failed', new Error(`the worker for job ${entry.id} (${entry.task}) stopped unexpectedly (exit code ${code})`));
    });
    return slot;
  }

  /** Marks a worker that errored or exited as dead and takes it off the idle list (a new one is made on demand). */
  private drop(slot: Slot): void {
    slot.dead = true;
    const i = this.idle.indexOf(slot);
    if (i >= 0) this.idle.splice(i, 1);
  }

  private launch(entry: Entry): void {
    entry.state = 'running';
    this.running.add(entry);
    let slot = this.reuse ? this.idle.pop() : undefined;
    if (!slot) {
      try {
        slot = this.newSlot();
      } catch (e) {
        this.finish(entry, 'failed', e);
        return;
      }
    }
    slot.worker.ref();
    slot.entry = entry;
    slot.runId = nextRunId++;
    entry.slot = slot;
    const run: ToWorker = { type: 'run', runId: slot.runId, task: entry.task, input: entry.input };
    slot.worker.postMessage(run);
  }

  private cancel(entry: Entry): void {
    if (entry.state === 'queued') {
      const i = this.queue.indexOf(entry);
      if (i >= 0) this.queue.splice(i, 1);
      entry.state = 'cancelled';
      entry.detach();
      entry.reject(new CancelledError());
      return;
    }
    if (entry.state !== 'running' || entry.cancelRequested) return;
    entry.cancelRequested = true;
    const slot = entry.slot;
    if (!slot) return;
    const abort: ToWorker = { type: 'abort', runId: slot.runId };
    slot.worker.postMessage(abort);
    const timer = setTimeout(() => this.finish(entry, 'cancelled', new CancelledError()), this.graceMs);
    timer.unref?.();
  }
}
