// The summary of a predicted set of frames (the window's Transfer view): mean ε, its principal refractive indices
// and birefringence, each with the model error bar, beside the same figures of the reference tensors where the
// file has them. The model error bar of a mean over frames of one set is the mean of the frames' error bars: model
// errors of similar frames are correlated, so they do not shrink as 1/√N (docs/learning-engine.md, "Error bars").
// The figures come from running sums (SetSums) so that a streamed run over any number of frames, in batches, in
// worker threads, resumed after an interruption, gives the numbers the window gives for the same frames.
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

function optics(mean: ArrayLike<number>): OpticsFigures {
  const m = Float64Array.from(mean) as Mat3;
  const v = symmetricEigen(m).values;
  const n = [0, 1, 2].map((k) => Math.sqrt(Math.max(v[k], 0))) as [number, number, number];
  return { epsIso: isotropicMean(m), n, dn: n[2] - n[0] };
}

/** One predicted frame as the summary sees it. */
export interface SetFrame {
  eps: ArrayLike<number>;
  errorBars?: TensorErrorBars | null;
  reference?: ArrayLike<number> | null;
  outside: boolean;
}

/** Running sums over predicted frames (plain JSON: a checkpoint keeps them, a worker sends them). */
export interface SetSums {
  frames: number;
  /** Σ ε (9). */
  eps: number[];
  /** Frames with error bars, and the sums of their figures: ε_iso, ε_1..3, n_1..3, Δn, α_CM iso. */
  withBars: number;
  bars: number[];
  /** Frames with a reference ε, and Σ reference ε (9). */
  withReference: number;
  reference: number[];
  outside: number;
}

export function emptySums(): SetSums {
  return { frames: 0, eps: new Array(9).fill(0), withBars: 0, bars: new Array(9).fill(0), withReference: 0, reference: new Array(9).fill(0), outside: 0 };
}

function barFigures(e: TensorErrorBars): number[] {
  return [e.epsIso, ...e.epsPrincipal, ...e.n, e.dn, e.alphaCmIso];
}

/** Add one frame to the sums (in place; returns them). */
export function addToSums(s: SetSums, f: SetFrame): SetSums {
  s.frames++;
  for (let i = 0; i < 9; i++) s.eps[i] += f.eps[i];
  if (f.errorBars) {
    s.withBars++;
    const b = barFigures(f.errorBars);
    for (let i = 0; i < b.length; i++) s.bars[i] += b[i];
  }
  if (f.reference && f.reference.length === 9) {
    s.withReference++;
    for (let i = 0; i < 9; i++) s.reference[i] += f.reference[i];
  }
  if (f.outside) s.outside++;
  return s;
}

/** Whether a value read back (a checkpoint) has the shape of SetSums. */
export function isSetSums(v: unknown): v is SetSums {
  const s = v as SetSums;
  const nine = (x: unknown) => Array.isArray(x) && x.length === 9 && x.every((y) => typeof y === 'number' && Number.isFinite(y));
  return !!s && typeof s === 'object' && [s.frames, s.withBars, s.withReference, s.outside].every((x) => Number.isInteger(x) && x >= 0) && nine(s.eps) && nine(s.bars) && nine(s.reference);
}

/** The summary of the frames added to the sums; null when there are none. */
export function summaryOfSums(s: SetSums): SetSummary | null {
  if (s.frames === 0) return null;
  const mean = s.eps.map((x) => x / s.frames);
  let errorBars: TensorErrorBars | null = null;
  if (s.withBars === s.frames) {
    const b = s.bars.map((x) => x / s.frames);
    errorBars = { epsIso: b[0], epsPrincipal: [b[1], b[2], b[3]], n: [b[4], b[5], b[6]], dn: b[7], alphaCmIso: b[8] };
  }
  return {
    frames: s.frames,
    meanEps: mean,
    predicted: optics(mean),
    errorBars,
    reference: s.withReference ? { ...optics(s.reference.map((x) => x / s.withReference)), frames: s.withReference } : null,
    framesOutside: s.outside,
  };
}

export function setSummary(frames: SetFrame[]): SetSummary {
  if (frames.length === 0) throw new RangeError('setSummary: no frames');
  return summaryOfSums(frames.reduce(addToSums, emptySums())) as SetSummary;
}
