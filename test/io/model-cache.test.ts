// Decoded models kept in the cache folder (io/model-cache.ts): an entry gives back exactly the model parseModel gave
// (every number's bits, every key in its order, every array of its type in shared memory), only to the program
// that kept it and only for the same file bytes; a damaged entry is ignored silently and written again; a hostile
// or damaged model file still gets the full parse and its clear refusal. No outside values: parseModel's result is
// the reference.
import { createHash } from 'node:crypto';
import { readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';
import { ModelError } from '../../src-main/core/errors.ts';
import { makeFrame } from '../../src-main/core/geometry/frame.ts';
import { trainWithFeaturiser, type Model } from '../../src-main/core/learning/model.ts';
import { cachedModel, keepModel } from '../../src-main/io/model-cache.ts';
import { parseModel, serialiseModel } from '../../src-main/io/model-file.ts';
import { loadModelFile } from '../../src-main/app/predict/prediction.ts';
import { makeRng, syntheticFeatures } from '../helpers/synthetic-features.ts';
import { scratchFolders } from '../helpers/scratch.ts';

const tmp = scratchFolders('pw-model-cache-');
const rng = makeRng(31);
const frames = Array.from({ length: 8 }, (_, f) => {
  const frame = makeFrame(['H', 'H', 'O', 'H', 'O'], new Float64Array(15), [8, 0, 0, 0, 8, 0, 0, 0, 8]);
  frame.info.alpha = [3 + f * 0.1, 0.1, 0, 0.1, 3, 0.05 * f, 0, 0.05 * f, 2.9];
  return frame;
});
/** Model files of the three kinds of parts and variance: linear (primal), kernel, linear with the design form. */
const texts: string[] = [];

beforeAll(async () => {
  const feats = frames.map((_, f) => syntheticFeatures(rng, { count: 5, n0: 5, tensor: { 2: 3 }, centreSpecies: [0, 0, 1, 0, 1], frame: f }));
  const wide = frames.map((_, f) => syntheticFeatures(rng, { count: 5, n0: 16, tensor: { 2: 3 }, centreSpecies: [0, 0, 1, 0, 1], frame: f }));
  const models = [
    await trainWithFeaturiser(frames, { tensorKey: 'alpha', kind: 'alpha-cm', route: 'cm' }, (_f, i) => feats[i]),
    await trainWithFeaturiser(frames, { tensorKey: 'alpha', kind: 'alpha-cm', route: 'direct', settings: { kernelExponent: 2, anchorEnvironments: 4 } }, (_f, i) => feats[i]),
    await trainWithFeaturiser(frames.slice(0, 5), { tensorKey: 'alpha', kind: 'alpha-cm', route: 'cm' }, (_f, i) => wide[i]),
  ];
  expect(models[2].parts[0].posterior?.form).toBe('design');
  for (const m of models) texts.push(serialiseModel(m));
});

afterEach(() => {
  delete (globalThis as { __polarweaveProgram?: string }).__polarweaveProgram;
});
const runAs = (digit: string) => ((globalThis as { __polarweaveProgram?: string }).__polarweaveProgram = digit.repeat(64));
const sha = (text: string) => createHash('sha256').update(text).digest('hex');

/**
 * Everything about a model that could differ: key order, each number's bits, each array's type, bits and memory
 * (shared, so that workers read the one copy; a cached model's arrays are views of one shared buffer, parseModel's
 * each have their own).
 */
function exactly(model: Model): string {
  return JSON.stringify(model, (_k, v: unknown) => {
    if (v instanceof Float64Array || v instanceof Int32Array) {
      return { type: v.constructor.name, shared: v.buffer instanceof SharedArrayBuffer, bits: Buffer.from(v.buffer, v.byteOffset, v.byteLength).toString('base64') };
    }
    if (typeof v === 'number') return { n: Buffer.from(new Float64Array([v]).buffer).toString('hex') };
    return v;
  });
}

describe('decoded models kept in the cache folder', () => {
  it('gives back exactly the model parseModel gave, to the program that kept it, for the same bytes only', () => {
    const env = { POLARWEAVE_CACHE_DIR: tmp() };
    runAs('a');
    for (const text of texts) {
      const parsed = parseModel(text, 'm.json');
      expect(cachedModel(sha(text), env)).toBeNull();
      keepModel(sha(text), parsed, env);
      const back = cachedModel(sha(text), env);
      expect(back).not.toBeNull();
      expect(exactly(back as Model)).toBe(exactly(parseModel(text, 'm.json')));
    }
    // another program (another build or Node version) finds nothing; so does no program identity
    runAs('b');
    for (const text of texts) expect(cachedModel(sha(text), env)).toBeNull();
    delete (globalThis as { __polarweaveProgram?: string }).__polarweaveProgram;
    expect(cachedModel(sha(texts[0]), env)).toBeNull();
    keepModel(sha(texts[0]), parseModel(texts[0], 'm.json'), env);
    const files = readdirSync(env.POLARWEAVE_CACHE_DIR);
    expect(files.filter((f) => /^model-[0-9a-f]{24}\.a{24}\.bin$/.test(f))).toHaveLength(3);
    expect(files).toHaveLength(3); // nothing written without an identity, no temporary file left
  });

  it('ignores a damaged or cut entry silently, and loadModelFile parses the file and writes the entry again', async () => {
    const folder = tmp();
    const env = { POLARWEAVE_CACHE_DIR: folder };
    const saved = process.env.POLARWEAVE_CACHE_DIR;
    process.env.POLARWEAVE_CACHE_DIR = folder;
    try {
      runAs('c');
      const path = join(folder, 'model.json');
      writeFileSync(path, texts[1]);
      const first = await loadModelFile(path);
      const [entry] = readdirSync(folder).filter((f) => f.endsWith('.bin'));
      const good = readFileSync(join(folder, entry));
      const reference = exactly(parseModel(texts[1], 'm.json'));
      expect(exactly(first.model)).toBe(reference);
      for (const damaged of [Buffer.concat([good.subarray(0, 200), Buffer.from([good[200] ^ 1]), good.subarray(201)]), good.subarray(0, good.length - 9), Buffer.alloc(10)]) {
        writeFileSync(join(folder, entry), damaged);
        expect(cachedModel(sha(texts[1]), env)).toBeNull();
        const again = await loadModelFile(path);
        expect(exactly(again.model)).toBe(reference);
        expect(again.sha256).toBe(sha(texts[1]));
        expect(readFileSync(join(folder, entry)).equals(good)).toBe(true); // written again, the same bytes
      }
      expect(readdirSync(folder).some((f) => f.endsWith('.tmp'))).toBe(false);
    } finally {
      if (saved === undefined) delete process.env.POLARWEAVE_CACHE_DIR;
      else process.env.POLARWEAVE_CACHE_DIR = saved;
    }
  });

  it('never vouches for other bytes: an edited or cut model file gets the full parse and its refusal', async () => {
    const folder = tmp();
    const saved = process.env.POLARWEAVE_CACHE_DIR;
    process.env.POLARWEAVE_CACHE_DIR = folder;
    try {
      runAs('d');
      const path = join(folder, 'model.json');
      writeFileSync(path, texts[0]);
      await loadModelFile(path); // kept
      const doc = JSON.parse(texts[0]);
      doc.payload.baseline[0] = -1e300; // an edited number: the checksum no longer matches
      for (const bad of [JSON.stringify(doc), texts[0].slice(0, texts[0].length >> 1)]) {
        writeFileSync(path, bad);
        await expect(loadModelFile(path)).rejects.toThrow(ModelError);
      }
      writeFileSync(path, texts[0]);
      expect(exactly((await loadModelFile(path)).model)).toBe(exactly(parseModel(texts[0], 'm.json')));
    } finally {
      if (saved === undefined) delete process.env.POLARWEAVE_CACHE_DIR;
      else process.env.POLARWEAVE_CACHE_DIR = saved;
    }
  });

  it('keeps no model whose plain part JSON would not give back exactly, and the newest 3 entries', () => {
    const env = { POLARWEAVE_CACHE_DIR: tmp() };
    runAs('e');
    const odd = parseModel(texts[0], 'm.json');
    (odd.parts[0].regularisation as Record<string, unknown>).$typed = 0; // a key of the entry's own layout (a loose object may hold it)
    keepModel('0'.repeat(64), odd, env);
    const minus = parseModel(texts[0], 'm.json');
    minus.baseline[0] = -0;
    keepModel('1'.repeat(64), minus, env);
    expect(readdirSync(env.POLARWEAVE_CACHE_DIR).filter((f) => f.endsWith('.bin'))).toEqual([]);
    const m = parseModel(texts[2], 'm.json');
    for (const d of ['2', '3', '4', '5', '6']) keepModel(d.repeat(64), m, env);
    const kept = readdirSync(env.POLARWEAVE_CACHE_DIR).filter((f) => f.endsWith('.bin'));
    expect(kept).toHaveLength(3);
    expect(kept.some((f) => f.startsWith(`model-${'6'.repeat(24)}.`))).toBe(true);
  });
});
