// Structure files by kind: extended XYZ (.xyz, .extxyz, optionally .gz) and CIF (.cif). Used by the app
// service for uploads (text in memory) and for paths chosen in dialogs (streamed from disk).
import { readFile } from 'node:fs/promises';
import { basename } from 'node:path';
import type { StructureReaders } from './app-service.ts';
import { InputError } from './core/errors.ts';
import type { Frame } from './core/frame.ts';
import { parseCif } from './io/cif.ts';
import { parseExtxyz, readExtxyz } from './io/extxyz.ts';

function kindOf(fileName: string): 'xyz' | 'cif' {
  const name = fileName.toLowerCase().replace(/\.gz$/, '');
  if (name.endsWith('.cif')) return 'cif';
  if (name.endsWith('.xyz') || name.endsWith('.extxyz')) return 'xyz';
  throw new InputError(`unknown file kind "${basename(fileName)}"`, { file: fileName }, 'open an extended XYZ (.xyz, .extxyz, optionally .gz) or a CIF (.cif) file');
}

export const structureReaders: StructureReaders = {
  parseText(text: string, fileName: string): Frame[] {
    return kindOf(fileName) === 'cif' ? parseCif(text, fileName) : parseExtxyz(text, fileName);
  },
  async readPath(path: string): Promise<Frame[]> {
    if (kindOf(path) === 'cif') {
      if (path.toLowerCase().endsWith('.gz')) throw new InputError('compressed CIF files are not read', { file: path }, 'decompress it first');
      return parseCif(await readFile(path, 'utf8'), path);
    }
    const frames: Frame[] = [];
    for await (const f of readExtxyz(path)) frames.push(f);
    return frames;
  },
};
