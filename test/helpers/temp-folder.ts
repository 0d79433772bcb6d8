// Vitest global setup: every test run gets its own temporary folder, removed at the end, so that `npm test`
// leaves the system's temporary folder as it found it — also for files the code under test makes there (the
// worker pool inherits TMPDIR; os.tmpdir() reads it on every call). Tests still remove their own folders. The
// command's cache folder (io/radial-table-store.ts) is put in it too, so that runs of the command in tests
// leave the user's cache alone.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export default function setup(): () => void {
  const previous = { TMPDIR: process.env.TMPDIR, TMP: process.env.TMP, TEMP: process.env.TEMP, POLARWEAVE_CACHE_DIR: process.env.POLARWEAVE_CACHE_DIR };
  const folder = mkdtempSync(join(tmpdir(), 'polarweave-tests-'));
  process.env.TMPDIR = process.env.TMP = process.env.TEMP = folder;
  process.env.POLARWEAVE_CACHE_DIR = join(folder, 'cache');
  return () => {
    rmSync(folder, { recursive: true, force: true });
    for (const [k, v] of Object.entries(previous)) {
      if (v === undefined) delete process.env[k];
      else process.env[k] = v;
    }
  };
}
