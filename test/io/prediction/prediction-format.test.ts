// The prediction output format module: the writer's names are the readers' names, the prediction columns come
// from one table, and the one CSV writer refuses non-finite numbers.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PhysicsError } from '../../../src-main/core/errors.ts';
import { predictFrame, type Model } from '../../../src-main/core/learning/model.ts';
import { csvRecord, parseCsv } from '../../../src-main/io/csv.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';
import {
  annotateFrame,
  PRED_ARRAYS,
  PRED_KEYS,
  PREDICTION_COLUMNS,
  predictionCsvOptions,
  tensorCsv,
  tensorCsvColumns,
  tensorPredictionRow,
} from '../../../src-main/io/prediction/prediction-format.ts';
import { formatExtxyzFrame } from '../../../src-main/io/extxyz.ts';
import { readTrajectorySeries } from '../../../src-main/io/trajectory-series.ts';
import { jitteredTrajectory, smallModel } from '../../helpers/trajectory.ts';

let dir: string;
let model: Model;
beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'pw-format-'));
  model = await smallModel();
}, 60_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('prediction output format', () => {
  it('writes every PREDICTION_COLUMNS entry, in table order, after the tensors', () => {
    const cols = tensorCsvColumns(predictionCsvOptions(model, 'm.json'));
    const names = PREDICTION_COLUMNS.filter((c) => c.for === 'any' || model.target.shape === 'tensor').map((c) => c.name);
    expect(cols.slice(-names.length)).toEqual(names);
  });

  it('is read back by the trajectory reader with the names it was written with (CSV and extended XYZ)', async () => {
    const frames = jitteredTrajectory(3);
    const preds = frames.map((f) => predictFrame(model, f));
    const csv = join(dir, 'p.csv');
    writeFileSync(csv, tensorCsv(frames.map((f, i) => tensorPredictionRow(i, f, preds[i], model)), predictionCsvOptions(model, 'm.json')));
    const s = await readTrajectorySeries(csv);
    expect(s.alphaCM).not.toBeNull();
    expect(s.maxDistance).toEqual(preds.map((p) => p.applicability.maxDistance));
    for (let i = 0; i < 9; i++) expect(s.eps![9 * 2 + i]).toBe(preds[2].eps[i]);
    for (let i = 0; i < 9; i++) expect(s.alphaCM![9 * 1 + i]).toBeCloseTo(preds[1].alphaCM[i], 12);

    const xyz = join(dir, 'p.extxyz');
    writeFileSync(xyz, frames.map((f, i) => formatExtxyzFrame(annotateFrame(f, preds[i], model))).join(''));
    const back = parseExtxyz(formatExtxyzFrame(annotateFrame(frames[0], preds[0], model)), 'x');
    expect(Object.keys(back[0].info)).toEqual(expect.arrayContaining([PRED_KEYS.eps, PRED_KEYS.alphaCM, PRED_KEYS.alphaC, PRED_KEYS.outside]));
    expect(back[0].arrays[PRED_ARRAYS.localCM].width).toBe(9);
    const sx = await readTrajectorySeries(xyz);
    expect(sx.localKind).toBe(PRED_ARRAYS.localCM);
    expect(sx.alphaCM![0]).toBeCloseTo(preds[0].alphaCM[0], 12);
  });

  it('has one CSV writer, and it refuses a non-finite number, naming the column and frame', () => {
    expect(csvRecord([1, -0, true, 'a,b'])).toBe('1,0,1,"a,b"\n');
    expect(() => csvRecord([0, NaN], ['frame', 'value'], { frame: 4 })).toThrow(PhysicsError);
    expect(() => csvRecord([0, Infinity], ['frame', 'value'], { frame: 4 })).toThrow(/frame 4: value is Infinity/);
    expect(parseCsv('a,b\n1,2\n', 'x').numbers('b')[0]).toBe(2);
  });
});
