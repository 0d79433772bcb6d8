// Geometry of the parity chart (reference against predicted), kept out of the component so it can be tested
// without a browser: which numbers are plotted for each part, the common axis range of both axes, the error
// figures of what is plotted, and the frames with the largest errors.
// Values are shown in the tensor's own units (ε dimensionless, α in Å³): the isotropic value tr/3, and the
// anisotropic part T − (tr/3) I as its Cartesian components or its anisotropy (the eps_aniso invariant). The
// error figures are the engine's (core/learning/error-figures.ts), also for a group of dots.
import type { ErrorFiguresJ, ParityPointJ } from '../../../src-main/api/contract.ts';
import { anisotropicComponentsOfParts, anisotropyOfParts, isotropicOfParts } from '../../../src-main/core/dielectric/tensor.ts';
import { errorFigures } from '../../../src-main/core/learning/error-figures.ts';

/** Which irreducible part is plotted. */
export type ParityPart = 'iso' | 'aniso';

/**
 * How the anisotropic part is shown: 'components' pools the six Cartesian components xx, yy, zz, xy, xz, yz of
 * T − (tr/3) I of every frame (6 dots a frame); 'norm' plots its anisotropy √(3/2)‖T − (tr/3) I‖ once a frame
 * (the invariant of the prediction CSV's eps_aniso column; for an axial tensor |ε∥ − ε⊥|).
 */
export type AnisoMode = 'components' | 'norm';

/** The components of the anisotropic part, in the order of anisotropicComponentsOfParts. */
export const ANISO_COMPONENTS = ['xx', 'yy', 'zz', 'xy', 'xz', 'yz'] as const;
export type AnisoComponent = (typeof ANISO_COMPONENTS)[number];

export interface ParityDatum {
  /** Reference value (x). */
  x: number;
  /** Predicted value (y). */
  y: number;
  /** Frame index as given in the ParityPointJ. */
  frame: number;
  /** Position of the point in the input array. */
  point: number;
  /** The Cartesian component (xx … yz) of a pooled anisotropic component; null for tr/3 and the anisotropy. */
  component: AnisoComponent | null;
  /** Index into the group list. */
  group: number;
}

export interface ParitySeries {
  data: ParityDatum[];
  /** Group names in order of first appearance (index = ParityDatum.group). */
  groups: string[];
  /** Input points left out because a value was not finite (with the reason, for a notice). */
  skipped: { point: number; frame: number; reason: string }[];
}

function checkPoint(p: ParityPointJ, i: number): void {
  if (p.reference.length !== 6 || p.predicted.length !== 6) {
    throw new RangeError(
      `parity point ${i} (frame ${p.frame}): reference and predicted need 6 numbers each (the irreducible parts of docs/science-conventions.md), ` +
        `got ${p.reference.length} and ${p.predicted.length}`,
    );
  }
}

/** The anisotropy √(3/2)‖T²‖ of a 6-vector [T⁰, T²₋₂…T²₂] (same invariant as the CSV's eps_aniso). */
export function anisoNorm(parts: readonly number[]): number {
  return anisotropyOfParts(parts);
}

/**
 * The plotted values. `groups[i]` names the group of point i (e.g. "fold 2", "test", "crystal"); without it a
 * point's `label` is used, else "all".
 */
export function paritySeries(
  points: readonly ParityPointJ[],
  part: ParityPart,
  anisoMode: AnisoMode = 'components',
  groups?: readonly string[],
): ParitySeries {
  if (groups && groups.length !== points.length) {
    throw new RangeError(`parity chart: ${points.length} points but ${groups.length} group labels; give one label per point`);
  }
  const names: string[] = [];
  const index = new Map<string, number>();
  const data: ParityDatum[] = [];
  const skipped: ParitySeries['skipped'] = [];
  points.forEach((p, i) => {
    checkPoint(p, i);
    const name = groups ? groups[i] : (p.label ?? 'all');
    let g = index.get(name);
    if (g === undefined) {
      g = names.length;
      names.push(name);
      index.set(name, g);
    }
    const push = (x: number, y: number, component: AnisoComponent | null) => {
      if (!Number.isFinite(x) || !Number.isFinite(y)) {
        skipped.push({ point: i, frame: p.frame, reason: `non-finite value${component === null ? '' : ` (${component})`}` });
        return;
      }
      data.push({ x, y, frame: p.frame, point: i, component, group: g });
    };
    if (part === 'iso') push(isotropicOfParts(p.reference), isotropicOfParts(p.predicted), null);
    else if (anisoMode === 'norm') push(anisoNorm(p.reference), anisoNorm(p.predicted), null);
    else {
      const r = anisotropicComponentsOfParts(p.reference);
      const q = anisotropicComponentsOfParts(p.predicted);
      ANISO_COMPONENTS.forEach((c, k) => push(r[k], q[k], c));
    }
  });
  return { data, groups: names, skipped };
}

/**
 * One range for both axes covering every x and y, widened by `pad` (fraction of the span) on each side, so that
 * y = x is the diagonal of a square plot. A zero span is widened around the value; no data gives [0, 1].
 */
export function parityDomain(data: readonly { x: number; y: number }[], pad = 0.05): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (const d of data) {
    lo = Math.min(lo, d.x, d.y);
    hi = Math.max(hi, d.x, d.y);
  }
  if (!Number.isFinite(lo)) return [0, 1];
  let span = hi - lo;
  if (span === 0) span = Math.abs(lo) > 0 ? Math.abs(lo) * 0.1 : 1;
  return [lo - pad * span, hi + pad * span];
}

export interface PlottedFigures {
  rmse: number;
  /** Error relative to the spread of the data: RMSE / (population) standard deviation of the reference, in percent. */
  percent: number;
  /** 1 − (percent/100)². */
  r2: number;
  /** Frames. */
  count: number;
}


export interface FrameError {
  frame: number;
  point: number;
  label?: string;
  /** |Δ(tr/3)| for 'iso'; the anisotropy of the error tensor for 'aniso' (the measure of the error figures). */
  error: number;
}

/**
 * The error figures of a set of points (e.g. one group of dots), from the same function as the engine's report:
 * the same numbers whichever way the anisotropic part is drawn.
 */
export function pointFigures(points: readonly ParityPointJ[], part: ParityPart): PlottedFigures {
  const ok = points.filter((p) => p.reference.every(Number.isFinite) && p.predicted.every(Number.isFinite));
  if (ok.length === 0) return { rmse: NaN, percent: NaN, r2: NaN, count: 0 };
  return figuresOfPart(errorFigures(ok.map((p) => p.reference), ok.map((p) => p.predicted)), part);
}

/** The figures of one part out of the engine's ErrorFigures. */
export function figuresOfPart(e: ErrorFiguresJ, part: ParityPart): PlottedFigures {
  return part === 'iso'
    ? { rmse: e.rmseIso, percent: e.percentIso, r2: e.r2Iso, count: e.count }
    : { rmse: e.rmseAniso, percent: e.percentAniso, r2: e.r2Aniso, count: e.count };
}

/** Frames sorted by their error in the given part, largest first (at most `limit`). */
export function worstFrames(points: readonly ParityPointJ[], part: ParityPart, limit = 10): FrameError[] {
  const out: FrameError[] = [];
  points.forEach((p, i) => {
    checkPoint(p, i);
    const d = p.predicted.map((v, k) => v - p.reference[k]);
    const e = part === 'iso' ? Math.abs(isotropicOfParts(d)) : anisotropyOfParts(d);
    if (Number.isFinite(e)) out.push({ frame: p.frame, point: i, label: p.label, error: e });
  });
  out.sort((a, b) => b.error - a.error);
  return out.slice(0, limit);
}

/** Format a figure with a sensible number of significant digits for the chart's annotation. */
export function formatFigure(v: number, digits = 3): string {
  if (!Number.isFinite(v)) return '—';
  if (v === 0) return '0';
  const a = Math.abs(v);
  const text = a >= 1e5 || a < 1e-3 ? v.toExponential(digits - 1) : Number(v.toPrecision(digits)).toString();
  return text.replace(/-/g, '\u2212'); // typographic minus
}
