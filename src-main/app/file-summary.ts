// The inspect use case for a file on disk: the structure tally (app/structure-tally.ts) of every frame, read one
// at a time (any file size). The window's Data view summarises the frames it holds with the same tally
// (app/dataset-summary.ts), so both show the same figures.
import { CancelledError } from '../core/errors.ts';
import { readStructures } from '../io/read-structures.ts';
import { StructureTally } from './structure-tally.ts';

export { Range } from './structure-tally.ts';
export type FileSummary = StructureTally;

export async function summariseFile(file: string, signal?: AbortSignal): Promise<FileSummary> {
  const s = new StructureTally(file);
  for await (const frame of readStructures(file, { signal })) {
    if (signal?.aborted) throw new CancelledError();
    s.add(frame);
  }
  return s;
}
