// Decoded models kept in the command's cache folder (io/radial-table-store.ts cacheFolder), so that a short run
// (one predicted frame) with a model file it has read before skips parsing the JSON, the base64, the checksum walk
// and the schema and range check (io/model-file.ts parseModel, io/model-check.ts): 40–50 ms of a one-frame
// prediction. A cache only: any trouble reading or writing it is ignored, and the file is parsed as before.
//   When: only a program that knows its identity (bin/load-program.mjs: SHA-256 of the Node version, architecture and
//   the pre-built script's whole text; programIdentity) keeps or uses an entry, and only its own.
//   Key:  model-<first 24 hex digits of the model file's SHA-256>.<first 24 of the identity>.bin. An entry is what
//   this very program's parseModel gave for exactly those bytes, after every check passed; any edit to the file
//   (hostile or damaged included) changes its SHA-256 and so finds no entry, and is parsed and checked in full.
//   File: "PWMODEL1", the length of the skeleton as a 32-bit little-endian integer, 4 zero bytes, the skeleton
//   (UTF-8 JSON: { model, arrays }, the model with each typed array replaced by {"$typed": k}, arrays[k] =
//   [kind, byte offset, length]), then each array's bytes (little-endian, 8-byte aligned), then the SHA-256 of all
//   bytes before it. Read back into one SharedArrayBuffer, of which each array is a view (shared memory, as
//   parseModel gives them, so that workers read the one copy).
//   A model whose plain part JSON would not give back exactly (a key "$typed" or "__proto__", a −0) is not kept.
// Written atomically (temporary file, then rename: writeAtomically of io/radial-table-store.ts); the newest 3 entries are kept (a model can hold tens of MB).
import { closeSync, fstatSync, openSync, readSync } from 'node:fs';
import { endianness } from 'node:os';
import { join } from 'node:path';
import type { Model } from '../core/learning/model.ts';
import { cacheFolder, keepNewest, programIdentity, sha256, writeAtomically } from './radial-table-store.ts';

const MAGIC = Buffer.from('PWMODEL1', 'latin1');
const HEAD = 16;
/** Entries kept in the folder. */
const KEPT = 3;
/** Typed-array kinds an entry holds (the only ones parseModel makes). */
type Kind = 'f64' | 'i32';

const entryName = /^model-[0-9a-f]{24}\.[0-9a-f]{24}\.bin$/;

function entryFile(folder: string, fileSha256: string, identity: string): string {
  return join(folder, `model-${fileSha256.slice(0, 24)}.${identity.slice(0, 24)}.bin`);
}

/**
 * The model this program decoded from a file whose bytes have SHA-256 `fileSha256`, from the cache folder; null
 * when there is no identity, no entry, or the entry is damaged (its checksum) or not of this layout.
 */
export function cachedModel(fileSha256: string, env: NodeJS.ProcessEnv = process.env): Model | null {
  const identity = programIdentity();
  if (identity === null || endianness() !== 'LE') return null;
  let fd = -1;
  try {
    fd = openSync(entryFile(cacheFolder(env), fileSha256, identity), 'r');
    const size = fstatSync(fd).size;
    if (size < HEAD + 32) return null;
    // read into one shared buffer: the arrays are views of it (no copy of each into a buffer of its own)
    const shared = new SharedArrayBuffer(size);
    const bytes = Buffer.from(shared);
    if (readSync(fd, bytes, 0, size, 0) !== size) return null;
    const body = bytes.subarray(0, size - 32);
    if (!body.subarray(0, 8).equals(MAGIC) || !sha256(body).equals(bytes.subarray(size - 32))) return null;
    const skeletonLength = body.readUInt32LE(8);
    if (HEAD + skeletonLength > body.length) return null;
    const { model, arrays } = JSON.parse(body.toString('utf8', HEAD, HEAD + skeletonLength)) as { model: unknown; arrays: [Kind, number, number][] };
    const typed = arrays.map(([kind, at, length]) => {
      const width = kind === 'f64' ? 8 : kind === 'i32' ? 4 : 0;
      const n = length * width;
      if (width === 0 || !Number.isInteger(at) || !Number.isInteger(length) || at % 8 !== 0 || at < HEAD + skeletonLength || at + n > body.length) throw new Error('entry out of bounds');
      return kind === 'f64' ? new Float64Array(shared, at, length) : new Int32Array(shared, at, length);
    });
    return restore(model, typed) as Model;
  } catch {
    return null;
  } finally {
    if (fd >= 0) closeSync(fd);
  }
}

/** The skeleton's value with each {"$typed": k} replaced by typed[k]. */
function restore(value: unknown, typed: (Float64Array | Int32Array)[]): unknown {
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) value[i] = restore(value[i], typed);
    return value;
  }
  if (value !== null && typeof value === 'object') {
    const o = value as Record<string, unknown>;
    if ('$typed' in o) {
      const k = o.$typed;
      if (typeof k !== 'number' || !(k >= 0 && k < typed.length) || Object.keys(o).length !== 1) throw new Error('bad array reference');
      return typed[k];
    }
    for (const key of Object.keys(o)) o[key] = restore(o[key], typed);
  }
  return value;
}

/**
 * Keep `model`, just decoded and checked by parseModel from a file whose bytes have SHA-256 `fileSha256`, in the
 * cache folder (nothing without a program identity, or when JSON would not give its plain part back exactly).
 */
export function keepModel(fileSha256: string, model: Model, env: NodeJS.ProcessEnv = process.env): void {
  const identity = programIdentity();
  if (identity === null || endianness() !== 'LE') return;
  const arrays: [Kind, number, number][] = [];
  const blobs: Uint8Array[] = [];
  let plain = true;
  const skeleton = (value: unknown): unknown => {
    if (value instanceof Float64Array || value instanceof Int32Array) {
      arrays.push([value instanceof Float64Array ? 'f64' : 'i32', 0, value.length]);
      blobs.push(new Uint8Array(value.buffer, value.byteOffset, value.byteLength));
      return { $typed: arrays.length - 1 };
    }
    if (Array.isArray(value)) return value.map(skeleton);
    if (value !== null && typeof value === 'object') {
      if (Object.getPrototypeOf(value) !== Object.prototype) plain = false;
      const out: Record<string, unknown> = {};
      for (const [k, v] of Object.entries(value)) {
        if (k === '$typed' || k === '__proto__') plain = false;
        out[k] = skeleton(v);
      }
      return out;
    }
    if (typeof value === 'number' && (Object.is(value, -0) || !Number.isFinite(value))) plain = false;
    else if (value !== null && typeof value !== 'string' && typeof value !== 'boolean' && typeof value !== 'number') plain = false;
    return value;
  };
  const model0 = skeleton(model);
  if (!plain) return;
  // offsets depend on the skeleton's length, which depends on the offsets' digits: lay out with room to spare
  const layout = (room: number) => {
    let at = HEAD + room;
    at = Math.ceil(at / 8) * 8;
    for (let k = 0; k < arrays.length; k++) {
      arrays[k][1] = at;
      at = Math.ceil((at + blobs[k].byteLength) / 8) * 8;
    }
    return at;
  };
  let room = 0;
  let text = '';
  for (let pass = 0; pass < 4; pass++) {
    layout(room);
    text = JSON.stringify({ model: model0, arrays });
    const length = Buffer.byteLength(text, 'utf8');
    if (length <= room) break;
    room = length + 64;
  }
  const end = layout(room);
  const out = Buffer.alloc(end);
  MAGIC.copy(out, 0);
  const written = out.write(text, HEAD, 'utf8');
  out.writeUInt32LE(written, 8);
  if (written !== Buffer.byteLength(text, 'utf8') || (arrays.length > 0 && HEAD + written > arrays[0][1])) return;
  for (let k = 0; k < arrays.length; k++) out.set(blobs[k], arrays[k][1]);
  const folder = cacheFolder(env);
  const target = entryFile(folder, fileSha256, identity);
  // the one just written, and the newest others
  if (writeAtomically(folder, target, Buffer.concat([out, sha256(out)]))) keepNewest(folder, target, (f) => entryName.test(f), KEPT);
}
