// Geometry of the parity chart (reference against predicted), kept out of the component so it can be tested
// without a browser: which numbers are plotted for each part, the common axis range of both axes, the error
// figures of what is plotted, and the frames with the largest errors.
import type { ParityPointJ } from '../../../src-main/api/contract.ts';

/** Which irreducible part is plotted. */
export type ParityPart = 'iso' | 'aniso';

/**
 * How the λ=2 part is shown: 'components' pools the five T²_μ of every frame (5 dots a frame);
 * 'norm' plots the rotation invariant ‖T²‖ = (Σ_μ T²_μ²)^½ once a frame.
 */
export type AnisoMode = 'components' | 'norm';

export interface ParityDatum {
  /** Reference value (x). */
  x: number;
  /** Predicted value (y). */
  y: number;
  /** Frame index as given in the ParityPointJ. */
  frame: number;
  /** Position of the point in the input array. */
  point: number;
  /** μ = −2…2 for a pooled λ=2 component; null for T⁰ and ‖T²‖. */
  mu: number | null;
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
      `parity point ${i} (frame ${p.frame}): reference and predicted need 6 numbers each [T⁰, T²₋₂…T²₂], ` +
        `got ${p.reference.length} and ${p.predicted.length}`,
    );
  }
}

/** ‖T²‖ of a 6-vector [T⁰, T²₋₂…T²₂]. */
export function anisoNorm(parts: readonly number[]): number {
  let s = 0;
  for (let k = 1; k < 6; k++) s += parts[k] * parts[k];
  return Math.sqrt(s);
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
    const push = (x: number, y: number, mu: number | null) => {
      if (!Number.isFinite(x) || !Number.isFinite(y)) {
        skipped.push({ point: i, frame: p.frame, reason: `non-finite value${mu === null ? '' : ` (μ=${mu})`}` });
        return;
      }
      data.push({ x, y, frame: p.frame, point: i, mu, group: g });
    };
    if (part === 'iso') push(p.reference[0], p.predicted[0], null);
    else if (anisoMode === 'norm') push(anisoNorm(p.reference), anisoNorm(p.predicted), null);
    else for (let k = 1; k < 6; k++) push(p.reference[k], p.predicted[k], k - 3);
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
  /** RMSE / (population) standard deviation of the reference values, in percent. */
  percent: number;
  /** 1 − Σ(y−x)² / Σ(x−x̄)²; equals 1 − (percent/100)² with the population standard deviation. */
  r2: number;
  count: number;
}

/** Error figures of the plotted values (used for the ‖T²‖ view, whose figures the engine does not report). */
export function plottedFigures(data: readonly { x: number; y: number }[]): PlottedFigures {
  const n = data.length;
  if (n === 0) return { rmse: NaN, percent: NaN, r2: NaN, count: 0 };
  let mean = 0;
  for (const d of data) mean += d.x;
  mean /= n;
  let ssRes = 0;
  let ssTot = 0;
  for (const d of data) {
    ssRes += (d.y - d.x) ** 2;
    ssTot += (d.x - mean) ** 2;
  }
  const rmse = Math.sqrt(ssRes / n);
  const std = Math.sqrt(ssTot / n);
  return { rmse, percent: std > 0 ? (100 * rmse) / std : NaN, r2: ssTot > 0 ? 1 - ssRes / ssTot : NaN, count: n };
}

export interface FrameError {
  frame: number;
  point: number;
  label?: string;
  /** |ΔT⁰| for 'iso'; ‖ΔT²‖ (Euclidean over the five components) for 'aniso'. */
  error: number;
}

/** Frames sorted by their error in the given part, largest first (at most `limit`). */
export function worstFrames(points: readonly ParityPointJ[], part: ParityPart, limit = 10): FrameError[] {
  const out: FrameError[] = [];
  points.forEach((p, i) => {
    checkPoint(p, i);
    let e: number;
    if (part === 'iso') e = Math.abs(p.predicted[0] - p.reference[0]);
    else {
      let s = 0;
      for (let k = 1; k < 6; k++) s += (p.predicted[k] - p.reference[k]) ** 2;
      e = Math.sqrt(s);
    }
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
