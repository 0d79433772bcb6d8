// Statistics of correlated time series (trajectory observables): mean with a standard error from block
// averaging, reported over block sizes with a plateau search.
//
// Method: H. Flyvbjerg and H. G. Petersen, "Error estimates on averages of correlated data",
// J. Chem. Phys. 91, 461 (1989) — successive halving of the series into blocks; the standard error of the
// mean grows with block size until blocks are longer than the correlation time, then stays flat (plateau).

export interface BlockLevel {
  /** Number of consecutive samples per block. */
  blockSize: number;
  blocks: number;
  /** Standard error of the mean estimated from the block means. */
  standardError: number;
  /** Uncertainty of that estimate, SE / sqrt(2 (blocks − 1)) (Flyvbjerg–Petersen eq. 28). */
  errorOfError: number;
}

export interface BlockAverage {
  mean: number;
  count: number;
  /** Standard deviation of the samples (n − 1). */
  std: number;
  /** The error bar: the standard error at the plateau, or the largest estimate when there is none. */
  standardError: number;
  /** True when a plateau was found; false means the series is too short for its correlation time. */
  plateau: boolean;
  /** Block size where the plateau starts (samples), or null. */
  plateauBlockSize: number | null;
  /** Statistical inefficiency g = (SE / SE_naive)², the number of samples per independent sample. */
  inefficiency: number;
  levels: BlockLevel[];
}

export function mean(xs: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < xs.length; i++) s += xs[i];
  return s / xs.length;
}

export function variance(xs: ArrayLike<number>): number {
  const n = xs.length;
  if (n < 2) return 0;
  const m = mean(xs);
  let s = 0;
  for (let i = 0; i < n; i++) s += (xs[i] - m) ** 2;
  return s / (n - 1);
}

/**
 * Block-average a series. Levels double the block size from 1 while at least `minBlocks` blocks remain.
 * The plateau is the first level whose estimate agrees, within the combined errors of the estimates, with
 * the next two levels (a short, conservative reading of the Flyvbjerg–Petersen plateau).
 */
export function blockAverage(xs: ArrayLike<number>, minBlocks = 8): BlockAverage {
  const n = xs.length;
  if (n < 2) throw new RangeError(`blockAverage: need at least 2 samples, got ${n}`);
  const m = mean(xs);
  const std = Math.sqrt(variance(xs));
  const levels: BlockLevel[] = [];
  for (let b = 1; Math.floor(n / b) >= Math.max(2, minBlocks); b *= 2) {
    const nb = Math.floor(n / b);
    const means = new Float64Array(nb);
    for (let k = 0; k < nb; k++) {
      let s = 0;
      for (let i = k * b; i < (k + 1) * b; i++) s += xs[i];
      means[k] = s / b;
    }
    const se = Math.sqrt(variance(means) / nb);
    levels.push({ blockSize: b, blocks: nb, standardError: se, errorOfError: se / Math.sqrt(2 * (nb - 1)) });
  }
  let plateauAt = -1;
  for (let k = 0; k + 2 < levels.length && plateauAt < 0; k++) {
    const a = levels[k];
    const agrees = (o: BlockLevel) => Math.abs(o.standardError - a.standardError) <= a.errorOfError + o.errorOfError;
    // A plateau must not still be rising steeply: both later levels agree with this one.
    if (agrees(levels[k + 1]) && agrees(levels[k + 2])) plateauAt = k;
  }
  const naive = levels[0]?.standardError ?? std / Math.sqrt(n);
  let se: number;
  if (plateauAt >= 0) {
    // Average the plateau levels, weighting by their precision.
    let w = 0;
    let s = 0;
    for (let k = plateauAt; k < Math.min(levels.length, plateauAt + 3); k++) {
      const wk = 1 / Math.max(levels[k].errorOfError, 1e-300) ** 2;
      w += wk;
      s += wk * levels[k].standardError;
    }
    se = s / w;
  } else {
    se = Math.max(naive, ...levels.map((l) => l.standardError));
  }
  return {
    mean: m,
    count: n,
    std,
    standardError: se,
    plateau: plateauAt >= 0,
    plateauBlockSize: plateauAt >= 0 ? levels[plateauAt].blockSize : null,
    inefficiency: naive > 0 ? (se / naive) ** 2 : 1,
    levels,
  };
}

/** Running mean of a series (mean of the first k+1 samples at index k). */
export function runningMean(xs: ArrayLike<number>): Float64Array {
  const out = new Float64Array(xs.length);
  let s = 0;
  for (let i = 0; i < xs.length; i++) {
    s += xs[i];
    out[i] = s / (i + 1);
  }
  return out;
}
