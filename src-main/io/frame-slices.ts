// Byte-level framing of an extended XYZ file for the streaming predictor: walks the file from a known frame
// boundary (byte offset, frame index, line number), reads only each frame's atom-count line and jumps over its
// other lines by counting newline bytes. Selected frames come out as their raw bytes (parsed later, in a worker);
// skipped frames cost one newline scan. Memory stays at one read buffer plus the frame being collected, and
// every frame reports the byte offset after it, which is what a resume checkpoint stores.
import { CancelledError, InputError } from '../core/errors.ts';
import { byteChunks } from './extxyz.ts';

/** Where to start: a frame boundary (the atom-count line of frame `index`). */
export interface SlicePosition {
  /** Byte offset (of the decompressed data for .gz). */
  offset: number;
  /** 0-based index of the frame that starts there. */
  index: number;
  /** 1-based line number at that offset. */
  line: number;
}

export interface FrameSlice {
  index: number;
  /** 1-based line of the frame's atom-count line. */
  line: number;
  atoms: number;
  /** Byte offset just past the frame: where the next frame (or the end) begins. */
  next: SlicePosition;
  /** The frame's bytes when it was selected, else null. */
  bytes: Buffer | null;
}

export type SliceDecision = 'take' | 'skip' | 'stop';

/**
 * Frames of `file` from `from` on. `decide(index)` says which to take; 'stop' ends the walk. A file that ends
 * inside a frame, or a count line that is not a whole number, is an InputError naming the line and frame.
 */
export async function* frameSlices(file: string, from: SlicePosition, decide: (index: number) => SliceDecision, signal?: AbortSignal): AsyncGenerator<FrameSlice> {
  let pos = from.offset; // absolute offset of the current chunk's first byte
  let line = from.line;
  let index = from.index;
  let state: 'count' | 'body' = 'count';
  let countBytes: number[] = [];
  let frameStart = from.offset;
  let frameLine = from.line;
  let atoms = 0;
  let remaining = 0; // lines of the current frame still to pass
  let decision: SliceDecision = 'take';
  let parts: Buffer[] = [];
  let lastPartial = false; // the last byte seen was not a newline
  const where = () => ({ file, line, frame: index });

  const finishCount = (): 'frame' | 'blank' => {
    const text = Buffer.from(countBytes).toString('latin1').trim();
    countBytes = [];
    if (text.length === 0) return 'blank';
    if (!/^\d+$/.test(text)) {
      throw new InputError(`expected the atom count of a frame, found '${text.slice(0, 40)}'`, where(), 'each frame starts with a line holding only its number of atoms; the frame before may have a wrong count');
    }
    atoms = Number(text);
    if (atoms === 0) throw new InputError('the frame has no atoms (its count line says 0)', where(), 'remove the empty frame: there is nothing to compute for it');
    remaining = atoms + 1;
    return 'frame';
  };

  for await (const chunk of byteChunks(file, signal, from.offset)) {
    let i = 0;
    const len = chunk.length;
    while (i < len) {
      if (state === 'count') {
        if (countBytes.length === 0) {
          frameStart = pos + i;
          frameLine = line;
        }
        const nl = chunk.indexOf(10, i);
        const end = nl < 0 ? len : nl;
        for (let k = i; k < end; k++) countBytes.push(chunk[k]);
        if (countBytes.length > 64) throw new InputError('expected the atom count of a frame, found a long line', where(), 'each frame starts with a line holding only its number of atoms');
        if (nl < 0) {
          i = len;
          lastPartial = true;
          break;
        }
        i = nl + 1;
        lastPartial = false;
        // a byte-order mark before the first count line carries nothing (the other readers skip it too)
        if (frameStart === 0 && countBytes[0] === 0xef && countBytes[1] === 0xbb && countBytes[2] === 0xbf) countBytes.splice(0, 3);
        const raw = Buffer.from(countBytes);
        const kind = finishCount(); // errors name the count line itself
        line++;
        if (kind === 'blank') continue;
        decision = decide(index);
        if (decision === 'stop') return;
        state = 'body';
        parts = decision === 'take' ? [raw, Buffer.from([10])] : [];
        continue;
      }
      // body: pass `remaining` newlines
      let k = i;
      while (remaining > 0) {
        const nl = chunk.indexOf(10, k);
        if (nl < 0) break;
        k = nl + 1;
        remaining--;
        line++;
      }
      const end = remaining > 0 ? len : k;
      if (decision === 'take') parts.push(Buffer.from(chunk.subarray(i, end)));
      lastPartial = remaining > 0 && end > i && chunk[end - 1] !== 10;
      i = end;
      if (remaining === 0) {
        const next = { offset: pos + i, index: index + 1, line };
        yield { index, line: frameLine, atoms, next, bytes: decision === 'take' ? Buffer.concat(parts) : null };
        parts = [];
        index++;
        state = 'count';
        if (signal?.aborted) throw new CancelledError();
      }
    }
    pos += len;
  }
  if (state === 'count') {
    if (countBytes.length > 0 && finishCount() === 'frame') {
      throw new InputError(`file ends inside frame ${index}: only its atom count line is there`, where(), 'the file is truncated; copy it again or remove the incomplete last frame');
    }
    if (index === 0 && from.offset === 0) {
      throw new InputError('no frames found', { file, line: 1, frame: 0 }, 'an extended XYZ file starts with a line holding the number of atoms');
    }
    return;
  }
  // a last line without a newline still counts
  if (remaining === 1 && lastPartial) {
    const next = { offset: pos, index: index + 1, line: line + 1 };
    yield { index, line: frameLine, atoms, next, bytes: decision === 'take' ? Buffer.concat(parts) : null };
    return;
  }
  throw new InputError(`file ends inside frame ${index}: ${remaining} more line(s) expected`, where(), 'the file is truncated; copy it again or remove the incomplete last frame');
}
