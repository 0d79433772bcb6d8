// A model whose typed arrays live in SharedArrayBuffers, for handing to worker threads: postMessage then copies
// only the small plain part of the model (settings, names, summaries), and every worker reads the weights, the
// representatives and the variance factor from the one copy in the process. Models read from a file are that way
// already (io/model-file.ts decodes into shared memory) and come back as they are; a model made in memory
// (trained in the window, the demo) is copied into shared memory once.
import type { Model } from '../../core/learning/model.ts';

const shared = new WeakMap<Model, Model>();

type Typed = Float64Array | Float32Array | Int32Array | Uint32Array | Int16Array | Uint16Array | Int8Array | Uint8Array;

function isShared(value: unknown): boolean {
  if (ArrayBuffer.isView(value)) return value.buffer instanceof SharedArrayBuffer;
  if (Array.isArray(value)) return value.every(isShared);
  if (value !== null && typeof value === 'object') return Object.values(value).every(isShared);
  return true;
}

function copy(value: unknown): unknown {
  if (ArrayBuffer.isView(value) && !(value instanceof DataView)) {
    const v = value as Typed;
    if (v.buffer instanceof SharedArrayBuffer) return v;
    const Ctor = v.constructor as new (b: SharedArrayBuffer) => Typed;
    const out = new Ctor(new SharedArrayBuffer(v.byteLength));
    out.set(v as never);
    return out;
  }
  if (Array.isArray(value)) return value.map(copy);
  if (value !== null && typeof value === 'object') return Object.fromEntries(Object.entries(value).map(([k, v]) => [k, copy(v)]));
  return value;
}

/** The model with every typed array in shared memory (the same object when it is so already). */
export function sharedModel(model: Model): Model {
  const known = shared.get(model);
  if (known) return known;
  const out = isShared(model) ? model : (copy(model) as Model);
  shared.set(model, out);
  return out;
}
