// The folder of radial tables kept between runs (io/radial-table-store.ts) and radialTable's use of a store
// (core/descriptors/density.ts): a stored table is used only when it is the table radialTable builds, bit for bit;
// a damaged, short or foreign one is refused and the table built again. No outside values: the table built
// without a store is the reference.
import { readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { radialTable, storedTableFits, useRadialTableStore, type RadialSettings, type RadialTableStore } from '../../src-main/core/descriptors/density.ts';
import { cacheFolder, radialTableFolder } from '../../src-main/io/radial-table-store.ts';
import { scratchFolders } from '../helpers/scratch.ts';

const tmp = scratchFolders('pw-radial-store-');
afterEach(() => useRadialTableStore(null));

/** Small settings of their own per test (radialTable keeps the tables it made in memory, by settings). */
const settings = (cutoff: number): RadialSettings => ({ nmax: 3, lmax: 2, cutoff, sigma: 0.5 });

/** Fills radialTable's memory with other tables, so that the next call for `s` asks the store again. */
function forgetTables(): void {
  for (let k = 0; k < 12; k++) radialTable({ nmax: 1, lmax: 0, cutoff: 2 + k / 64, sigma: 0.7 });
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

  it('lives in POLARWEAVE_CACHE_DIR, else under XDG_CACHE_HOME', () => {
    expect(cacheFolder({ POLARWEAVE_CACHE_DIR: '/x/y' })).toBe('/x/y');
    expect(cacheFolder({ XDG_CACHE_HOME: '/c' })).toBe(join('/c', 'polarweave'));
    expect(cacheFolder({})).toMatch(/[\\/]\.cache[\\/]polarweave$/);
  });
});
