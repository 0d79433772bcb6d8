// The registry of file kinds: structure files (readers, the writer where there is one, whether the frames are
// streamed) and the prediction tables, by extension, with a trailing .gz looked through (gzip itself is
// recognised by io/gzip.ts). Everything that guesses a file kind from a name asks here: the CLI commands,
// predict (which streams the kinds marked `streamed`), analyse, merge, the app service, the shell's dialogs.
// Adding a structure format is one entry here and its reader beside it.
import path from 'node:path';
import { CancelledError, InputError } from '../core/errors.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { parseExtxyz, rangeDecider, readExtxyz, writeExtxyz, type ReadOptions } from './extxyz.ts';
import { parseCif } from './cif.ts';
import { gunzipIfGzip, hasGzipName, withoutGzipName } from './gzip.ts';
import { readWholeFile } from './whole-file.ts';

export type StructureKind = 'extxyz' | 'cif';
export type FileKind = StructureKind | 'csv';

interface KindEntry {
  kind: FileKind;
  description: string;
  /** Extensions, lower case, without the optional .gz. */
  extensions: string[];
}

interface StructureEntry extends KindEntry {
  kind: StructureKind;
  /** Frames are read one at a time from a stream (long trajectories: predict streams them in parallel). */
  streamed: boolean;
  read(file: string, options: ReadOptions): AsyncIterable<Frame>;
  /** Frames from the whole text of a file (uploads). */
  parse(text: string, file: string): Frame[];
  /** Write frames (atomic; .gz compresses), when the kind can be written. */
  write?(file: string, frames: Iterable<Frame> | AsyncIterable<Frame>): Promise<number>;
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

export const STRUCTURE_KINDS: readonly StructureEntry[] = [
  {
    kind: 'extxyz',
    description: 'extended XYZ (many frames, streamed)',
    extensions: ['.xyz', '.extxyz', '.exyz'],
    streamed: true,
    read: readExtxyz,
    parse: parseExtxyz,
    write: (file, frames) => writeExtxyz(file, frames),
  },
  {
    kind: 'cif',
    description: 'Crystallographic Information File (one frame per data block)',
    extensions: ['.cif'],
    streamed: false,
    read: readCifFile,
    parse: parseCif,
  },
];

/** Every kind of file the tool reads or writes: the structure kinds and the per-frame tables. */
export const FILE_KINDS: readonly KindEntry[] = [...STRUCTURE_KINDS, { kind: 'csv', description: 'per-frame table (CSV)', extensions: ['.csv'] }];

/** The kind of a file from its name, and whether the name says gzip (a trailing .gz is looked through). */
export function fileKind(file: string): { kind: FileKind; gzip: boolean } | undefined {
  const base = path.basename(file).toLowerCase();
  const ext = path.extname(withoutGzipName(base));
  const entry = FILE_KINDS.find((k) => k.extensions.includes(ext));
  return entry ? { kind: entry.kind, gzip: hasGzipName(base) } : undefined;
}

/** The kind a file to be written will have (its name decides). */
export const outputKind = fileKind;

/** The kind of a structure file from its name (a trailing .gz is looked through), or undefined. */
export function structureKind(file: string): StructureKind | undefined {
  const k = fileKind(file)?.kind;
  return k === 'csv' ? undefined : k;
}

/** The registry entry of a structure file, or an InputError naming the kinds there are. */
export function structureEntry(file: string): StructureEntry {
  const kind = structureKind(file);
  const entry = STRUCTURE_KINDS.find((k) => k.kind === kind);
  if (!entry) throw unknownKind(file);
  return entry;
}

/** Structure extensions without the dot, and gz (for file dialogs). */
export const STRUCTURE_EXTENSIONS: readonly string[] = [...STRUCTURE_KINDS.flatMap((k) => k.extensions.map((e) => e.slice(1))), 'gz'];

function unknownKind(file: string): InputError {
  const known = STRUCTURE_KINDS.flatMap((k) => k.extensions).join(', ');
  return new InputError(`cannot tell the structure format from the file name '${path.basename(file)}'`, { file }, `use one of ${known} (optionally with .gz)`);
}

/** Stream the frames of any supported structure file (extended XYZ streamed; CIF read whole, it is small). */
export function readStructures(file: string, options: ReadOptions = {}): AsyncIterable<Frame> {
  return structureEntry(file).read(file, options);
}

/** All frames of a structure file in memory (for small inputs: training sets, crystals). */
export async function readAllStructures(file: string, options: ReadOptions = {}): Promise<Frame[]> {
  const out: Frame[] = [];
  for await (const f of readStructures(file, options)) out.push(f);
  return out;
}

/** Frames of a structure file held in memory (an upload): gzip recognised by its bytes, the kind by the name. */
export function parseStructureBytes(bytes: Uint8Array, name: string): Frame[] {
  const entry = structureEntry(name);
  return entry.parse(gunzipIfGzip(bytes, name).toString('utf8'), withoutGzipName(name));
}

/** Frames from the text of a structure file (the kind by the name). */
export function parseStructureText(text: string, name: string): Frame[] {
  return structureEntry(name).parse(text, withoutGzipName(name));
}

/** Write frames in the kind the name says, or an InputError when that kind cannot be written. */
export function writeStructures(file: string, frames: Iterable<Frame> | AsyncIterable<Frame>): Promise<number> {
  const entry = structureEntry(file);
  if (!entry.write) throw new InputError(`${entry.description} files cannot be written`, { file }, `write ${STRUCTURE_KINDS.filter((k) => k.write).flatMap((k) => k.extensions).join(', ')}`);
  return entry.write(file, frames);
}
