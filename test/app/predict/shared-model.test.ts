// The model handed to predict workers: every typed array in shared memory, the numbers unchanged, and the
// predictions of the shared copy bit for bit those of the original; a model read from a file is shared already.
import { describe, expect, it } from 'vitest';
import { modelPredictor, type Model } from '../../../src-main/core/learning/model.ts';
import { parseModel, serialiseModel } from '../../../src-main/io/model-file.ts';
import { sharedModel } from '../../../src-main/app/predict/shared-model.ts';
import { smallModel, waterFrames } from '../../helpers/trajectory.ts';

function typedArrays(value: unknown, path = '', out: [string, ArrayBufferView][] = []): [string, ArrayBufferView][] {
  if (ArrayBuffer.isView(value)) out.push([path, value]);
  else if (Array.isArray(value)) value.forEach((v, i) => typedArrays(v, `${path}[${i}]`, out));
  else if (value !== null && typeof value === 'object') for (const [k, v] of Object.entries(value)) typedArrays(v, `${path}.${k}`, out);
  return out;
}

describe('sharedModel', () => {
  it('puts every typed array in shared memory, with the same numbers, and predicts the same bits', async () => {
    const model = await smallModel();
    const before = typedArrays(model);
    expect(before.length).toBeGreaterThan(3);
    expect(before.some(([, a]) => !(a.buffer instanceof SharedArrayBuffer))).toBe(true);
    const s = sharedModel(model);
    expect(sharedModel(model)).toBe(s);
    const after = typedArrays(s);
    expect(after.map(([p]) => p)).toEqual(before.map(([p]) => p));
    for (const [i, [p, a]] of after.entries()) {
      expect(a.buffer instanceof SharedArrayBuffer, p).toBe(true);
      expect(a.constructor).toBe(before[i][1].constructor);
      expect(Array.from(a as Float64Array)).toEqual(Array.from(before[i][1] as Float64Array));
    }
    const frame = waterFrames()[3];
    const a = modelPredictor(model)(frame, 3);
    const b = modelPredictor(s)(frame, 3);
    expect(Array.from(b.irreducible)).toEqual(Array.from(a.irreducible));
    expect(Array.from(b.localIrreducible)).toEqual(Array.from(a.localIrreducible));
    expect(b.applicability.maxDistance).toBe(a.applicability.maxDistance);
  }, 60_000);

  it('returns a model read from a file as it is: its arrays are decoded into shared memory', async () => {
    const model: Model = parseModel(serialiseModel(await smallModel()), 'm.json');
    expect(typedArrays(model).every(([, a]) => a.buffer instanceof SharedArrayBuffer)).toBe(true);
    expect(sharedModel(model)).toBe(model);
  }, 60_000);
});
