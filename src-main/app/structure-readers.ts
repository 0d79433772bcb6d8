// Structure files for the app service, through the registry of file kinds (io/read-structures.ts): uploads
// (bytes or text in memory; gzip recognised by its bytes) and paths chosen in dialogs (streamed, gzip allowed).
import type { StructureReaders } from './service.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { gunzipIfGzip, withoutGzipName } from '../io/gzip.ts';
import { fileKind, parseStructureText, readAllStructures, structureEntry } from '../io/read-structures.ts';

export const structureReaders: StructureReaders = {
  parseText(text: string, fileName: string): Frame[] {
    return parseStructureText(text, fileName);
  },
  upload(name: string, payload: { text: string } | { base64: string }) {
    const text = 'text' in payload ? payload.text : gunzipIfGzip(Buffer.from(payload.base64, 'base64'), name).toString('utf8');
    const plain = withoutGzipName(name);
    return { name: plain, text, frames: parseStructureText(text, plain) };
  },
  readPath(path: string): Promise<Frame[]> {
    structureEntry(path);
    return readAllStructures(path);
  },
  isStructureFile(name: string): boolean {
    const k = fileKind(name)?.kind;
    return k !== undefined && k !== 'csv';
  },
  plainName: withoutGzipName,
  stem(name: string): string {
    return withoutGzipName(name).replace(/\.[^.]*$/, '');
  },
};
