// Running the `polarweave` command itself in benchmarks: a scratch checkout of this tree's pre-built program, the
// pre-built program of another git ref beside it, and the wall time, CPU time and peak memory of one run. Used by
// startup.bench.ts (one-frame predict, --help) and predict-command.bench.ts (long predict runs).
import { execFileSync, spawn } from 'node:child_process';
import { copyFileSync, mkdirSync, readFileSync, symlinkSync } from 'node:fs';
import { loadavg } from 'node:os';
import { join } from 'node:path';

const root = new URL('../', import.meta.url);
const here = new URL('.', root).pathname;

/**
 * This tree's command in a scratch folder: bin/, the sources (linked, for bin's freshness check) and the pre-built
 * program (scripts/build-cli.mjs). Returns the path of its bin/polarweave.mjs and of its out/cli folder.
 */
export function scratchCheckout(dir: string): { bin: string; bundle: string } {
  const checkout = join(dir, 'checkout');
  mkdirSync(join(checkout, 'bin'), { recursive: true });
  for (const f of ['polarweave.mjs', 'load-program.mjs']) copyFileSync(new URL(`bin/${f}`, root), join(checkout, 'bin', f));
  symlinkSync(new URL('src-main', root).pathname, join(checkout, 'src-main'));
  const bundle = join(checkout, 'out', 'cli');
  execFileSync(process.execPath, [new URL('scripts/build-cli.mjs', root).pathname, '--outdir', bundle], { stdio: 'ignore' });
  return { bin: join(checkout, 'bin', 'polarweave.mjs'), bundle };
}

/**
 * The command of git ref `ref` (its bin/, sources, build script), extracted into `dir`/baseline and pre-built there;
 * the path of its bin/polarweave.mjs, or an error message when git or the build fails.
 */
export function baselineCheckout(ref: string, dir: string): string | { error: string } {
  const base = join(dir, 'baseline');
  try {
    execFileSync('sh', ['-c', `mkdir -p "${base}" && git -C "${here}" archive "${ref}" bin src-main scripts package.json | tar -x -C "${base}"`]);
    symlinkSync(join(here, 'node_modules'), join(base, 'node_modules'));
    execFileSync(process.execPath, [join(base, 'scripts', 'build-cli.mjs')], { stdio: 'ignore' });
    return join(base, 'bin', 'polarweave.mjs');
  } catch (error) {
    return { error: String(error).split('\n')[0] };
  }
}

/** CPU seconds (user + system) of this process's finished children, from /proc/self/stat; null off Linux. */
export function childrenCpuSeconds(): number | null {
  try {
    const fields = readFileSync('/proc/self/stat', 'utf8').split(') ')[1].split(' ');
    // after "pid (comm) ": state is field 3, cutime 16 and cstime 17 (proc(5)), in clock ticks (100 a second on Linux)
    return (Number(fields[13]) + Number(fields[14])) / 100;
  } catch {
    return null;
  }
}

/** Wall and CPU milliseconds of one run of node with `args` (CPU NaN where it cannot be read). */
export function timed(args: string[], env: NodeJS.ProcessEnv = process.env): { wall: number; cpu: number } {
  const c0 = childrenCpuSeconds();
  const t0 = performance.now();
  execFileSync(process.execPath, args, { stdio: 'ignore', env });
  const wall = performance.now() - t0;
  const c1 = childrenCpuSeconds();
  return { wall, cpu: c0 === null || c1 === null ? NaN : 1000 * (c1 - c0) };
}

/** The peak resident memory so far (VmHWM, every thread) of process `pid` in bytes, from /proc; null when unreadable. */
function peakRss(pid: number): number | null {
  try {
    const m = /VmHWM:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
    return m ? Number(m[1]) * 1024 : null;
  } catch {
    return null;
  }
}

/**
 * One run of node with `args` in the background, its peak memory read from /proc every 50 ms (the last reading
 * before it ends: a peak in its last 50 ms can be missed). Wall seconds, CPU seconds of the whole process (every
 * thread; NaN off Linux) and peak RSS in bytes (NaN off Linux). Rejects, with the end of its standard error, when
 * it fails.
 */
export function measuredRun(args: string[]): Promise<{ seconds: number; cpuSeconds: number; peakRss: number }> {
  const c0 = childrenCpuSeconds();
  const t0 = performance.now();
  const child = spawn(process.execPath, args, { stdio: ['ignore', 'ignore', 'pipe'] });
  let peak = NaN;
  let stderr = '';
  child.stderr.on('data', (b: Buffer) => (stderr = (stderr + b.toString()).slice(-2000)));
  const timer = setInterval(() => {
    const p = child.pid === undefined ? null : peakRss(child.pid);
    if (p !== null) peak = Number.isNaN(peak) ? p : Math.max(peak, p);
  }, 50);
  return new Promise((resolve, reject) => {
    child.on('error', (e) => {
      clearInterval(timer);
      reject(e);
    });
    child.on('close', (code) => {
      clearInterval(timer);
      const seconds = (performance.now() - t0) / 1000;
      const c1 = childrenCpuSeconds();
      if (code !== 0) reject(new Error(`exit ${code}: ${stderr.trim().split('\n').slice(-1)[0]}`));
      else resolve({ seconds, cpuSeconds: c0 === null || c1 === null ? NaN : c1 - c0, peakRss: peak });
    });
  });
}

/** The load averages, as "1.0 0.8 0.5". */
export const loadText = (): string => loadavg().map((x) => x.toFixed(1)).join(' ');

/** The median of a non-empty list (the mean of the middle two for an even count). */
export function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = Math.floor(s.length / 2);
  return s.length % 2 === 1 ? s[m] : (s[m - 1] + s[m]) / 2;
}
