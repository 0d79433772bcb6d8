// Vitest global setup: every test run gets its own temporary folder, removed at the end, so that `npm test`
// leaves the system's temporary folder as it found it — also for files the code under test makes there (the
// worker pool inherits TMPDIR; os.tmpdir() reads it on every call). Tests still remove their own folders.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export default function setup(): () => void {
  const previous = { TMPDIR: process.env.TMPDIR, TMP: process.env.TMP, TEMP: process.env.TEMP };
  const folder = mkdtempSync(join(tmpdir(), 'polarweave-tests-'));
  process.env.TMPDIR = process.env.TMP = process.env.TEMP = folder;
  return () => {
    rmSync(folder, { recursive: true, force: true });
    for (const [k, v] of Object.entries(previous)) {
      if (v === undefined) delete process.env[k];
      else process.env[k] = v;
    }
  };
}
