// The unblocked Cholesky factorisation as it was before the blocked one of src-main/core/numerics/cholesky.ts
// (row by row, each entry one dot product of two row prefixes with four running sums): kept here only so that
// bench/cholesky.bench.ts can print the new code's speed against it in the same run. Not used by the program.
export function choleskyInPlaceUnblocked(a: Float64Array, n: number): boolean {
  for (let i = 0; i < n; i++) {
    const ri = i * n;
    for (let j = 0; j <= i; j++) {
      const rj = j * n;
      // dot product of the two row prefixes, four accumulators (about 1.5× faster in V8 than one)
      let s0 = 0;
      let s1 = 0;
      let s2 = 0;
      let s3 = 0;
      let k = 0;
      for (; k + 3 < j; k += 4) {
        s0 += a[ri + k] * a[rj + k];
        s1 += a[ri + k + 1] * a[rj + k + 1];
        s2 += a[ri + k + 2] * a[rj + k + 2];
        s3 += a[ri + k + 3] * a[rj + k + 3];
      }
      for (; k < j; k++) s0 += a[ri + k] * a[rj + k];
      const s = a[ri + j] - (s0 + s1 + s2 + s3);
      if (i === j) {
        if (!(s > 0) || !Number.isFinite(s)) return false;
        a[ri + i] = Math.sqrt(s);
      } else {
        a[ri + j] = s / a[rj + j];
      }
    }
  }
  return true;
}
