// The messages between a job runner and its worker thread, and how errors cross the thread boundary with
// their type and their "where" (file, line, frame) intact. Every message carries the run id of the job it
// belongs to: a worker may serve many jobs in turn, and a finished task can still post (a late log, a stray
// progress timer), so the parent drops whatever does not carry the id of the job the worker is running now.
import { CancelledError, InputError, ModelError, PhysicsError, type Where } from '../core/errors.ts';
import type { Progress } from '../core/learning/model-types.ts';

/** Parent → worker. */
export type ToWorker = { type: 'run'; runId: number; task: string; input: unknown } | { type: 'abort'; runId: number };

/** Worker → parent. */
export type FromWorker =
  | { type: 'progress'; runId: number; progress: Progress }
  | { type: 'log'; runId: number; text: string }
  | { type: 'result'; runId: number; value: unknown }
  | { type: 'error'; runId: number; error: SerialisedError };

/** An error as plain data (structured-clone safe). */
export interface SerialisedError {
  name: string;
  message: string;
  problem?: string;
  where?: Where;
  hint?: string;
  stack?: string;
}

export function serialiseError(e: unknown): SerialisedError {
  if (e instanceof InputError) {
    return { name: e.name, message: e.message, problem: e.problem, where: { ...e.where }, hint: e.hint, stack: e.stack };
  }
  if (e instanceof PhysicsError) return { name: e.name, message: e.message, where: { ...e.where }, stack: e.stack };
  if (e instanceof Error) return { name: e.name, message: e.message, stack: e.stack };
  return { name: 'Error', message: String(e) };
}

/** Rebuilds a typed error on the receiving side, so `instanceof InputError` keeps working across threads. */
export function reviveError(s: SerialisedError): Error {
  let e: Error;
  switch (s.name) {
    case 'InputError':
      e = new InputError(s.problem ?? s.message, s.where ?? {}, s.hint);
      break;
    case 'PhysicsError':
      // The message already carries its "where" prefix; build with an empty where, then restore it.
      e = new PhysicsError(s.message);
      Object.defineProperty(e, 'where', { value: s.where ?? {}, enumerable: true });
      break;
    case 'ModelError':
      e = new ModelError(s.message);
      break;
    case 'CancelledError':
      e = new CancelledError();
      break;
    default:
      e = new Error(s.message);
      e.name = s.name;
  }
  if (s.stack) e.stack = s.stack;
  return e;
}
