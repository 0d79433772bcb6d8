// The worker side of the job runner: call `serveTasks(registry)` from a worker entry module. It waits for one
// 'run' message, runs the named task with an AbortSignal tied to 'abort' messages, and posts progress, the
// result or the error back. One job per worker keeps cancel simple: the parent can always terminate.
import { parentPort } from 'node:worker_threads';
import type { Progress } from '../core/model-types.ts';
import { serialiseError, type FromWorker, type ToWorker } from './protocol.ts';
import type { TaskRegistry } from './task.ts';

/** Progress messages closer together than this are merged (the last one wins), except the final one. */
const PROGRESS_INTERVAL_MS = 50;

export function serveTasks(registry: TaskRegistry): void {
  const port = parentPort;
  if (!port) throw new Error('serveTasks must be called inside a worker thread');
  const controller = new AbortController();
  const post = (m: FromWorker) => port.postMessage(m);
  let lastSent = 0;
  let pending: Progress | null = null;
  let timer: ReturnType<typeof setTimeout> | null = null;
  const flush = () => {
    timer = null;
    if (pending) {
      post({ type: 'progress', progress: pending });
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
  let started = false;
  port.on('message', async (msg: ToWorker) => {
    if (msg.type === 'abort') {
      controller.abort();
      return;
    }
    if (msg.type !== 'run' || started) return;
    started = true;
    const task = registry[msg.task];
    try {
      if (!task) throw new Error(`unknown job task "${msg.task}" (known: ${Object.keys(registry).join(', ')})`);
      const value = await task(msg.input, { progress, log: (text) => post({ type: 'log', text }), signal: controller.signal });
      if (timer) clearTimeout(timer);
      flush();
      post({ type: 'result', value });
    } catch (e) {
      if (timer) clearTimeout(timer);
      flush();
      post({ type: 'error', error: serialiseError(e) });
    }
  });
}
