// Files read whole into memory (CIF, model files, uploads): refused before reading when they are folders or
// larger than MAX_WHOLE_FILE_BYTES, and gzip data is decompressed with the same cap, so a small "gzip bomb"
// stops with a clear error instead of filling memory. Errors are InputErrors naming the file.
import { readFile, stat } from 'node:fs/promises';
import { gunzipSync } from 'node:zlib';
import { InputError } from '../core/errors.ts';
import { MAX_WHOLE_FILE_BYTES } from '../core/limits.ts';

const MIB = 1 << 20;

/** The InputError for an fs error while opening or reading `file` (not found, a folder, no permission). */
export function readError(file: string, err: unknown): Error {
  const code = (err as NodeJS.ErrnoException | undefined)?.code;
  if (code === 'ENOENT' || code === 'ENOTDIR') return new InputError('file not found', { file }, 'check the path');
  if (code === 'EACCES' || code === 'EPERM') return new InputError('cannot read the file: permission denied', { file });
  if (code === 'EISDIR') return new InputError('this is a folder, not a file', { file }, 'give the path of a file');
  return err instanceof Error ? err : new Error(String(err));
}

function tooLarge(file: string, what: string): InputError {
  return new InputError(`${what} is larger than ${MAX_WHOLE_FILE_BYTES / MIB} MiB`, { file }, 'this file is read whole into memory; for long trajectories use extended XYZ, which is streamed');
}

export function isGzipBytes(bytes: Uint8Array): boolean {
  return bytes.length >= 2 && bytes[0] === 0x1f && bytes[1] === 0x8b;
}

/** Decompress gzip bytes, refusing output beyond MAX_WHOLE_FILE_BYTES; plain bytes are returned as they are. */
export function gunzipCapped(bytes: Uint8Array, file: string): Buffer {
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (!isGzipBytes(bytes)) return buf;
  try {
    return gunzipSync(buf, { maxOutputLength: MAX_WHOLE_FILE_BYTES });
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ERR_BUFFER_TOO_LARGE' || e instanceof RangeError) throw tooLarge(file, 'the decompressed data');
    throw new InputError('the gzip data is damaged or truncated', { file }, 'copy the file again');
  }
}

/** The bytes of `file` (decompressed when gzip), within MAX_WHOLE_FILE_BYTES. */
export async function readWholeFile(file: string): Promise<Buffer> {
  let bytes: Buffer;
  try {
    const info = await stat(file);
    if (info.isDirectory()) throw Object.assign(new Error('folder'), { code: 'EISDIR' });
    if (info.size > MAX_WHOLE_FILE_BYTES) throw tooLarge(file, 'the file');
    bytes = await readFile(file);
  } catch (err) {
    throw err instanceof InputError ? err : readError(file, err);
  }
  return gunzipCapped(bytes, file);
}
