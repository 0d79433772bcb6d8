// A small program for the runner tests: runs two jobs on a runner that keeps its workers, then either just
// ends its main module (the idle workers must not keep the process alive) or closes the runner first.
import { JobRunner } from '../../src-main/jobs/runner.ts';
import { tsWorkerFactory } from '../../src-main/jobs/spawn-ts.ts';

const mode = process.argv[2] === 'close' ? 'close' : 'leave';
const runner = new JobRunner({ spawn: tsWorkerFactory(new URL('./fixture-worker.ts', import.meta.url)), concurrency: 2, reuseWorkers: true });
const out = await Promise.all([runner.run('whoami', {}), runner.run('whoami', {})]);
if (mode === 'close') await runner.close();
process.stdout.write(JSON.stringify({ mode, out }) + '\n');
