// What local (per-atom) and per-species contributions mean, and when the data cannot fix them. A model is
// trained on whole-frame tensors only: the data determine each frame's sum, not how it is split between atoms.
// When every training frame has the same composition (species counts proportional), any transfer between
// species that keeps the sums is equally good, and the split comes from the regularisers, not the data.
// The caveat is shown wherever local or per-species values are (CLI train and analyse, the window's Structure
// view). Pure and browser-safe.

/** The caveat beside local and per-species values. */
export const LOCAL_CONTRIBUTION_CAVEAT =
  'Local and per-species contributions are one split of each frame’s learnt total: the training data fix only the totals. ' +
  'With one composition in the training frames the split between species is not determined by the data at all; compare molecules or whole frames, not atoms of different species.';

/**
 * True when the species counts of all frames are proportional (one composition): then the split of the
 * totals between species is not determined by the data. `counts` are per frame, per species.
 */
export function singleComposition(counts: readonly (readonly number[])[]): boolean {
  if (counts.length === 0) return true;
  const first = counts[0];
  const total = first.reduce((a, b) => a + b, 0);
  if (total === 0) return true;
  return counts.every((c) => {
    const t = c.reduce((a, b) => a + b, 0);
    return c.every((v, k) => Math.abs(v * total - first[k] * t) <= 1e-9 * t * total);
  });
}

/**
 * The model note for a single-composition training set (null otherwise, or with one species). `split`: the
 * species split the model was given (settings-table.ts SPLIT_SETTING, in its command-line words), if any.
 */
export function compositionNote(species: readonly string[], counts: readonly (readonly number[])[], split: string | null = null): string | null {
  if (species.length < 2 || !singleComposition(counts)) return null;
  const head = `every training frame has the same composition (${species.join(':')} ${counts[0].join(':')}): the split of each frame's total between ${species.join(' and ')} is not determined by the data`;
  if (split) return `${head}; it follows the species split given (${split}), not the data — per-species and local values are that split of the learnt totals.`;
  return `${head} (it comes from the regularisers); per-species and local values are one possible split. To fix it, add frames of other compositions (e.g. isolated molecules or clusters), or give a species split (--species-split free-atom, or ratios such as O:0.80,H:0.67).`;
}
