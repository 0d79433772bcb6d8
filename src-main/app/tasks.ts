// The app's job tasks, run in a worker thread: train (cross-validation, final model, held-out test frames),
// validate (cross-validation only) and predict (every frame, with applicability and the file's reference ε
// where it has one). Results come back as plain JSON for the window (api/contract.ts shapes).
import type { ValidationReportJ } from '../api/contract.ts';
import { CancelledError, ModelError } from '../core/errors.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { predictFrame, trainModel, type Featuriser, type Model } from '../core/learning/model.ts';
import type { FramePrediction, ParityPoint, TrainRequest, ValidationReport } from '../core/learning/model-types.ts';
import { toIrreducible } from '../core/dielectric/tensor.ts';
import { errorFigures, tensorFeaturiser, validate } from '../core/learning/validation.ts';
import type { PredictTaskInput, PredictTaskOutput, TrainTaskInput, TrainTaskOutput, ValidateTaskInput } from './task-types.ts';
import type { TaskContext, TaskRegistry } from '../jobs/task.ts';
import { loadedModel, predictFrames, type PredictSink } from './predict/prediction.ts';
import { CURVE_REPEATS } from '../core/learning/curve-splits.ts';
import { referenceEpsOf } from '../core/learning/targets.ts';

function reportJson(r: ValidationReport, frameIndices: number[]): ValidationReportJ {
  return {
    route: r.route,
    target: r.target,
    folds: r.folds,
    errors: { ...r.errors },
    statePoints: r.statePoints ?? null,
    // validate() numbers frames within the list it was given; the window wants dataset indices.
    points: r.points.map((p) => ({ ...p, frame: frameIndices[p.frame] ?? p.frame, reference: [...p.reference], predicted: [...p.predicted] })),
    learningCurve: r.learningCurve.map((c) => ({ ...c, errors: { ...c.errors }, ...(c.spread ? { spread: { ...c.spread } } : {}) })),
    curveTrend: r.curveTrend ?? null,
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
    const points: ParityPoint[] = input.testFrames.map((f, i) => {
      if (ctx.signal.aborted) throw new CancelledError();
      const index = input.testIndices[i];
      const ref = referenceEpsOf(f, index, input.request.tensorKey, input.request.kind);
      if (!ref) throw new Error(`test frame ${index} has no usable reference "${input.request.tensorKey}"`);
      return { frame: index, label: 'test', reference: Array.from(toIrreducible(ref)), predicted: Array.from(toIrreducible(predictFrame(model, f).eps)) };
    });
    test = {
      route: input.request.route,
      target: 'eps',
      folds: 0,
      errors: errorFigures(points.map((p) => p.reference), points.map((p) => p.predicted)),
      points,
      learningCurve: [],
    };
  }
  ctx.progress({ stage: 'done', done: cvSteps + extra, total: cvSteps + extra });
  return { model, report, test };
}

/** The window's sink of the predict use case: typed predictions in memory, with the frames' reference ε. */
async function predict(input: PredictTaskInput, ctx: TaskContext): Promise<PredictTaskOutput> {
  const m = loadedModel(input.model as Model, 'the window model');
  const out: PredictTaskOutput = { frameIndices: [], predictions: [], reference: [] };
  const n = input.frames.length;
  const sink: PredictSink = {
    frame(frame, one) {
      if (!one.tensor) throw new ModelError('the window predicts cell tensors; this model predicts a vector or scalar');
      if (one.tensor.isolated) {
        throw new ModelError(`frame ${one.index} has no periodic cell: the window's prediction views show ε, n and Δn, which a lone molecule or cluster does not have; predict it with \`polarweave predict\` (its table carries the polarisability)`);
      }
      out.frameIndices.push(one.index);
      out.predictions.push(one.tensor);
      out.reference.push(referenceEpsOf(frame, one.index, input.reference.key, input.reference.kind));
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
