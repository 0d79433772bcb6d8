// Choose the frames to compute next: the one use case behind `polarweave select`, the window's "Choose frames
// for DFT…" task and the demo's reference loop. Two passes over the trajectory, each streamed:
// 1. every stride-th frame is described (frame-level features, core/descriptors/frame-features.ts) and, with a
//    model, judged by the predict use case (app/predict/): its calibrated error bar of ε_iso, or its domain score
//    (core/learning/domain.ts); a bounded pool keeps the candidates (core/trajectory/frame-choice.ts), so memory
//    does not grow with the trajectory;
// 2. the chosen frames are read again and handed out with their source frame number and time.
// Without a model the K most diverse frames are taken (farthest-point sampling); with one, the K highest
// scores. Either way frames closer in time than the minimum gap, and near duplicates of each other or of the
// frames already computed (`known`), are skipped.
import path from 'node:path';
import { mkdir, stat } from 'node:fs/promises';
import { CancelledError, InputError, ModelError, type Where } from '../core/errors.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { frameFeaturiser, type FrameFeaturiser } from '../core/descriptors/frame-features.ts';
import { CandidatePool, chooseDiverse, chooseHighest, featureSpread, type ShortReason } from '../core/trajectory/frame-choice.ts';
import { readAllStructures, readStructures } from '../io/read-structures.ts';
import { writeExtxyz } from '../io/extxyz.ts';
import { writeFileAtomic } from '../io/atomic.ts';
import { fillTemplate, parseTemplate, type InputTemplate } from '../io/dft/input-template.ts';
import { readWholeFile } from '../io/whole-file.ts';
import { predictFrames, type LoadedModel } from './predict/prediction.ts';
import type { PredictedFrame } from './predict/predict-frame.ts';
import type { Progress } from '../core/learning/model-types.ts';

/** What the frames are ranked by: diversity (no model), a model's error bar, or its domain score. */
export type SelectBy = 'diversity' | 'error' | 'domain';

export interface SelectRequest {
  /** How many frames to choose. */
  count: number;
  /** Consider frames 0, stride, 2·stride, … only (default 1). */
  stride?: number;
  /** No two chosen frames closer in time than this (fs; default 0). Needs times: time_fs or timeStepFs. */
  minGapFs?: number;
  /** Time between successive frames (fs), for frames that carry no time_fs property. */
  timeStepFs?: number;
  /** With a model: rank by its calibrated error bar ('error', the default) or its domain score ('domain'). */
  model?: LoadedModel;
  by?: 'error' | 'domain';
  /** Frames already computed (e.g. the training set): chosen frames are not near duplicates of them. */
  known?: Frame[];
  /** Near-duplicate distance as a fraction of the candidates' feature spread (default DEFAULT_DUPLICATE). */
  duplicate?: number;
  /** Most candidates held at once (default: what fits in POOL_BYTES). */
  capacity?: number;
}

/** Default near-duplicate distance: this fraction of the RMS distance of the candidates from their mean. */
export const DEFAULT_DUPLICATE = 0.05;
/** Memory for the candidates' features (bytes): bounds the pool whatever the trajectory's length. */
export const POOL_BYTES = 64 << 20;
/** Largest K: the chosen frames are held in memory and compared with each other. */
export const MAX_CHOSEN = 10000;

/** A trajectory that can be read twice (a file, or frames in memory), frames numbered from 0. */
export interface FrameSource {
  /** How errors name it. */
  name: string;
  /** The frames start, start+step, … (all when step is 1), each with its number in the source. */
  frames(step: number, signal?: AbortSignal): AsyncIterable<{ frame: Frame; number: number }>;
  /** Total frames when known in advance (for progress), else null. */
  size: number | null;
}

export function fileSource(file: string): FrameSource {
  return {
    name: file,
    size: null,
    async *frames(step, signal) {
      let k = 0;
      for await (const frame of readStructures(file, { signal, range: step > 1 ? { step } : undefined })) {
        yield { frame, number: frame.source?.index ?? k * step };
        k++;
      }
    },
  };
}

export function memorySource(name: string, frames: readonly Frame[]): FrameSource {
  return {
    name,
    size: frames.length,
    async *frames(step) {
      for (let k = 0; k < frames.length; k += step) yield { frame: frames[k], number: k };
    },
  };
}

export interface ChosenFrame {
  /** Frame number in the source (0-based). */
  frame: number;
  /** Time (fs), when known. */
  timeFs: number | null;
  /** The score it was ranked by (error bar of ε_iso, or domain score); null when chosen by diversity. */
  score: number | null;
  /** Feature distance to the nearest frame chosen before it or known (null for the first without known frames). */
  distance: number | null;
  /** 1-based order in which it was chosen. */
  order: number;
}

export interface SelectResult {
  by: SelectBy;
  /** In frame order. */
  chosen: ChosenFrame[];
  asked: number;
  /** Frames read (every stride-th) and how many of them were kept as candidates. */
  considered: number;
  candidates: number;
  /** The stride asked for and the one in effect after the pool thinned a long trajectory (diversity only). */
  stride: number;
  effectiveStride: number;
  /** Scores below this were never candidates (score pools that filled; null otherwise). */
  scoreFloor: number | null;
  spread: number;
  duplicateDistance: number;
  /** Why fewer frames than asked were chosen; null when all were. */
  short: ShortReason;
  /** Words for `short`. */
  shortText: string | null;
}

export interface SelectHooks {
  signal?: AbortSignal;
  onProgress?: (p: Progress) => void;
}

const SHORT_TEXT: Record<Exclude<ShortReason, null>, string> = {
  pool: 'the trajectory has fewer candidate frames',
  gap: 'the other frames lie within the minimum time gap of frames already chosen',
  duplicate: 'the other frames are near duplicates of frames chosen or known',
};

function checkRequest(req: SelectRequest): void {
  const bad = (what: string, hint: string): never => {
    throw new InputError(what, {}, hint);
  };
  if (!Number.isInteger(req.count) || req.count < 1 || req.count > MAX_CHOSEN) bad(`the number of frames to choose must be an integer from 1 to ${MAX_CHOSEN}, got ${req.count}`, 'give -n K');
  const stride = req.stride ?? 1;
  if (!Number.isInteger(stride) || stride < 1) bad(`the stride must be a positive integer, got ${stride}`, 'give e.g. --stride 10 to consider every 10th frame');
  if (!(req.minGapFs === undefined || (Number.isFinite(req.minGapFs) && req.minGapFs >= 0))) bad(`the minimum gap must be a time ≥ 0 fs, got ${req.minGapFs}`, 'give e.g. --min-gap 500');
  if (!(req.timeStepFs === undefined || (Number.isFinite(req.timeStepFs) && req.timeStepFs > 0))) bad(`the time step must be a positive time in fs, got ${req.timeStepFs}`, 'give e.g. --time-step 0.5');
  const dup = req.duplicate ?? DEFAULT_DUPLICATE;
  if (!(Number.isFinite(dup) && dup >= 0 && dup <= 10)) bad(`the near-duplicate distance must be a fraction from 0 to 10 of the feature spread, got ${dup}`, `the default is ${DEFAULT_DUPLICATE}`);
  if (req.capacity !== undefined && !(Number.isInteger(req.capacity) && req.capacity >= 2 * req.count)) bad(`the candidate pool must hold at least twice the frames asked for, got ${req.capacity}`, 'leave it out');
}

/** A frame's time (fs): its time_fs property, else its number × the time step, else NaN. */
function frameTime(frame: Frame, number: number, timeStepFs: number | undefined): number {
  const t = frame.info.time_fs;
  if (typeof t === 'number' && Number.isFinite(t)) return t;
  return timeStepFs !== undefined ? number * timeStepFs : NaN;
}

/**
 * The score a model gives a frame (larger: more worth computing): its domain score, or its calibrated error bar —
 * of ε_iso for a periodic frame, of α_iso (Å³) for an isolated one; a run mixing the two is refused, since the
 * error bars would not be comparable.
 */
function modelScore(m: LoadedModel, by: 'error' | 'domain', one: PredictedFrame, where: Where, kinds: Set<string>): number {
  const t = one.tensor;
  if (!t) throw new ModelError(`${m.label}: frames are chosen with tensor models; this model predicts a vector or scalar`);
  if (by === 'domain') return t.applicability.score;
  kinds.add(t.isolated ? 'isolated' : 'periodic');
  if (kinds.size > 1) throw new InputError('the run mixes periodic and isolated frames, whose error bars (of ε and of α) cannot be ranked together', where, 'choose by domain score (--by domain), or choose among each kind separately');
  // a frame without a cell (a molecule or cluster) has the error bar of its α iso instead of ε iso
  const sd = t.isolated ? t.alphaIsoSd : (t.errorBars?.epsIso ?? null);
  if (sd === null) {
    throw new InputError(`${m.label}: the model carries no calibrated error bars`, where, 'choose by domain score instead (--by domain), or retrain it on 3 frames or more with this version');
  }
  return sd;
}

/** Pass 1: the chosen frames' numbers, times, scores, and how the choice went. */
export async function selectFrames(source: FrameSource, req: SelectRequest, hooks: SelectHooks = {}): Promise<SelectResult> {
  checkRequest(req);
  const stride = req.stride ?? 1;
  const minGap = req.minGapFs ?? 0;
  const by: SelectBy = req.model ? (req.by ?? 'error') : 'diversity';
  const signal = hooks.signal;
  const total = source.size === null ? 0 : Math.ceil(source.size / stride);
  let featuriser: FrameFeaturiser | null = null;
  let pool: CandidatePool | null = null;
  const init = (first: Frame): void => {
    const species = new Set<string>(first.species);
    for (const f of req.known ?? []) for (const s of f.species) species.add(s);
    for (const s of req.model?.model.species ?? []) species.add(s);
    featuriser = frameFeaturiser([...species]);
    const capacity = req.capacity ?? Math.max(2 * req.count, Math.min(200000, Math.floor(POOL_BYTES / (8 * featuriser.length))));
    pool = new CandidatePool(featuriser.length, capacity, by === 'diversity' ? 'spread' : 'score');
  };
  let considered = 0;
  const take = (frame: Frame, number: number, score: number): void => {
    if (!pool) init(frame);
    const where: Where = { file: source.name, frame: number };
    const time = frameTime(frame, number, req.timeStepFs);
    if (minGap > 0 && !Number.isFinite(time)) {
      throw new InputError('the frame carries no time (time_fs), so a minimum gap cannot be kept', where, 'give the time between frames (--time-step FS), or leave out the minimum gap');
    }
    considered++;
    const p = pool as unknown as CandidatePool;
    const wanted = p.policy === 'spread' ? p.wantsNext() : score > p.floor;
    if (wanted) p.offer({ frame: number, time, score }, (featuriser as unknown as FrameFeaturiser).features(frame, where));
    else p.arrivals++;
    if (considered % 16 === 0) hooks.onProgress?.({ stage: by === 'diversity' ? 'describing frames' : 'predicting frames', done: considered, total: Math.max(total, considered) });
  };
  if (req.model) {
    const m = req.model;
    // the source numbers the frames (a file's own frame index, or the position in memory): predict under it
    let current = 0;
    const frames = (async function* () {
      for await (const x of source.frames(stride, signal)) {
        current = x.number;
        yield x.frame;
      }
    })();
    const by2 = by as 'error' | 'domain';
    const kinds = new Set<string>();
    await predictFrames(m, frames, {
      frame(frame, one) {
        take(frame, one.index, modelScore(m, by2, one, { file: source.name, frame: one.index }, kinds));
      },
    }, { signal, indexOf: () => current });
  } else {
    let k = 0;
    for await (const { frame, number } of source.frames(stride, signal)) {
      if (signal?.aborted) throw new CancelledError();
      take(frame, number, 0);
      if (++k % 8 === 0) await new Promise((r) => setImmediate(r));
    }
  }
  if (signal?.aborted) throw new CancelledError();
  if (!pool || !featuriser) throw new InputError('no frames to choose from', { file: source.name }, 'give a trajectory with frames (check the stride)');
  const p = pool as CandidatePool;
  const f = featuriser as FrameFeaturiser;
  let known: Float64Array | undefined;
  if (req.known?.length) {
    known = new Float64Array(req.known.length * f.length);
    req.known.forEach((fr, i) => known!.set(f.features(fr, { file: fr.source?.file ?? 'the known frames', frame: fr.source?.index ?? i }), i * f.length));
  }
  hooks.onProgress?.({ stage: 'choosing', done: considered, total: considered });
  const spread = featureSpread(p.rows(), p.dim);
  const duplicateDistance = (req.duplicate ?? DEFAULT_DUPLICATE) * spread;
  const rules = { minGap, duplicate: duplicateDistance, known };
  const choice = by === 'diversity' ? chooseDiverse(p, req.count, rules) : chooseHighest(p, req.count, rules);
  const chosen: ChosenFrame[] = choice.chosen.map((i, k) => {
    const c = p.candidate(i);
    return { frame: c.frame, timeFs: Number.isFinite(c.time) ? c.time : null, score: by === 'diversity' ? null : c.score, distance: Number.isFinite(choice.distance[k]) ? choice.distance[k] : null, order: k + 1 };
  });
  chosen.sort((a, b) => a.frame - b.frame);
  return {
    by,
    chosen,
    asked: req.count,
    considered,
    candidates: p.count,
    stride,
    effectiveStride: stride * p.thin,
    scoreFloor: Number.isFinite(p.floor) ? p.floor : null,
    spread,
    duplicateDistance,
    short: choice.short,
    shortText: choice.short ? SHORT_TEXT[choice.short] : null,
  };
}

const SELECTION_WORDS: Record<SelectBy, string> = {
  diversity: 'farthest-point sampling on frame features',
  error: 'largest calibrated error bar of eps_iso, or of alpha_iso for isolated frames (model estimate)',
  domain: 'largest domain score (model estimate)',
};

/** Pass 2: the chosen frames themselves, in frame order, each marked with where it came from and why. */
export async function chosenFrames(source: FrameSource, result: SelectResult, hooks: SelectHooks = {}): Promise<Frame[]> {
  const want = new Map(result.chosen.map((c) => [c.frame, c]));
  const last = Math.max(-1, ...want.keys());
  const out: Frame[] = [];
  if (want.size === 0) return out;
  // every chosen frame is a multiple of the effective stride: the reader skips the others without parsing them
  for await (const { frame, number } of source.frames(result.effectiveStride, hooks.signal)) {
    const c = want.get(number);
    if (c) {
      const info = { ...frame.info, source_file: path.basename(source.name), source_frame: c.frame, selection: SELECTION_WORDS[result.by], selection_order: c.order };
      if (c.timeFs !== null) Object.assign(info, { source_time_fs: c.timeFs });
      if (c.score !== null) Object.assign(info, { selection_score: c.score });
      if (c.distance !== null) Object.assign(info, { selection_distance: c.distance });
      out.push({ ...frame, info, arrays: { ...frame.arrays } });
    }
    if (number >= last) break;
  }
  if (out.length !== want.size) throw new InputError(`the file changed while frames were chosen: ${want.size - out.length} chosen frames are missing on the second reading`, { file: source.name }, 'choose again from a file that is not being written');
  return out;
}

export interface SelectToFileRequest extends SelectRequest {
  input: string;
  output: string;
  /** Frames already computed, read from this file. */
  knownFile?: string;
  /** A DFT input template and the folder for the filled inputs (one per chosen frame). */
  template?: { file: string; folder: string };
}

/** The names of the filled inputs: the template's name with the frame number before its extension. */
export function templateOutputName(templateFile: string, frame: number): string {
  const base = path.basename(templateFile);
  const dot = base.lastIndexOf('.');
  return dot > 0 ? `${base.slice(0, dot)}-frame${frame}${base.slice(dot)}` : `${base}-frame${frame}`;
}

/** The inputs a template gives for the chosen frames: file names and texts (nothing written). */
export function filledInputs(t: InputTemplate, frames: readonly Frame[]): { name: string; text: string }[] {
  return frames.map((f) => {
    const n = f.info.source_frame as number;
    return { name: templateOutputName(t.file, n), text: fillTemplate(t, f, n, { file: String(f.info.source_file ?? ''), frame: n }) };
  });
}

/** `polarweave select`: choose, write the chosen frames (extended XYZ, atomically) and, optionally, the inputs. */
export async function selectToFile(req: SelectToFileRequest, hooks: SelectHooks = {}): Promise<SelectResult & { written: string[] }> {
  const target = path.resolve(req.output);
  if (path.resolve(req.input) === target || (req.knownFile && path.resolve(req.knownFile) === target)) {
    throw new InputError('the output file is also an input', { file: req.output }, 'write the chosen frames somewhere else');
  }
  await stat(req.input).catch(() => {
    throw new InputError('file not found', { file: req.input }, 'check the path');
  });
  // read and check the template before the long pass, so a typo in it costs nothing
  const template = req.template ? parseTemplate((await readWholeFile(req.template.file)).toString('utf8'), req.template.file) : null;
  const known = req.knownFile ? await readAllStructures(req.knownFile, { signal: hooks.signal }) : req.known;
  const source = fileSource(req.input);
  const result = await selectFrames(source, { ...req, known }, hooks);
  if (result.chosen.length === 0) throw new InputError('no frame could be chosen', { file: req.input }, result.shortText ?? 'check the stride');
  const frames = await chosenFrames(source, result, hooks);
  const written: string[] = [];
  if (template && req.template) {
    const inputs = filledInputs(template, frames);
    await mkdir(req.template.folder, { recursive: true });
    for (const i of inputs) {
      const p = path.join(req.template.folder, i.name);
      await writeFileAtomic(p, i.text);
      written.push(p);
    }
  }
  await writeExtxyz(req.output, frames, { signal: hooks.signal });
  return { ...result, written };
}

function fmt(x: number, digits = 4): string {
  return Number.isFinite(x) ? x.toPrecision(digits) : String(x);
}

/** The report of a choice, in lines: what `polarweave select` prints and the window shows. */
export function selectionSummary(r: SelectResult, sourceName: string): string[] {
  const rule = SELECTION_WORDS[r.by];
  const lines = [`chose ${r.chosen.length} of ${r.asked} frames asked for from ${sourceName}, by ${rule}`];
  const thinned = r.effectiveStride !== r.stride ? ` (one in ${r.effectiveStride} kept to bound memory)` : '';
  lines.push(`  read ${r.considered} frames (${r.stride === 1 ? 'every frame' : `one frame in ${r.stride}`})${thinned}; ${r.candidates} candidates${r.scoreFloor !== null ? ` (scores above ${fmt(r.scoreFloor)})` : ''}`);
  lines.push(`  near duplicates: closer than ${fmt(r.duplicateDistance, 3)} in frame-feature distance (spread of the candidates ${fmt(r.spread, 3)})`);
  if (r.shortText) lines.push(`  fewer than asked: ${r.shortText}`);
  const scoreName = r.by === 'error' ? 'error bar' : 'domain score';
  for (const c of r.chosen) {
    const parts = [`frame ${c.frame}`];
    if (c.timeFs !== null) parts.push(`t = ${Number(c.timeFs.toPrecision(6))} fs`);
    if (c.score !== null) parts.push(`${scoreName} ${fmt(c.score, 3)}`);
    if (c.distance !== null) parts.push(`distance ${fmt(c.distance, 3)}`);
    lines.push(`  #${c.order}: ${parts.join(', ')}`);
  }
  if (r.by !== 'diversity') lines.push('  (scores are model estimates)');
  return lines;
}
