// Extended XYZ: reading (in memory and streamed, plain and gzip), the index, writing, and every error path.
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync, readdirSync, existsSync } from 'node:fs';
import { gzipSync } from 'node:zlib';
import os from 'node:os';
import path from 'node:path';
import { InputError } from '../../src-main/core/errors.ts';
import { makeFrame, type Frame } from '../../src-main/core/geometry/frame.ts';
import { formatExtxyzFrame, indexExtxyz, parseExtxyz, readExtxyz, readFrameAt, writeExtxyz } from '../../src-main/io/extxyz.ts';

const WATER = '/work/shared/data/water-dft-sample.extxyz';
let dir: string;
beforeAll(() => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'pw-extxyz-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function collect<T>(it: AsyncIterable<T>): Promise<T[]> {
  const out: T[] = [];
  for await (const x of it) out.push(x);
  return out;
}

function expectInputError(fn: () => unknown, where: { line?: number; frame?: number }, message?: RegExp): InputError {
  let caught: unknown;
  try {
    fn();
  } catch (e) {
    caught = e;
  }
  expect(caught).toBeInstanceOf(InputError);
  const e = caught as InputError;
  if (where.line !== undefined) expect(e.where.line).toBe(where.line);
  if (where.frame !== undefined) expect(e.where.frame).toBe(where.frame);
  if (message) expect(e.message).toMatch(message);
  expect(e.hint ?? '').not.toBe('');
  return e;
}

const TWO_FRAMES = [
  '2',
  'Lattice="5 0 0 0 6 0 0 0 7" Properties=species:S:1:pos:R:3:forces:R:3:tag:I:1:fixed:L:1:label:S:1 pbc="T T F" energy=-12.5 name="two atoms" flag alpha={1 2 3} beta=[4, 5, 6] ok=True',
  'O 0.0 0.1 0.2 1 2 3 7 T first',
  'H 1.0 1.1 1.2 -1 -2 -3 8 F second',
  '1',
  'note=plain',
  'Na 1 2 3',
  '',
].join('\n');

describe('parseExtxyz', () => {
  it('reads cell, pbc, info of every kind and extra per-atom columns', () => {
    const [a, b] = parseExtxyz(TWO_FRAMES, 'two.xyz');
    expect(a.species).toEqual(['O', 'H']);
    expect(Array.from(a.positions)).toEqual([0, 0.1, 0.2, 1, 1.1, 1.2]);
    expect(Array.from(a.cell!)).toEqual([5, 0, 0, 0, 6, 0, 0, 0, 7]);
    expect(a.pbc).toEqual([true, true, false]);
    expect(a.info).toEqual({ energy: -12.5, name: 'two atoms', flag: true, alpha: [1, 2, 3], beta: [4, 5, 6], ok: true });
    expect(a.arrays.forces).toEqual({ kind: 'real', width: 3, data: Float64Array.from([1, 2, 3, -1, -2, -3]) });
    expect(a.arrays.tag).toEqual({ kind: 'int', width: 1, data: Int32Array.from([7, 8]) });
    expect(a.arrays.fixed).toEqual({ kind: 'bool', width: 1, data: Uint8Array.from([1, 0]) });
    expect(a.arrays.label).toEqual({ kind: 'string', width: 1, data: ['first', 'second'] });
    expect(a.source).toEqual({ file: 'two.xyz', index: 0, line: 1 });
    // no Lattice: open structure; default Properties
    expect(b.cell).toBeNull();
    expect(b.pbc).toEqual([false, false, false]);
    expect(b.species).toEqual(['Na']);
    expect(b.info).toEqual({ note: 'plain' });
    expect(b.source).toEqual({ file: 'two.xyz', index: 1, line: 5 });
  });

  it('reads the shared DFT water sample (8 frames, 48 atoms, 9-number tensors)', () => {
    const frames = parseExtxyz(readFileSync(WATER, 'utf8'), WATER);
    expect(frames.length).toBe(8); // README of /work/shared/data: 8 snapshots
    for (const f of frames) {
      expect(f.species.length).toBe(48); // 16 molecules × 3 atoms
      expect(f.cell![0]).toBe(7.830199); // cubic 7.83 Å cell
      expect((f.info.eps_inf as number[]).length).toBe(9);
      expect((f.info.alpha_periodic_A3 as number[]).length).toBe(9);
      expect(f.info.phase).toBe('liquid');
    }
    expect(frames[0].info.tag).toBe('sample-001');
    expect(frames[0].info.energy_hartree).toBe(-275.734886523);
  });

  it('keeps a plain XYZ title, tolerates CRLF, tabs and blank lines between frames', () => {
    const text = '1\r\nwater box from somewhere\r\nO\t0 0 0\r\n\r\n\r\n1\r\n\r\nH 1 1 1\r\n';
    const f = parseExtxyz(text, 'crlf.xyz');
    expect(f.length).toBe(2);
    expect(f[0].info).toEqual({ comment: 'water box from somewhere' });
    expect(f[1].info).toEqual({});
    expect(f[1].source!.line).toBe(6);
  });

  it('accepts an atomic-number column Z instead of species', () => {
    const [f] = parseExtxyz('2\nProperties=Z:I:1:pos:R:3\n8 0 0 0\n1 0 0 1\n', 'z.xyz');
    expect(f.species).toEqual(['O', 'H']);
    expect(f.arrays.Z).toBeUndefined();
  });

  it('reads escapes, quoted keys, spaces around =, and numeric-looking strings written by us', () => {
    const [f] = parseExtxyz('1\na = 1 "my key"="x \\"y\\" \\\\ z" s="\\1 2" e=[] one=[3.5] str={a b}\nH 0 0 0\n', 'q.xyz');
    expect(f.info).toEqual({ a: 1, 'my key': 'x "y" \\ z', s: '1 2', e: [], one: [3.5], str: '{a b}' });
  });
});

describe('errors say file, line and frame, with a hint', () => {
  const ok = (body: string) => `2\nLattice="4 0 0 0 4 0 0 0 4" Properties=species:S:1:pos:R:3\n${body}`;
  it('truncated frame', () => {
    expectInputError(() => parseExtxyz(ok('O 0 0 0\n'), 'f'), { line: 3, frame: 0 }, /ends inside frame 0: 1 of 2/);
    expectInputError(() => parseExtxyz('3\n', 'f'), { line: 1, frame: 0 }, /comment line and 3 atom lines are missing/);
  });
  it('too few atoms before the next frame', () => {
    expectInputError(() => parseExtxyz(ok('O 0 0 0\n1\n\nH 0 0 0\n'), 'f'), { line: 4, frame: 0 }, /declares 2 atoms but only 1/);
  });
  it('too many atoms', () => {
    expectInputError(() => parseExtxyz(ok('O 0 0 0\nH 0 0 1\nH 0 0 2\n'), 'f'), { line: 5, frame: 1 }, /more atom lines than its count/);
  });
  it('unknown or missing species', () => {
    expectInputError(() => parseExtxyz(ok('O 0 0 0\nXx 0 0 1\n'), 'f'), { line: 4, frame: 0 }, /unknown species 'Xx'/);
    const e = expectInputError(() => parseExtxyz(ok('O 0 0 0\nNA 0 0 1\n'), 'f'), { line: 4 });
    expect(e.hint).toMatch(/'Na'/);
    expectInputError(() => parseExtxyz(ok('O 0 0 0\n0 0 1\n'), 'f'), { line: 4 }, /3 fields but Properties needs 4/);
  });
  it('non-numeric, NaN and Inf fields', () => {
    expectInputError(() => parseExtxyz(ok('O 0 0 0\nH 0 x 1\n'), 'f'), { line: 4 }, /'pos' needs a finite real number, found 'x'/);
    expectInputError(() => parseExtxyz(ok('O 0 0 0\nH 0 nan 1\n'), 'f'), { line: 4 }, /found 'nan'/);
    expectInputError(() => parseExtxyz(ok('O 0 0 0\nH 0 Infinity 1\n'), 'f'), { line: 4 });
    expectInputError(() => parseExtxyz(ok('O 0 0 0\nH 0 0x10 1\n'), 'f'), { line: 4 });
    expectInputError(() => parseExtxyz('1\nenergy=nan\nH 0 0 0\n', 'f'), { line: 2 }, /not a finite number/);
    expectInputError(() => parseExtxyz('1\nt="1 2 inf"\nH 0 0 0\n', 'f'), { line: 2 }, /non-finite/);
  });
  it('bad cells', () => {
    expectInputError(() => parseExtxyz('1\nLattice="1 0 0 0 1 0 0 0"\nH 0 0 0\n', 'f'), { line: 2 }, /9 numbers.*got 8/);
    expectInputError(() => parseExtxyz('1\nLattice="1 0 0 0 1 0 2 2 0"\nH 0 0 0\n', 'f'), { line: 2 }, /zero volume/);
    expectInputError(() => parseExtxyz('1\nLattice="1 0 0 0 1 0 0 0 -1"\nH 0 0 0\n', 'f'), { line: 2 }, /negative volume/);
    expectInputError(() => parseExtxyz('1\nLattice="1 0 0 0 1 0 0 0 a"\nH 0 0 0\n', 'f'), { line: 2 }, /9 numbers/);
    expectInputError(() => parseExtxyz('1\npbc="T T T"\nH 0 0 0\n', 'f'), { line: 2 }, /no Lattice/);
  });
  it('bad Properties and comment syntax', () => {
    expectInputError(() => parseExtxyz('1\nProperties=species:S:1:pos:R\nH 0 0 0\n', 'f'), { line: 2 }, /triples/);
    expectInputError(() => parseExtxyz('1\nProperties=species:S:1:pos:Q:3\nH 0 0 0\n', 'f'), { line: 2 }, /unknown kind 'Q'/);
    expectInputError(() => parseExtxyz('1\nProperties=species:S:1\nH 0 0 0\n', 'f'), { line: 2 }, /no 'pos'/);
    expectInputError(() => parseExtxyz('1\nProperties=pos:R:3\n0 0 0\n', 'f'), { line: 2 }, /no 'species'/);
    expectInputError(() => parseExtxyz('1\nProperties=species:S:1:pos:R:3:f:R:3\nH 0 0 0\n', 'f'), { line: 3 }, /4 fields.*needs 7/);
    expectInputError(() => parseExtxyz('1\nname="open\nH 0 0 0\n', 'f'), { line: 2 }, /not closed/);
    expectInputError(() => parseExtxyz('1\na=1 a=2\nH 0 0 0\n', 'f'), { line: 2 }, /twice/);
  });
  it('bad count lines and empty input', () => {
    expectInputError(() => parseExtxyz('two\nx\n', 'f'), { line: 1, frame: 0 }, /atom count/);
    expectInputError(() => parseExtxyz('-1\nx\n', 'f'), { line: 1 });
    expectInputError(() => parseExtxyz('', 'f'), { line: 1 }, /no frames/);
  });
});

function sampleFrame(): Frame {
  const f = makeFrame(['O', 'H', 'H'], [0.1, -0.2, 1e-7, 0.757, 0.586, 0, -0.757, 0.586, 0], [9.1, 0, 0, 0.3, 8.2, 0, -0.1, 0.2, 7.3]);
  f.pbc = [true, false, true];
  f.info = { energy: -76.4, tag: 'frame one', eps: [1, 2, 3, 2, 4, 5, 3, 5, 6], n: 3, done: false, s: '1.5 2' };
  f.arrays = { q: { kind: 'real', width: 1, data: Float64Array.from([-0.8, 0.4, 0.4]) }, id: { kind: 'int', width: 1, data: Int32Array.from([1, 2, 3]) } };
  return f;
}

function strip(f: Frame): Omit<Frame, 'source'> {
  const { source: _s, ...rest } = f;
  return rest;
}

describe('writing and streaming', () => {
  it('formatExtxyzFrame round-trips exactly', () => {
    const f = sampleFrame();
    const [back] = parseExtxyz(formatExtxyzFrame(f), 'x');
    expect(strip(back)).toEqual(f);
  });

  it('writeExtxyz is atomic and readExtxyz streams it back (plain and gzip)', async () => {
    const frames = Array.from({ length: 5 }, (_, k) => {
      const f = sampleFrame();
      f.info.k = k;
      return f;
    });
    for (const name of ['out.extxyz', 'out.extxyz.gz']) {
      const p = path.join(dir, name);
      async function* gen() {
        yield* frames;
      }
      expect(await writeExtxyz(p, gen())).toBe(5);
      if (name.endsWith('.gz')) expect(readFileSync(p)[0]).toBe(0x1f);
      const back = await collect(readExtxyz(p));
      expect(back.map(strip)).toEqual(frames);
      expect(back[3].source).toEqual({ file: p, index: 3, line: 3 * 5 + 1 });
      const some = await collect(readExtxyz(p, { range: { start: 1, stop: 5, step: 2 } }));
      expect(some.map((f) => f.info.k)).toEqual([1, 3]);
    }
    expect(readdirSync(dir).filter((n) => n.endsWith('.tmp'))).toEqual([]);
  });

  it('a gzip output of several 1 MiB blocks (several gzip members) reads back whole', async () => {
    const p = path.join(dir, 'multi.extxyz.gz');
    const f = sampleFrame();
    const n = 9000; // ≈ 2.5 MB of text: three blocks
    await writeExtxyz(p, (function* () {
      for (let k = 0; k < n; k++) yield f;
    })());
    const { gunzipSync } = await import('node:zlib');
    expect(gunzipSync(readFileSync(p)).toString().split('\n').length).toBe(n * 5 + 1);
    let count = 0;
    for await (const g of readExtxyz(p)) {
      if (count === n - 1) expect(strip(g)).toEqual(f);
      count++;
    }
    expect(count).toBe(n);
  });

  it('a failing frame source leaves no output and no temp file', async () => {
    const p = path.join(dir, 'never.extxyz');
    function* bad() {
      yield sampleFrame();
      throw new Error('source failed');
    }
    await expect(writeExtxyz(p, bad())).rejects.toThrow('source failed');
    expect(existsSync(p)).toBe(false);
    expect(readdirSync(dir).filter((n) => n.includes('never'))).toEqual([]);
  });

  it('streams across 1 MiB chunk boundaries identically to the in-memory parser', async () => {
    const f = sampleFrame();
    const text = formatExtxyzFrame(f).repeat(6000) + formatExtxyzFrame(f).trimEnd(); // > 2 MiB, no final newline
    const p = path.join(dir, 'big.xyz');
    writeFileSync(p, text);
    const streamed = await collect(readExtxyz(p));
    expect(streamed.length).toBe(6001);
    const inMemory = parseExtxyz(text, p);
    // compare through the exact formatter (deep equality of 6000 frames is slow)
    expect(streamed.map(formatExtxyzFrame).join('')).toBe(inMemory.map(formatExtxyzFrame).join(''));
    expect(streamed.map((g) => g.source!.line)).toEqual(inMemory.map((g) => g.source!.line));
    expect(strip(streamed[4321])).toEqual(f);
  });

  it('indexExtxyz and readFrameAt give each frame directly (plain and gzip)', async () => {
    const text = readFileSync(WATER, 'utf8');
    const all = parseExtxyz(text, WATER);
    const idx = await indexExtxyz(WATER);
    expect(idx.frames).toBe(8);
    expect(Array.from(idx.lines)).toEqual(all.map((f) => f.source!.line));
    expect(Array.from(idx.atomCounts)).toEqual(all.map(() => 48));
    expect(idx.offsets[8]).toBe(Buffer.byteLength(text));
    for (const k of [0, 5, 7]) expect(await readFrameAt(WATER, idx, k)).toEqual(all[k]);
    const gz = path.join(dir, 'w.xyz.gz');
    writeFileSync(gz, gzipSync(text));
    const gidx = await indexExtxyz(gz);
    expect(gidx.compressed).toBe(true);
    expect(Array.from(gidx.offsets)).toEqual(Array.from(idx.offsets));
    expect(strip(await readFrameAt(gz, gidx, 6))).toEqual(strip(all[6]));
    await expect(readFrameAt(WATER, idx, 8)).rejects.toBeInstanceOf(InputError);
  });

  it('streamed errors and truncated gzip are InputErrors with where', async () => {
    const p = path.join(dir, 'trunc.xyz');
    writeFileSync(p, '2\n\nO 0 0 0\n');
    await expect(collect(readExtxyz(p))).rejects.toMatchObject({ name: 'InputError', where: { file: p, line: 3, frame: 0 } });
    await expect(indexExtxyz(p)).rejects.toMatchObject({ name: 'InputError', where: { frame: 0 } });
    const gz = path.join(dir, 'trunc.xyz.gz');
    const full = gzipSync(readFileSync(WATER));
    writeFileSync(gz, full.subarray(0, full.length >> 1));
    await expect(collect(readExtxyz(gz))).rejects.toBeInstanceOf(InputError);
    await expect(collect(readExtxyz(path.join(dir, 'missing.xyz')))).rejects.toMatchObject({ name: 'InputError', problem: 'file not found' });
  });

  it('stops early without reading the rest, and honours an abort signal', async () => {
    const p = path.join(dir, 'stop.xyz');
    writeFileSync(p, formatExtxyzFrame(sampleFrame()).repeat(3) + 'garbage\n');
    const first = await collect(readExtxyz(p, { range: { stop: 2 } }));
    expect(first.length).toBe(2);
    const ac = new AbortController();
    ac.abort();
    await expect(collect(readExtxyz(WATER, { signal: ac.signal }))).rejects.toMatchObject({ name: 'CancelledError' });
  });
});

describe('index edge cases', () => {
  it('agrees with the parser on blank lines, CRLF, a byte-order mark and a last line without newline', async () => {
    const d = mkdtempSync(path.join(os.tmpdir(), 'pw-idx-'));
    try {
      const text = '\ufeff1\r\n\r\nH 0 0 0\r\n\r\n\r\n2\r\nnote=x\r\nO 0 0 0\r\nH 1 0 0';
      const p = path.join(d, 'e.xyz');
      writeFileSync(p, text);
      const frames = await collect(readExtxyz(p));
      const idx = await indexExtxyz(p);
      expect(idx.frames).toBe(2);
      expect(Array.from(idx.lines)).toEqual(frames.map((f) => f.source!.line));
      expect(Array.from(idx.lines)).toEqual([1, 6]);
      expect(strip(await readFrameAt(p, idx, 1))).toEqual(strip(frames[1]));
      writeFileSync(p, text.slice(0, -8)); // cut inside the last frame
      await expect(indexExtxyz(p)).rejects.toMatchObject({ name: 'InputError', where: { frame: 1 } });
    } finally {
      rmSync(d, { recursive: true, force: true });
    }
  });
});

describe('large frames', () => {
  it('a frame of 10 000 atoms with extra columns (arrays grow past the first allocation) reads back exactly', () => {
    const n = 10_000;
    const species = Array.from({ length: n }, (_, i) => ['O', 'H', 'Na'][i % 3]);
    const f = makeFrame(species, Array.from({ length: 3 * n }, (_, i) => i * 0.001 - 7), [30, 0, 0, 0, 30, 0, 0, 0, 30]);
    f.arrays = {
      q: { kind: 'real', width: 2, data: Float64Array.from({ length: 2 * n }, (_, i) => i / 7) },
      id: { kind: 'int', width: 1, data: Int32Array.from({ length: n }, (_, i) => i - 5000) },
      fixed: { kind: 'bool', width: 1, data: Uint8Array.from({ length: n }, (_, i) => i % 2) },
      name: { kind: 'string', width: 1, data: Array.from({ length: n }, (_, i) => `a${i}`) },
    };
    const [back] = parseExtxyz(formatExtxyzFrame(f), 'big');
    expect(strip(back)).toEqual(f);
    const zText = `${n}\nProperties=Z:I:1:pos:R:3\n` + species.map((s, i) => `${s === 'O' ? 8 : s === 'H' ? 1 : 11} ${i} 0 0`).join('\n');
    const [z] = parseExtxyz(zText, 'z');
    expect(z.species).toEqual(species);
    expect(z.positions[3 * 9999]).toBe(9999);
  });

  it('a corrupt huge atom count fails at the end of the file without allocating for it', () => {
    expectInputError(() => parseExtxyz('99999999\n\nH 0 0 0\n', 'f'), { line: 3, frame: 0 }, /1 of 99999999/);
  });
});
