// The Model view's settings: the fields come from the one settings table (core/settings-table.ts, pure and
// browser-safe), so the window offers exactly the values the engine accepts; two presets on top. The defaults
// come from the engine through AppState.defaultSettings.
import type { ModelSettingsJ } from '../../src-main/api/contract.ts';
import { NUMERIC_SETTINGS, SPECIES_SETTING, SPLIT_SETTING, type NumericSettingKey, type NumericSettingSpec } from '../../src-main/core/settings-table.ts';

export type NumericSetting = NumericSettingKey;

/**
 * `checks`: the amount of checking a preset also sets (folds, at most this many training frames (0 = all), and
 * whether the learning curve is drawn while training; without it, Checks offers to draw it afterwards).
 */
export const presets: { id: string; label: string; note: string; settings: Partial<ModelSettingsJ>; checks?: { folds: number; maxFrames: number; learningCurve: boolean } }[] = [
  {
    id: 'quick',
    label: 'Quick look',
    note: 'small basis, 3 folds on at most 120 frames, learning curve later on request (Checks), for a first check',
    settings: { cutoffRadius: 4.0, radialFunctions: 4, angularOrder: 3, kernelExponent: 1, anchorEnvironments: 0 },
    checks: { folds: 3, maxFrames: 120, learningCurve: false },
  },
  { id: 'careful', label: 'Careful', note: 'larger basis; slower, usually more accurate', settings: { cutoffRadius: 5.0, radialFunctions: 8, angularOrder: 6, kernelExponent: 2, anchorEnvironments: 400 } },
];

/** The numeric fields of the form, in the table's order (the regularisation has its own control). */
export const fields: (NumericSettingSpec & { key: NumericSetting })[] = NUMERIC_SETTINGS.filter(
  (s): s is NumericSettingSpec & { key: NumericSetting } => s.key !== 'regularisation',
);

export const regularisationField = NUMERIC_SETTINGS.find((s) => s.key === 'regularisation')!;
export const speciesField = SPECIES_SETTING;
export const splitField = SPLIT_SETTING;

/** Learning-curve sizes for `trainFrames` training frames in `folds` folds: 1/8, 1/4, 1/2 and all of a fold's training part. */
export function curveSizes(trainFrames: number, folds: number): number[] {
  const n = Math.floor((trainFrames * (folds - 1)) / folds);
  const sizes = [n / 8, n / 4, n / 2, n].map((v) => Math.floor(v)).filter((v) => v >= 2);
  return [...new Set(sizes)];
}

/** The frames the Model view trains and tests on: every `holdOut`-th frame held out (0: none), at most `maxFrames` training frames spread evenly (0: all). */
export function framePlan(count: number, holdOut: number, maxFrames: number): { train: number[]; test: number[] } {
  const all = Array.from({ length: count }, (_, i) => i);
  const test = holdOut > 0 ? all.filter((i) => i % holdOut === holdOut - 1) : [];
  let train = all.filter((i) => holdOut <= 0 || i % holdOut !== holdOut - 1);
  if (maxFrames > 0 && train.length > maxFrames) {
    const step = train.length / maxFrames;
    train = Array.from({ length: maxFrames }, (_, k) => train[Math.floor(k * step)]);
  }
  return { train, test };
}
