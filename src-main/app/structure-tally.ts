// What a set of frames holds — frames, atoms, species, cells and volumes, the tensor-valued properties and the
// range of their values, other numbers and texts, per-atom arrays — gathered one frame at a time, so a file of
// any size can be summarised. The one summary behind `polarweave inspect` (app/file-summary.ts, frames streamed
// from disk) and the window's Data view (app/dataset-summary.ts, frames in memory): both show the same figures.
import { cellParameters } from '../core/geometry/cell.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { anisotropy, isotropicMean, symmetricEigen, tensorFromValues } from '../core/dielectric/tensor.ts';
import { frameVolume } from './frame-json.ts';
import { isIsolated } from '../core/learning/targets.ts';

/** Smallest and largest of the values added (Infinity / −Infinity when none was). */
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

export interface TensorTally {
  frames: number;
  /** How the values were written: 9 (row-major) or 6 (Voigt). */
  components: Set<number>;
  /** tr T / 3. */
  isotropic: Range;
  /** √(3/2)‖T − tr T/3‖ (core/dielectric/tensor.ts anisotropy). */
  anisotropy: Range;
  principal: Range;
}

/** Texts kept per key (the first distinct ones). */
const TEXTS_KEPT = 20;

export class StructureTally {
  frames = 0;
  atoms = new Range();
  /** Atoms of each species over all frames. */
  species = new Map<string, number>();
  /** Atoms of each species in the first frame. */
  firstFrameSpecies = new Map<string, number>();
  /** Frames with a cell periodic along a, b and c (the frames with a volume). */
  periodic = 0;
  /** Frames without a periodic cell (isolated molecules or clusters, core/learning/targets.ts isIsolated). */
  isolated = 0;
  volumeA3 = new Range();
  /** Cell lengths (Å) and angles (°) of the first frame, when it is periodic. */
  firstCell: { a: number; b: number; c: number; alpha: number; beta: number; gamma: number } | null = null;
  tensors = new Map<string, TensorTally>();
  scalars = new Map<string, Range>();
  strings = new Map<string, Set<string>>();
  atomArrays = new Set<string>();

  constructor(readonly file: string) {}

  add(frame: Frame): void {
    const where = { file: frame.source?.file ?? this.file, line: frame.source?.line, frame: frame.source?.index };
    if (this.frames === 0) {
      for (const sp of frame.species) this.firstFrameSpecies.set(sp, (this.firstFrameSpecies.get(sp) ?? 0) + 1);
      if (frame.cell && frame.pbc.every(Boolean)) {
        const p = cellParameters(frame.cell);
        this.firstCell = { a: p.a, b: p.b, c: p.c, alpha: p.alpha, beta: p.beta, gamma: p.gamma };
      }
    }
    this.frames++;
    this.atoms.add(frame.species.length);
    for (const sp of frame.species) this.species.set(sp, (this.species.get(sp) ?? 0) + 1);
    if (isIsolated(frame)) this.isolated++;
    const v = frameVolume(frame);
    if (v !== null) {
      this.periodic++;
      this.volumeA3.add(v);
    }
    for (const key of Object.keys(frame.arrays)) this.atomArrays.add(key);
    for (const [key, value] of Object.entries(frame.info)) {
      if (Array.isArray(value) && (value.length === 9 || value.length === 6)) {
        const T = tensorFromValues(value, where);
        let t = this.tensors.get(key);
        if (!t) this.tensors.set(key, (t = { frames: 0, components: new Set(), isotropic: new Range(), anisotropy: new Range(), principal: new Range() }));
        t.frames++;
        t.components.add(value.length);
        t.isotropic.add(isotropicMean(T));
        t.anisotropy.add(anisotropy(T));
        for (const x of symmetricEigen(T).values) t.principal.add(x);
      } else if (typeof value === 'number') {
        let r = this.scalars.get(key);
        if (!r) this.scalars.set(key, (r = new Range()));
        r.add(value);
      } else if (typeof value === 'string') {
        let set = this.strings.get(key);
        if (!set) this.strings.set(key, (set = new Set()));
        if (set.size < TEXTS_KEPT) set.add(value);
      }
    }
  }
}
