// The exact text `predict` writes for one frame (a CSV row or an annotated extended XYZ frame) and the CSV
// header line that identifies where the predictions came from (model checksum, input file, frame selection).
// Shared by the worker task (which formats) and merge (which checks and rewrites the identity line), so that a
// streamed, resumed or sharded-and-merged run gives the same bytes as one plain run.
import type { Frame } from '../../core/geometry/frame.ts';
import { framePredictionFrom, type Model, type Predictor } from '../../core/learning/model.ts';
import { findMolecules } from '../../core/geometry/molecules.ts';
import { annotateFrame, tensorPredictionRow, valuePredictionRow, valueRowColumns } from './prediction-rows.ts';
import { csvField, tensorCsvColumns, tensorCsvPreamble, tensorCsvRow, type TensorCsvOptions } from '../csv.ts';
import { formatExtxyzFrame } from '../extxyz.ts';

export type PredictFormat = 'csv' | 'extxyz';

/** One CSV record: numbers as the shortest text that reads back the same, booleans as 1/0, text RFC 4180. */
export function csvRecord(values: (number | string | boolean)[]): string {
  return values.map((v) => (typeof v === 'number' ? String(v) : typeof v === 'boolean' ? (v ? '1' : '0') : csvField(v))).join(',') + '\n';
}

/** The column names of the CSV a model's predictions go to. */
export function predictionColumns(model: Model, csvOptions?: TensorCsvOptions): string[] {
  if (model.target.shape !== 'tensor') return valueRowColumns(model);
  if (!csvOptions) throw new RangeError('predictionColumns: a tensor model needs the CSV layout (csvOptions)');
  return tensorCsvColumns(csvOptions);
}

/**
 * The comment block and header row of a prediction CSV. Tensor models: io/csv.ts's preamble with its "Written"
 * time replaced by the identity line (so that resumed and merged runs give the same bytes); value models: a
 * title line, the identity line and the header.
 */
export function predictionCsvHeader(model: Model, id: Identity, csvOptions?: TensorCsvOptions): string {
  const columns = predictionColumns(model, csvOptions).map(csvField).join(',') + '\n';
  if (model.target.shape !== 'tensor') return `# Polarweave predictions (model estimates) from ${id.modelPath.replace(/\n/g, ' ')}\n${identityLine(id)}${columns}`;
  const pre = tensorCsvPreamble(csvOptions as TensorCsvOptions, new Date(0)).replace(/^# Written: .*\n/m, identityLine(id));
  return pre + columns;
}

/** A frame selection as text, "A:B step S" (B empty when open-ended). */
export interface SelectionText {
  start: number;
  stop: number | null;
  step: number;
}

export function selectionText(s: SelectionText): string {
  return `${s.start}:${s.stop ?? ''} step ${s.step}`;
}

export interface Identity {
  /** As given on the command line (shown, not checked). */
  modelPath: string;
  modelSha256: string;
  inputName: string;
  inputBytes: number;
  /** The frames this file holds, when not the whole input. */
  frames?: SelectionText;
  /** Part k of N of the selection `of`. */
  shard?: { k: number; n: number; of: SelectionText };
}

const TITLE = '# Identity: model ';

/** The comment line of a prediction CSV that says where it came from: model, its checksum, input, selection. */
export function identityLine(id: Identity): string {
  let line = TITLE + id.modelPath.replace(/[\r\n;]/g, ' ');
  line += `; model sha256 ${id.modelSha256}; input ${id.inputName.replace(/[\r\n;,]/g, ' ')}, ${id.inputBytes} bytes`;
  if (id.frames) line += `; frames ${selectionText(id.frames)}`;
  if (id.shard) line += `; shard ${id.shard.k}/${id.shard.n} of frames ${selectionText(id.shard.of)}`;
  return line + '\n';
}

function parseSelection(text: string): SelectionText | null {
  const m = /^(\d+):(\d*) step (\d+)$/.exec(text.trim());
  if (!m) return null;
  return { start: Number(m[1]), stop: m[2] === '' ? null : Number(m[2]), step: Number(m[3]) };
}

/** Read back an identity line (null when the line is not one). */
export function parseIdentityLine(line: string): Identity | null {
  if (!line.startsWith(TITLE)) return null;
  const fields = line.slice(TITLE.length).replace(/\r?\n$/, '').split('; ');
  const id: Partial<Identity> = { modelPath: fields[0] };
  for (const f of fields.slice(1)) {
    let m: RegExpExecArray | null;
    if ((m = /^model sha256 ([0-9a-f]{64})$/.exec(f))) id.modelSha256 = m[1];
    else if ((m = /^input (.*), (\d+) bytes$/.exec(f))) {
      id.inputName = m[1];
      id.inputBytes = Number(m[2]);
    } else if ((m = /^frames (.*)$/.exec(f))) id.frames = parseSelection(m[1]) ?? undefined;
    else if ((m = /^shard (\d+)\/(\d+) of frames (.*)$/.exec(f))) {
      const of = parseSelection(m[3]);
      if (of) id.shard = { k: Number(m[1]), n: Number(m[2]), of };
    }
  }
  if (!id.modelSha256 || id.inputName === undefined || id.inputBytes === undefined) return null;
  return id as Identity;
}

/** The per-frame info keys extended XYZ output carries for merge (after the prediction's own keys). */
export interface FrameStamp {
  modelSha256: string;
  input: string;
  /** "k/N frames a:b step s of A:B step s" for a shard; merge removes it. */
  shard?: string;
}

export interface FrameText {
  text: string;
  outside: boolean;
  atomsOutside: number;
  maxDistance: number;
}

/** Predict one frame and format it. */
export function predictFrameText(model: Model, predict: Predictor, frame: Frame, index: number, format: PredictFormat, stamp: FrameStamp, csvOptions?: TensorCsvOptions): FrameText {
  const pred = predict(frame, index);
  const a = pred.applicability;
  const figures = { outside: a.outside, atomsOutside: a.atomsOutside, maxDistance: a.maxDistance };
  if (model.target.shape !== 'tensor') {
    const row = valuePredictionRow(model, index, frame, pred);
    return { text: csvRecord(valueRowColumns(model).map((c) => row[c] ?? '')), ...figures };
  }
  const fp = framePredictionFrom(model, frame, pred, index);
  if (format === 'csv') return { text: tensorCsvRow(tensorPredictionRow(index, frame, fp, model), csvOptions as TensorCsvOptions), ...figures };
  const out = annotateFrame(frame, fp, model);
  out.arrays.molecule = { kind: 'int', width: 1, data: findMolecules(frame).molecule };
  out.info.pred_frame = index;
  out.info.pred_model_sha256 = stamp.modelSha256;
  out.info.pred_input = stamp.input;
  if (stamp.shard) out.info.pred_shard = stamp.shard;
  return { text: formatExtxyzFrame(out), ...figures };
}
