// Gzip, recognised in one place: by the magic bytes 1f 8b at the start of the data (what the file holds), and
// by the .gz ending of a name (what a file to be written should hold). Every reader and writer asks here.
import { promises as fsp } from 'node:fs';
import type { FileHandle } from 'node:fs/promises';
import { InputError } from '../core/errors.ts';
import { MAX_WHOLE_FILE_BYTES } from '../core/limits.ts';
import { builtin } from './builtin.ts';

/** True when the bytes start with the gzip magic number. */
export function isGzipData(bytes: Uint8Array): boolean {
  return bytes.length >= 2 && bytes[0] === 0x1f && bytes[1] === 0x8b;
}

/** True when an open file starts with the gzip magic number. */
export async function isGzipHandle(fh: FileHandle): Promise<boolean> {
  const head = Buffer.alloc(2);
  const { bytesRead } = await fh.read(head, 0, 2, 0);
  return isGzipData(head.subarray(0, bytesRead));
}

/** True when the file at `path` starts with the gzip magic number. */
export async function isGzipFile(path: string): Promise<boolean> {
  const fh = await fsp.open(path, 'r');
  try {
    return await isGzipHandle(fh);
  } finally {
    await fh.close();
  }
}

/** True when a name ends in .gz (the data written there should be compressed). */
export function hasGzipName(name: string): boolean {
  return /\.gz$/i.test(name);
}

/** The name without a trailing .gz. */
export function withoutGzipName(name: string): string {
  return name.replace(/\.gz$/i, '');
}

/**
 * The bytes, decompressed when they are gzip, refusing output beyond `maxBytes` (default MAX_WHOLE_FILE_BYTES:
 * a small "gzip bomb" stops with a clear error instead of filling memory); damaged gzip data is an InputError
 * naming `file`. Plain bytes are returned as they are.
 */
export function gunzipIfGzip(bytes: Uint8Array, file: string, maxBytes = MAX_WHOLE_FILE_BYTES): Buffer {
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (!isGzipData(bytes)) return buf;
  try {
    return builtin('node:zlib').gunzipSync(buf, { maxOutputLength: maxBytes });
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ERR_BUFFER_TOO_LARGE' || e instanceof RangeError) {
      throw new InputError(`the decompressed data is larger than ${maxBytes / (1 << 20)} MiB`, { file }, 'this file is read whole into memory; for long trajectories use extended XYZ, which is streamed');
    }
    throw new InputError('the gzip data is damaged or truncated', { file }, 'copy the file again');
  }
}
