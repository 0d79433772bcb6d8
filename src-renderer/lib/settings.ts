// The Model view's settings: two presets and the words shown beside each field (the defaults come from the
// engine through AppState.defaultSettings).
import type { ModelSettingsJ } from '../../src-main/api/contract.ts';

export type NumericSetting = Exclude<keyof ModelSettingsJ, 'centres' | 'regularisation'>;

export const presets: { id: string; label: string; note: string; settings: Partial<ModelSettingsJ> }[] = [
  { id: 'quick', label: 'Quick look', note: 'small basis, for a first check in seconds', settings: { cutoff: 4.0, nmax: 4, lmax: 3, zeta: 1, sparsePoints: 0 } },
  { id: 'careful', label: 'Careful', note: 'larger basis; slower, usually more accurate', settings: { cutoff: 5.0, nmax: 8, lmax: 6, zeta: 2, sparsePoints: 400 } },
];

export const fields: { key: NumericSetting; label: string; unit?: string; step: number; min: number; max: number; explain: string }[] = [
  { key: 'cutoff', label: 'Cutoff radius r_c', unit: 'Å', step: 0.1, min: 1, max: 12, explain: 'Neighbours farther than this from an atom do not shape its environment.' },
  { key: 'cutoffWidth', label: 'Switch width', unit: 'Å', step: 0.1, min: 0, max: 3, explain: 'The neighbour density fades smoothly to zero over this distance below the cutoff.' },
  { key: 'sigma', label: 'Density width σ', unit: 'Å', step: 0.05, min: 0.1, max: 2, explain: 'Each neighbour is smeared into a Gaussian of this width.' },
  { key: 'nmax', label: 'Radial functions n_max', step: 1, min: 1, max: 16, explain: 'How finely distances are resolved.' },
  { key: 'lmax', label: 'Angular order l_max', step: 1, min: 1, max: 10, explain: 'How finely directions (spherical harmonics) are resolved.' },
  { key: 'zeta', label: 'Kernel exponent ζ', step: 1, min: 1, max: 4, explain: '1: linear in the features, fastest; 2 or more: sharper similarity.' },
  { key: 'sparsePoints', label: 'Representative environments M', step: 10, min: 0, max: 5000, explain: '0: exact kernel ridge regression; otherwise a sparse form on M environments picked by farthest-point sampling.' },
  { key: 'seed', label: 'Random seed', step: 1, min: 0, max: 2147483647, explain: 'Fixes every random choice (folds, sampling), so a run can be repeated.' },
];
