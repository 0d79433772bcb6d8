// `polarweave train --threads N`: the model file holds the same numbers with 1 and 2 threads (everything but the
// creation date), on a set large enough for threads to be used (8 DFT water frames as 4 × 4 × 4 supercells, 24,576
// atoms; ε is intensive, so the supercells keep their frame's reference); a bad count is a usage error.
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cli } from './run-cli.ts';
import { supercell } from '../../src-main/core/geometry/cell.ts';
import { parseExtxyz, writeExtxyz } from '../../src-main/io/extxyz.ts';

let dir: string;
const FAST = ['--radial-functions', '4', '--angular-order', '3'];

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'pw-train-threads-'));
  const frames = parseExtxyz(readFileSync(new URL('../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water-dft-sample.extxyz');
  await writeExtxyz(join(dir, 'big.extxyz'), frames.map((f) => supercell(f, [4, 4, 4])));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('polarweave train --threads', () => {
  it('writes the same model with 1 and 2 threads', async () => {
    const numbers = async (threads: string) => {
      const out = join(dir, `m${threads}.json`);
      const r = await cli('train', join(dir, 'big.extxyz'), '--tensor', 'eps_inf', '--as', 'eps', ...FAST, '--threads', threads, '-o', out);
      expect(r.err).not.toMatch(/error/);
      expect(r.code).toBe(0);
      expect(r.out).toMatch(/trained on 8 frames, 24576 atoms/);
      // the file's every number, without the creation date and the checksum that covers it
      const file = JSON.parse(readFileSync(out, 'utf8')) as { checksum?: unknown; payload: Record<string, unknown> };
      expect(typeof file.payload.createdAt).toBe('string');
      delete file.checksum;
      delete file.payload.createdAt;
      return JSON.stringify(file);
    };
    const one = await numbers('1');
    expect(await numbers('2')).toBe(one);
  }, 300_000);

  it('refuses a thread count that is not a whole number ≥ 1', async () => {
    for (const bad of ['0', '1.5', 'many']) {
      const r = await cli('train', join(dir, 'big.extxyz'), '--tensor', 'eps_inf', '--as', 'eps', '--threads', bad, '-o', join(dir, 'x.json'));
      expect(r.code).toBe(2);
      expect(r.err).toMatch(/--threads must be a whole number ≥ 1/);
    }
  });
});
