// The train and validate use cases of the command line: train a model on frames and write it (atomic), and
// cross-validate one route or both with the rule-of-thumb verdict on the errors. The window's train and
// validate jobs run in app/tasks.ts on the same core functions (trainModel, validate).
import type { Frame } from '../core/geometry/frame.ts';
import { trainModel, type Model } from '../core/learning/model.ts';
import { meanSquaredTensorError } from '../core/learning/error-figures.ts';
import type { ErrorFigures, Route, TrainRequest, ValidationReport, WorkHooks } from '../core/learning/model-types.ts';
import { validate } from '../core/learning/validation.ts';
import { CancelledError } from '../core/errors.ts';
import { saveModel } from '../io/model-file.ts';
import { trainingThreads } from './training-threads.ts';

/**
 * Train on the frames and write the model file (nothing is written when stopped). `threads` > 1: the features of
 * the frames, and a linear model's applicability, are computed on that many worker threads (training-threads.ts);
 * the model is the same.
 */
export async function trainToFile(frames: Frame[], request: TrainRequest, output: string, hooks: WorkHooks = {}, threads = 1): Promise<Model> {
  const pool = threads > 1 ? trainingThreads(threads) : null;
  let model: Model;
  try {
    model = await trainModel(frames, request, { ...hooks, threads: pool ?? undefined });
  } finally {
    await pool?.close();
  }
  if (hooks.signal?.aborted) throw new CancelledError();
  await saveModel(output, model);
  return model;
}

/** Cross-validate each route in turn; with two routes, also which one has the smaller root-mean-square error of the whole tensor on ε. */
export async function validateRoutes(
  frames: Frame[],
  requestOf: (route: Route) => TrainRequest,
  routes: Route[],
  options: { folds: number; learningCurve?: number[] },
  hooksOf: (route: Route) => WorkHooks,
): Promise<{ reports: { route: Route; report: Awaited<ReturnType<typeof validate>> }[]; better: { route: Route; totals: Record<Route, number> } | null }> {
  const reports: { route: Route; report: Awaited<ReturnType<typeof validate>> }[] = [];
  for (const route of routes) reports.push({ route, report: await validate(frames, requestOf(route), options, hooksOf(route)) });
  let better = null;
  if (reports.length === 2) {
    const score = (e: ErrorFigures) => meanSquaredTensorError(e);
    const [a, b] = reports;
    const totals = { [a.route]: Math.sqrt(score(a.report.errors)), [b.route]: Math.sqrt(score(b.report.errors)) } as Record<Route, number>;
    better = { route: score(a.report.errors) <= score(b.report.errors) ? a.route : b.route, totals };
  }
  return { reports, better };
}

export type { ValidationReport };

// The verdict rule lives in core (browser-safe) so that the window's Checks view applies the same function.
export { fmtPct, GOOD_PERCENT, USABLE_PERCENT, verdict, verdictOf } from '../core/learning/error-figures.ts';
