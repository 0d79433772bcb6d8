// A value with its error bar, written with the digits the error bar justifies: the error bar to two significant
// digits, the value to the same decimal place (common practice in reporting measured and computed quantities, no
// source). Shared by the command line and the window, so both print a figure the same way.

/** Decimal places that show `sd` to `sdDigits` significant digits (0 for error bars of 10^(sdDigits−1) and above). */
export function decimalsFor(sd: number, sdDigits = 2): number {
  if (!Number.isFinite(sd) || sd <= 0) return NaN;
  return Math.max(0, sdDigits - 1 - Math.floor(Math.log10(sd)));
}

/**
 * "v ± sd" rounded to the error bar, e.g. (1.547321, 0.00213) → "1.5473 ± 0.0021". Without a usable error bar
 * (null, zero, non-finite) the value is given to `fallbackDigits` significant digits and the error bar as "—".
 */
export function withError(v: number, sd: number | null | undefined, fallbackDigits = 5): string {
  if (!Number.isFinite(v)) return '—';
  const d = sd === null || sd === undefined ? NaN : decimalsFor(sd);
  if (!Number.isFinite(d)) return `${Number(v.toPrecision(fallbackDigits))} ± —`;
  const places = Math.min(d, 15);
  return `${v.toFixed(places)} ± ${(sd as number).toFixed(places)}`;
}

/**
 * A value without its own error bar written to the decimal places of another's, e.g. a reference beside a
 * prediction: (2.21417, 0.019) → "2.214". Without a usable error bar, `fallbackDigits` significant digits.
 */
export function atPlacesOf(v: number, sd: number | null | undefined, fallbackDigits = 5): string {
  if (!Number.isFinite(v)) return '—';
  const d = sd === null || sd === undefined ? NaN : decimalsFor(sd);
  return Number.isFinite(d) ? v.toFixed(Math.min(d, 15)) : String(Number(v.toPrecision(fallbackDigits)));
}
