// Regression tests of hostile and degenerate input, one class each, below the CLI (test/cli/hostile-input.test.ts
// runs the same classes through the command line): refused with a typed error that names where, in bounded time.
import { getEventListeners } from 'node:events';
import { createWriteStream, existsSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { createGzip } from 'node:zlib';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { computeFeatures } from '../../src-main/core/descriptors/features.ts';
import type { FeatureSettings } from '../../src-main/core/descriptors/feature-types.ts';
import { InputError } from '../../src-main/core/errors.ts';
import { checkCell } from '../../src-main/core/geometry/cell.ts';
import { makeFrame } from '../../src-main/core/geometry/frame.ts';
import { neighbourList } from '../../src-main/core/geometry/neighbours.ts';
import { MAX_JSON_DEPTH, MAX_LINE_BYTES, MIN_ATOM_DISTANCE_A } from '../../src-main/core/limits.ts';
import { atomicWriteStream, removeStaleTemporaries, writeError, writeFileAtomic } from '../../src-main/io/atomic.ts';
import { parseCif } from '../../src-main/io/cif.ts';
import { parseCsv } from '../../src-main/io/csv.ts';
import { strictNumber } from '../../src-main/io/decimal.ts';
import { parseExtxyz } from '../../src-main/io/extxyz.ts';
import { frameSlices } from '../../src-main/io/frame-slices.ts';
import { jsonNestingDepth } from '../../src-main/io/json-depth.ts';
import { JobRunner } from '../../src-main/jobs/runner.ts';
import { tsWorkerFactory } from '../../src-main/jobs/spawn-ts.ts';

let dir: string;
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'pw-robust-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function refusal(f: () => unknown): InputError {
  try {
    f();
  } catch (e) {
    if (e instanceof InputError) return e;
    throw e;
  }
  throw new Error('expected an InputError');
}

describe('cells and positions', () => {
  it('an overflowing cell is refused where it is read (it used to give volume Infinity and a hang)', () => {
    expect(() => checkCell(Float64Array.of(1e308, 0, 0, 0, 7.83, 0, 0, 0, 7.83))).toThrow(/volume overflows/);
    const e = refusal(() => parseExtxyz('1\nLattice="1e308 0 0 0 7.83 0 0 0 7.83"\nO 0 0 0\n', 'o.extxyz'));
    expect(e.where).toEqual({ file: 'o.extxyz', line: 2, frame: 0 });
  });

  it('the neighbour list refuses non-finite extents instead of looping (defence behind the readers)', () => {
    const frame = makeFrame(['O', 'O'], [0, 0, 0, 1e308, 1e308, 1e308], null);
    frame.positions[3] = 1.7e308;
    frame.positions[0] = -1.7e308;
    expect(() => neighbourList(frame, 4)).toThrow(InputError);
  });

  it('features refuse atoms closer than MIN_ATOM_DISTANCE_A, naming both atoms', () => {
    const frame = makeFrame(['O', 'H', 'H'], [0, 0, 0, 0.1, 0, 0, 2, 0, 0], [8, 0, 0, 0, 8, 0, 0, 0, 8]);
    frame.source = { file: 'close.extxyz', index: 4, line: 21 };
    const settings: FeatureSettings = { cutoff: 4, cutoffWidth: 0.5, sigma: 0.4, nmax: 3, lmax: 2, species: ['H', 'O'], centres: ['H', 'O'] };
    const e = refusal(() => computeFeatures(frame, settings, []));
    expect(e.message).toMatch(new RegExp(`atoms 1 and 2 are 0\\.100 Å apart, closer than any two atoms can be \\(${MIN_ATOM_DISTANCE_A} Å\\)`));
    expect(e.where).toEqual({ file: 'close.extxyz', line: 21, frame: 4 });
  });
});

describe('readers', () => {
  it('a frame with no atoms and a CIF block without sites are refused', () => {
    expect(refusal(() => parseExtxyz('2\n\nO 0 0 0\nH 1 0 0\n0\n\n', 'e.extxyz')).where).toEqual({ file: 'e.extxyz', line: 5, frame: 1 });
    const cif = 'data_x\n_cell_length_a 5\n_cell_length_b 5\n_cell_length_c 5\n_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\nloop_\n_atom_site_label\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\n';
    expect(() => parseCif(cif, 'e.cif')).toThrow(/lists no atom sites/);
  });

  it('JSON nesting is measured in one pass that skips strings', () => {
    expect(jsonNestingDepth('[[1],{"a":[2]}]')).toBe(3);
    expect(jsonNestingDepth('["[[[[", {"k": "]]]"}]')).toBe(2);
    expect(jsonNestingDepth('"\\"[["')).toBe(0);
    const e = refusal(() => parseExtxyz(`1\nLattice="7 0 0 0 7 0 0 0 7" t="_JSON ${'['.repeat(MAX_JSON_DEPTH + 1)}${']'.repeat(MAX_JSON_DEPTH + 1)}"\nO 0 0 0\n`, 'j.extxyz'));
    expect(e.message).toMatch(/nests JSON deeper/);
    // at the limit it is read (and flattened)
    const ok = parseExtxyz(`1\nLattice="7 0 0 0 7 0 0 0 7" t="_JSON ${'['.repeat(MAX_JSON_DEPTH)}1${']'.repeat(MAX_JSON_DEPTH)}"\nO 0 0 0\n`, 'j.extxyz');
    expect(ok[0].info.t).toEqual([1]);
  });

  it('the strict number syntax is unchanged by the linear pattern', () => {
    for (const t of ['1', '-2.5', '+3.', '.5', '1e5', '1.5E+02', '-0']) expect(strictNumber(t)).toBe(Number(t));
    for (const t of ['', '.', 'e5', '1e', '0x10', 'Infinity', ' 1', '1..2', '1.2.3', '--1']) expect(strictNumber(t)).toBeNaN();
  });

  it('CIF and CSV skip a byte-order mark, as the extended XYZ readers do', () => {
    const cif = '\ufeffdata_x\n_cell_length_a 5\n_cell_length_b 5\n_cell_length_c 5\n_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\nloop_\n_atom_site_label\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\nNa1 0 0 0\n';
    expect(parseCif(cif, 'b.cif')[0].species).toEqual(['Na']);
    expect(parseCsv('\ufeffa,b\n1,2\n', 'b.csv').columns).toEqual(['a', 'b']);
    expect(parseExtxyz('\ufeff1\n\nO 0 0 0\n', 'b.extxyz')[0].species).toEqual(['O']);
  });
});

describe('the streamed predict reader (frame slices)', () => {
  const slices = async (text: string) => {
    const file = join(dir, 's.extxyz');
    writeFileSync(file, text);
    const out = [];
    for await (const s of frameSlices(file, { offset: 0, index: 0, line: 1 }, () => 'take')) out.push(s);
    return out;
  };

  it('accepts a byte-order mark like the other readers', async () => {
    const s = await slices('\ufeff1\n\nO 0 0 0\n1\n\nH 0 0 0\n');
    expect(s.map((x) => [x.index, x.line, x.atoms])).toEqual([[0, 1, 1], [1, 4, 1]]);
  });

  it('names a bad count line on its own line (it used to say the next one)', async () => {
    const e = (await slices('1\n\nO 0 0 0\nx\n').catch((x: unknown) => x)) as InputError;
    expect(e).toBeInstanceOf(InputError);
    expect(e.where.line).toBe(4);
    expect(e.where.frame).toBe(1);
  });

  it('refuses a line that never ends (a gzip "bomb") before collecting it', async () => {
    const file = join(dir, 'bomb.extxyz.gz');
    const gz = createGzip({ level: 1 });
    const out = createWriteStream(file);
    gz.pipe(out);
    gz.write('1\n\nO ');
    const junk = Buffer.alloc(1 << 20, 0x37);
    for (let k = 0; k <= MAX_LINE_BYTES >> 20; k++) if (!gz.write(junk)) await new Promise<void>((r) => gz.once('drain', () => r()));
    gz.end();
    await new Promise<void>((r) => out.on('close', () => r()));
    const run = async () => {
      for await (const _ of frameSlices(file, { offset: 0, index: 0, line: 1 }, () => 'take'));
    };
    await expect(run()).rejects.toThrow(/line 3 is longer than 64 MiB/);
  }, 60_000);

  it('says "no frames found" for an empty file, and refuses an empty frame', async () => {
    await expect(slices('')).rejects.toThrow(/no frames found/);
    await expect(slices('\n\n')).rejects.toThrow(/no frames found/);
    await expect(slices('0\n\n')).rejects.toThrow(/no atoms/);
  });
});

describe('files we write', () => {
  it('stale temporaries of a killed run are removed on the next write of the same target; live ones are kept', async () => {
    const target = join(dir, 'out.csv');
    const dead = join(dir, `.out.csv.999999999-0123456789ab.tmp`); // no process has this id
    const live = join(dir, `.out.csv.${process.ppid}-0123456789ab.tmp`);
    const other = join(dir, '.other.csv.999999999-0123456789ab.tmp');
    for (const f of [dead, live, other]) writeFileSync(f, 'half');
    await writeFileAtomic(target, 'done\n');
    expect(existsSync(dead)).toBe(false);
    expect(existsSync(live)).toBe(true);
    expect(existsSync(other)).toBe(true);
    // once per target and process: a second sweep does nothing
    writeFileSync(dead, 'half');
    expect(await removeStaleTemporaries(target)).toEqual([]);
    // the streamed writer sweeps too (another target)
    const streamed = join(dir, 'traj.extxyz');
    const stale = join(dir, '.traj.extxyz.999999998-0123456789ab.tmp');
    writeFileSync(stale, 'half');
    const w = atomicWriteStream(streamed);
    await w.write('x');
    await w.commit();
    expect(existsSync(stale)).toBe(false);
    expect(readdirSync(dir).filter((f) => f.startsWith('.traj'))).toEqual([]);
  });

  it('a full disk and a missing folder are plain messages naming the output', () => {
    const full = writeError('/data/out.csv', Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' }));
    expect(full).toBeInstanceOf(InputError);
    expect(full.message).toBe('/data/out.csv: cannot write: the disk is full — free some space or write elsewhere');
    expect(writeError('/x/y/out.csv', Object.assign(new Error('ENOENT'), { code: 'ENOENT' })).message).toMatch(/out\.csv: cannot write: the folder does not exist/);
  });
});

describe('job runner', () => {
  it('removes its abort listener from the caller’s signal when a job ends (one signal serves thousands of batches)', async () => {
    const runner = new JobRunner({ spawn: tsWorkerFactory(new URL('../jobs/fixture-worker.ts', import.meta.url)), concurrency: 1 });
    const controller = new AbortController();
    try {
      for (let k = 0; k < 3; k++) await runner.run('echo', { values: Float64Array.of(k) }, { signal: controller.signal });
      expect(getEventListeners(controller.signal, 'abort')).toHaveLength(0);
      const failed = runner.run('fail', { line: 1 }, { signal: controller.signal });
      await failed.catch(() => undefined);
      expect(getEventListeners(controller.signal, 'abort')).toHaveLength(0);
    } finally {
      await runner.close();
    }
  }, 60_000);
});
