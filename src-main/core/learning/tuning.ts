// Choice of the cutoff radius, the density width and the kernel exponent by cross-validation on the training frames
// (on request; the regulariser is always cross-validated inside each training). Every combination of the
// candidate values is trained once; its score is the cross-validated squared error of the learnt target summed
// over its irreducible components (λ=0 and the 2λ+1 components of λ>0), as reported by the regulariser's CV.
// The winner's score is slightly optimistic (it was selected on the same folds); validate() gives an honest one.
import { InputError } from '../errors.ts';
import type { Frame } from '../geometry/frame.ts';
import type { ModelSettings, TrainRequest, TuneGrid, WorkHooks } from './model-types.ts';
import { trainWithFeaturiser, type Model } from './model.ts';
import { TUNABLE_SETTINGS } from '../settings-table.ts';

export interface TuneResult {
  best: Partial<ModelSettings>;
  table: { settings: Partial<ModelSettings>; score: number }[];
}

export function tuneCombinations(grid: TuneGrid): Partial<ModelSettings>[] {
  let combos: Partial<ModelSettings>[] = [{}];
  for (const key of TUNABLE_SETTINGS) {
    const values = grid[key];
    if (!values || values.length === 0) continue;
    combos = combos.flatMap((c) => values.map((v) => ({ ...c, [key]: v })));
  }
  return combos;
}

export function crossValidatedScore(model: Model): number {
  return model.parts.reduce((s, p) => s + p.regularisation.cvError * (2 * p.order + 1), 0);
}

export async function tuneSettings(frames: Frame[], request: TrainRequest, grid: TuneGrid, hooks: WorkHooks = {}): Promise<TuneResult> {
  if (frames.length < 3) throw new InputError(`${frames.length} frames are too few to tune settings`, {}, 'tuning cross-validates; give at least 3 frames');
  const combos = tuneCombinations(grid);
  const table: TuneResult['table'] = [];
  for (let k = 0; k < combos.length; k++) {
    hooks.onProgress?.({ stage: 'tuning', done: k, total: combos.length });
    const settings = { ...(request.settings ?? {}), ...combos[k] };
    const model = await trainWithFeaturiser(frames, { ...request, tune: undefined, settings }, null, { signal: hooks.signal }, { applicability: false });
    table.push({ settings: combos[k], score: crossValidatedScore(model) });
  }
  hooks.onProgress?.({ stage: 'tuning', done: combos.length, total: combos.length });
  let best = table[0];
  for (const row of table) if (row.score < best.score) best = row;
  return { best: best.settings, table };
}
