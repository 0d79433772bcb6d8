// The convert use case: every frame's tensor from one kind to another — ε, the conducting-boundary cell
// polarisability α_c, or the Clausius–Mossotti polarisability α_CM — with unit conversion, written as extended
// XYZ (the tensor added as a property) or as the per-frame tensor table (io/prediction/prediction-format.ts,
// the layout `predict` writes, marked as reference values). Atomic: nothing appears unless every frame converted.
import { tensorKey } from '../io/tensor-keys.ts';
import { convertTensor, epsWarnings } from '../core/dielectric/clausius-mossotti.ts';
import { CancelledError } from '../core/errors.ts';
import type { Frame, Mat3 } from '../core/geometry/frame.ts';
import type { TensorKind } from '../core/learning/model-types.ts';
import { frameVolume, readTensor, whereOf } from '../core/learning/targets.ts';
import { tensorFromA3, tensorToA3, type PolarisabilityUnit } from '../core/dielectric/units.ts';
import { fileKind, readStructures, writeStructures } from '../io/read-structures.ts';
import { TAG_COLUMN, tensorCsvWriter } from '../io/prediction/prediction-format.ts';
import { InputError } from '../core/errors.ts';

export interface ConvertRequest {
  input: string;
  /** .csv: the per-frame table; a structure kind the registry can write (.extxyz, .xyz, .gz): the frames. */
  output: string;
  /** The property holding the input tensor. */
  key: string;
  from: TensorKind;
  to: TensorKind;
  /** Units of input and output polarisabilities. */
  inUnit: PolarisabilityUnit;
  outUnit: PolarisabilityUnit;
  /** The property the result is written to in structure output (default from `to` and the unit). */
  outKey?: string;
  signal?: AbortSignal;
  /** A warning about a frame's ε (said once per frame and problem). */
  onWarning?: (text: string) => void;
}

/** The usual name (io/tensor-keys.ts), except that a converted ε is not given the name an input ε∞ has. */
export function defaultConvertedKey(kind: TensorKind, unit: PolarisabilityUnit): string {
  return kind === 'eps' ? 'eps_converted' : tensorKey(kind, unit);
}

interface Converted {
  frame: Frame;
  eps: Mat3;
  alphaCM: Mat3;
  result: Mat3;
  volume: number;
}

export async function convertTensors(req: ConvertRequest): Promise<{ frames: number; warnings: number; outKey: string; table: boolean }> {
  const out = fileKind(req.output);
  const table = out?.kind === 'csv' && !out.gzip;
  if (!table && out?.kind !== 'extxyz') throw new InputError(`cannot tell the output kind of "${req.output}"`, { file: req.output }, 'use .extxyz, .xyz or .csv');
  const outKey = req.outKey ?? defaultConvertedKey(req.to, req.outUnit);
  let warnings = 0;
  let count = 0;
  const converted = async function* (): AsyncGenerator<Converted> {
    for await (const frame of readStructures(req.input, { signal: req.signal })) {
      if (req.signal?.aborted) throw new CancelledError();
      const index = frame.source?.index ?? count;
      const raw = readTensor(frame, req.key, index);
      const T = req.from === 'eps' ? raw : tensorToA3(raw, req.inUnit);
      const volume = frameVolume(frame, index);
      const where = whereOf(frame, index);
      const eps = convertTensor(T, req.from, 'eps', volume, where);
      for (const w of epsWarnings(eps)) {
        warnings++;
        req.onWarning?.(`${req.input}, frame ${index}: ${w}`);
      }
      const alphaCM = convertTensor(T, req.from, 'alpha-cm', volume, where);
      const resultA3 = req.to === 'eps' ? eps : req.to === 'alpha-cm' ? alphaCM : convertTensor(T, req.from, 'alpha-c', volume, where);
      const result = req.to === 'eps' ? resultA3 : tensorFromA3(resultA3, req.outUnit);
      count++;
      yield { frame, eps, alphaCM, result, volume };
    }
  };
  if (table) await writeTable(req, converted());
  else {
    await writeStructures(
      req.output,
      (async function* () {
        for await (const c of converted()) {
          c.frame.info[outKey] = Array.from(c.result);
          yield c.frame;
        }
      })(),
    );
  }
  return { frames: count, warnings, outKey, table };
}

/** The per-frame tensor table of the converted frames (ε and α_CM in the output unit), streamed and atomic. */
async function writeTable(req: ConvertRequest, rows: AsyncIterable<Converted>): Promise<void> {
  const writer = tensorCsvWriter(req.output, {
    tagColumns: [TAG_COLUMN],
    alpha: { kind: 'alpha-cm', unit: req.outUnit },
    source: `converted from ${req.input} (${req.key}, ${req.from}) by polarweave convert`,
    predicted: false,
  });
  let n = 0;
  try {
    for await (const r of rows) {
      const tag = r.frame.info[TAG_COLUMN];
      await writer.writeRow({
        frame: r.frame.source?.index ?? n,
        tags: { [TAG_COLUMN]: typeof tag === 'string' || typeof tag === 'number' ? tag : '' },
        volumeA3: r.volume,
        eps: r.eps,
        alpha: r.alphaCM,
      });
      n++;
    }
  } catch (e) {
    await writer.abort();
    throw e;
  }
  await writer.commit();
}
