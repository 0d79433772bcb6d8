// State points of a data set, and the errors of a validation within and across them. When the frames come
// from several state points (temperatures, densities, phases), the spread of the reference is mostly the
// difference between state points, and "RMSE as a % of the spread" flatters a model that only learns that
// difference. The fair headline figure is the error relative to the spread *within* a state point (the pooled
// within-group standard deviation); the per-state-point errors and the overall figure follow it.
//
// State points are found, in order: a per-frame property `state_point` (text or number) with at least two
// values; else clusters of the number density (atoms/Å³) separated by gaps larger than DENSITY_GAP of the
// density (an NVT or NPT run of one state point fluctuates far less; common practice, no source).
// Pure and browser-safe.
import { errorFigures } from './error-figures.ts';
import type { ErrorFigures, StatePointErrors } from './model-types.ts';

export type { StatePointErrors };

/** The per-frame property naming a frame's state point. */
export const STATE_POINT_KEY = 'state_point';
/** Relative gap in number density that separates two state points. */
export const DENSITY_GAP = 0.01;

export interface StatePoints {
  /** How the groups were found. */
  source: 'property' | 'density';
  /** The property's key, or a description of the density clusters. */
  what: string;
  /** Group label per frame (same order as the frames given). */
  labels: string[];
}

/** The minimal frame the grouping needs (a core Frame fits). */
interface FrameLike {
  info: Record<string, unknown>;
  species: ArrayLike<unknown>;
}

/**
 * The state points of the frames, or null when they form one (or each frame would be its own). `volumes` are
 * the cell volumes in Å³ (0 for open structures: no density clusters then).
 */
export function statePointsOf(frames: readonly FrameLike[], volumes: readonly number[]): StatePoints | null {
  const n = frames.length;
  if (n < 4) return null;
  const tags = frames.map((f) => f.info[STATE_POINT_KEY]);
  if (tags.every((t) => typeof t === 'string' || typeof t === 'number')) {
    const labels = tags.map(String);
    if (usable(labels)) return { source: 'property', what: STATE_POINT_KEY, labels };
  }
  if (volumes.some((v) => !(v > 0))) return null;
  const density = frames.map((f, i) => f.species.length / volumes[i]);
  const order = density.map((_, i) => i).sort((a, b) => density[a] - density[b]);
  const labels = new Array<string>(n);
  const bounds: [number, number][] = [];
  let lo = density[order[0]];
  let prev = lo;
  for (const i of order) {
    if (density[i] - prev > DENSITY_GAP * prev) {
      bounds.push([lo, prev]);
      lo = density[i];
    }
    prev = density[i];
    labels[i] = '';
  }
  bounds.push([lo, prev]);
  if (bounds.length < 2) return null;
  const name = ([a, b]: [number, number]) => (Math.abs(b - a) < 1e-6 * b ? `ρ ${(a * 1000).toPrecision(4)}` : `ρ ${(a * 1000).toPrecision(4)}–${(b * 1000).toPrecision(4)}`) + ' /nm³';
  for (let i = 0; i < n; i++) {
    const k = bounds.findIndex(([a, b]) => density[i] >= a && density[i] <= b);
    labels[i] = name(bounds[k]);
  }
  if (!usable(labels)) return null;
  return { source: 'density', what: `number density (clusters separated by more than ${100 * DENSITY_GAP} %)`, labels };
}

/** At least two groups, and at least two frames in each (one frame has no spread of its own). */
function usable(labels: string[]): boolean {
  const counts = new Map<string, number>();
  for (const l of labels) counts.set(l, (counts.get(l) ?? 0) + 1);
  return counts.size >= 2 && [...counts.values()].every((c) => c >= 2);
}


/**
 * Errors within and per state point of paired irreducible 6-vectors (one pair a frame; `labels` per pair).
 * Within: each state point's mean reference is taken off both reference and prediction (the RMSE is unchanged,
 * the spread becomes the pooled within-state standard deviation).
 */
export function statePointErrors(reference: ArrayLike<number>[], predicted: ArrayLike<number>[], points: Pick<StatePoints, 'source' | 'what'>, labels: string[]): StatePointErrors | null {
  const groups = [...new Set(labels)].sort();
  if (groups.length < 2) return null;
  const means = new Map<string, Float64Array>();
  for (const g of groups) {
    const idx = labels.flatMap((l, i) => (l === g ? [i] : []));
    const m = new Float64Array(6);
    for (const i of idx) for (let k = 0; k < 6; k++) m[k] += reference[i][k] / idx.length;
    means.set(g, m);
  }
  const shift = (v: ArrayLike<number>, i: number) => Float64Array.from({ length: 6 }, (_, k) => v[k] - (means.get(labels[i]) as Float64Array)[k]);
  return {
    source: points.source,
    what: points.what,
    within: errorFigures(reference.map(shift), predicted.map(shift)),
    groups: groups.map((g) => {
      const idx = labels.flatMap((l, i) => (l === g ? [i] : []));
      return { label: g, errors: errorFigures(idx.map((i) => reference[i]), idx.map((i) => predicted[i])) };
    }),
  };
}

/** The figures to lead with and to judge by: within the state points when there are several, else overall. */
export function headlineErrors(report: { errors: ErrorFigures; statePoints?: StatePointErrors | null }): { errors: ErrorFigures; what: string } {
  return report.statePoints
    ? { errors: report.statePoints.within, what: 'within state points, relative to the spread within each' }
    : { errors: report.errors, what: 'over all frames' };
}
