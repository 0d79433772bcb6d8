// Frames and predictions as the window sees them: plain JSON (number[] instead of typed arrays), made at the
// API boundary; everything behind it stays typed.
import type { ApplicabilityJ, ComponentJ, FramePredictionJ, FrameView, Mat3J, TrajectoryStats } from '../api/contract.ts';
import { opticalStats, tensorStats } from '../core/trajectory/trajectory-summary.ts';
import { runningMean } from '../core/trajectory/statistics.ts';
import { cellVolume } from '../core/geometry/cell.ts';
import type { Frame, Mat3 } from '../core/geometry/frame.ts';
import type { Applicability, FramePrediction, TensorPrediction } from '../core/learning/model-types.ts';
import { refractiveIndices } from '../core/dielectric/clausius-mossotti.ts';
import { isIsolated } from '../core/learning/targets.ts';

export function matJ(m: ArrayLike<number>): Mat3J {
  return Array.from(m);
}

export function frameVolume(frame: Frame): number | null {
  if (!frame.cell || !frame.pbc.every(Boolean)) return null;
  return cellVolume(frame.cell, { file: frame.source?.file, frame: frame.source?.index });
}

export function frameView(datasetId: string, index: number, frame: Frame): FrameView {
  return {
    datasetId,
    index,
    species: [...frame.species],
    positions: Array.from(frame.positions),
    // a frame without periodicity (an isolated molecule or cluster, even with a Lattice drawn around it) has no
    // cell: the 3D view draws no cell box and finds no bonds through periodic images
    cell: frame.cell && !isIsolated(frame) ? matJ(frame.cell) : null,
    pbc: [...frame.pbc],
    volumeA3: frameVolume(frame),
    info: Object.fromEntries(Object.entries(frame.info).map(([k, v]) => [k, Array.isArray(v) ? [...v] : v])),
    source: frame.source ? { ...frame.source } : null,
  };
}

function applicabilityJ(a: Applicability): ApplicabilityJ {
  return { maxDistance: a.maxDistance, threshold: a.threshold, atomsOutside: a.atomsOutside, variance: a.variance, outside: a.outside, score: a.score, fractionOutside: a.fractionOutside, reasons: a.reasons };
}

/**
 * A frame's prediction as the window sees it (the API boundary: typed arrays become number[]). An isolated
 * molecule or cluster keeps its polarisability only: ε, n and Δn are not defined for it. `reference`: the frame's
 * reference as compared (core/learning/targets.ts comparedReferenceOf: ε, or α in Å³ for an isolated frame).
 */
export function predictionJ(fp: TensorPrediction, frame: number, reference: Mat3 | null): FramePredictionJ {
  const applicability = applicabilityJ(fp.applicability);
  const ref = reference ? matJ(reference) : null;
  if (fp.isolated) return { isolated: true, frame, alphaMol: matJ(fp.alphaMol), alphaIsoSd: fp.alphaIsoSd, applicability, reference: ref };
  return {
    frame,
    volumeA3: fp.volumeA3,
    eps: matJ(fp.eps),
    alphaCM: matJ(fp.alphaCM),
    alphaC: matJ(fp.alphaC),
    refractive: Array.from(refractiveIndices(fp.eps, { frame }).indices),
    applicability,
    errorBars: fp.errorBars,
    reference: ref,
  };
}

/** Back from the window's JSON (a saved project) to a typed prediction. */
export function predictionFromJ(f: FramePredictionJ, local: number[], atomDistance: number[], atomScore: number[] = []): TensorPrediction {
  const a = f.applicability;
  const applicability: Applicability = { atomDistance: Float64Array.from(atomDistance), maxDistance: a.maxDistance, threshold: a.threshold, atomsOutside: a.atomsOutside, variance: a.variance, outside: a.outside, atomScore: Float64Array.from(atomScore), score: a.score ?? NaN, fractionOutside: a.fractionOutside ?? NaN, reasons: a.reasons ?? [] };
  if (f.isolated) return { isolated: true, alphaMol: Float64Array.from(f.alphaMol), local: Float64Array.from(local), applicability, alphaIsoSd: f.alphaIsoSd ?? null };
  return {
    volumeA3: f.volumeA3,
    alphaCM: Float64Array.from(f.alphaCM),
    alphaC: Float64Array.from(f.alphaC),
    eps: Float64Array.from(f.eps),
    local: Float64Array.from(local),
    applicability,
    errorBars: f.errorBars ?? null,
  };
}

/**
 * A predicted trajectory's statistics for the window: the functions and settings of `polarweave analyse`
 * (tensorStats, opticalStats of core/trajectory/trajectory-summary.ts, DEFAULT_MIN_BLOCKS), as JSON.
 */
export function trajectoryStatsJ(predictionId: string, frames: number[], predictions: readonly FramePrediction[]): TrajectoryStats {
  const n = predictions.length;
  const eps = new Float64Array(9 * n);
  predictions.forEach((p, f) => eps.set(p.eps, 9 * f));
  const t = tensorStats(eps);
  const o = opticalStats(eps);
  const comps = ['xx', 'yy', 'zz', 'xy', 'xz', 'yz'] as const;
  const slot = { xx: 0, yy: 4, zz: 8, xy: 1, xz: 2, yz: 5 } as const;
  const series = (c: ComponentJ) => predictions.map((p) => p.eps[slot[c]]);
  const stat = (c: ComponentJ) => t.components.find((x) => x.component === c)!.stats;
  const per = <T>(f: (c: ComponentJ) => T) => Object.fromEntries(comps.map((c) => [c, f(c)])) as Record<ComponentJ, T>;
  const iso = predictions.map((p) => (p.eps[0] + p.eps[4] + p.eps[8]) / 3);
  const three = <T>(f: (k: number) => T): [T, T, T] => [f(0), f(1), f(2)];
  return {
    predictionId,
    frames: [...frames],
    components: per(series),
    runningComponents: per((c) => Array.from(runningMean(series(c)))),
    refractive: three((k) => Array.from(o.series[k])),
    runningRefractive: three((k) => Array.from(runningMean(o.series[k]))),
    runningMeanIso: Array.from(runningMean(iso)),
    mean: { ...per((c) => ({ value: stat(c).mean, error: stat(c).standardError })), iso: { value: t.iso.mean, error: t.iso.standardError } },
    blocking: t.iso.levels.map((l) => ({ blockSize: l.blockSize, error: l.standardError })),
    meanRefractive: [...o.n],
    refractiveError: [...o.nErrors],
    birefringence: o.birefringence,
    birefringenceError: o.birefringenceError,
    anisotropy: { value: t.anisotropy, error: Number.isFinite(t.anisotropyError) ? t.anisotropyError : null },
    unresolved: o.unresolved.map(([i, j]) => [i, j] as [number, number]),
    method: o.method,
  };
}
