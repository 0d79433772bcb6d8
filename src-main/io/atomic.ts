// Atomic file writes: data goes to a temporary file in the target's own folder, is flushed to disk (fsync),
// and only then renamed over the target. A crash or an error mid-way leaves the old file untouched and no
// half-written output; the temporary file is removed on failure.
import { promises as fsp } from 'node:fs';
import type { FileHandle } from 'node:fs/promises';
import path from 'node:path';
import { randomBytes } from 'node:crypto';
import { InputError } from '../core/errors.ts';

function tempPathFor(target: string): string {
  const dir = path.dirname(target);
  const tag = `${process.pid}-${randomBytes(6).toString('hex')}`;
  return path.join(dir, `.${path.basename(target)}.${tag}.tmp`);
}

function processAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === 'EPERM'; // alive, but someone else's
  }
}

const swept = new Set<string>();

/**
 * Remove temporaries of `target` left by a run that was killed mid-write (kill -9, power loss): files named as
 * tempPathFor names them, whose writing process no longer exists. Only our own pattern is touched, once per
 * target and process; failures are ignored (the write itself reports real problems).
 */
export async function removeStaleTemporaries(target: string): Promise<string[]> {
  const key = path.resolve(target);
  if (swept.has(key)) return [];
  swept.add(key);
  const base = `.${path.basename(target)}.`;
  const removed: string[] = [];
  let names: string[];
  try {
    names = await fsp.readdir(path.dirname(target));
  } catch {
    return removed;
  }
  for (const name of names) {
    if (!name.startsWith(base)) continue;
    const m = /^(\d+)-[0-9a-f]{12}\.tmp$/.exec(name.slice(base.length));
    if (!m || Number(m[1]) === process.pid || processAlive(Number(m[1]))) continue;
    const p = path.join(path.dirname(target), name);
    await removeQuietly(p);
    removed.push(p);
  }
  return removed;
}

/** Turn an fs error into a message that says which file and what to do. */
export function writeError(target: string, err: unknown): Error {
  const code = (err as NodeJS.ErrnoException | undefined)?.code;
  if (code === 'ENOENT') return new InputError('cannot write: the folder does not exist', { file: target }, 'create the folder first or choose another output path');
  if (code === 'EACCES' || code === 'EPERM') return new InputError('cannot write: permission denied', { file: target }, 'choose a folder you can write to');
  if (code === 'ENOSPC' || code === 'EDQUOT') return new InputError('cannot write: the disk is full', { file: target }, 'free some space or write elsewhere');
  if (code === 'EISDIR') return new InputError('cannot write: the output path is a folder', { file: target }, 'give a file name');
  return err instanceof Error ? err : new Error(String(err));
}

async function removeQuietly(p: string): Promise<void> {
  try {
    await fsp.unlink(p);
  } catch {
    // already gone: nothing to clean up
  }
}

/** Flush the folder entry of the rename too, where the platform allows it (not on Windows). */
export async function syncFolder(dir: string): Promise<void> {
  let fh: FileHandle | undefined;
  try {
    fh = await fsp.open(dir, 'r');
    await fh.sync();
  } catch {
    // some file systems and Windows refuse fsync on a folder; the rename itself is still atomic
  } finally {
    await fh?.close().catch(() => undefined);
  }
}

/** Write `data` to `target` atomically (temp file in the same folder, fsync, rename). */
export async function writeFileAtomic(target: string, data: string | Uint8Array): Promise<void> {
  await removeStaleTemporaries(target);
  const tmp = tempPathFor(target);
  let fh: FileHandle | undefined;
  try {
    fh = await fsp.open(tmp, 'wx', 0o644);
    await fh.writeFile(data);
    await fh.sync();
    await fh.close();
    fh = undefined;
    await fsp.rename(tmp, target);
  } catch (err) {
    await fh?.close().catch(() => undefined);
    await removeQuietly(tmp);
    throw writeError(target, err);
  }
  await syncFolder(path.dirname(target));
}

export interface AtomicWriteStream {
  /** Append text or bytes; resolves when buffered (flushes to the temp file every ~1 MiB). */
  write(chunk: string | Uint8Array): Promise<void>;
  /** Flush, fsync and rename over the target. Nothing is visible at the target before this. */
  commit(): Promise<void>;
  /** Drop everything written so far and remove the temp file; the target stays as it was. */
  abort(): Promise<void>;
  /** The temporary file being written (for tests and error messages). */
  readonly tempPath: string;
}

const FLUSH_BYTES = 1 << 20;

/**
 * A streamed atomic write for large outputs (trajectory CSV, long extended XYZ): chunks are buffered and
 * appended to a temporary file beside the target; commit() renames it into place, abort() removes it.
 */
export function atomicWriteStream(target: string): AtomicWriteStream {
  const tmp = tempPathFor(target);
  let opened: Promise<FileHandle> | undefined;
  let pending: Buffer[] = [];
  let pendingBytes = 0;
  let state: 'open' | 'committed' | 'aborted' | 'failed' = 'open';

  const handle = (): Promise<FileHandle> => (opened ??= removeStaleTemporaries(target).then(() => fsp.open(tmp, 'wx', 0o644)));

  async function flush(): Promise<void> {
    if (pendingBytes === 0) return;
    const data = pending.length === 1 ? pending[0] : Buffer.concat(pending, pendingBytes);
    pending = [];
    pendingBytes = 0;
    const fh = await handle();
    let off = 0;
    while (off < data.length) {
      const { bytesWritten } = await fh.write(data, off, data.length - off);
      off += bytesWritten;
    }
  }

  async function fail(err: unknown): Promise<never> {
    state = 'failed';
    if (opened) await (await opened.catch(() => undefined))?.close().catch(() => undefined);
    await removeQuietly(tmp);
    throw writeError(target, err);
  }

  function checkOpen(what: string): void {
    if (state !== 'open') throw new Error(`atomicWriteStream(${target}): ${what} after ${state}`);
  }

  return {
    tempPath: tmp,
    async write(chunk) {
      checkOpen('write');
      const buf = typeof chunk === 'string' ? Buffer.from(chunk, 'utf8') : Buffer.from(chunk.buffer, chunk.byteOffset, chunk.byteLength);
      // copy bytes the caller may reuse; strings are already fresh buffers
      pending.push(typeof chunk === 'string' ? buf : Buffer.from(buf));
      pendingBytes += buf.length;
      if (pendingBytes >= FLUSH_BYTES) {
        try {
          await flush();
        } catch (err) {
          await fail(err);
        }
      }
    },
    async commit() {
      checkOpen('commit');
      try {
        await handle(); // an empty output is still a file
        await flush();
        const fh = await handle();
        await fh.sync();
        await fh.close();
        opened = undefined;
        await fsp.rename(tmp, target);
        state = 'committed';
      } catch (err) {
        await fail(err);
      }
      await syncFolder(path.dirname(target));
    },
    async abort() {
      if (state !== 'open') return;
      state = 'aborted';
      pending = [];
      pendingBytes = 0;
      if (opened) await (await opened.catch(() => undefined))?.close().catch(() => undefined);
      await removeQuietly(tmp);
    },
  };
}
