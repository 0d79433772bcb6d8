// Structure files for the app service: uploads (text in memory) by file kind, and paths chosen in dialogs
// through io/read-structures.ts (streamed, gzip allowed). The kinds are io's table (STRUCTURE_KINDS).
import { basename } from 'node:path';
import type { StructureReaders } from './service.ts';
import { InputError } from '../core/errors.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { parseCif } from '../io/cif.ts';
import { parseExtxyz } from '../io/extxyz.ts';
import { readAllStructures, STRUCTURE_KINDS, structureKind } from '../io/read-structures.ts';

function kindOf(fileName: string) {
  const kind = structureKind(fileName);
  if (!kind) {
    const known = STRUCTURE_KINDS.flatMap((k) => k.extensions).join(', ');
    throw new InputError(`unknown file kind "${basename(fileName)}"`, { file: fileName }, `open a structure file (${known}, optionally .gz)`);
  }
  return kind;
}

export const structureReaders: StructureReaders = {
  parseText(text: string, fileName: string): Frame[] {
    return kindOf(fileName) === 'cif' ? parseCif(text, fileName) : parseExtxyz(text, fileName);
  },
  readPath(path: string): Promise<Frame[]> {
    kindOf(path);
    return readAllStructures(path);
  },
};
