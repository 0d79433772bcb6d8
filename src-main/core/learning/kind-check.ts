// The kind guard: does a reference tensor look like the kind the user declared (--as, or the Model view's
// choice)? A polarisability in Å³ declared as ε (or the reverse) converts without any error and trains a
// model of nonsense, so training refuses values that contradict the declared kind, naming the frame and the
// override. One function, used by every training path (learntTargets in model.ts: the CLI's train and
// validate, the window's train and validate tasks, the demo).
//
// Plausible ranges (wide on purpose: they catch a wrong kind, not an unusual material):
// - ε∞: isotropic value 1…20 and no principal value below 1. The largest optical dielectric constants of
//   common solids are about 16 (germanium; from memory, handbook tables of refractive indices: n ≈ 4.0);
//   a few narrow-gap salts lie higher and need the override.
// - α (α_c or α_CM, Å³) per atom of the cell: 0.1…100 Å³. The smallest free-atom polarisability is helium's,
//   0.205 Å³, the largest of the stable elements caesium's, 59.4 Å³ (CRC Handbook of Chemistry and Physics,
//   "Atomic and molecular polarizabilities"; from memory). Condensed phases average 0.3–5 Å³ per atom.
import { epsWarnings } from '../dielectric/clausius-mossotti.ts';
import { isotropicMean } from '../dielectric/tensor.ts';
import { InputError, type Where } from '../errors.ts';
import type { Mat3 } from '../geometry/frame.ts';
import type { TensorKind } from './model-types.ts';

export const EPS_ISO_RANGE: [number, number] = [1, 20];
export const ALPHA_PER_ATOM_RANGE_A3: [number, number] = [0.1, 100];

/** How to go on when the values are right after all (the same words in the CLI's and the window's messages). */
export const KIND_OVERRIDE_HINT =
  'check --as (the Model view: "The file’s values are"); `polarweave inspect` guesses the kind from the values. If the values are right, ' +
  'train anyway with --trust-kind (command line) or "Train even if the values look unlike this kind" (Model view)';

/** Why a reference tensor does not look like `kind`, or null when it is plausible. */
export function kindProblem(t: Mat3, kind: TensorKind, atoms: number): string | null {
  const iso = isotropicMean(t);
  if (kind === 'eps') {
    const [lo, hi] = EPS_ISO_RANGE;
    if (!(iso >= lo && iso <= hi)) {
      const asAlpha = atoms > 0 ? `; read as a polarisability it would be ${(iso / atoms).toPrecision(3)} Å³ per atom` : '';
      return `declared as ε∞ but its isotropic value is ${iso.toPrecision(4)}, outside ${lo}–${hi} for an optical dielectric tensor${asAlpha}`;
    }
    const low = epsWarnings(t);
    if (low.length) return `declared as ε∞ but ${low[0]}`;
    return null;
  }
  if (atoms <= 0) return null;
  const perAtom = iso / atoms;
  const [lo, hi] = ALPHA_PER_ATOM_RANGE_A3;
  if (!(perAtom >= lo && perAtom <= hi)) {
    const name = kind === 'alpha-c' ? 'α_c' : kind === 'alpha-cm' ? 'α_CM' : 'α of an isolated molecule or cluster';
    const asEps = iso >= EPS_ISO_RANGE[0] && iso <= EPS_ISO_RANGE[1] ? ` (its isotropic value ${iso.toPrecision(4)} looks like an ε∞)` : '';
    return `declared as ${name} (Å³) but it is ${perAtom.toPrecision(3)} Å³ per atom, outside ${lo}–${hi} Å³ per atom${asEps}`;
  }
  return null;
}

/** Throw an InputError naming the frame when the reference tensor contradicts the declared kind. */
export function checkTensorKind(t: Mat3, kind: TensorKind, atoms: number, key: string, where: Where): void {
  const problem = kindProblem(t, kind, atoms);
  if (problem) throw new InputError(`reference tensor "${key}" ${problem}`, where, KIND_OVERRIDE_HINT);
}
