// Trained-model files: versioned, self-describing JSON of our own format "polarweave-model", version 3.
//   { format, version, description, checksum: { algorithm: "sha256", value }, payload }
// Version 2 names the settings as the settings table does (core/settings-table.ts); version 1 used other keys
// and is still read: fromVersion1 maps it to the model of today, and nothing else knows the old keys. Version 2
// also writes a few keys of the model itself in plain words (FILE_KEYS_V2: speciesWithContributions,
// anisotropicFeatureLimits with radialFunctions/angularOrder, kernelExponent of a kernel part). Version 3 is
// version 2 plus the variance in its smaller form: a part trained on fewer frames than it has features keeps its
// design and a frames × frames factor (posterior form "design", core/learning/regression.ts) instead of the
// features × features factor; versions 2 and 3 are read alike (a version-2 file keeps its primal factor and
// predicts exactly what it did).
// The payload is the Model of core/learning/model.ts with every typed array stored as base64 of its little-endian bytes
// ({"f64": …} / {"i32": …}; Cholesky factors as their packed lower triangle, {"f64lower": …, "n": …}).
// The checksum is sha256 over the canonical JSON of the payload (keys sorted, no spaces), so any edit or
// truncation is caught. The payload is written last, in that canonical form, so a reader given the file's bytes
// hashes them as they are; a file written otherwise (older ones: keys in the model's order) is checked by walking
// its decoded payload. Either way the same checksum, the same guarantee. A corrupt file, a bad checksum or an
// unknown version is a ModelError, never a model.
import { isAscii } from 'node:buffer';
import { createHash } from 'node:crypto';
import { InputError, ModelError } from '../core/errors.ts';
import { MAX_JSON_DEPTH } from '../core/limits.ts';
import type { Model } from '../core/learning/model.ts';
import { writeFileAtomic } from './atomic.ts';
import { NUMERIC_SETTINGS, SPECIES_SETTING, SPLIT_SETTING } from '../core/settings-table.ts';
import { jsonTooDeep } from './json-depth.ts';
import { checkModelContents } from './model-check.ts';
import { readWholeFile } from './whole-file.ts';

export const MODEL_FORMAT = 'polarweave-model';
export const MODEL_VERSION = 3;
/** Versions this program reads. */
export const MODEL_VERSIONS_READ = [1, 2, 3] as const;

type Json = null | boolean | number | string | Json[] | { [k: string]: Json };

const LOWER_KEYS = new Set(['factor', 'nystrom']);

function b64(bytes: Uint8Array): string {
  return Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength).toString('base64');
}

function encode(value: unknown, key: string, path: string): Json {
  if (value instanceof Float64Array) {
    const n = Math.round(Math.sqrt(value.length));
    if (LOWER_KEYS.has(key) && n * n === value.length && n > 0) {
      const packed = new Float64Array((n * (n + 1)) / 2);
      let at = 0;
      for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) packed[at++] = value[i * n + j];
      return { f64lower: b64(new Uint8Array(packed.buffer)), n };
    }
    return { f64: b64(new Uint8Array(value.buffer, value.byteOffset, value.byteLength)) };
  }
  if (value instanceof Int32Array) return { i32: b64(new Uint8Array(value.buffer, value.byteOffset, value.byteLength)) };
  if (Array.isArray(value)) return value.map((v, i) => encode(v, key, `${path}[${i}]`));
  if (value === null || typeof value === 'boolean' || typeof value === 'string') return value;
  if (typeof value === 'number') {
    if (!Number.isFinite(value)) throw new ModelError(`cannot save the model: ${path} is ${value}`);
    return value;
  }
  if (typeof value === 'object') {
    const out: { [k: string]: Json } = {};
    for (const [k, v] of Object.entries(value as Record<string, unknown>)) {
      if (v === undefined) continue;
      out[k] = encode(v, k, path ? `${path}.${k}` : k);
    }
    return out;
  }
  throw new ModelError(`cannot save the model: ${path} has type ${typeof value}`);
}

// The decoded arrays live in SharedArrayBuffers: a process reads its model once, and its worker threads read the
// same memory (a SharedArrayBuffer crosses postMessage without a copy; app/predict/shared-model.ts).
function fromB64(text: unknown, what: string, file: string): Uint8Array {
  const buf = typeof text === 'string' ? Buffer.from(text, 'base64') : null;
  // the text this program writes encodes back to itself (a native check, fast on megabytes); anything else must
  // at least be base64 characters (the regular expression is slow on megabytes, so it is the second check)
  if (buf === null || (buf.toString('base64') !== text && !/^[A-Za-z0-9+/]*={0,2}$/.test(text as string))) {
    throw new ModelError(`${file}: corrupt model file (${what} is not base64)`);
  }
  const copy = new Uint8Array(new SharedArrayBuffer(buf.length));
  copy.set(buf);
  return copy;
}

function decode(value: Json, path: string, file: string): unknown {
  if (Array.isArray(value)) return value.map((v, i) => decode(v, `${path}[${i}]`, file));
  if (value !== null && typeof value === 'object') {
    const keys = Object.keys(value);
    if (keys.length === 1 && keys[0] === 'f64') {
      const bytes = fromB64(value.f64, path, file);
      if (bytes.length % 8) throw new ModelError(`${file}: corrupt model file (${path} has ${bytes.length} bytes, not whole doubles)`);
      return new Float64Array(bytes.buffer);
    }
    if (keys.length === 1 && keys[0] === 'i32') {
      const bytes = fromB64(value.i32, path, file);
      if (bytes.length % 4) throw new ModelError(`${file}: corrupt model file (${path} has ${bytes.length} bytes, not whole integers)`);
      return new Int32Array(bytes.buffer);
    }
    if (keys.length === 2 && 'f64lower' in value && 'n' in value) {
      const n = value.n;
      const bytes = fromB64(value.f64lower, path, file);
      if (typeof n !== 'number' || !Number.isInteger(n) || n < 1 || bytes.length !== (8 * n * (n + 1)) / 2) {
        throw new ModelError(`${file}: corrupt model file (${path}: packed triangle does not match n = ${String(n)})`);
      }
      const packed = new Float64Array(bytes.buffer);
      const full = new Float64Array(new SharedArrayBuffer(8 * n * n));
      let at = 0;
      for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) full[i * n + j] = packed[at++];
      return full;
    }
    const out: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(value)) out[k] = decode(v, path ? `${path}.${k}` : k, file);
    return out;
  }
  return value;
}

/** The canonical JSON of `value` in pieces, in order (small pieces joined, big strings passed on whole). */
function canonicalPieces(value: Json, out: (piece: string) => void): void {
  if (Array.isArray(value)) {
    out('[');
    value.forEach((v, i) => {
      if (i) out(',');
      canonicalPieces(v, out);
    });
    out(']');
  } else if (value !== null && typeof value === 'object') {
    out('{');
    Object.keys(value)
      .sort()
      .forEach((k, i) => {
        out(`${i ? ',' : ''}${JSON.stringify(k)}:`);
        canonicalPieces(value[k], out);
      });
    out('}');
  } else out(JSON.stringify(value));
}

/** JSON with object keys sorted at every level and no whitespace: the text the checksum covers. */
export function canonicalJson(value: Json): string {
  const pieces: string[] = [];
  canonicalPieces(value, (p) => pieces.push(p));
  return pieces.join('');
}

/** sha256 of canonicalJson(value), hashed piece by piece rather than from one string of the whole payload. */
function canonicalSha256(value: Json): string {
  const hash = createHash('sha256');
  let pending = '';
  canonicalPieces(value, (p) => {
    if (p.length > 1 << 12) {
      // a big piece (an array's base64): hashed as it is, not copied into the pending text
      hash.update(pending, 'utf8');
      hash.update(p, 'utf8');
      pending = '';
      return;
    }
    pending += p;
    if (pending.length > 1 << 16) {
      hash.update(pending, 'utf8');
      pending = '';
    }
  });
  return hash.update(pending, 'utf8').digest('hex');
}

function describe(model: Model): string {
  const t = model.target;
  const what = t.shape === 'tensor' ? `the cell tensor "${t.key}" (given as ${t.kind}), learnt as ${t.learnt} (${t.units}) through route ${t.route}` : `the ${t.shape} "${t.key}"`;
  return `Polarweave trained model: predicts ${what} as a sum of per-atom contributions; species ${model.species.join(', ')}; trained on ${model.training.frames} frames (${model.training.atoms} atoms). Predictions are model estimates.`;
}

/**
 * Keys of the model that version 2 writes in plain words (besides the settings, which carry the table's keys
 * already): path in the model → key in the file. Applied after encoding and undone before decoding, so the engine
 * keeps its short names and nothing else sees the difference.
 */
const FILE_KEYS_V2: { parent: (m: Record<string, Json>) => Record<string, Json>[]; model: string; file: string }[] = [
  { parent: (m) => [m], model: 'centres', file: 'speciesWithContributions' },
  { parent: (m) => [m], model: 'tensorLimits', file: 'anisotropicFeatureLimits' },
  { parent: (m) => objects(m.anisotropicFeatureLimits ?? m.tensorLimits), model: 'nmax', file: 'radialFunctions' },
  { parent: (m) => objects(m.anisotropicFeatureLimits ?? m.tensorLimits), model: 'lmax', file: 'angularOrder' },
  { parent: (m) => (Array.isArray(m.parts) ? m.parts : []).flatMap((p) => objects(objects(p)[0]?.kernel)), model: 'zeta', file: 'kernelExponent' },
];

function objects(v: Json | undefined): Record<string, Json>[] {
  return v !== null && typeof v === 'object' && !Array.isArray(v) ? [v] : [];
}

function renameKeys(payload: Record<string, Json>, toFile: boolean): Record<string, Json> {
  for (const k of FILE_KEYS_V2) {
    const [from, to] = toFile ? [k.model, k.file] : [k.file, k.model];
    for (const o of k.parent(payload)) {
      if (from in o) {
        o[to] = o[from];
        delete o[from];
      }
    }
  }
  return payload;
}

/**
 * The file text. The payload is written last and in its canonical form (keys sorted), so that the bytes after
 * `,"payload":` are the very text the checksum covers: a reader checks them with one hash of the bytes
 * (payloadBytesSigned) instead of walking the decoded payload. Readers of older files (keys in any order) walk it.
 */
export function serialiseModel(model: Model): string {
  const payload = renameKeys(encode(model, '', '') as Record<string, Json>, true);
  const body = canonicalJson(payload);
  const checksum = createHash('sha256').update(body, 'utf8').digest('hex');
  const head = JSON.stringify({ format: MODEL_FORMAT, version: MODEL_VERSION, description: describe(model), checksum: { algorithm: 'sha256', value: checksum } });
  return `${head.slice(0, -1)}${PAYLOAD_KEY}${body}}\n`;
}

const PAYLOAD_KEY = ',"payload":';
const PAYLOAD_KEY_BYTES = Buffer.from(PAYLOAD_KEY, 'latin1');
/** The document's keys, in the order serialiseModel writes them (every version). */
const DOC_KEYS = ['format', 'version', 'description', 'checksum', 'payload'];

/**
 * Whether the file's payload bytes are themselves the signed canonical text: the bytes between the first
 * `,"payload":` (a key: a quote inside a JSON string is always escaped) and the document's closing brace hash to
 * the checksum. Then the payload is as it was written, as surely as by the walk of canonicalSha256; when they do
 * not (an older file, keys in another order, spaces, an edit, damage), the caller walks the payload as before.
 */
function payloadBytesSigned(bytes: Uint8Array, doc: Record<string, Json>, checksum: string): boolean {
  const keys = Object.keys(doc);
  if (keys.length !== DOC_KEYS.length || keys.some((k, i) => k !== DOC_KEYS[i])) return false;
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const at = buf.indexOf(PAYLOAD_KEY_BYTES);
  let end = buf.length;
  while (end > 0 && (buf[end - 1] === 0x0a || buf[end - 1] === 0x0d || buf[end - 1] === 0x20 || buf[end - 1] === 0x09)) end--;
  if (at < 0 || buf[end - 1] !== 0x7d) return false;
  return createHash('sha256').update(buf.subarray(at + PAYLOAD_KEY_BYTES.length, end - 1)).digest('hex') === checksum;
}

function need(cond: boolean, file: string, what: string): void {
  if (!cond) throw new ModelError(`${file}: corrupt model file (${what})`);
}

/**
 * The text of a model file's bytes. A model file is a few megabytes of ASCII (base64, numbers, keys) with a few
 * short strings in UTF-8 (units such as Å³, notes); decoding it all as UTF-8 costs more than the rest of reading
 * it, and makes a text of two bytes a character that parsing and hashing then pay for. So the bytes are read one
 * byte a character (latin1): exactly the UTF-8 text when they are all ASCII; otherwise, when the file has no
 * \u escapes (which could put such characters in a string by other means), the strings holding bytes ≥ 0x80
 * are decoded from UTF-8 after parsing (mendUtf8): the text UTF-8 decoding of the whole would give. With \u
 * escapes, the whole is decoded as UTF-8.
 */
function textOf(bytes: Uint8Array): { text: string; mend: boolean } {
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (isAscii(buf)) return { text: buf.toString('latin1'), mend: false };
  if (buf.includes('\\u', 0, 'latin1')) return { text: buf.toString('utf8'), mend: false };
  return { text: buf.toString('latin1'), mend: true };
}

const HIGH_BYTE = /[\x80-\xff]/;
/** Strings and keys read as latin1 decoded from UTF-8 (textOf); base64 values are left as they are (their check refuses any such byte). */
function mendUtf8(value: Json, key = ''): Json {
  if (typeof value === 'string') return key !== 'f64' && key !== 'i32' && key !== 'f64lower' && HIGH_BYTE.test(value) ? Buffer.from(value, 'latin1').toString('utf8') : value;
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) if (value[i] !== null && typeof value[i] !== 'number') value[i] = mendUtf8(value[i]);
    return value;
  }
  if (value === null || typeof value !== 'object') return value;
  const out: { [k: string]: Json } = {};
  for (const [k, v] of Object.entries(value)) out[HIGH_BYTE.test(k) ? Buffer.from(k, 'latin1').toString('utf8') : k] = mendUtf8(v, k);
  return out;
}

/**
 * Read a model from its text or the bytes of its file (UTF-8; the bytes let the checksum be taken from them
 * directly, see payloadBytesSigned); any defect is a ModelError naming the file and what is wrong.
 */
export function parseModel(source: string | Uint8Array, fileName: string): Model {
  const { text, mend } = typeof source === 'string' ? { text: source, mend: false } : textOf(source);
  // the checksum walk and the decoder recurse: refuse deep nesting before parsing anything
  if (jsonTooDeep(text)) throw new ModelError(`${fileName}: not a model file (JSON nested deeper than ${MAX_JSON_DEPTH} levels)`);
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch (e) {
    throw new ModelError(`${fileName}: not a model file (not valid JSON: ${(e as Error).message}); was it truncated?`);
  }
  if (doc === null || typeof doc !== 'object' || Array.isArray(doc)) throw new ModelError(`${fileName}: not a model file (expected a JSON object)`);
  if (mend) doc = mendUtf8(doc as Json);
  const d = doc as Record<string, Json>;
  if (d.format !== MODEL_FORMAT) throw new ModelError(`${fileName}: not a Polarweave model file (format is ${JSON.stringify(d.format ?? null)}, expected "${MODEL_FORMAT}")`);
  if (!(MODEL_VERSIONS_READ as readonly unknown[]).includes(d.version)) {
    const newer = typeof d.version === 'number' && d.version > MODEL_VERSION;
    throw new ModelError(`${fileName}: model file version ${JSON.stringify(d.version ?? null)} is not supported (this program reads versions ${MODEL_VERSIONS_READ.slice(0, -1).join(', ')} and ${MODEL_VERSIONS_READ[MODEL_VERSIONS_READ.length - 1]})${newer ? '; update Polarweave' : ''}`);
  }
  const ck = d.checksum as Record<string, Json> | undefined;
  need(!!ck && ck.algorithm === 'sha256' && typeof ck.value === 'string', fileName, 'no sha256 checksum');
  need(d.payload !== null && typeof d.payload === 'object' && !Array.isArray(d.payload), fileName, 'no payload');
  const signed = (ck as Record<string, Json>).value as string;
  if (!(typeof source !== 'string' && payloadBytesSigned(source, d, signed)) && canonicalSha256(d.payload) !== signed) {
    throw new ModelError(`${fileName}: checksum mismatch — the model file is corrupt or was edited; retrain or restore the file`);
  }
  const stored = d.version === 1 ? d.payload : renameKeys(d.payload as Record<string, Json>, false);
  const decoded = decode(stored, '', fileName) as Record<string, unknown>;
  const model = (d.version === 1 ? fromVersion1(decoded, fileName) : decoded) as unknown as Model;
  checkModelContents(model, fileName);
  return model;
}

/**
 * A decoded version-1 payload as the model of today. Version 1 differs only in the keys of `settings` (the
 * `v1Key` of each row of the settings table); the numbers are the same, so a version-1 model predicts exactly
 * what it did. The one place that knows the old keys.
 */
export function fromVersion1(payload: Record<string, unknown>, file: string): Record<string, unknown> {
  const old = payload.settings;
  need(old !== null && typeof old === 'object' && !Array.isArray(old), file, 'settings');
  const o = old as Record<string, unknown>;
  const settings: Record<string, unknown> = {};
  for (const spec of NUMERIC_SETTINGS) {
    need(spec.v1Key in o, file, `settings.${spec.v1Key} of version 1`);
    settings[spec.key] = o[spec.v1Key];
  }
  need(SPECIES_SETTING.v1Key in o, file, `settings.${SPECIES_SETTING.v1Key} of version 1`);
  settings[SPECIES_SETTING.key] = o[SPECIES_SETTING.v1Key];
  settings[SPLIT_SETTING.key] = null; // version 1 knew no species split
  return { ...payload, settings };
}

export async function saveModel(path: string, model: Model): Promise<void> {
  await writeFileAtomic(path, serialiseModel(model));
}

/** The bytes of a model file (size-capped, gzip allowed); a ModelError saying why when it cannot be read. */
export async function readModelBytes(path: string): Promise<Buffer> {
  try {
    return await readWholeFile(path);
  } catch (e) {
    throw e instanceof InputError ? new ModelError(`${path}: cannot read the model file (${e.problem})`) : e;
  }
}

export async function loadModel(path: string): Promise<Model> {
  return parseModel(await readModelBytes(path), path);
}
