// Running statistics drawn by the trajectory chart: the running (cumulative) mean, a block-averaging estimate
// of the standard error of the mean (used only when the analysis does not supply one), and the error band of
// the running mean, scaled as 1/√t from the error at the end of the run (stationary series assumed).

import { blockAverage } from '../../../src-main/core/trajectory/statistics.ts';

/** m_t = (1/t) Σ_{i<t} y_i for t = 1…n (non-finite samples are skipped and repeat the previous mean). */
export function runningMean(values: ArrayLike<number>): Float64Array {
  const out = new Float64Array(values.length);
  let s = 0;
  let k = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (Number.isFinite(v)) {
      s += v;
      k++;
    }
    out[i] = k > 0 ? s / k : NaN;
  }
  return out;
}

export interface BlockEstimate {
  blockSize: number;
  blocks: number;
  /** Standard error of the mean from the scatter of block means: √(var(block means, n−1) / blocks). */
  error: number;
}

/** Block-averaging estimates for block sizes 1, 2, 4, … while at least `minBlocks` blocks remain. */
export function blockEstimates(values: ArrayLike<number>, minBlocks = 8): BlockEstimate[] {
  if (values.length < Math.max(2, minBlocks)) return [];
  // The science core's block averaging (pure, no Node APIs), so the chart's fallback and the analysis agree.
  return blockAverage(values, minBlocks).levels.map((l) => ({ blockSize: l.blockSize, blocks: l.blocks, error: l.standardError }));
}

/**
 * Plateau of the block estimates: the mean of the three with the largest blocks that still leave ≥ 32 blocks
 * (the estimate from m blocks scatters by about 1/√(2(m−1)), 13 % at m = 32); short series fall back to ≥ 8
 * blocks. A simple rule; the trajectory analysis module's own plateau, passed to the chart, takes precedence.
 */
export function plateauError(values: ArrayLike<number>): number {
  const all = blockEstimates(values);
  if (all.length === 0) return NaN;
  const many = all.filter((e) => e.blocks >= 32);
  const tail = (many.length >= 3 ? many : all).slice(-3);
  return tail.reduce((s, x) => s + x.error, 0) / tail.length;
}

/** Error of the running mean after t samples, from the error `finalError` after all n: finalError·√(n/t). */
export function runningError(finalError: number, n: number, t: number): number {
  return finalError * Math.sqrt(n / Math.max(1, t));
}
