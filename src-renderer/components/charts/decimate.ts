// Decimation for drawing long series: per pixel column keep the first, lowest, highest and last sample, in
// their original order. The drawn polyline then has the same vertical extent in every column as the full
// series (no spike is lost), with at most 4 points per column however many samples there are.

/**
 * Indices of the samples to draw for the visible x range [x0, x1] split into `columns` pixel columns. `x` must be
 * non-decreasing. One sample either side of the range is kept so the line runs to the plot's edges. Samples
 * whose y is not finite are skipped (the line is broken there by the caller if it wishes).
 */
export function decimateMinMax(x: ArrayLike<number>, y: ArrayLike<number>, x0: number, x1: number, columns: number): Int32Array {
  const n = Math.min(x.length, y.length);
  if (n === 0 || !(x1 > x0)) return new Int32Array(0);
  const cols = Math.max(1, Math.floor(columns));
  let start = lowerBound(x, x0, n);
  let end = lowerBound(x, x1, n);
  while (end < n && x[end] <= x1) end++;
  if (start > 0) start--;
  if (end < n) end++;
  const out: number[] = [];
  if (end - start <= 4 * cols) {
    for (let i = start; i < end; i++) if (Number.isFinite(y[i])) out.push(i);
    return Int32Array.from(out);
  }
  const width = (x1 - x0) / cols;
  let i = start;
  while (i < end) {
    const col = Math.floor((x[i] - x0) / width);
    let first = -1;
    let last = -1;
    let lo = -1;
    let hi = -1;
    let j = i;
    for (; j < end && Math.floor((x[j] - x0) / width) === col; j++) {
      const v = y[j];
      if (!Number.isFinite(v)) continue;
      if (first < 0) first = j;
      last = j;
      if (lo < 0 || v < y[lo]) lo = j;
      if (hi < 0 || v > y[hi]) hi = j;
    }
    if (first >= 0) {
      const keep = [first, lo, hi, last].sort((a, b) => a - b);
      for (let k = 0; k < 4; k++) if (k === 0 || keep[k] !== keep[k - 1]) out.push(keep[k]);
    }
    i = j;
  }
  return Int32Array.from(out);
}

/** First index with x[i] ≥ v (binary search on a non-decreasing array). */
export function lowerBound(x: ArrayLike<number>, v: number, n = x.length): number {
  let lo = 0;
  let hi = n;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (x[mid] < v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}
