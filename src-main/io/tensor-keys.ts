// The frame-property names Polarweave gives the tensors it writes: `alpha_c_A3`, `alpha_cm_bohr3`,
// `alpha_c_SI`, `alpha_mol_A3` (an isolated molecule or cluster), … (kind, then unit) and `eps_inf` for the optical
// dielectric tensor. `convert` and `collect`
// name their outputs here; app/dataset-summary.ts guessTensorKind reads the kind back from such a name.
import type { TensorKind } from '../core/learning/model-types.ts';
import type { PolarisabilityUnit } from '../core/dielectric/units.ts';

export function tensorKey(kind: TensorKind, unit: PolarisabilityUnit = 'A3'): string {
  if (kind === 'eps') return 'eps_inf';
  return `${kind === 'alpha-c' ? 'alpha_c' : kind === 'alpha-mol' ? 'alpha_mol' : 'alpha_cm'}_${unit === 'si' ? 'SI' : unit}`;
}
