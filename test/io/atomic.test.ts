// Atomic writes: the target holds the old content or the whole new content, never a part; no temp files stay.
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { InputError } from '../../src-main/core/errors.ts';
import { atomicWriteStream, writeFileAtomic } from '../../src-main/io/atomic.ts';

let dir: string;
beforeAll(() => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'pw-atomic-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const temps = () => readdirSync(dir).filter((n) => n.endsWith('.tmp'));

describe('writeFileAtomic', () => {
  it('writes text and bytes, replacing an old file', async () => {
    const p = path.join(dir, 'a.txt');
    writeFileSync(p, 'old');
    await writeFileAtomic(p, 'new content');
    expect(readFileSync(p, 'utf8')).toBe('new content');
    await writeFileAtomic(p, Uint8Array.from([1, 2, 3]));
    expect(Array.from(readFileSync(p))).toEqual([1, 2, 3]);
    expect(temps()).toEqual([]);
  });

  it('fails with a clear InputError for a missing folder and leaves nothing behind', async () => {
    const p = path.join(dir, 'no-such-folder', 'a.txt');
    await expect(writeFileAtomic(p, 'x')).rejects.toBeInstanceOf(InputError);
    await expect(writeFileAtomic(p, 'x')).rejects.toThrow(/folder does not exist/);
  });

  it('leaves the old file intact when the rename fails (target is a folder)', async () => {
    const p = path.join(dir, 'is-a-folder');
    await writeFileAtomic(path.join(dir, 'keep.txt'), 'keep');
    const { mkdirSync } = await import('node:fs');
    mkdirSync(path.join(p, 'inner'), { recursive: true });
    await expect(writeFileAtomic(p, 'x')).rejects.toThrow();
    expect(existsSync(path.join(p, 'inner'))).toBe(true);
    expect(temps()).toEqual([]);
  });
});

describe('atomicWriteStream', () => {
  it('streams many chunks (past the 1 MiB flush size) and renames on commit', async () => {
    const p = path.join(dir, 'big.txt');
    writeFileSync(p, 'previous');
    const s = atomicWriteStream(p);
    const line = 'x'.repeat(999) + '\n';
    for (let k = 0; k < 3000; k++) await s.write(line);
    await s.write(Uint8Array.from([65, 66]));
    expect(readFileSync(p, 'utf8')).toBe('previous'); // nothing visible before commit
    expect(existsSync(s.tempPath)).toBe(true);
    await s.commit();
    const text = readFileSync(p, 'utf8');
    expect(text.length).toBe(3000 * 1000 + 2);
    expect(text.endsWith('\nAB')).toBe(true);
    expect(temps()).toEqual([]);
    await expect(s.write('more')).rejects.toThrow(/after committed/);
  });

  it('abort removes the temp file and keeps the old target', async () => {
    const p = path.join(dir, 'kept.txt');
    writeFileSync(p, 'old');
    const s = atomicWriteStream(p);
    for (let k = 0; k < 1500; k++) await s.write('y'.repeat(1000));
    await s.abort();
    expect(readFileSync(p, 'utf8')).toBe('old');
    expect(temps()).toEqual([]);
  });

  it('commits an empty file when nothing was written', async () => {
    const p = path.join(dir, 'empty.txt');
    const s = atomicWriteStream(p);
    await s.commit();
    expect(readFileSync(p, 'utf8')).toBe('');
  });
});
