// The inspect use case for a file on disk: what is in a structure file — frames, atoms, species, cell and
// volume range, the tensor-valued properties and the range of their values — read frame by frame (any file
// size). The window's summary of a file it holds in memory is app/dataset-summary.ts; both guess a tensor's
// kind with its guessTensorKind.
import { cellVolume } from '../core/geometry/cell.ts';
import { CancelledError } from '../core/errors.ts';
import { anisotropy, isotropicMean, symmetricEigen, tensorFromValues } from '../core/dielectric/tensor.ts';
import { readStructures } from '../io/read-structures.ts';

/** Running range of one number. */
export class Range {
  min = Infinity;
  max = -Infinity;
  add(v: number): void {
    if (v < this.min) this.min = v;
    if (v > this.max) this.max = v;
  }
  toJSON() {
    return { min: this.min, max: this.max };
  }
}

interface TensorSummary {
  frames: number;
  /** How the values were written: 9 (row-major) or 6 (Voigt). */
  components: Set<number>;
  isotropic: Range;
  anisotropy: Range;
  principal: Range;
}

export interface FileSummary {
  file: string;
  frames: number;
  atoms: Range;
  species: Map<string, number>;
  periodic: number;
  volumeA3: Range;
  tensors: Map<string, TensorSummary>;
  scalars: Map<string, Range>;
  strings: Map<string, Set<string>>;
  atomArrays: Set<string>;
}


export async function summariseFile(file: string, signal?: AbortSignal): Promise<FileSummary> {
  const s: FileSummary = {
    file,
    frames: 0,
    atoms: new Range(),
    species: new Map(),
    periodic: 0,
    volumeA3: new Range(),
    tensors: new Map(),
    scalars: new Map(),
    strings: new Map(),
    atomArrays: new Set(),
  };
  for await (const frame of readStructures(file, { signal })) {
    if (signal?.aborted) throw new CancelledError();
    s.frames++;
    s.atoms.add(frame.species.length);
    for (const sp of frame.species) s.species.set(sp, (s.species.get(sp) ?? 0) + 1);
    if (frame.cell && frame.pbc.some(Boolean)) {
      s.periodic++;
      s.volumeA3.add(cellVolume(frame.cell, { file, frame: frame.source?.index, line: frame.source?.line }));
    }
    for (const key of Object.keys(frame.arrays)) s.atomArrays.add(key);
    for (const [key, value] of Object.entries(frame.info)) {
      if (Array.isArray(value) && (value.length === 9 || value.length === 6)) {
        const T = tensorFromValues(value, { file, line: frame.source?.line, frame: frame.source?.index });
        let t = s.tensors.get(key);
        if (!t) {
          t = { frames: 0, components: new Set(), isotropic: new Range(), anisotropy: new Range(), principal: new Range() };
          s.tensors.set(key, t);
        }
        t.frames++;
        t.components.add(value.length);
        t.isotropic.add(isotropicMean(T));
        t.anisotropy.add(anisotropy(T));
        for (const v of symmetricEigen(T).values) t.principal.add(v);
      } else if (typeof value === 'number') {
        let r = s.scalars.get(key);
        if (!r) s.scalars.set(key, (r = new Range()));
        r.add(value);
      } else if (typeof value === 'string') {
        let set = s.strings.get(key);
        if (!set) s.strings.set(key, (set = new Set()));
        if (set.size < 20) set.add(value);
      }
    }
  }
  return s;
}

