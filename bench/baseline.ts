// Side-by-side runs against a baseline (PW_BENCH_BASELINE=<git ref>): the ref's src-main and bench extracted from
// git into a temporary folder, and child processes of bench/feature-rate.ts run alternately on this tree and on
// the baseline, so that a loaded machine slows both alike. Used by features.bench.ts and training.bench.ts.
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, symlinkSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = join(dirname(fileURLToPath(import.meta.url)), '..');

/** The baseline tree of `ref` in a temporary folder, and a function that removes it; null (said) when git cannot. */
export function extractBaseline(ref: string): { root: string; remove: () => void } | null {
  const dir = mkdtempSync(join(tmpdir(), 'pw-baseline-'));
  try {
    execFileSync('sh', ['-c', `git -C "${here}" archive "${ref}" src-main bench | tar -x -C "${dir}"`]);
    symlinkSync(join(here, 'node_modules'), join(dir, 'node_modules'));
  } catch (error) {
    console.log(`baseline ${ref}: could not extract it (${String(error).split('\n')[0]})`);
    rmSync(dir, { recursive: true, force: true });
    return null;
  }
  return { root: dir, remove: () => rmSync(dir, { recursive: true, force: true }) };
}

/** One child of bench/feature-rate.ts on the source tree `root` (its last line, parsed), or an error line. */
export function rateChild<T>(root: string, args: string[]): T | { error: string } {
  const r = spawnSync(process.execPath, [...process.execArgv, join(here, 'bench/feature-rate.ts'), root, ...args], { encoding: 'utf8' });
  if (r.status !== 0) return { error: (r.stderr || '').trim().split('\n').slice(-1)[0] };
  return JSON.parse(r.stdout.trim().split('\n').slice(-1)[0]) as T;
}

/** This tree's root folder. */
export const thisTree = here;
