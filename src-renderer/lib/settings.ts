// The Model view's settings: the fields come from the one settings table (core/settings-table.ts, pure and
// browser-safe), so the window offers exactly the values the engine accepts; two presets on top. The defaults
// come from the engine through AppState.defaultSettings.
import type { ModelSettingsJ } from '../../src-main/api/contract.ts';
import { NUMERIC_SETTINGS, SPECIES_SETTING, type NumericSettingKey, type NumericSettingSpec } from '../../src-main/core/settings-table.ts';

export type NumericSetting = NumericSettingKey;

/** `checks`: the amount of checking a preset also sets (folds, at most this many training frames; 0 = all). */
export const presets: { id: string; label: string; note: string; settings: Partial<ModelSettingsJ>; checks?: { folds: number; maxFrames: number } }[] = [
  {
    id: 'quick',
    label: 'Quick look',
    note: 'small basis, 3 folds on at most 120 frames (the demo’s amount of work), for a first check',
    settings: { cutoffRadius: 4.0, radialFunctions: 4, angularOrder: 3, kernelExponent: 1, anchorEnvironments: 0 },
    checks: { folds: 3, maxFrames: 120 },
  },
  { id: 'careful', label: 'Careful', note: 'larger basis; slower, usually more accurate', settings: { cutoffRadius: 5.0, radialFunctions: 8, angularOrder: 6, kernelExponent: 2, anchorEnvironments: 400 } },
];

/** The numeric fields of the form, in the table's order (the regularisation has its own control). */
export const fields: (NumericSettingSpec & { key: NumericSetting })[] = NUMERIC_SETTINGS.filter(
  (s): s is NumericSettingSpec & { key: NumericSetting } => s.key !== 'regularisation',
);

export const regularisationField = NUMERIC_SETTINGS.find((s) => s.key === 'regularisation')!;
export const speciesField = SPECIES_SETTING;
