import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { trainModel } from '../../../src-main/core/learning/model.ts';
import { saveModel } from '../../../src-main/io/model-file.ts';
import { cli } from '../../cli/run-cli.ts';
import { jitteredTrajectory, smallModel, trajectoryText, waterFrames } from '../../helpers/trajectory.ts';

let dir: string;
const p = (name: string) => join(dir, name);

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'pw-shards-'));
  await saveModel(p('m.json'), await smallModel());
  // a second, different model (other angular limit) for the mixed-model check
  await saveModel(p('m2.json'), await trainModel(waterFrames(), { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm', settings: { radialFunctions: 3, angularOrder: 2 } }));
  writeFileSync(p('t.extxyz'), trajectoryText(jitteredTrajectory(11)));
}, 60_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function predict(out: string, ...extra: string[]) {
  const r = await cli('predict', p('m.json'), p('t.extxyz'), '--threads', '1', '-o', p(out), ...extra);
  expect(r.err).not.toMatch(/error/);
  expect(r.code).toBe(0);
  return r;
}

describe('predict --shard and merge', () => {
  it('shards merged give the bytes of a single run (CSV), and missing/doubled/mixed shards are refused', async () => {
    await predict('all.csv');
    for (const k of [1, 2, 3]) await predict(`s${k}.csv`, '--shard', `${k}/3`);
    // shard 2 of 11 frames in 3 parts holds frames 3…6 (floor(11/3) = 3, floor(22/3) = 7)
    expect(readFileSync(p('s2.csv'), 'utf8')).toMatch(/^# Identity: .*; frames 3:7 step 1; shard 2\/3 of frames 0:11 step 1$/m);
    const m = await cli('merge', p('s3.csv'), p('s1.csv'), p('s2.csv'), '-o', p('merged.csv'));
    expect(m.code).toBe(0);
    expect(m.out).toMatch(/11 frames from 3 shards/);
    expect(readFileSync(p('merged.csv'), 'utf8')).toBe(readFileSync(p('all.csv'), 'utf8'));

    const missing = await cli('merge', p('s1.csv'), p('s3.csv'), '-o', p('x.csv'));
    expect(missing.code).toBe(1);
    expect(missing.err).toMatch(/shard 2\/3 \(frames 3…6\) is missing/);
    const doubled = await cli('merge', p('s1.csv'), p('s2.csv'), p('s2.csv'), p('s3.csv'), '-o', p('x.csv'));
    expect(doubled.err).toMatch(/shard 2\/3 is given twice: .*s2\.csv and .*s2\.csv/);

    const other = await cli('predict', p('m2.json'), p('t.extxyz'), '--threads', '1', '--shard', '2/3', '-o', p('o2.csv'));
    expect(other.code).toBe(0);
    const mixed = await cli('merge', p('s1.csv'), p('o2.csv'), p('s3.csv'), '-o', p('x.csv'));
    expect(mixed.code).toBe(1);
    expect(mixed.err).toMatch(/o2\.csv and .*s1\.csv come from different models/);

    // a truncated shard (lost its last row) is named with the frames it lacks
    const s2 = readFileSync(p('s2.csv'), 'utf8').trimEnd().split('\n');
    writeFileSync(p('s2cut.csv'), s2.slice(0, -1).join('\n') + '\n');
    const cut = await cli('merge', p('s1.csv'), p('s2cut.csv'), p('s3.csv'), '-o', p('x.csv'));
    expect(cut.err).toMatch(/s2cut\.csv ends at frame 5: frame 6 is missing/);
    expect(() => readFileSync(p('x.csv'))).toThrow();
  }, 240_000);

  it('merges --frames ranges and extended XYZ shards, and names a gap between ranges', async () => {
    await predict('a.csv', '--frames', ':5');
    await predict('b.csv', '--frames', '7:');
    const gap = await cli('merge', p('a.csv'), p('b.csv'), '-o', p('g.csv'));
    expect(gap.code).toBe(1);
    expect(gap.err).toMatch(/frames 5…6 are missing between .*a\.csv and .*b\.csv/);

    await predict('all.extxyz', '--frames', ':6');
    await predict('x1.extxyz', '--frames', ':6', '--shard', '1/2');
    await predict('x2.extxyz', '--frames', ':6', '--shard', '2/2');
    expect(readFileSync(p('x1.extxyz'), 'utf8')).toMatch(/pred_shard="1\/2 frames 0:3 step 1 of 0:6 step 1"/);
    const m = await cli('merge', p('x2.extxyz'), p('x1.extxyz'), '-o', p('merged.extxyz'));
    expect(m.code).toBe(0);
    expect(readFileSync(p('merged.extxyz'), 'utf8')).toBe(readFileSync(p('all.extxyz'), 'utf8'));
    const dbl = await cli('merge', p('x1.extxyz'), p('all.extxyz'), '-o', p('d.extxyz'));
    expect(dbl.code).toBe(1);
  }, 240_000);
});
