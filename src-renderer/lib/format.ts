// Number formatting for tables and labels: a fixed number of significant digits, ranges, 3×3 matrices.
import type { Range } from '../../src-main/api/contract.ts';
import { fmtPct } from '../../src-main/core/learning/error-figures.ts';
import { withError } from '../../src-main/core/numerics/uncertain.ts';
export { atPlacesOf } from '../../src-main/core/numerics/uncertain.ts';

export function fmt(v: number | null | undefined, digits = 4): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—';
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a >= 1e5 || a < 1e-3) return v.toExponential(digits - 1);
  return Number(v.toPrecision(digits)).toString();
}

export function fmtRange(r: Range | null | undefined, digits = 4, unit = ''): string {
  if (!r) return '—';
  const u = unit ? ` ${unit}` : '';
  if (r.min === r.max) return `${fmt(r.min, digits)}${u}`;
  return `${fmt(r.min, digits)} – ${fmt(r.max, digits)}${u}`;
}

/** Rows of a 3×3 matrix given as 9 numbers (row-major) or 6 in Voigt order xx yy zz yz xz xy. */
export function matrixRows(v: number[]): number[][] {
  if (v.length === 6) {
    const [xx, yy, zz, yz, xz, xy] = v;
    return [
      [xx, xy, xz],
      [xy, yy, yz],
      [xz, yz, zz],
    ];
  }
  return [v.slice(0, 3), v.slice(3, 6), v.slice(6, 9)];
}

/** A relative error as the CLI writes it (core fmtPct: one decimal below 10 %, none above); "—" when undefined. */
export function percent(v: number): string {
  return Number.isFinite(v) ? fmtPct(v) : '—';
}

/** The quantity a validation report compared on, in words. */
/** The symbol of a compared tensor for chart labels: ε, α_CM or α. */
export function targetSymbol(target: string): string {
  return target.startsWith('eps') ? 'ε' : target.startsWith('alpha-cm') ? 'α_CM' : target.startsWith('alpha') ? 'α' : target;
}

/** Short label of the error relative to the spread of the data, and its meaning (for a tooltip). */
export const SPREAD_LABEL = '% of spread';
export const SPREAD_MEANING = 'Error relative to the spread of the data: RMSE / standard deviation of the reference over the frames, in percent.';
/** What the anisotropic error figure is (same words as the parity chart and docs/science-conventions.md). */
export const ANISO_MEANING =
  'Anisotropic error: for each frame, the anisotropy √(3/2)·‖Δ − (tr Δ/3) I‖ of the error tensor Δ = predicted − reference, root mean square over the frames (the invariant of the eps_aniso column).';

/** What a validation compared (core/learning/error-figures.ts comparedOn), in words for the window. */
export function targetName(target: string): string {
  const frames = target.includes(', ') ? `, ${target.slice(target.indexOf(', ') + 2)}` : '';
  if (target.startsWith('eps')) return `ε∞ (dimensionless)${frames}`;
  if (target.startsWith('alpha-mol')) return `α of the molecules or clusters in vacuum (Å³)${frames}`;
  if (target.startsWith('alpha-cm')) return `α_CM (Å³)${frames}`;
  return target;
}

/**
 * A value with its model error bar, to the digits the error bar justifies ("1.5632 ± 0.0015", the rule the
 * command line prints with); `digits` significant digits and "± —" when there is no error bar.
 */
export function pm(v: number | null | undefined, sd: number | null | undefined, digits = 5): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—';
  return withError(v, sd, digits);
}
