// The app's job tasks, run in a worker thread: train (cross-validation, final model, held-out test frames),
// validate (cross-validation only) and predict (every frame, with applicability and the file's reference ε
// where it has one). Results come back as plain JSON for the window (api/contract.ts shapes).
import type { KindErrorsJ, ValidationReportJ } from '../api/contract.ts';
import { CancelledError, InputError, ModelError } from '../core/errors.ts';
import { predictTarget, tensorPredictionFrom, trainModel, type Featuriser, type Model } from '../core/learning/model.ts';
import type { ParityPoint, TrainRequest } from '../core/learning/model-types.ts';
import { toIrreducible } from '../core/dielectric/tensor.ts';
import { errorFigures, tensorFeaturiser, validate, type SecondaryComparison } from '../core/learning/validation.ts';
import { comparedOn } from '../core/learning/error-figures.ts';
import type { PredictTaskInput, PredictTaskOutput, TrainTaskInput, TrainTaskOutput, ValidateTaskInput } from './task-types.ts';
import type { TaskContext, TaskRegistry } from '../jobs/task.ts';
import { loadedModel, predictFrames, type PredictSink } from './predict/prediction.ts';
import { CURVE_REPEATS } from '../core/learning/curve-splits.ts';
import { comparedPrediction, comparedReferenceOf, whereOf } from '../core/learning/targets.ts';

type CoreReport = Awaited<ReturnType<typeof validate>>;

function reportJson(r: CoreReport, frameIndices: number[]): ValidationReportJ {
  // validate() numbers frames within the list it was given; the window wants dataset indices.
  const points = (ps: ParityPoint[]) => ps.map((p) => ({ ...p, frame: frameIndices[p.frame] ?? p.frame, reference: [...p.reference], predicted: [...p.predicted] }));
  const kind = (o: SecondaryComparison): KindErrorsJ => ({ target: o.target, errors: { ...o.errors }, points: points(o.points) });
  return {
    route: r.route,
    target: r.target,
    folds: r.folds,
    errors: { ...r.errors },
    statePoints: r.statePoints ?? null,
    points: points(r.points),
    learningCurve: r.learningCurve.map((c) => ({ ...c, errors: { ...c.errors }, ...(c.spread ? { spread: { ...c.spread } } : {}) })),
    curveTrend: r.curveTrend ?? null,
    // each kind's errors beside the main comparison (α_CM over periodic frames, α over isolated ones), as `validate` prints them
    alsoOn: r.alsoOn.map(kind),
    notes: [...r.notes],
  };
}

/**
 * The held-out test frames' errors, compared as validate compares (core/learning/validation.ts): ε over the
 * periodic frames, α (Å³) over the isolated ones, each kind on its own when the set mixes them.
 */
function heldOutReport(model: Model, input: TrainTaskInput, signal: AbortSignal): ValidationReportJ {
  const periodic: ParityPoint[] = [];
  const isolated: ParityPoint[] = [];
  input.testFrames.forEach((f, i) => {
    if (signal.aborted) throw new CancelledError();
    const index = input.testIndices[i];
    const ref = comparedReferenceOf(f, index, input.request);
    if (!ref) throw new InputError(`test frame ${index} has no usable reference tensor`, whereOf(f, index), 'every held-out frame needs the reference the model is trained on');
    const p = tensorPredictionFrom(model, f, predictTarget(model, f, index), index);
    (p.isolated ? isolated : periodic).push({ frame: index, label: 'test', reference: Array.from(toIrreducible(ref)), predicted: Array.from(toIrreducible(comparedPrediction(p))) });
  });
  const figures = (ps: ParityPoint[]) => errorFigures(ps.map((p) => p.reference), ps.map((p) => p.predicted));
  const mixed = periodic.length > 0 && isolated.length > 0;
  const main = periodic.length ? periodic : isolated;
  return {
    route: input.request.route,
    target: periodic.length ? comparedOn('eps', mixed) : comparedOn('alpha-mol', false),
    folds: 0,
    errors: figures(main),
    points: main,
    learningCurve: [],
    alsoOn: mixed ? [{ target: comparedOn('alpha-mol', true), errors: figures(isolated), points: isolated }] : [],
  };
}

async function crossValidate(input: ValidateTaskInput, ctx: TaskContext, extraSteps: number, featurise?: Featuriser): Promise<ValidationReportJ> {
  const report = await validate(input.frames, input.request as TrainRequest, { folds: input.folds, learningCurve: input.learningCurve, featurise }, {
    signal: ctx.signal,
    onProgress: (p) => ctx.progress({ stage: `cross-validation, ${p.stage}`, done: p.done, total: p.total + extraSteps }),
  });
  return reportJson(report, input.frameIndices);
}

async function train(input: TrainTaskInput, ctx: TaskContext): Promise<TrainTaskOutput> {
  const extra = 1 + (input.testFrames.length ? 1 : 0);
  // the frames' features, computed once for the cross-validation and the final model
  const features = tensorFeaturiser(input.frames, input.request as TrainRequest);
  const report = await crossValidate(input, ctx, extra, features);
  const cvSteps = input.folds * (1 + input.learningCurve.length * CURVE_REPEATS);
  ctx.progress({ stage: 'training the final model on all training frames', done: cvSteps, total: cvSteps + extra });
  const model = await trainModel(input.frames, input.request as TrainRequest, { signal: ctx.signal }, features);
  let test: ValidationReportJ | null = null;
  if (input.testFrames.length) {
    ctx.progress({ stage: 'predicting the held-out test frames', done: cvSteps + 1, total: cvSteps + extra });
    test = heldOutReport(model, input, ctx.signal);
  }
  ctx.progress({ stage: 'done', done: cvSteps + extra, total: cvSteps + extra });
  return { model, report, test };
}

/**
 * The window's sink of the predict use case: typed predictions in memory, with each frame's reference as compared
 * (ε; α in Å³ for a frame without a cell, whose prediction is its polarisability in vacuum).
 */
async function predict(input: PredictTaskInput, ctx: TaskContext): Promise<PredictTaskOutput> {
  const m = loadedModel(input.model as Model, 'the window model');
  const out: PredictTaskOutput = { frameIndices: [], predictions: [], reference: [] };
  const n = input.frames.length;
  const sink: PredictSink = {
    frame(frame, one) {
      if (!one.tensor) throw new ModelError('the window predicts cell tensors; this model predicts a vector or scalar');
      out.frameIndices.push(one.index);
      out.predictions.push(one.tensor);
      out.reference.push(comparedReferenceOf(frame, one.index, input.reference));
    },
  };
  await predictFrames(m, input.frames, sink, {
    signal: ctx.signal,
    indexOf: (_f, k) => input.frameIndices[k],
    onFrame: (done) => ctx.progress({ stage: 'predicting frames', done, total: n }),
  });
  return out;
}

export const appTasks: TaskRegistry = {
  train,
  validate: (input: ValidateTaskInput, ctx: TaskContext) => crossValidate(input, ctx, 0),
  predict,
};
