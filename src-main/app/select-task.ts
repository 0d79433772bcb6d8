// The window's "Choose frames for DFT" job, run in a worker thread: the select use case (select-frames.ts) on the
// frames of an open dataset, with the window's model when asked, the chosen frames as the extended XYZ text
// `polarweave select` writes, and, with a template, the filled DFT inputs. Served beside the other app tasks
// (worker.ts); structured-clone-safe inputs and plain JSON out.
import { formatExtxyzFrame } from '../io/extxyz.ts';
import { parseTemplate } from '../io/dft/input-template.ts';
import type { Frame } from '../core/geometry/frame.ts';
import type { Model } from '../core/learning/model.ts';
import type { TaskContext } from '../jobs/task.ts';
import { loadedModel } from './predict/prediction.ts';
import { chosenFrames, filledInputs, memorySource, selectFrames, selectionSummary, type SelectRequest, type SelectResult } from './select-frames.ts';

export interface SelectTaskInput {
  /** The dataset's name (names the source in the frames written and in errors). */
  name: string;
  frames: Frame[];
  request: Omit<SelectRequest, 'model' | 'known'>;
  model: unknown | null;
  modelName: string;
  known: Frame[];
  template: { name: string; text: string } | null;
}

export interface SelectTaskOutput {
  result: SelectResult;
  lines: string[];
  /** The chosen frames as extended XYZ text. */
  text: string;
  inputs: { name: string; text: string }[];
}

export async function selectTask(input: SelectTaskInput, ctx: TaskContext): Promise<SelectTaskOutput> {
  // a bad template fails before the frames are read
  const template = input.template ? parseTemplate(input.template.text, input.template.name) : null;
  const source = memorySource(input.name, input.frames);
  const hooks = { signal: ctx.signal, onProgress: (p: { stage: string; done: number; total: number }) => ctx.progress(p) };
  const request: SelectRequest = {
    ...input.request,
    model: input.model ? loadedModel(input.model as Model, input.modelName) : undefined,
    known: input.known.length ? input.known : undefined,
  };
  const result = await selectFrames(source, request, hooks);
  const frames = await chosenFrames(source, result, hooks);
  return {
    result,
    lines: selectionSummary(result, input.name),
    text: frames.map((f) => formatExtxyzFrame(f)).join(''),
    inputs: template ? filledInputs(template, frames) : [],
  };
}
