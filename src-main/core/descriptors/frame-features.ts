// Frame-level features: one short vector per frame that says what kinds of local environments it holds, for
// choosing frames (core/trajectory/frame-choice.ts) rather than for learning. For every species of a fixed list,
// the mean over that species' atoms of the unit-norm λ = 0 power spectrum of features.ts, the blocks one after
// another (zeros for a species the frame lacks). Two frames with the same mix of environments get nearby
// vectors whatever their atom order, rotation or cell choice, since each power-spectrum row is invariant.
// A light expansion (FRAME_FEATURE_SETTINGS) keeps a frame's vector short so that many can be held at once;
// it is computed one environment at a time (forEachEnvironment), in fixed memory per frame.
import { InputError, type Where } from '../errors.ts';
import { DEFAULT_SETTINGS } from '../settings-table.ts';
import type { Frame } from '../geometry/frame.ts';
import type { FeatureSettings } from './feature-types.ts';
import { featureCount, forEachEnvironment } from './features.ts';

/** The expansion used for frame features: the model defaults' cutoff and widths, 4 radial functions, l ≤ 3. */
export const FRAME_FEATURE_SETTINGS = {
  cutoff: DEFAULT_SETTINGS.cutoffRadius,
  cutoffWidth: DEFAULT_SETTINGS.switchWidth,
  sigma: DEFAULT_SETTINGS.densityWidth,
  nmax: 4,
  lmax: 3,
} as const;

export interface FrameFeaturiser {
  /** The species, in the order of the blocks. */
  species: string[];
  /** Length of a frame's vector (species × power-spectrum length). */
  length: number;
  /** The vector of one frame (a new array); an InputError naming the frame for a species not in the list. */
  features(frame: Frame, where?: Where): Float64Array;
}

/** Frame features over a fixed species list (every species gets a block; all act as neighbours and centres). */
export function frameFeaturiser(species: readonly string[]): FrameFeaturiser {
  const list = [...new Set(species)].sort();
  if (list.length === 0) throw new InputError('no species to describe frames with', {}, 'give frames with atoms');
  const settings: FeatureSettings = { ...FRAME_FEATURE_SETTINGS, species: list, centres: list };
  const n0 = featureCount(settings, 0);
  const length = n0 * list.length;
  const position = new Map(list.map((s, k) => [s, k]));
  return {
    species: list,
    length,
    features(frame: Frame, where: Where = {}): Float64Array {
      for (const s of frame.species) {
        if (!position.has(s)) {
          throw new InputError(`species "${s}" is not among the species the frames are compared by (${list.join(', ')})`, where, 'choose among frames of the same species (give the frames with every species first, or split the file)');
        }
      }
      const out = new Float64Array(length);
      const counts = new Float64Array(list.length);
      forEachEnvironment(frame, settings, [], (env) => {
        const at = env.centreSpecies * n0;
        for (let f = 0; f < n0; f++) out[at + f] += env.scalar[f];
        counts[env.centreSpecies]++;
      });
      for (let a = 0; a < list.length; a++) {
        if (counts[a] > 0) for (let f = 0; f < n0; f++) out[a * n0 + f] /= counts[a];
      }
      return out;
    },
  };
}
