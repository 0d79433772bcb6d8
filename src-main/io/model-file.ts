// Trained-model files: versioned, self-describing JSON of our own format "polarweave-model", version 1.
//   { format, version, description, checksum: { algorithm: "sha256", value }, payload }
// The payload is the Model of core/learning/model.ts with every typed array stored as base64 of its little-endian bytes
// ({"f64": …} / {"i32": …}; Cholesky factors as their packed lower triangle, {"f64lower": …, "n": …}).
// The checksum is sha256 over the canonical JSON of the payload (keys sorted, no spaces), so any edit or
// truncation is caught. A corrupt file, a bad checksum or an unknown version is a ModelError, never a model.
import { createHash } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { ModelError } from '../core/errors.ts';
import type { Model } from '../core/learning/model.ts';
import { writeFileAtomic } from './atomic.ts';

export const MODEL_FORMAT = 'polarweave-model';
export const MODEL_VERSION = 1;

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

function fromB64(text: unknown, what: string, file: string): Uint8Array {
  if (typeof text !== 'string' || !/^[A-Za-z0-9+/]*={0,2}$/.test(text)) throw new ModelError(`${file}: corrupt model file (${what} is not base64)`);
  const buf = Buffer.from(text, 'base64');
  const copy = new Uint8Array(buf.length);
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
      const full = new Float64Array(n * n);
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

/** JSON with object keys sorted at every level and no whitespace: the text the checksum covers. */
export function canonicalJson(value: Json): string {
  if (Array.isArray(value)) return `[${value.map(canonicalJson).join(',')}]`;
  if (value !== null && typeof value === 'object') {
    return `{${Object.keys(value)
      .sort()
      .map((k) => `${JSON.stringify(k)}:${canonicalJson(value[k])}`)
      .join(',')}}`;
  }
  return JSON.stringify(value);
}

function sha256(text: string): string {
  return createHash('sha256').update(text, 'utf8').digest('hex');
}

function describe(model: Model): string {
  const t = model.target;
  const what = t.shape === 'tensor' ? `the cell tensor "${t.key}" (given as ${t.kind}), learnt as ${t.learnt} (${t.units}) through route ${t.route}` : `the ${t.shape} "${t.key}"`;
  return `Polarweave trained model: predicts ${what} as a sum of per-atom contributions; species ${model.species.join(', ')}; trained on ${model.training.frames} frames (${model.training.atoms} atoms). Predictions are model estimates.`;
}

export function serialiseModel(model: Model): string {
  const payload = encode(model, '', '');
  const checksum = sha256(canonicalJson(payload));
  const doc = { format: MODEL_FORMAT, version: MODEL_VERSION, description: describe(model), checksum: { algorithm: 'sha256', value: checksum }, payload };
  return JSON.stringify(doc) + '\n';
}

function need(cond: boolean, file: string, what: string): void {
  if (!cond) throw new ModelError(`${file}: corrupt model file (${what})`);
}

/** Read a model from text; any defect is a ModelError naming the file and what is wrong. */
export function parseModel(text: string, fileName: string): Model {
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch (e) {
    throw new ModelError(`${fileName}: not a model file (not valid JSON: ${(e as Error).message}); was it truncated?`);
  }
  if (doc === null || typeof doc !== 'object' || Array.isArray(doc)) throw new ModelError(`${fileName}: not a model file (expected a JSON object)`);
  const d = doc as Record<string, Json>;
  if (d.format !== MODEL_FORMAT) throw new ModelError(`${fileName}: not a Polarweave model file (format is ${JSON.stringify(d.format ?? null)}, expected "${MODEL_FORMAT}")`);
  if (d.version !== MODEL_VERSION) {
    const newer = typeof d.version === 'number' && d.version > MODEL_VERSION;
    throw new ModelError(`${fileName}: model file version ${JSON.stringify(d.version ?? null)} is not supported (this program reads version ${MODEL_VERSION})${newer ? '; update Polarweave' : ''}`);
  }
  const ck = d.checksum as Record<string, Json> | undefined;
  need(!!ck && ck.algorithm === 'sha256' && typeof ck.value === 'string', fileName, 'no sha256 checksum');
  need(d.payload !== null && typeof d.payload === 'object' && !Array.isArray(d.payload), fileName, 'no payload');
  const actual = sha256(canonicalJson(d.payload));
  if (actual !== (ck as Record<string, Json>).value) {
    throw new ModelError(`${fileName}: checksum mismatch — the model file is corrupt or was edited; retrain or restore the file`);
  }
  const model = decode(d.payload, '', fileName) as Model;
  checkModelShape(model, fileName);
  return model;
}

/** Structural checks beyond the checksum (a file written by a buggy program must still not give numbers). */
function checkModelShape(m: Model, file: string): void {
  need(typeof m.target?.key === 'string' && ['tensor', 'vector', 'scalar'].includes(m.target.shape), file, 'target');
  need(m.target.route === 'cm' || m.target.route === 'direct', file, 'route');
  need(Array.isArray(m.species) && m.species.every((s) => typeof s === 'string'), file, 'species');
  need(Array.isArray(m.centres) && m.centres.every((s) => m.species.includes(s)), file, 'centre species');
  need(typeof m.featureSizes?.n0 === 'number', file, 'feature sizes');
  need(Number.isInteger(m.tensorLimits?.nmax) && Number.isInteger(m.tensorLimits?.lmax), file, 'tensor feature limits');
  if (m.featureSelection !== undefined) {
    const sel = m.featureSelection as Record<string, unknown>;
    need(Object.values(sel).every((v) => Array.isArray(v) && v.every((x) => Number.isInteger(x) && x >= 0)), file, 'feature selection');
    need(Array.isArray(sel[0]) && (sel[0] as number[]).length === m.featureSizes.n0, file, 'feature selection size');
  }
  need(Array.isArray(m.baseline) && m.baseline.length === m.centres.length, file, 'baseline');
  need(Array.isArray(m.parts) && m.parts.length > 0, file, 'model parts');
  const nS = m.centres.length;
  for (const p of m.parts) {
    need([0, 1, 2].includes(p.order) && typeof p.n === 'number', file, 'part order');
    if (p.form === 'linear') need(p.weights instanceof Float64Array && p.weights.length === nS * p.n, file, `weights of λ=${p.order}`);
    else {
      const k = p.kernel;
      need(!!k && k.species instanceof Int32Array && k.p instanceof Float64Array && k.v instanceof Float64Array, file, `kernel of λ=${p.order}`);
      need(k!.p.length === k!.species.length * k!.n0 && k!.v.length === k!.species.length * k!.n, file, `kernel sizes of λ=${p.order}`);
    }
    if (p.posterior) need(p.posterior.factor instanceof Float64Array && p.posterior.factor.length === p.posterior.size ** 2, file, `posterior of λ=${p.order}`);
  }
  const a = m.applicability;
  need(!!a && a.species instanceof Int32Array && a.p instanceof Float64Array && a.p.length === a.species.length * a.n0, file, 'applicability');
  need(m.settings !== null && typeof m.settings === 'object' && typeof m.settings.cutoff === 'number', file, 'settings');
  checkTrustShape(m, file);
}

/** Error-bar calibration and domain ranges (optional: older files lack them and predict without error bars). */
function checkTrustShape(m: Model, file: string): void {
  if (m.calibration !== undefined) {
    const parts = m.calibration?.parts;
    need(Array.isArray(parts) && parts.every((c) => m.parts.some((p) => p.order === c.order) && typeof c.varianceScale === 'number' && c.varianceScale > 0), file, 'error-bar calibration');
  }
  if (m.leverage !== undefined) need(m.leverage?.order === 0 && m.leverage.posterior?.factor instanceof Float64Array, file, 'leverage part');
  if (m.domain !== undefined) {
    const d = m.domain;
    const S = m.species.length;
    const len = (r: { min: unknown[]; median: unknown[]; max: unknown[] } | undefined, n: number) => !!r && [r.min, r.median, r.max].every((a) => Array.isArray(a) && a.length === n);
    need(!!d && len(d.nearest, S * S) && len(d.count, S) && len(d.scale, m.centres.length) && Array.isArray(d.atomRate) && d.atomRate.length === S && typeof d.density?.tolerance === 'number', file, 'domain ranges');
  }
}

export async function saveModel(path: string, model: Model): Promise<void> {
  await writeFileAtomic(path, serialiseModel(model));
}

export async function loadModel(path: string): Promise<Model> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    throw new ModelError(`${path}: cannot read the model file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`);
  }
  return parseModel(text, path);
}
