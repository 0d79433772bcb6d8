// Frames as the window sees them: plain JSON (number[] instead of typed arrays), with the cell volume.
import type { FrameView, Mat3J } from '../api/contract.ts';
import { cellVolume } from '../core/geometry/cell.ts';
import type { Frame } from '../core/geometry/frame.ts';

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
