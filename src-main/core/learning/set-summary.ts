// The summary of a predicted set of frames (the window's Transfer view): mean ε, its principal refractive indices
// and birefringence, each with the model error bar, beside the same figures of the reference tensors where the
// file has them. The model error bar of a mean over frames of one set is the mean of the frames' error bars: model
// errors of similar frames are correlated, so they do not shrink as 1/√N (docs/learning-engine.md, "Error bars").
import type { Mat3 } from '../geometry/frame.ts';
import type { TensorErrorBars } from './model-types.ts';
import { isotropicMean, symmetricEigen } from '../dielectric/tensor.ts';

export interface OpticsFigures {
  epsIso: number;
  /** Principal refractive indices of the mean ε, ascending. */
  n: [number, number, number];
  /** n_3 − n_1. */
  dn: number;
}

export interface SetSummary {
  frames: number;
  /** Mean ε over the frames. */
  meanEps: number[];
  predicted: OpticsFigures;
  /** Mean of the frames' model error bars; null when any frame has none (model without calibration). */
  errorBars: TensorErrorBars | null;
  /** The same figures of the mean reference ε, over the frames that have one (null when none has). */
  reference: (OpticsFigures & { frames: number }) | null;
  framesOutside: number;
}

function optics(mean: Mat3): OpticsFigures {
  const v = symmetricEigen(mean).values;
  const n = [0, 1, 2].map((k) => Math.sqrt(Math.max(v[k], 0))) as [number, number, number];
  return { epsIso: isotropicMean(mean), n, dn: n[2] - n[0] };
}

function meanOf(ts: ArrayLike<number>[]): Float64Array {
  const m = new Float64Array(9);
  for (const t of ts) for (let i = 0; i < 9; i++) m[i] += t[i] / ts.length;
  return m;
}

export function setSummary(frames: { eps: ArrayLike<number>; errorBars?: TensorErrorBars | null; reference?: ArrayLike<number> | null; outside: boolean }[]): SetSummary {
  if (frames.length === 0) throw new RangeError('setSummary: no frames');
  const mean = meanOf(frames.map((f) => f.eps));
  let errorBars: TensorErrorBars | null = null;
  if (frames.every((f) => f.errorBars)) {
    const avg = (get: (e: TensorErrorBars) => number) => frames.reduce((s, f) => s + get(f.errorBars as TensorErrorBars), 0) / frames.length;
    errorBars = {
      epsIso: avg((e) => e.epsIso),
      epsPrincipal: [0, 1, 2].map((k) => avg((e) => e.epsPrincipal[k])) as [number, number, number],
      n: [0, 1, 2].map((k) => avg((e) => e.n[k])) as [number, number, number],
      dn: avg((e) => e.dn),
      alphaCmIso: avg((e) => e.alphaCmIso),
    };
  }
  const refs = frames.map((f) => f.reference).filter((r): r is ArrayLike<number> => !!r && r.length === 9);
  return {
    frames: frames.length,
    meanEps: Array.from(mean),
    predicted: optics(mean),
    errorBars,
    reference: refs.length ? { ...optics(meanOf(refs)), frames: refs.length } : null,
    framesOutside: frames.filter((f) => f.outside).length,
  };
}
