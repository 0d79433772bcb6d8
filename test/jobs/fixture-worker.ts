// A worker entry with small test tasks for the job runner's tests (progress, typed errors, cancel, reuse).
import { threadId } from 'node:worker_threads';
import { CancelledError, InputError } from '../../src-main/core/errors.ts';
import { serveTasks } from '../../src-main/jobs/serve.ts';

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Jobs this worker has served: shows whether a worker was reused. */
let served = 0;

serveTasks({
  async count(input: { n: number; delayMs: number }, ctx) {
    let sum = 0;
    for (let i = 1; i <= input.n; i++) {
      await sleep(input.delayMs);
      sum += i;
      ctx.progress({ stage: 'counting', done: i, total: input.n });
    }
    return { sum };
  },
  echo(input: { values: Float64Array }) {
    return { values: input.values, doubled: input.values.map((v) => 2 * v) };
  },
  fail(input: { line: number }) {
    throw new InputError('bad atom count', { file: 'broken.xyz', line: input.line, frame: 3 }, 'fix the count line');
  },
  async polite(_input: unknown, ctx) {
    // Checks its signal, as every long task should.
    for (;;) {
      if (ctx.signal.aborted) throw new CancelledError();
      ctx.progress({ stage: 'waiting', done: 0, total: 1 });
      await sleep(5);
    }
  },
  stubborn() {
    // Ignores abort and blocks its thread: only terminate() stops it.
    const end = Date.now() + 60_000;
    while (Date.now() < end) {
      /* busy */
    }
    return 'never';
  },
  crash() {
    process.exit(3);
  },
  whoami() {
    served++;
    return { threadId, served };
  },
  late(input: { afterMs: number }, ctx) {
    // posts after its result: those messages belong to this job, not to the next one on the same worker
    setTimeout(() => {
      ctx.log('late log');
      ctx.progress({ stage: 'late', done: 99, total: 99 });
    }, input.afterMs);
    return 'early';
  },
  exitSoon(input: { afterMs: number }) {
    // succeeds, then the (now idle) worker stops by itself
    setTimeout(() => process.exit(0), input.afterMs);
    return threadId;
  },
});
