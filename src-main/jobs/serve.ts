// The worker side of the job runner: call `serveTasks(registry)` from a worker entry module. It serves 'run'
// messages one at a time, each with its own AbortSignal (tied to 'abort' messages for that run) and its own
// progress throttle, and posts progress, the result or the error back, tagged with the run's id. A worker may
// serve many runs in sequence (a runner with reuseWorkers) or just one (the parent terminates it after).
import { parentPort } from 'node:worker_threads';
import type { Progress } from '../core/learning/model-types.ts';
import { serialiseError, type FromWorker, type ToWorker } from './protocol.ts';
import type { TaskRegistry } from './task.ts';

/** Progress messages closer together than this are merged (the last one wins), except the final one. */
const PROGRESS_INTERVAL_MS = 50;

/** Throttled progress for one run; `flush()` sends what is pending and stops the timer. */
function progressThrottle(send: (p: Progress) => void): { progress: (p: Progress) => void; flush: () => void } {
  let lastSent = 0;
  let pending: Progress | null = null;
  let timer: ReturnType<typeof setTimeout> | null = null;
  const flush = () => {
    if (timer) clearTimeout(timer);
    timer = null;
    if (pending) {
      send(pending);
      pending = null;
      lastSent = Date.now();
    }
  };
  const progress = (p: Progress) => {
    pending = { stage: String(p.stage), done: Number(p.done), total: Number(p.total) };
    const now = Date.now();
    if (now - lastSent >= PROGRESS_INTERVAL_MS || p.done >= p.total) flush();
    else if (!timer) timer = setTimeout(flush, PROGRESS_INTERVAL_MS - (now - lastSent));
  };
  return { progress, flush };
}

export function serveTasks(registry: TaskRegistry): void {
  const port = parentPort;
  if (!port) throw new Error('serveTasks must be called inside a worker thread');
  const post = (m: FromWorker) => port.postMessage(m);
  let current: { runId: number; controller: AbortController } | null = null;

  const serve = async (msg: Extract<ToWorker, { type: 'run' }>) => {
    const { runId } = msg;
    const controller = new AbortController();
    current = { runId, controller };
    const throttle = progressThrottle((progress) => post({ type: 'progress', runId, progress }));
    const task = registry[msg.task];
    try {
      if (!task) throw new Error(`unknown job task "${msg.task}" (known: ${Object.keys(registry).join(', ')})`);
      const value = await task(msg.input, { progress: throttle.progress, log: (text) => post({ type: 'log', runId, text }), signal: controller.signal });
      throttle.flush();
      post({ type: 'result', runId, value });
    } catch (e) {
      throttle.flush();
      post({ type: 'error', runId, error: serialiseError(e) });
    } finally {
      current = null;
    }
  };

  port.on('message', (msg: ToWorker) => {
    if (msg.type === 'abort') {
      // an abort for a run that already ended (it crossed the result on the way) is ignored
      if (current && current.runId === msg.runId) current.controller.abort();
      return;
    }
    if (msg.type !== 'run') return;
    if (current) {
      // the runner never does this; answering beats leaving the second job waiting for ever
      post({ type: 'error', runId: msg.runId, error: serialiseError(new Error(`this worker is busy with run ${current.runId}`)) });
      return;
    }
    void serve(msg);
  });
}
