// Streams per-frame tensors into the CSV table of io/csv.ts (atomically: nothing appears unless every frame
// converted), shared by the commands that write one row per frame.
import type { Frame, Mat3 } from '../core/geometry/frame.ts';
import type { PolarisabilityUnit } from '../core/dielectric/units.ts';
import { tensorCsvWriter } from '../io/prediction/prediction-format.ts';

export interface FrameTensors {
  frame: Frame;
  volume: number;
  eps: Mat3;
  alphaCM: Mat3;
  alphaC: Mat3;
}

export async function writeFrameTensorCsv(
  path: string,
  rows: AsyncIterable<FrameTensors>,
  options: { source: string; alphaUnit: PolarisabilityUnit; predicted?: boolean },
): Promise<number> {
  const writer = tensorCsvWriter(path, {
    tagColumns: ['tag'],
    alpha: { kind: 'alpha-cm', unit: options.alphaUnit },
    source: options.source,
    predicted: options.predicted ?? false,
  });
  let n = 0;
  try {
    for await (const r of rows) {
      const tag = r.frame.info.tag;
      await writer.writeRow({
        frame: r.frame.source?.index ?? n,
        tags: { tag: typeof tag === 'string' || typeof tag === 'number' ? tag : '' },
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
  return n;
}
