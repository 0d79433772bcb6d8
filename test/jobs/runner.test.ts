// The job runner: results and progress from a worker thread, typed errors across the thread boundary,
// cancel (polite and by terminate), queueing under a concurrency limit, and reused workers (reuseWorkers).
import { spawn as spawnProcess } from 'node:child_process';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';
import type { Worker } from 'node:worker_threads';
import { describe, expect, it } from 'vitest';
import { CancelledError, InputError } from '../../src-main/core/errors.ts';
import { JobRunner } from '../../src-main/jobs/runner.ts';
import { tsWorkerFactory } from '../../src-main/jobs/spawn-ts.ts';

const spawn = tsWorkerFactory(new URL('./fixture-worker.ts', import.meta.url));

/** A spawn that remembers its workers and when each exits, to count workers and see them terminated. */
function countingSpawn() {
  const made: { worker: Worker; exited: Promise<number>; hasExited: () => boolean }[] = [];
  const make = () => {
    const worker = spawn();
    let gone = false;
    const exited = new Promise<number>((r) => worker.once('exit', (code) => ((gone = true), r(code))));
    made.push({ worker, exited, hasExited: () => gone });
    return worker;
  };
  return { spawn: make, made };
}

type Who = { threadId: number; served: number };

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

describe('JobRunner with reuseWorkers', () => {
  it('runs several jobs in turn on one worker', async () => {
    const c = countingSpawn();
    const runner = new JobRunner({ spawn: c.spawn, concurrency: 1, reuseWorkers: true });
    const seen: Who[] = [];
    for (let k = 0; k < 3; k++) seen.push(await runner.run<Who>('whoami', {}));
    expect(seen.map((w) => w.served)).toEqual([1, 2, 3]);
    expect(new Set(seen.map((w) => w.threadId)).size).toBe(1);
    expect(c.made).toHaveLength(1);
    await runner.close();
  });

  it('gives each job a fresh worker without the option', async () => {
    const c = countingSpawn();
    const runner = new JobRunner({ spawn: c.spawn, concurrency: 1 });
    const seen: Who[] = [];
    for (let k = 0; k < 3; k++) seen.push(await runner.run<Who>('whoami', {}));
    expect(seen.map((w) => w.served)).toEqual([1, 1, 1]);
    expect(c.made).toHaveLength(3);
  });

  it('keeps progress, results and late messages of one job away from the next on the same worker', async () => {
    const runner = new JobRunner({ spawn, concurrency: 1, reuseWorkers: true });
    const firstLogs: string[] = [];
    expect(await runner.run('late', { afterMs: 40 }, { onLog: (t) => firstLogs.push(t) })).toBe('early');
    const logs: string[] = [];
    const stages: string[] = [];
    const out = await runner.run<{ sum: number }>('count', { n: 8, delayMs: 20 }, { onLog: (t) => logs.push(t), onProgress: (p) => stages.push(p.stage) });
    expect(out.sum).toBe(36);
    // the late messages were posted while 'count' ran on that worker, and went to neither job
    expect(logs).toEqual([]);
    expect(firstLogs).toEqual([]);
    expect(new Set(stages)).toEqual(new Set(['counting']));
    const who = await runner.run<Who>('whoami', {});
    expect(who.served).toBe(1); // 'late' and 'count' ran on it before: same worker throughout
    await runner.close();
  });

  it('terminates a cancelled job\'s worker and runs the next job on a fresh one', async () => {
    const c = countingSpawn();
    const runner = new JobRunner({ spawn: c.spawn, concurrency: 1, reuseWorkers: true, graceMs: 10_000 });
    const before = await runner.run<Who>('whoami', {});
    const job = runner.start('polite', {});
    const next = runner.start<Who>('whoami', {});
    expect(next.state()).toBe('queued');
    await new Promise((r) => setTimeout(r, 200));
    job.cancel();
    await expect(job.result).rejects.toBeInstanceOf(CancelledError);
    const after = await next.result;
    expect(after.served).toBe(1);
    expect(after.threadId).not.toBe(before.threadId);
    expect(c.made).toHaveLength(2);
    await c.made[0].exited; // the worker that ran the cancelled job is gone
    await runner.close();
  });

  it('does not reuse the worker of a failed job', async () => {
    const c = countingSpawn();
    const runner = new JobRunner({ spawn: c.spawn, concurrency: 1, reuseWorkers: true });
    const before = await runner.run<Who>('whoami', {});
    await expect(runner.run('fail', { line: 1 })).rejects.toBeInstanceOf(InputError);
    const after = await runner.run<Who>('whoami', {});
    expect(after.served).toBe(1);
    expect(after.threadId).not.toBe(before.threadId);
    await c.made[0].exited;
    await expect(runner.run('crash', {})).rejects.toThrow(/exit code 3/);
    expect((await runner.run<Who>('whoami', {})).served).toBe(1);
    expect(c.made).toHaveLength(3);
    await runner.close();
  });

  it('replaces an idle worker that exited by itself', async () => {
    const c = countingSpawn();
    const runner = new JobRunner({ spawn: c.spawn, concurrency: 1, reuseWorkers: true });
    const first = await runner.run<number>('exitSoon', { afterMs: 20 });
    expect(await c.made[0].exited).toBe(0);
    const who = await runner.run<Who>('whoami', {});
    expect(who.threadId).not.toBe(first);
    expect(who.served).toBe(1);
    expect(c.made).toHaveLength(2);
    await runner.close();
  });

  it('queues beyond the concurrency limit and keeps no more workers than that', async () => {
    const c = countingSpawn();
    const runner = new JobRunner({ spawn: c.spawn, concurrency: 2, reuseWorkers: true });
    const jobs = Array.from({ length: 6 }, () => runner.start<Who>('whoami', {}));
    expect(jobs.map((j) => j.state())).toEqual(['running', 'running', 'queued', 'queued', 'queued', 'queued']);
    const seen = await Promise.all(jobs.map((j) => j.result));
    expect(c.made).toHaveLength(2);
    // each of the two workers counted its own jobs 1, 2, …, and between them they served all six
    const perWorker = new Map<number, number[]>();
    for (const w of seen) perWorker.set(w.threadId, [...(perWorker.get(w.threadId) ?? []), w.served]);
    expect(perWorker.size).toBe(2);
    for (const counts of perWorker.values()) expect([...counts].sort((a, b) => a - b)).toEqual(counts.map((_, i) => i + 1));
    await runner.close();
  });

  it('close() terminates idle workers, cancels running jobs and refuses new ones', async () => {
    const c = countingSpawn();
    const runner = new JobRunner({ spawn: c.spawn, concurrency: 2, reuseWorkers: true, graceMs: 10_000 });
    await runner.run<Who>('whoami', {});
    const busy = runner.start('polite', {});
    const busyOutcome = busy.result.catch((e: unknown) => e);
    expect(c.made).toHaveLength(1); // the idle worker took the job
    await runner.run<Who>('whoami', {}); // a second worker, idle after this
    expect(c.made).toHaveLength(2);
    expect(busy.state()).toBe('running');
    await runner.close();
    expect(await busyOutcome).toBeInstanceOf(CancelledError);
    expect(c.made.every((m) => m.hasExited())).toBe(true);
    await expect(runner.run('whoami', {})).rejects.toThrow(/closed/);
  });

  it('does not keep the process alive with idle workers, closed or not', async () => {
    const tsx = createRequire(import.meta.url).resolve('tsx');
    const program = fileURLToPath(new URL('./fixture-idle-runner.ts', import.meta.url));
    for (const mode of ['leave', 'close']) {
      const child = spawnProcess(process.execPath, ['--import', tsx, program, mode], { stdio: ['ignore', 'pipe', 'pipe'] });
      let out = '';
      let err = '';
      child.stdout.on('data', (d: Buffer) => (out += d.toString()));
      child.stderr.on('data', (d: Buffer) => (err += d.toString()));
      // a guard against hanging, not a speed check: a process held open by its idle workers never exits
      const guard = setTimeout(() => child.kill('SIGKILL'), 30_000);
      const code = await new Promise<number | null>((r) => child.on('exit', (c) => r(c)));
      clearTimeout(guard);
      expect({ code, err }).toEqual({ code: 0, err: '' });
      const parsed = JSON.parse(out) as { mode: string; out: Who[] };
      expect(parsed.mode).toBe(mode);
      expect(parsed.out.map((w) => w.served)).toEqual([1, 1]);
    }
  }, 90_000);
});
