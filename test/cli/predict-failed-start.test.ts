// A predict run that fails on its first frame leaves nothing to resume: no OUT.partial, no checkpoint, so the
// next run (with another input) starts cleanly instead of being refused.
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { runCli } from '../../src-main/cli/main.ts';
import { scratchFolders } from '../helpers/scratch.ts';

const tmp = scratchFolders('pw-predict-fail-');
const MODEL = new URL('../fixtures/models/water-v1.model.json', import.meta.url).pathname;
const WATER = new URL('../fixtures/water-dft-sample.extxyz', import.meta.url).pathname;

async function cli(argv: string[]): Promise<{ code: number; err: string }> {
  let err = '';
  const code = await runCli(argv, { out: () => {}, err: (t) => (err += t), signal: new AbortController().signal });
  return { code, err };
}

describe('predict failing at frame 0', () => {
  it('leaves no partial output or checkpoint, and the next run starts cleanly', async () => {
    const dir = tmp();
    const bad = join(dir, 'bad.extxyz');
    writeFileSync(bad, '3\nLattice="7.83 0 0 0 7.83 0 0 0 7.83" Properties=species:S:1:pos:R:3 pbc="T T T"\nO 0 0 0\nH 1 0 x\nH 0 1 0\n');
    const out = join(dir, 'out.csv');
    const r = await cli(['predict', MODEL, bad, '--threads', '1', '-o', out]);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/bad\.extxyz, line 4, frame 0/);
    for (const f of [out, `${out}.partial`, `${out}.checkpoint.json`]) expect(existsSync(f), f).toBe(false);
    const ok = await cli(['predict', MODEL, WATER, '--frames', ':2', '--threads', '1', '-o', out]);
    expect(ok.code, ok.err).toBe(0);
    expect(readFileSync(out, 'utf8')).toMatch(/eps_ref_xx/); // the water frames carry the model's reference
  }, 120_000);
});
