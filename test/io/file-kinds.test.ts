// The registry of file kinds and the one gzip check: every name and every byte string is judged in one place.
import { describe, expect, it } from 'vitest';
import { gzipSync } from 'node:zlib';
import { readFileSync } from 'node:fs';
import { fileKind, parseStructureText, STRUCTURE_EXTENSIONS, structureEntry } from '../../src-main/io/read-structures.ts';
import { gunzipIfGzip, isGzipData } from '../../src-main/io/gzip.ts';
import { structureReaders } from '../../src-main/app/structure-readers.ts';
import { STRUCTURE_ACCEPT } from '../../src-renderer/lib/client.ts';
import { predictOutputFormat } from '../../src-main/app/predict/prediction.ts';

const WATER = new URL('../fixtures/water-dft-sample.extxyz', import.meta.url);

describe('file kinds', () => {
  it('knows structure kinds and tables by name, looking through .gz', () => {
    expect(['a.exyz', 'a.extxyz', 'a.XYZ', 'b.cif.gz', 'c.csv', 'd.extxyz.gz', 'e.pdb'].map((n) => fileKind(n))).toEqual([
      { kind: 'extxyz', gzip: false },
      { kind: 'extxyz', gzip: false },
      { kind: 'extxyz', gzip: false },
      { kind: 'cif', gzip: true },
      { kind: 'csv', gzip: false },
      { kind: 'extxyz', gzip: true },
      undefined,
    ]);
    // .exyz is streamed like .extxyz (predict takes the same path for both)
    expect(structureEntry('a.exyz')).toBe(structureEntry('a.extxyz'));
    expect(structureEntry('a.cif').streamed).toBe(false);
    expect(predictOutputFormat('o.exyz')).toBe('extxyz');
    expect(() => predictOutputFormat('o.extxyz.gz')).toThrow(/compress it afterwards/);
  });

  it("the window's file picker and the shell's dialogs list the registry's extensions", () => {
    expect(STRUCTURE_ACCEPT.split(',').map((e) => e.slice(1)).sort()).toEqual([...STRUCTURE_EXTENSIONS].sort());
  });

  it('recognises gzip by its bytes, whatever the name', () => {
    const text = readFileSync(WATER);
    const gz = gzipSync(text);
    expect(isGzipData(gz)).toBe(true);
    expect(isGzipData(text)).toBe(false);
    expect(gunzipIfGzip(gz, 'x').equals(text)).toBe(true);
    const up = structureReaders.upload('w.extxyz.gz', { base64: gz.toString('base64') });
    expect(up.name).toBe('w.extxyz');
    expect(up.frames.length).toBe(parseStructureText(text.toString('utf8'), 'w.extxyz').length);
    expect(() => gunzipIfGzip(gz.subarray(0, 40), 'cut.gz')).toThrow(/damaged or truncated/);
  });
});
