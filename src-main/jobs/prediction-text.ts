// The exact text `predict` writes for one frame (a CSV row or an annotated extended XYZ frame) and the CSV
// header line that identifies where the predictions came from (model checksum, input file, frame selection).
// Shared by the worker task (which formats) and merge (which checks and rewrites the identity line), so that a
// streamed, resumed or sharded-and-merged run gives the same bytes as one plain run.
import type { Frame } from '../core/frame.ts';
import { framePredictionFrom, predictWithFeatures, type Featuriser, type Model } from '../core/model.ts';
import { annotateFrame, tensorPredictionRow, tensorRowColumns, valuePredictionRow, valueRowColumns, type PredictionRow } from '../core/predict-rows.ts';
import { formatExtxyzFrame } from '../io/extxyz.ts';

export type PredictFormat = 'csv' | 'extxyz';

/** One CSV record: integers as written, other numbers with 10 significant digits, booleans as 1/0. */
export function csvRecord(values: (number | string | boolean)[]): string {
  return (
    values
      .map((v) => {
        if (typeof v === 'number') return Number.isInteger(v) ? String(v) : v.toPrecision(10);
        if (typeof v === 'boolean') return v ? '1' : '0';
        return /[",\n]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v;
      })
      .join(',') + '\n'
  );
}

export function predictionColumns(model: Model): string[] {
  return model.target.shape === 'tensor' ? tensorRowColumns() : valueRowColumns(model);
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

const TITLE = '# Polarweave predictions (model estimates) from ';

/** The first line of a prediction CSV: title, model path, model checksum, input, and the selection. */
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
export function predictFrameText(model: Model, featurise: Featuriser, frame: Frame, index: number, format: PredictFormat, columns: string[], stamp: FrameStamp): FrameText {
  const pred = predictWithFeatures(model, frame, featurise(frame, index), index);
  let row: PredictionRow;
  let text: string;
  if (model.target.shape !== 'tensor') {
    row = valuePredictionRow(model, index, frame, pred);
    text = csvRecord(columns.map((c) => row[c] ?? ''));
  } else {
    const fp = framePredictionFrom(model, frame, pred, index);
    row = tensorPredictionRow(index, frame, fp);
    if (format === 'csv') text = csvRecord(columns.map((c) => row[c] ?? ''));
    else {
      const a = annotateFrame(frame, fp, model);
      a.info.pred_frame = index;
      a.info.pred_model_sha256 = stamp.modelSha256;
      a.info.pred_input = stamp.input;
      if (stamp.shard) a.info.pred_shard = stamp.shard;
      text = formatExtxyzFrame(a);
    }
  }
  return { text, outside: row.outside === true, atomsOutside: Number(row.atoms_outside), maxDistance: Number(row.max_distance) };
}
