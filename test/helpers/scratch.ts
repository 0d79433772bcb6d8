// Temporary folders for a test file, removed after its tests: `const tmp = scratchFolders('pw-x-')` at the top
// of the file, then `tmp()` wherever a fresh folder is needed.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll } from 'vitest';

export function scratchFolders(prefix: string): () => string {
  const made: string[] = [];
  afterAll(() => {
    for (const d of made) rmSync(d, { recursive: true, force: true });
  });
  return () => {
    const d = mkdtempSync(join(tmpdir(), prefix));
    made.push(d);
    return d;
  };
}
