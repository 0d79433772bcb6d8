// Extended XYZ files on disk: a streaming reader (1 MiB reads, lines split here, memory flat for files of any
// size; .gz read through a streaming gunzip), a byte-offset index for random access to frames, and an atomic
// writer. The text-level parser and formatter live in extxyz-parse.ts / extxyz-format.ts and are re-exported.
import { promises as fsp } from 'node:fs';
import type { FileHandle } from 'node:fs/promises';
import { CancelledError, InputError } from '../core/errors.ts';
import { MAX_LINE_BYTES } from '../core/limits.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { ExtxyzAssembler, type FrameDecision } from './extxyz-parse.ts';
import { formatExtxyzFrame } from './extxyz-format.ts';
import { atomicWriteStream } from './atomic.ts';
import { builtin } from './builtin.ts';
import { hasGzipName, isGzipHandle } from './gzip.ts';
import { readError } from './whole-file.ts';

export { parseExtxyz, ExtxyzAssembler, parseCommentLine, parseProperties, DEFAULT_PROPERTIES } from './extxyz-parse.ts';
export type { ColumnSpec, ColumnKind } from './extxyz-parse.ts';
export { formatExtxyzFrame } from './extxyz-format.ts';

const CHUNK_BYTES = 1 << 20;
/** A "line" longer than this is not extended XYZ (binary data, a broken file): refuse instead of buffering it. */
const MAX_LINE_CHARS = MAX_LINE_BYTES;

/** Which frames to read: start, start+step, … below stop (0-based; stop exclusive, open-ended if absent). */
export interface FrameRange {
  start?: number;
  stop?: number;
  step?: number;
}

export interface ReadOptions {
  signal?: AbortSignal;
  range?: FrameRange;
}

async function openForReading(file: string): Promise<FileHandle> {
  let fh: FileHandle;
  try {
    fh = await fsp.open(file, 'r');
  } catch (err) {
    throw readError(file, err);
  }
  // a folder opens on some systems and fails only at the first read: refuse it here, by name
  if ((await fh.stat()).isDirectory()) {
    await fh.close();
    throw readError(file, Object.assign(new Error('folder'), { code: 'EISDIR' }));
  }
  return fh;
}


/**
 * The file's bytes (decompressed when it is gzip, recognised by its magic bytes), in chunks of about 1 MiB.
 * A plain file reuses one buffer: the consumer must be done with a chunk before asking for the next.
 * `start` skips that many bytes (read directly from there for a plain file; decompressed and dropped for gzip).
 */
export async function* byteChunks(file: string, signal?: AbortSignal, start = 0): AsyncGenerator<Buffer> {
  const fh = await openForReading(file);
  try {
    if (await isGzipHandle(fh)) {
      const gunzip = builtin('node:zlib').createGunzip({ chunkSize: CHUNK_BYTES });
      const raw = fh.createReadStream({ start: 0, highWaterMark: CHUNK_BYTES, autoClose: false });
      raw.on('error', (e) => gunzip.destroy(e));
      raw.pipe(gunzip);
      try {
        let at = 0;
        for await (const chunk of gunzip) {
          if (signal?.aborted) throw new CancelledError();
          const end = at + (chunk as Buffer).length;
          if (end > start) yield at >= start ? (chunk as Buffer) : (chunk as Buffer).subarray(start - at);
          at = end;
        }
      } catch (err) {
        if (err instanceof CancelledError || err instanceof InputError) throw err;
        const code = (err as NodeJS.ErrnoException).code ?? '';
        if (code.startsWith('Z_') || /unexpected end|incorrect header|invalid/i.test(String((err as Error).message))) {
          throw new InputError(`the gzip data is damaged or truncated (${(err as Error).message})`, { file }, 'copy the file again, or decompress it to see how far it reads');
        }
        throw err;
      } finally {
        raw.unpipe(gunzip);
        raw.destroy();
        gunzip.destroy();
      }
    } else {
      const buf = Buffer.allocUnsafe(CHUNK_BYTES);
      let position = start;
      for (;;) {
        if (signal?.aborted) throw new CancelledError();
        const { bytesRead } = await fh.read(buf, 0, CHUNK_BYTES, position);
        if (bytesRead === 0) break;
        position += bytesRead;
        yield buf.subarray(0, bytesRead);
      }
    }
  } finally {
    await fh.close().catch(() => undefined);
  }
}

function checkRange(range: FrameRange | undefined, file: string): Required<Omit<FrameRange, 'stop'>> & { stop?: number } {
  const start = range?.start ?? 0;
  const step = range?.step ?? 1;
  const stop = range?.stop;
  const hint = 'frame ranges are 0-based: start ≥ 0, stop ≥ start (exclusive), step ≥ 1';
  if (!Number.isInteger(start) || start < 0) throw new InputError(`bad frame range start ${start}`, { file }, hint);
  if (!Number.isInteger(step) || step < 1) throw new InputError(`bad frame range step ${step}`, { file }, hint);
  if (stop !== undefined && (!Number.isInteger(stop) || stop < start)) throw new InputError(`bad frame range stop ${stop}`, { file }, hint);
  return { start, step, stop };
}

/** Decide per frame index from a range: parse the wanted ones, skip the rest cheaply, stop after the last. */
export function rangeDecider(range: FrameRange | undefined, file = ''): (k: number) => FrameDecision {
  const { start, step, stop } = checkRange(range, file);
  return (k) => {
    if (stop !== undefined && k >= stop) return 'stop';
    if (k < start || (k - start) % step !== 0) return 'skip';
    return 'parse';
  };
}

/**
 * Stream the frames of an extended XYZ file (plain or gzip). Frames outside `range` are skipped without
 * parsing their numbers; the file is closed when the loop ends early. Throws InputError on any bad frame.
 * Lines are found as newline bytes in a working buffer (the unfinished last line of one read is moved to its
 * front before the next), and handed to the assembler as byte ranges: nothing is decoded but what needs it.
 */
export async function* readExtxyz(file: string, options: ReadOptions = {}): AsyncGenerator<Frame> {
  const { signal } = options;
  const asm = new ExtxyzAssembler(file, { decide: rangeDecider(options.range, file) });
  const out: Frame[] = [];
  let buf = Buffer.allocUnsafe(2 * CHUNK_BYTES);
  let carry = 0; // bytes of an unfinished line at the front of buf
  for await (const chunk of byteChunks(file, signal)) {
    const len = carry + chunk.length;
    if (len > buf.length) {
      if (len > MAX_LINE_CHARS + CHUNK_BYTES) {
        throw new InputError(`line ${asm.lineNumber + 1} is longer than ${MAX_LINE_CHARS >> 20} MiB`, { file, line: asm.lineNumber + 1, frame: asm.frameIndex }, 'this does not look like an extended XYZ text file');
      }
      const bigger = Buffer.allocUnsafe(Math.max(len, 2 * buf.length));
      buf.copy(bigger, 0, 0, carry);
      buf = bigger;
    }
    chunk.copy(buf, carry);
    const view = buf.subarray(0, len);
    let start = 0;
    let stopped = false;
    for (;;) {
      const nl = view.indexOf(10, start);
      if (nl < 0) break;
      const r = asm.push(view, start, nl);
      start = nl + 1;
      if (r === 'stop') {
        stopped = true;
        break;
      }
      if (r !== null) out.push(r);
    }
    for (const f of out) yield f;
    out.length = 0;
    if (stopped) return;
    buf.copyWithin(0, start, len);
    carry = len - start;
    if (signal?.aborted) throw new CancelledError();
  }
  // the last line may have no newline
  if (carry > 0) {
    const r = asm.push(buf, 0, carry);
    if (r === 'stop') return;
    if (r !== null) yield r;
  }
  asm.finish();
  if (asm.frameIndex === 0) {
    throw new InputError('no frames found', { file, line: 1, frame: 0 }, 'an extended XYZ file starts with a line holding the number of atoms');
  }
}

/** Where each frame starts: byte offset (in the decompressed data for .gz), 1-based line, atom count. */
export interface ExtxyzIndex {
  file: string;
  frames: number;
  /** Byte offset of each frame's atom count line; offsets[frames] is the end of the data. */
  offsets: Float64Array;
  /** 1-based line number of each frame's atom count line. */
  lines: Float64Array;
  atomCounts: Int32Array;
  /** True when the file is gzip: offsets refer to the decompressed text and readFrameAt streams from the start. */
  compressed: boolean;
}

class Growable {
  data = new Float64Array(1024);
  length = 0;
  push(x: number): void {
    if (this.length === this.data.length) {
      const d = new Float64Array(this.data.length * 2);
      d.set(this.data);
      this.data = d;
    }
    this.data[this.length++] = x;
  }
  done(): Float64Array {
    return this.data.slice(0, this.length);
  }
}

/**
 * Scan a file for frame boundaries without parsing any numbers but the atom counts: reads each count line,
 * then jumps over count + 1 lines by counting newline bytes. Fast (no text decoding).
 */
export async function indexExtxyz(file: string, options: { signal?: AbortSignal } = {}): Promise<ExtxyzIndex> {
  const offsets = new Growable();
  const lines = new Growable();
  const counts = new Growable();
  let compressed = false;
  {
    const fh = await openForReading(file);
    compressed = await isGzipHandle(fh).finally(() => fh.close());
  }
  let pos = 0; // absolute byte offset of the chunk start
  let line = 1; // 1-based number of the line at which `lineStart` begins
  let skip = 0; // lines still to jump over in the current frame
  let countBytes: number[] = []; // bytes of a count line split across chunks
  let countStart = 0;
  let partial = false; // inside a skipped line that continues in the next chunk
  const where = () => ({ file, line, frame: counts.length });
  const readCount = (): void => {
    const text = Buffer.from(countBytes).toString('utf8').trim();
    countBytes = [];
    if (text.length === 0) return; // blank line between frames
    if (!/^\d+$/.test(text)) {
      throw new InputError(`expected the atom count of a frame, found '${text.slice(0, 40)}'`, where(), 'each frame starts with a line holding only its number of atoms; the frame before may have a wrong count');
    }
    const n = Number(text);
    offsets.push(countStart);
    lines.push(line);
    counts.push(n);
    skip = n + 1;
  };
  for await (const chunk of byteChunks(file, options.signal)) {
    let i = 0;
    const len = chunk.length;
    while (i < len) {
      if (skip > 0) {
        const nl = chunk.indexOf(10, i);
        if (nl < 0) {
          partial = true;
          i = len;
          break;
        }
        partial = false;
        i = nl + 1;
        skip--;
        line++;
        continue;
      }
      // at (or inside) a count line
      if (countBytes.length === 0) countStart = pos + i;
      const nl = chunk.indexOf(10, i);
      const end = nl < 0 ? len : nl;
      for (let k = i; k < end; k++) countBytes.push(chunk[k]);
      if (countBytes.length > 64) {
        throw new InputError(`expected the atom count of a frame, found a long line`, where(), 'each frame starts with a line holding only its number of atoms');
      }
      if (nl < 0) {
        i = len;
        break;
      }
      i = nl + 1;
      readCount();
      line++;
    }
    pos += len;
  }
  if (countBytes.length > 0) {
    readCount();
  }
  // a last line without a newline still counts as a line
  if (skip === 1 && partial) skip = 0;
  if (skip > 0) {
    throw new InputError(`file ends inside frame ${counts.length - 1}: ${skip} more line(s) expected`, { file, line, frame: counts.length - 1 }, 'the file is truncated; copy it again or remove the incomplete last frame');
  }
  offsets.push(pos);
  const atomCounts = Int32Array.from(counts.done());
  return { file, frames: atomCounts.length, offsets: offsets.done(), lines: lines.done(), atomCounts, compressed };
}

/** Frame k of a file, using an index from indexExtxyz (one read of just that frame's bytes for plain files). */
export async function readFrameAt(file: string, index: ExtxyzIndex, k: number): Promise<Frame> {
  if (!Number.isInteger(k) || k < 0 || k >= index.frames) {
    throw new InputError(`frame ${k} does not exist: the file has ${index.frames} frames`, { file }, `choose a frame from 0 to ${index.frames - 1}`);
  }
  if (index.compressed) {
    for await (const f of readExtxyz(file, { range: { start: k, stop: k + 1 } })) return f;
    throw new InputError(`frame ${k} not found`, { file }, 'the file changed since it was indexed; index it again');
  }
  const start = index.offsets[k];
  const length = index.offsets[k + 1] - start;
  const buf = Buffer.alloc(length);
  const fh = await openForReading(file);
  try {
    const { bytesRead } = await fh.read(buf, 0, length, start);
    if (bytesRead !== length) throw new InputError(`frame ${k} is cut short`, { file, frame: k }, 'the file changed since it was indexed; index it again');
  } finally {
    await fh.close();
  }
  const f = frameFromBytes(file, buf, index.lines[k], k);
  if (f) return f;
  throw new InputError(`frame ${k} not found at its indexed offset`, { file, frame: k }, 'the file changed since it was indexed; index it again');
}

/** The first frame in `bytes` (one frame's text cut out of `file`, starting at 1-based line `firstLine`), or null. */
export function frameFromBytes(file: string, bytes: Uint8Array, firstLine: number, firstFrame: number): Frame | null {
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const asm = new ExtxyzAssembler(file, { firstLine, firstFrame });
  let s = 0;
  while (s <= buf.length) {
    let e = buf.indexOf(10, s);
    if (e < 0) e = buf.length;
    const r = asm.push(buf, s, e);
    if (r !== null && r !== 'stop') return r;
    s = e + 1;
  }
  asm.finish();
  return null;
}

export interface WriteOptions {
  signal?: AbortSignal;
  /** gzip the output (default: when the path ends in .gz). */
  gzip?: boolean;
}

/**
 * Write frames as extended XYZ, atomically (nothing appears at `file` unless every frame was written).
 * With gzip, text is compressed in ~1 MiB blocks, each a gzip member (a valid multi-member gzip file).
 */
export async function writeExtxyz(file: string, frames: Iterable<Frame> | AsyncIterable<Frame>, options: WriteOptions = {}): Promise<number> {
  const gzip = options.gzip ?? hasGzipName(file);
  const out = atomicWriteStream(file);
  let block: string[] = [];
  let blockChars = 0;
  let count = 0;
  const flush = async (): Promise<void> => {
    if (blockChars === 0) return;
    const text = block.join('');
    block = [];
    blockChars = 0;
    await out.write(gzip ? builtin('node:zlib').gzipSync(Buffer.from(text, 'utf8')) : text);
  };
  try {
    for await (const frame of frames as AsyncIterable<Frame>) {
      if (options.signal?.aborted) throw new CancelledError();
      const text = formatExtxyzFrame(frame);
      block.push(text);
      blockChars += text.length;
      count++;
      if (blockChars >= CHUNK_BYTES) await flush();
    }
    await flush();
    await out.commit();
  } catch (err) {
    await out.abort();
    throw err;
  }
  return count;
}
