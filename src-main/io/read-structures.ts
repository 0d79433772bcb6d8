// One entry point for structure files: picks the reader by file kind. A table of kinds (name, extensions,
// many frames or one per block, reader) so adding a format is one line here and one file beside it.
import path from 'node:path';
import { CancelledError, InputError } from '../core/errors.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { rangeDecider, readExtxyz, type ReadOptions } from './extxyz.ts';
import { parseCif } from './cif.ts';
import { readWholeFile } from './whole-file.ts';

export type StructureKind = 'extxyz' | 'cif';

interface KindEntry {
  kind: StructureKind;
  description: string;
  /** Extensions, lower case, without the optional .gz. */
  extensions: string[];
  read(file: string, options: ReadOptions): AsyncIterable<Frame>;
}

async function* readCifFile(file: string, options: ReadOptions): AsyncGenerator<Frame> {
  const bytes = await readWholeFile(file);
  const decide = rangeDecider(options.range, file);
  const frames = parseCif(bytes.toString('utf8'), file);
  for (let k = 0; k < frames.length; k++) {
    if (options.signal?.aborted) throw new CancelledError();
    const d = decide(k);
    if (d === 'stop') break;
    if (d === 'parse') yield frames[k];
  }
}

export const STRUCTURE_KINDS: readonly KindEntry[] = [
  { kind: 'extxyz', description: 'extended XYZ (many frames, streamed)', extensions: ['.xyz', '.extxyz', '.exyz'], read: readExtxyz },
  { kind: 'cif', description: 'Crystallographic Information File (one frame per data block)', extensions: ['.cif'], read: readCifFile },
];

/** The kind of a structure file from its name (a trailing .gz is looked through), or undefined. */
export function structureKind(file: string): StructureKind | undefined {
  const name = path.basename(file).toLowerCase().replace(/\.gz$/, '');
  const ext = path.extname(name);
  return STRUCTURE_KINDS.find((k) => k.extensions.includes(ext))?.kind;
}

function unknownKind(file: string): InputError {
  const known = STRUCTURE_KINDS.flatMap((k) => k.extensions).join(', ');
  return new InputError(`cannot tell the structure format from the file name '${path.basename(file)}'`, { file }, `use one of ${known} (optionally with .gz)`);
}

/** Stream the frames of any supported structure file (extended XYZ streamed; CIF read whole, it is small). */
export function readStructures(file: string, options: ReadOptions = {}): AsyncIterable<Frame> {
  const kind = structureKind(file);
  const entry = STRUCTURE_KINDS.find((k) => k.kind === kind);
  if (!entry) throw unknownKind(file);
  return entry.read(file, options);
}

/** All frames of a structure file in memory (for small inputs: training sets, crystals). */
export async function readAllStructures(file: string, options: ReadOptions = {}): Promise<Frame[]> {
  const out: Frame[] = [];
  for await (const f of readStructures(file, options)) out.push(f);
  return out;
}
