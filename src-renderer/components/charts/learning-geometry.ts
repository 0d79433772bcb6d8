// Geometry of the learning curve: one line per (route, part) with the chosen error figure against the
// training-set size, and log-axis ranges padded by a fraction of a decade. Non-positive values cannot be drawn
// on a log axis: they are left out and counted, so the chart can say so.
import type { ErrorFiguresJ } from '../../../src-main/api/contract.ts';

export type CurveMetric = 'percent' | 'rmse';
export type CurvePart = 'iso' | 'aniso';

export interface LearningCurveInput {
  /** 'cm' or 'direct' (or any name). */
  route: string;
  label?: string;
  /** spread: standard deviations over repeated random splits (drawn as error bars). */
  learningCurve: { trainSize: number; errors: ErrorFiguresJ; spread?: Record<'percentIso' | 'percentAniso' | 'rmseIso' | 'rmseAniso', number>; repeats?: number }[];
}

export interface CurveLine {
  route: string;
  label: string;
  part: CurvePart;
  /** Index of the curve in the input (for its colour). */
  curve: number;
  /** sd: spread over the repeated splits (0 or absent with one split). */
  points: { n: number; value: number; sd?: number }[];
}

export function metricOf(e: ErrorFiguresJ, part: CurvePart, metric: CurveMetric): number {
  if (metric === 'percent') return part === 'iso' ? e.percentIso : e.percentAniso;
  return part === 'iso' ? e.rmseIso : e.rmseAniso;
}

/** Lines to draw, sorted by training-set size; `skipped` counts values that are not positive and finite. */
export function learningLines(
  curves: readonly LearningCurveInput[],
  metric: CurveMetric,
  parts: readonly CurvePart[] = ['iso', 'aniso'],
): { lines: CurveLine[]; skipped: number } {
  const lines: CurveLine[] = [];
  let skipped = 0;
  curves.forEach((c, k) => {
    for (const part of parts) {
      const points: CurveLine['points'] = [];
      for (const p of c.learningCurve) {
        const v = metricOf(p.errors, part, metric);
        const sd = p.spread ? metricOf({ ...p.errors, ...p.spread }, part, metric) : undefined;
        if (p.trainSize > 0 && v > 0 && Number.isFinite(v)) points.push({ n: p.trainSize, value: v, ...(sd !== undefined && sd > 0 ? { sd } : {}) });
        else skipped++;
      }
      points.sort((a, b) => a.n - b.n);
      lines.push({ route: c.route, label: c.label ?? routeName(c.route), part, curve: k, points });
    }
  });
  return { lines, skipped };
}

export function routeName(route: string): string {
  if (route === 'cm') return 'route via α_CM (Clausius–Mossotti)';
  if (route === 'direct') return 'route: ε learnt directly';
  return route;
}

/** [lo, hi] for a log axis holding every value, widened by `padDecades` on each side. */
export function logDomain(values: readonly number[], padDecades = 0.08): [number, number] {
  const pos = values.filter((v) => v > 0 && Number.isFinite(v));
  if (pos.length === 0) return [1, 10];
  let lo = Math.log10(Math.min(...pos));
  let hi = Math.log10(Math.max(...pos));
  if (hi - lo < 0.3) {
    const mid = 0.5 * (hi + lo);
    lo = mid - 0.15;
    hi = mid + 0.15;
  }
  return [10 ** (lo - padDecades), 10 ** (hi + padDecades)];
}

/** Slope of log(value) against log(n) by least squares (the learning rate); NaN with fewer than 2 points. */
export function logLogSlope(points: readonly { n: number; value: number }[]): number {
  if (points.length < 2) return NaN;
  const xs = points.map((p) => Math.log(p.n));
  const ys = points.map((p) => Math.log(p.value));
  const mx = xs.reduce((a, b) => a + b, 0) / xs.length;
  const my = ys.reduce((a, b) => a + b, 0) / ys.length;
  let sxy = 0;
  let sxx = 0;
  for (let i = 0; i < xs.length; i++) {
    sxy += (xs[i] - mx) * (ys[i] - my);
    sxx += (xs[i] - mx) ** 2;
  }
  return sxx > 0 ? sxy / sxx : NaN;
}
