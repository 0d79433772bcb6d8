// The folder of radial tables kept between runs (io/radial-table-store.ts) and radialTable's use of a store
// (core/descriptors/density.ts): a stored table is used only when it is the table radialTable builds, bit for bit;
// a damaged, short or foreign one is refused and the table built again. No outside values: the table built
// without a store is the reference.
import { readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { radialTable, storedTableFits, useRadialTableStore, type RadialSettings, type RadialTableStore } from '../../src-main/core/descriptors/density.ts';
import { cacheFolder, programIdentity, radialTableFolder } from '../../src-main/io/radial-table-store.ts';
import { scratchFolders } from '../helpers/scratch.ts';

const tmp = scratchFolders('pw-radial-store-');
afterEach(() => {
  useRadialTableStore(null);
  delete (globalThis as { __polarweaveProgram?: string }).__polarweaveProgram;
});

/** Run as the program of this identity (bin/load-program.mjs sets it for the pre-built command). */
const runAs = (digit: string) => ((globalThis as { __polarweaveProgram?: string }).__polarweaveProgram = digit.repeat(64));
const notes = (folder: string) => readdirSync(folder).filter((f) => f.endsWith('.fit')).sort();

/** Small settings of their own per test (radialTable keeps the tables it made in memory, by settings). */
const settings = (cutoff: number): RadialSettings => ({ nmax: 3, lmax: 2, cutoff, sigma: 0.5 });

/**
 * Fills radialTable's memory with other tables, so that the next call for `s` asks the store again; given `store`,
 * those are made without one, and `store` is in use afterwards.
 */
function forgetTables(store?: RadialTableStore): void {
  if (store) useRadialTableStore(null);
  for (let k = 0; k < 12; k++) radialTable({ nmax: 1, lmax: 0, cutoff: 2 + k / 64, sigma: 0.7 });
  if (store) useRadialTableStore(store);
}

describe('radial tables kept in a folder', () => {
  it('stores a table once built, and reads back the very same numbers', () => {
    const folder = tmp();
    const s = settings(3.01);
    const built = radialTable(s).coefficients; // no store yet: the reference
    const folderStore = radialTableFolder(folder);
    const found: string[] = [];
    useRadialTableStore({ save: folderStore.save, load: (key, length) => {
      const t = folderStore.load(key, length);
      if (t) found.push(key);
      return t;
    } });
    forgetTables();
    const stored = radialTable(s).coefficients; // not in the folder yet: built again and stored
    expect(readdirSync(folder).filter((f) => f.endsWith('.f64'))).toHaveLength(13);
    expect(readdirSync(folder).some((f) => f.endsWith('.tmp'))).toBe(false);
    forgetTables();
    const read = radialTable(s).coefficients; // from the file
    expect(found).toContain('3|2|3.01|0.5');
    expect(read).not.toBe(stored);
    for (const t of [stored, read]) expect(Buffer.from(t.buffer).equals(Buffer.from(built.buffer))).toBe(true);
  });

  it('refuses a damaged or short file, and a table that is not the one radialTable builds', () => {
    const folder = tmp();
    const store = radialTableFolder(folder);
    const s = settings(3.03);
    useRadialTableStore(store);
    const good = radialTable(s).coefficients;
    const [name] = readdirSync(folder);
    const file = join(folder, name);
    const key = `${s.nmax}|${s.lmax}|${s.cutoff}|${s.sigma}`;
    expect(store.load(key, good.length)).toEqual(good);
    const bytes = readFileSync(file);
    const flipped = Buffer.from(bytes);
    flipped[100] ^= 1;
    writeFileSync(file, flipped);
    expect(store.load(key, good.length)).toBeNull(); // checksum
    writeFileSync(file, bytes.subarray(0, bytes.length - 8));
    expect(store.load(key, good.length)).toBeNull(); // length
    expect(store.load(key, good.length + 1)).toBeNull();

    // a table of other code (one number off by one unit in the last place, in a piece that is checked)
    expect(storedTableFits(s, good.length / (4 * s.nmax * (s.lmax + 1)), good)).toBe(true);
    const foreign = Float64Array.from(good);
    expect(foreign[0]).not.toBe(0);
    foreign[0] += Math.abs(foreign[0]) * Number.EPSILON;
    expect(storedTableFits(s, good.length / (4 * s.nmax * (s.lmax + 1)), foreign)).toBe(false);
    const handing: RadialTableStore = { load: () => foreign, save: () => {} };
    useRadialTableStore(handing);
    forgetTables();
    const rebuilt = radialTable(s).coefficients;
    expect(rebuilt).not.toBe(foreign);
    expect(Buffer.from(rebuilt.buffer).equals(Buffer.from(good.buffer))).toBe(true);
  });

  it('a program takes a table it built or checked without checking it again; another program checks it', () => {
    const folder = tmp();
    const store = radialTableFolder(folder);
    const s = settings(3.05);
    const good = radialTable(s).coefficients; // the reference, built without a store
    const key = `${s.nmax}|${s.lmax}|${s.cutoff}|${s.sigma}`;
    const foreign = Float64Array.from(good);
    foreign[0] += Math.abs(foreign[0]) * Number.EPSILON; // fails storedTableFits
    // program A says it built the foreign table: its note vouches for exactly those numbers, for A only
    runAs('a');
    store.save(key, foreign);
    expect(notes(folder)).toEqual([expect.stringMatching(new RegExp(`^radial-[0-9a-f]{24}\\.${'a'.repeat(24)}\\.fit$`))]);
    useRadialTableStore(store);
    forgetTables(store);
    expect(radialTable(s).coefficients).toEqual(foreign); // taken on A's note, not checked: the note is what skips the check
    // program B (another build or Node version) checks it, refuses it and builds the table again (with B's note)
    runAs('b');
    forgetTables(store);
    const rebuilt = radialTable(s).coefficients;
    expect(Buffer.from(rebuilt.buffer).equals(Buffer.from(good.buffer))).toBe(true);
    expect(notes(folder)).toHaveLength(2);
    // with no identity (the sources, a worker thread) every table is checked, and no note is written
    delete (globalThis as { __polarweaveProgram?: string }).__polarweaveProgram;
    expect(programIdentity()).toBeNull();
    store.save(key, foreign);
    forgetTables(store);
    expect(Buffer.from(radialTable(s).coefficients.buffer).equals(Buffer.from(good.buffer))).toBe(true);
    expect(notes(folder)).toHaveLength(2);
    expect(readdirSync(folder).some((f) => f.endsWith('.tmp'))).toBe(false);
  });

  it('a damaged, short or stale note costs one check and is written again; the newest 4 notes of a table are kept', () => {
    const folder = tmp();
    const store = radialTableFolder(folder);
    const s = settings(3.07);
    useRadialTableStore(store);
    runAs('c');
    const good = radialTable(s).coefficients; // built and stored, with C's note
    const [note] = notes(folder);
    const path = join(folder, note);
    const right = readFileSync(path);
    expect(right).toHaveLength(32);
    for (const damaged of [Buffer.concat([right.subarray(0, 31), Buffer.from([right[31] ^ 1])]), right.subarray(0, 16), Buffer.alloc(0)]) {
      writeFileSync(path, damaged);
      forgetTables(store);
      expect(radialTable(s).coefficients).toEqual(good); // checked, fits, used
      expect(readFileSync(path).equals(right)).toBe(true); // and the note written again
    }
    // a note of another table's numbers (the table file replaced since) does not vouch for these
    const key = `${s.nmax}|${s.lmax}|${s.cutoff}|${s.sigma}`;
    const foreign = Float64Array.from(good);
    foreign[0] += Math.abs(foreign[0]) * Number.EPSILON;
    runAs('d');
    store.save(key, foreign); // table file now foreign; D's note vouches for it, C's note for the good numbers
    runAs('c');
    forgetTables(store);
    expect(Buffer.from(radialTable(s).coefficients.buffer).equals(Buffer.from(good.buffer))).toBe(true);
    for (const d of ['e', 'f', '1', '2']) {
      runAs(d);
      forgetTables(store);
      radialTable(s);
    }
    const kept = notes(folder);
    expect(kept).toHaveLength(4);
    expect(kept.some((f) => f.includes('2'.repeat(24)))).toBe(true);
    expect(readdirSync(folder).some((f) => f.endsWith('.tmp'))).toBe(false);
  });

  it('lives in POLARWEAVE_CACHE_DIR, else under XDG_CACHE_HOME', () => {
    expect(cacheFolder({ POLARWEAVE_CACHE_DIR: '/x/y' })).toBe('/x/y');
    expect(cacheFolder({ XDG_CACHE_HOME: '/c' })).toBe(join('/c', 'polarweave'));
    expect(cacheFolder({})).toMatch(/[\\/]\.cache[\\/]polarweave$/);
  });
});
