// The app's job tasks, run in a worker thread: train (cross-validation, final model, held-out test frames),
// validate (cross-validation only) and predict (every frame, with applicability and the file's reference ε
// where it has one). Results come back as plain JSON for the window (api/contract.ts shapes).
import type { FramePredictionJ, ValidationReportJ } from '../api/contract.ts';
import { convertTensor, refractiveIndices } from '../core/dielectric/clausius-mossotti.ts';
import { CancelledError } from '../core/errors.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { predictFrame, trainModel, type Model } from '../core/learning/model.ts';
import type { FramePrediction, ParityPoint, TrainRequest, ValidationReport } from '../core/learning/model-types.ts';
import { frameVolume, readTensor } from '../core/learning/targets.ts';
import { toIrreducible } from '../core/dielectric/tensor.ts';
import { errorFigures, validate } from '../core/learning/validation.ts';
import type { PredictTaskInput, PredictTaskOutput, TrainTaskInput, TrainTaskOutput, ValidateTaskInput } from './task-types.ts';
import type { TaskContext, TaskRegistry } from '../jobs/task.ts';

function reportJson(r: ValidationReport, frameIndices: number[]): ValidationReportJ {
  return {
    route: r.route,
    target: r.target,
    folds: r.folds,
    errors: { ...r.errors },
    // validate() numbers frames within the list it was given; the window wants dataset indices.
    points: r.points.map((p) => ({ ...p, frame: frameIndices[p.frame] ?? p.frame, reference: [...p.reference], predicted: [...p.predicted] })),
    learningCurve: r.learningCurve.map((c) => ({ trainSize: c.trainSize, errors: { ...c.errors } })),
  };
}

async function crossValidate(input: ValidateTaskInput, ctx: TaskContext, extraSteps: number): Promise<ValidationReportJ> {
  const report = await validate(input.frames, input.request as TrainRequest, { folds: input.folds, learningCurve: input.learningCurve }, {
    signal: ctx.signal,
    onProgress: (p) => ctx.progress({ stage: `cross-validation, ${p.stage}`, done: p.done, total: p.total + extraSteps }),
  });
  return reportJson(report, input.frameIndices);
}

/** The frame's reference tensor as ε, or null when it has none (or it cannot be converted). */
function referenceEps(frame: Frame, index: number, key: string, kind: PredictTaskInput['reference']['kind']): Float64Array | null {
  const v = frame.info[key];
  if (!Array.isArray(v)) return null;
  try {
    return convertTensor(readTensor(frame, key, index), kind, 'eps', frameVolume(frame, index));
  } catch {
    return null;
  }
}

function predictionJson(fp: FramePrediction, frameIndex: number, reference: Float64Array | null): FramePredictionJ {
  const a = fp.applicability;
  return {
    frame: frameIndex,
    volumeA3: fp.volumeA3,
    eps: Array.from(fp.eps),
    alphaCM: Array.from(fp.alphaCM),
    alphaC: Array.from(fp.alphaC),
    refractive: Array.from(refractiveIndices(fp.eps, { frame: frameIndex }).indices),
    applicability: { maxDistance: a.maxDistance, threshold: a.threshold, atomsOutside: a.atomsOutside, variance: a.variance, outside: a.outside, score: a.score, fractionOutside: a.fractionOutside, reasons: a.reasons },
    errorBars: fp.errorBars,
    reference: reference ? Array.from(reference) : null,
  };
}

async function train(input: TrainTaskInput, ctx: TaskContext): Promise<TrainTaskOutput> {
  const extra = 1 + (input.testFrames.length ? 1 : 0);
  const report = await crossValidate(input, ctx, extra);
  const cvSteps = input.folds * (1 + input.learningCurve.length);
  ctx.progress({ stage: 'training the final model on all training frames', done: cvSteps, total: cvSteps + extra });
  const model = await trainModel(input.frames, input.request as TrainRequest, { signal: ctx.signal });
  let test: ValidationReportJ | null = null;
  if (input.testFrames.length) {
    ctx.progress({ stage: 'predicting the held-out test frames', done: cvSteps + 1, total: cvSteps + extra });
    const points: ParityPoint[] = input.testFrames.map((f, i) => {
      if (ctx.signal.aborted) throw new CancelledError();
      const index = input.testIndices[i];
      const ref = referenceEps(f, index, input.request.tensorKey, input.request.kind);
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

async function predict(input: PredictTaskInput, ctx: TaskContext): Promise<PredictTaskOutput> {
  const model = input.model as Model;
  const out: PredictTaskOutput = { frames: [], local: [], atomDistance: [] };
  const n = input.frames.length;
  for (let i = 0; i < n; i++) {
    if (ctx.signal.aborted) throw new CancelledError();
    const frame = input.frames[i];
    const index = input.frameIndices[i];
    const fp = predictFrame(model, frame);
    out.frames.push(predictionJson(fp, index, referenceEps(frame, index, input.reference.key, input.reference.kind)));
    out.local.push(Array.from(fp.local));
    out.atomDistance.push(Array.from(fp.applicability.atomDistance));
    ctx.progress({ stage: 'predicting frames', done: i + 1, total: n });
    // Yield so an abort message can be seen between frames.
    if (i % 4 === 3) await new Promise((r) => setImmediate(r));
  }
  return out;
}

export const appTasks: TaskRegistry = {
  train,
  validate: (input: ValidateTaskInput, ctx: TaskContext) => crossValidate(input, ctx, 0),
  predict,
};
