// The job runner: results and progress from a worker thread, typed errors across the thread boundary,
// cancel (polite and by terminate), queueing under a concurrency limit.
import { describe, expect, it } from 'vitest';
import { CancelledError, InputError } from '../../src-main/core/errors.ts';
import { JobRunner } from '../../src-main/jobs/runner.ts';
import { tsWorkerFactory } from '../../src-main/jobs/spawn-ts.ts';

const spawn = tsWorkerFactory(new URL('./fixture-worker.ts', import.meta.url));

describe('JobRunner', () => {
  it('runs a task in a worker and reports progress up to the end', async () => {
    const runner = new JobRunner({ spawn, concurrency: 2 });
    const seen: number[] = [];
    const job = runner.start<{ sum: number }>('count', { n: 5, delayMs: 1 }, { onProgress: (p) => seen.push(p.done) });
    expect(job.state()).toBe('running');
    const out = await job.result;
    expect(out.sum).toBe(15);
    expect(job.state()).toBe('done');
    // Throttled, but the final progress is always delivered and progress never goes backwards.
    expect(seen.at(-1)).toBe(5);
    expect([...seen].sort((a, b) => a - b)).toEqual(seen);
  });

  it('passes typed arrays through structured clone', async () => {
    const runner = new JobRunner({ spawn });
    const out = await runner.run<{ values: Float64Array; doubled: Float64Array }>('echo', { values: Float64Array.of(1, 2.5) });
    expect(out.doubled).toBeInstanceOf(Float64Array);
    expect([...out.doubled]).toEqual([2, 5]);
  });

  it('rebuilds an InputError with file, line and frame', async () => {
    const runner = new JobRunner({ spawn });
    const err = (await runner.run('fail', { line: 17 }).catch((e: unknown) => e)) as InputError;
    expect(err).toBeInstanceOf(InputError);
    expect(err.where).toEqual({ file: 'broken.xyz', line: 17, frame: 3 });
    expect(err.message).toContain('broken.xyz, line 17, frame 3');
    expect(err.hint).toBe('fix the count line');
  });

  it('reports an unknown task name as a failure', async () => {
    const runner = new JobRunner({ spawn });
    await expect(runner.run('no-such-task', {})).rejects.toThrow(/unknown job task "no-such-task"/);
  });

  it('cancels a task that watches its signal', async () => {
    const runner = new JobRunner({ spawn, graceMs: 10_000 });
    const job = runner.start('polite', {});
    await new Promise((r) => setTimeout(r, 300));
    const t0 = Date.now();
    job.cancel();
    await expect(job.result).rejects.toBeInstanceOf(CancelledError);
    expect(job.state()).toBe('cancelled');
    // Stopped by itself, well before the 10 s grace period.
    expect(Date.now() - t0).toBeLessThan(5000);
  });

  it('terminates a task that ignores abort after the grace period', async () => {
    const runner = new JobRunner({ spawn, graceMs: 200 });
    const job = runner.start('stubborn', {});
    await new Promise((r) => setTimeout(r, 300));
    job.cancel();
    await expect(job.result).rejects.toBeInstanceOf(CancelledError);
    expect(job.state()).toBe('cancelled');
  });

  it('reports a worker that exits as a failure', async () => {
    const runner = new JobRunner({ spawn });
    await expect(runner.run('crash', {})).rejects.toThrow(/stopped unexpectedly \(exit code 3\)/);
  });

  it('queues beyond the concurrency limit and cancels queued jobs at once', async () => {
    const runner = new JobRunner({ spawn, concurrency: 1 });
    const a = runner.start('count', { n: 3, delayMs: 20 });
    const b = runner.start('count', { n: 1, delayMs: 1 });
    const c = runner.start('count', { n: 1, delayMs: 1 });
    expect(a.state()).toBe('running');
    expect(b.state()).toBe('queued');
    c.cancel();
    expect(c.state()).toBe('cancelled');
    await expect(c.result).rejects.toBeInstanceOf(CancelledError);
    await a.result;
    await b.result;
    expect(b.state()).toBe('done');
  });

  it('cancels through an AbortSignal', async () => {
    const runner = new JobRunner({ spawn });
    const ac = new AbortController();
    const job = runner.start('polite', {}, { signal: ac.signal });
    setTimeout(() => ac.abort(), 200);
    await expect(job.result).rejects.toBeInstanceOf(CancelledError);
  });
});
