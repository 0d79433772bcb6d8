import { createHash } from 'node:crypto';
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ModelError } from '../../src-main/core/errors.ts';
import { makeFrame } from '../../src-main/core/geometry/frame.ts';
import { DEFAULT_SETTINGS, predictWithFeatures, trainWithFeaturiser, type Model } from '../../src-main/core/learning/model.ts';
import { canonicalJson, loadModel, MODEL_FORMAT, parseModel, saveModel, serialiseModel } from '../../src-main/io/model-file.ts';
import { makeRng, syntheticFeatures } from '../helpers/synthetic-features.ts';

const rng = makeRng(12);
const frames = Array.from({ length: 10 }, (_, f) => {
  const species = ['H', 'H', 'O', 'H', 'O'];
  const frame = makeFrame(species, new Float64Array(15), [8, 0, 0, 0, 8, 0, 0, 0, 8]);
  frame.info.alpha = [3 + f * 0.1, 0.1, 0, 0.1, 3, 0.05 * f, 0, 0.05 * f, 2.9];
  return frame;
});
const feats = frames.map((fr, f) => syntheticFeatures(rng, { count: 5, n0: 5, tensor: { 2: 3 }, centreSpecies: [0, 0, 1, 0, 1], frame: f }));
let model: Model;
let kernelModel: Model;
/** Fewer frames than features: the variance is kept in its design form (format version 3). */
let designModel: Model;
let wide: ReturnType<typeof syntheticFeatures>[];
let dir: string;

beforeAll(async () => {
  model = await trainWithFeaturiser(frames, { tensorKey: 'alpha', kind: 'alpha-cm', route: 'cm' }, (_f, i) => feats[i], {}, { createdAt: '2026-01-01T00:00:00.000Z' });
  kernelModel = await trainWithFeaturiser(frames, { tensorKey: 'alpha', kind: 'alpha-cm', route: 'direct', settings: { kernelExponent: 2, anchorEnvironments: 4 } }, (_f, i) => feats[i]);
  wide = frames.map((_, f) => syntheticFeatures(rng, { count: 5, n0: 16, tensor: { 2: 3 }, centreSpecies: [0, 0, 1, 0, 1], frame: f }));
  designModel = await trainWithFeaturiser(frames.slice(0, 6), { tensorKey: 'alpha', kind: 'alpha-cm', route: 'cm' }, (_f, i) => wide[i]);
  dir = mkdtempSync(join(tmpdir(), 'pw-model-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function resign(doc: { payload: unknown; checksum: { value: string } }): string {
  doc.checksum.value = createHash('sha256').update(canonicalJson(doc.payload as never)).digest('hex');
  return JSON.stringify(doc);
}

describe('model file', () => {
  it('round-trips exactly (linear and kernel models, variance in primal and design form): same numbers, same predictions', () => {
    expect(model.parts[0].posterior?.form).toBe('primal');
    expect(designModel.parts[0].posterior?.form).toBe('design');
    for (const m of [model, kernelModel, designModel]) {
      const text = serialiseModel(m);
      const back = parseModel(text, 'm.json');
      expect(serialiseModel(back)).toBe(text);
      const fs = m === designModel ? wide : feats;
      for (let f = 0; f < 3; f++) {
        const a = predictWithFeatures(m, frames[f], fs[f]);
        const b = predictWithFeatures(back, frames[f], fs[f]);
        expect([...b.irreducible]).toEqual([...a.irreducible]);
        expect(b.applicability.variance).toBe(a.applicability.variance);
      }
    }
  });

  it('is self-describing JSON of our own format, version 3, with a sha256 checksum', () => {
    const doc = JSON.parse(serialiseModel(model));
    expect(doc.format).toBe(MODEL_FORMAT);
    expect(doc.version).toBe(3);
    expect(doc.checksum.algorithm).toBe('sha256');
    expect(doc.description).toMatch(/alpha.*cm/);
    expect(doc.payload.settings.cutoffRadius).toBe(4.5);
    expect(doc.payload.settings.radialFunctions).toBe(6);
    expect(Object.keys(doc.payload.settings).sort()).toEqual(Object.keys(DEFAULT_SETTINGS).sort());
    // Version 2 writes plain words: none of the version-1 keys of the settings or of the model's feature limits.
    const kernelText = serialiseModel(kernelModel);
    for (const old of ['cutoff', 'cutoffWidth', 'sigma', 'nmax', 'lmax', 'zeta', 'sparsePoints', 'centres', 'tensorLimits']) {
      expect(kernelText, old).not.toContain(`"${old}":`);
    }
    expect(JSON.parse(kernelText).payload.anisotropicFeatureLimits).toEqual({ radialFunctions: 6, angularOrder: 4 });
    expect(parseModel(kernelText, 'k.json').tensorLimits).toEqual(kernelModel.tensorLimits);
    expect(doc.payload.training.frames).toBe(10);
    expect(doc.payload.parts[0].weights.f64).toMatch(/^[A-Za-z0-9+/]+=*$/);
  });

  it('refuses a truncated file, an edited number, an unknown version or another format', () => {
    const text = serialiseModel(model);
    expect(() => parseModel(text.slice(0, text.length / 2), 'cut.json')).toThrow(ModelError);
    expect(() => parseModel(text.slice(0, text.length / 2), 'cut.json')).toThrow(/cut\.json: not a model file/);
    const doc = JSON.parse(text);
    doc.payload.baseline[0] += 1e-9;
    expect(() => parseModel(JSON.stringify(doc), 'edited.json')).toThrow(/checksum mismatch/);
    const newer = JSON.parse(text);
    newer.version = 4;
    expect(() => parseModel(JSON.stringify(newer), 'new.json')).toThrow(/version 4 is not supported \(this program reads versions 1, 2 and 3\); update/);
    // A version-2 payload labelled version 1 lacks the old keys: refused, never read with defaults.
    const mislabelled = JSON.parse(text);
    mislabelled.version = 1;
    expect(() => parseModel(JSON.stringify(mislabelled), 'old.json')).toThrow(/old\.json: corrupt model file \(settings\.cutoff of version 1\)/);
    const other = JSON.parse(text);
    other.format = 'something-else';
    expect(() => parseModel(JSON.stringify(other), 'o.json')).toThrow(/not a Polarweave model file/);
    expect(() => parseModel('[1,2]', 'a.json')).toThrow(ModelError);
  });

  it('refuses a correctly signed payload with a broken structure', () => {
    const doc = JSON.parse(serialiseModel(model));
    doc.payload.parts[1].weights = { f64: Buffer.from(new Float64Array(3).buffer).toString('base64') };
    expect(() => parseModel(resign(doc), 'bad.json')).toThrow(/corrupt model file \(part λ=2 weights\)/);
    const doc2 = JSON.parse(serialiseModel(model));
    doc2.payload.parts[0].weights = { f64: 'not base64!' };
    expect(() => parseModel(resign(doc2), 'bad.json')).toThrow(/not base64/);
    const doc3 = JSON.parse(serialiseModel(designModel));
    doc3.payload.parts[0].posterior.rows += 1;
    expect(() => parseModel(resign(doc3), 'bad.json')).toThrow(/corrupt model file \(part λ=0 posterior\)/);
    // found by the fuzz test (test/io/hostile-readers.fuzz.test.ts): a null among the calibration's parts
    const doc4 = JSON.parse(serialiseModel(model));
    expect(doc4.payload.calibration.parts.length).toBeGreaterThan(0);
    doc4.payload.calibration.parts[0] = null;
    expect(() => parseModel(resign(doc4), 'bad.json')).toThrow(/corrupt model file \(error-bar calibration\)/);
  });

  it('reads base64 this program would not write (no padding) and refuses other characters, once signed', () => {
    const doc = JSON.parse(serialiseModel(model));
    const weights = doc.payload.parts[0].weights as { f64: string };
    const padded = weights.f64;
    // 8 bytes per weight: padding unless the byte count is a multiple of 3
    expect(padded.endsWith('=')).toBe(((model.parts[0].weights as Float64Array).byteLength % 3) !== 0);
    weights.f64 = padded.replace(/=+$/, '');
    const back = parseModel(resign(doc), 'm.json');
    expect(Array.from(back.parts[0].weights as Float64Array)).toEqual(Array.from(model.parts[0].weights as Float64Array));
    weights.f64 = `${padded.slice(0, 8)}*${padded.slice(9)}`;
    expect(() => parseModel(resign(doc), 'm.json')).toThrow(/corrupt model file \(parts\[0\]\.weights is not base64\)/);
  });

  it('a model never predicts species it did not see', () => {
    const frame = makeFrame(['H', 'C', 'O'], new Float64Array(9), [8, 0, 0, 0, 8, 0, 0, 0, 8]);
    const fe = syntheticFeatures(rng, { count: 3, n0: 5, tensor: { 2: 3 }, centreSpecies: [0, 0, 1] });
    expect(() => predictWithFeatures(model, frame, fe)).toThrow(ModelError);
    expect(() => predictWithFeatures(model, frame, fe)).toThrow(/never saw species C/);
  });

  it('writes the payload last in its canonical form, and reads the same model from the bytes and from the text', () => {
    for (const m of [model, kernelModel, designModel]) {
      const text = serialiseModel(m);
      const at = text.indexOf(',"payload":');
      expect(text.endsWith('}\n')).toBe(true);
      // the bytes after the key are the very text the checksum covers
      const body = text.slice(at + ',"payload":'.length, -2);
      const doc = JSON.parse(text);
      expect(body).toBe(canonicalJson(doc.payload));
      expect(createHash('sha256').update(body).digest('hex')).toBe(doc.checksum.value);
      expect(serialiseModel(parseModel(Buffer.from(text), 'm.json'))).toBe(text);
    }
  });

  it('reads the same text from bytes as UTF-8 decoding gives: ASCII, UTF-8 strings, \\u escapes, a damaged sequence', () => {
    const doc = JSON.parse(serialiseModel(model));
    doc.payload.notes = [...doc.payload.notes, 'Å³ ± σ — 水', 'bad \uFFFD end'];
    doc.payload.target.units = 'Å³';
    const text = resign(doc);
    expect(text).toMatch(/[^\x00-\x7f]/);
    const fromText = parseModel(text, 'm.json');
    expect(fromText.notes).toContain('Å³ ± σ — 水');
    expect(fromText.target.units).toBe('Å³');
    const bytes = Buffer.from(text);
    expect(serialiseModel(parseModel(bytes, 'm.json'))).toBe(serialiseModel(fromText));
    // the same strings written as \u escapes (an ASCII file), and a file with both
    const escaped = text.replace(/[^\x00-\x7f]/g, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`);
    expect(escaped).not.toMatch(/[^\x00-\x7f]/);
    expect(serialiseModel(parseModel(Buffer.from(escaped), 'm.json'))).toBe(serialiseModel(fromText));
    const both = escaped.replace('\\u00c5\\u00b3', 'Å³');
    expect(both).not.toBe(escaped);
    expect(serialiseModel(parseModel(Buffer.from(both), 'm.json'))).toBe(serialiseModel(fromText));
    // a broken UTF-8 sequence inside a string (a lone lead byte): what decoding the whole as UTF-8 gives, U+FFFD
    const at = bytes.indexOf(Buffer.from('bad '));
    const broken = Buffer.concat([bytes.subarray(0, at + 4), Buffer.from([0xe2, 0x82]), bytes.subarray(at + 4)]);
    const viaUtf8 = JSON.parse(broken.toString('utf8'));
    viaUtf8.checksum.value = createHash('sha256').update(canonicalJson(viaUtf8.payload)).digest('hex');
    const signed = Buffer.from(broken.toString('latin1').replace(doc.checksum.value, viaUtf8.checksum.value), 'latin1');
    expect(parseModel(signed, 'm.json').notes).toEqual(viaUtf8.payload.notes);
  });

  it('reads a file written the older way (payload keys in the model order) from its bytes, as before', () => {
    const text = serialiseModel(designModel);
    const doc = JSON.parse(text);
    // the payload's keys in another order (the writer before kept the model's), and spaces: the same checksum
    const reordered = JSON.stringify({ ...doc, payload: Object.fromEntries(Object.entries(doc.payload).reverse()) });
    for (const t of [reordered, ` ${reordered.replace('"payload":', '"payload": ')}\n`]) {
      expect(t).not.toContain(text.slice(text.indexOf(',"payload":'), -2));
      expect(serialiseModel(parseModel(Buffer.from(t), 'old.json'))).toBe(text);
    }
  });

  it('refuses damaged bytes: a flipped character of an array, an edited digit, a cut end', () => {
    const text = serialiseModel(model);
    const bytes = Buffer.from(text);
    const weights = text.indexOf('"f64":"', text.indexOf('"weights"')) + 20;
    const flipped = Buffer.from(bytes);
    flipped[weights] = flipped[weights] === 0x41 ? 0x42 : 0x41;
    expect(() => parseModel(flipped, 'flipped.json')).toThrow(/flipped\.json: checksum mismatch/);
    const doc = JSON.parse(text);
    const digit = text.indexOf(JSON.stringify(doc.payload.baseline[0]));
    const edited = Buffer.from(bytes);
    edited[digit + 3] = edited[digit + 3] === 0x31 ? 0x32 : 0x31;
    expect(() => parseModel(edited, 'edited.json')).toThrow(/edited\.json: checksum mismatch/);
    expect(() => parseModel(bytes.subarray(0, bytes.length - 2), 'cut.json')).toThrow(/cut\.json: not a model file/);
    // an extra key after the payload: not the signed text; the walk still finds the payload as signed
    expect(serialiseModel(parseModel(Buffer.from(text.replace(/}\n$/, ',"extra":1}\n')), 'x.json'))).toBe(text);
  });

  it('saves atomically and loads back; a missing file is a ModelError', async () => {
    const path = join(dir, 'model.json');
    await saveModel(path, model);
    expect(readdirSync(dir)).toEqual(['model.json']);
    const back = await loadModel(path);
    expect(serialiseModel(back)).toBe(serialiseModel(model));
    await expect(loadModel(join(dir, 'nope.json'))).rejects.toThrow(/nope\.json: cannot read the model file \(file not found\)/);
  });
});
