// Frames and predictions as the window sees them: plain JSON (number[] instead of typed arrays), made at the
// API boundary; everything behind it stays typed.
import type { FramePredictionJ, FrameView, Mat3J } from '../api/contract.ts';
import { cellVolume } from '../core/geometry/cell.ts';
import type { Frame, Mat3 } from '../core/geometry/frame.ts';
import type { FramePrediction } from '../core/learning/model-types.ts';
import { refractiveIndices } from '../core/dielectric/clausius-mossotti.ts';

export function matJ(m: ArrayLike<number>): Mat3J {
  return Array.from(m);
}

export function frameVolume(frame: Frame): number | null {
  if (!frame.cell || !frame.pbc.every(Boolean)) return null;
  return cellVolume(frame.cell, { file: frame.source?.file, frame: frame.source?.index });
}

export function frameView(datasetId: string, index: number, frame: Frame): FrameView {
  return {
    datasetId,
    index,
    species: [...frame.species],
    positions: Array.from(frame.positions),
    cell: frame.cell ? matJ(frame.cell) : null,
    pbc: [...frame.pbc],
    volumeA3: frameVolume(frame),
    info: Object.fromEntries(Object.entries(frame.info).map(([k, v]) => [k, Array.isArray(v) ? [...v] : v])),
    source: frame.source ? { ...frame.source } : null,
  };
}

/** A frame's prediction as the window sees it (the API boundary: typed arrays become number[]). */
export function predictionJ(fp: FramePrediction, frame: number, reference: Mat3 | null): FramePredictionJ {
  const a = fp.applicability;
  return {
    frame,
    volumeA3: fp.volumeA3,
    eps: matJ(fp.eps),
    alphaCM: matJ(fp.alphaCM),
    alphaC: matJ(fp.alphaC),
    refractive: Array.from(refractiveIndices(fp.eps, { frame }).indices),
    applicability: { maxDistance: a.maxDistance, threshold: a.threshold, atomsOutside: a.atomsOutside, variance: a.variance, outside: a.outside },
    reference: reference ? matJ(reference) : null,
  };
}

/** Back from the window's JSON (a saved project) to a typed prediction. */
export function predictionFromJ(f: FramePredictionJ, local: number[], atomDistance: number[]): FramePrediction {
  const a = f.applicability;
  return {
    volumeA3: f.volumeA3,
    alphaCM: Float64Array.from(f.alphaCM),
    alphaC: Float64Array.from(f.alphaC),
    eps: Float64Array.from(f.eps),
    local: Float64Array.from(local),
    applicability: { atomDistance: Float64Array.from(atomDistance), maxDistance: a.maxDistance, threshold: a.threshold, atomsOutside: a.atomsOutside, variance: a.variance, outside: a.outside },
  };
}
