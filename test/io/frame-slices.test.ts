import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { indexExtxyz, readExtxyz } from '../../src-main/io/extxyz.ts';
import { frameSlices, type FrameSlice } from '../../src-main/io/frame-slices.ts';
import { parseFrameBytes } from '../../src-main/app/predict/predict-tasks.ts';
import { jitteredTrajectory, trajectoryText } from '../helpers/trajectory.ts';

let dir: string;
const plain = () => join(dir, 't.extxyz');
const gz = () => join(dir, 't.extxyz.gz');
const COUNT = 700; // ≈ 2.4 MB: frames cross the 1 MiB read blocks

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'pw-slices-'));
  // blank lines between some frames and a last line without a newline, as files in the wild have
  const text = trajectoryText(jitteredTrajectory(COUNT)).replace(/\n(?=48\n)/g, (m, off: number) => (off % 7 === 0 ? '\n\n' : m));
  writeFileSync(plain(), text.replace(/\n$/, ''));
  writeFileSync(gz(), gzipSync(text));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function collect(file: string, from = { offset: 0, index: 0, line: 1 }, take = (k: number) => k % 3 === 0): Promise<FrameSlice[]> {
  const out: FrameSlice[] = [];
  for await (const s of frameSlices(file, from, (k) => (take(k) ? 'take' : 'skip'))) out.push(s);
  return out;
}

describe('frameSlices', () => {
  it('cuts out the frames the streaming reader parses, with the offsets of the index', async () => {
    const slices = await collect(plain());
    expect(slices.length).toBe(COUNT);
    const index = await indexExtxyz(plain());
    const frames: Float64Array[] = [];
    for await (const f of readExtxyz(plain(), { range: { step: 3 } })) frames.push(f.positions);
    let j = 0;
    for (const s of slices) {
      expect(s.line).toBe(index.lines[s.index]);
      // the next frame starts where the index says (after any blank lines, the index counts from the count line)
      if (s.index + 1 < COUNT) expect(s.next.offset).toBeLessThanOrEqual(index.offsets[s.index + 1]);
      if (s.index % 3 !== 0) {
        expect(s.bytes).toBeNull();
        continue;
      }
      const f = parseFrameBytes(plain(), s.index, s.line, s.bytes as Buffer);
      expect(f.source?.index ?? s.index).toBe(s.index);
      expect(Array.from(f.positions)).toEqual(Array.from(frames[j++]));
    }
    expect(j).toBe(frames.length);
  });

  it('continues from a stored position, in plain and gzip files alike', async () => {
    const all = await collect(plain(), undefined, () => true);
    const mid = all[400].next; // the position after frame 400
    const rest = await collect(plain(), mid, () => true);
    expect(rest[0].index).toBe(401);
    expect(rest.length).toBe(COUNT - 401);
    expect(Buffer.compare(rest[10].bytes as Buffer, all[411].bytes as Buffer)).toBe(0);
    const restGz = await collect(gz(), mid, () => true);
    expect(restGz.length).toBe(COUNT - 401);
    expect(Buffer.compare(restGz[10].bytes as Buffer, all[411].bytes as Buffer)).toBe(0);
  });
});
