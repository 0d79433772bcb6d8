import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../../src-main/cli/main.ts';
import { saveModel } from '../../src-main/io/model-file.ts';
import { jitteredTrajectory, smallModel, trajectoryText } from '../helpers/trajectory.ts';

let dir: string;
const p = (n: string) => join(dir, n);
beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'pw-predict-stream-'));
  await saveModel(p('m.json'), await smallModel());
  writeFileSync(p('t.extxyz'), trajectoryText(jitteredTrajectory(12)));
}, 60_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('polarweave predict (streamed)', () => {
  it('Ctrl-C keeps the checkpoint; the same command continues and gives the bytes of a clean run', async () => {
    const base = ['predict', p('m.json'), p('t.extxyz'), '--threads', '1'];
    const clean = await runCli([...base, '-o', p('clean.csv')], { out: () => {}, err: () => {}, signal: new AbortController().signal });
    expect(clean).toBe(0);

    const c = new AbortController();
    let err = '';
    const code = await runCli([...base, '-o', p('r.csv')], {
      out: () => {},
      err: (t) => {
        err += t;
        // abort once the first batch is written
        if (/predict: [1-9]\d* frames/.test(t)) c.abort();
      },
      signal: c.signal,
    });
    expect(code).toBe(130);
    expect(err).toMatch(/stopped on request\. The frames done so far are kept .*r\.csv\.checkpoint\.json.*run the same command again/);
    expect(existsSync(p('r.csv'))).toBe(false);
    expect(existsSync(p('r.csv.partial'))).toBe(true);

    let out = '';
    err = '';
    const again = await runCli([...base, '-o', p('r.csv')], { out: (t) => (out += t), err: (t) => (err += t), signal: new AbortController().signal });
    expect(again).toBe(0);
    expect(err).toMatch(/continued from frame [1-9]/);
    expect(out).toMatch(/12 frames predicted/);
    expect(readFileSync(p('r.csv'), 'utf8')).toBe(readFileSync(p('clean.csv'), 'utf8'));
    expect(existsSync(p('r.csv.checkpoint.json'))).toBe(false);

    // analyse reads what predict wrote (12 frames: too short for a plateau, which it must say)
    let summary = '';
    const a = await runCli(['analyse', p('r.csv'), '-o', p('sum.csv')], { out: (t) => (summary += t), err: (t) => (err += t), signal: new AbortController().signal });
    expect(a).toBe(0);
    expect(summary).toMatch(/analyse: 12 frames \(0…11\)/);
    expect(summary).toMatch(/mean α_CM \(Å³\)/);
    expect(summary).toMatch(/principal refractive indices of the mean ε/);
    expect(summary).toMatch(/too short for its correlation time/);
  }, 180_000);

  it('rejects bad --shard, --threads and conflicting flags with usage errors', async () => {
    const run = (...a: string[]) => runCli(['predict', p('m.json'), p('t.extxyz'), '-o', p('u.csv'), ...a], { out: () => {}, err: () => {}, signal: new AbortController().signal });
    expect(await run('--shard', '0/4')).toBe(2);
    expect(await run('--shard', '5/4')).toBe(2);
    expect(await run('--threads', '0')).toBe(2);
    expect(await run('--resume', '--restart')).toBe(2);
  });
});
