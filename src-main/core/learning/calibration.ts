// Calibrated error bars of a model's predictions (science notes §8). The model's raw uncertainty of a frame is the
// leverage h = φᵀ(ΦᵀΦ + λI)⁻¹φ of its λ=0 design row (the GP latent variance divided by the noise variance: how
// far the frame's environments lie from what training pinned down; it grows with the number of atoms as an
// extensive quantity's error should). Every part gets ONE factor c_part, from the held-out folds of the
// cross-validation that training already runs: c = mean over held-out rows of (prediction − reference)² / h, so
// the held-out z-scores z = Δ/√(c·h) have RMS 1. The calibrated variance of each irreducible component of the part
// is then c·h (units of the learnt target²). What is neglected: correlations between the λ=0 and λ=2 parts (learnt
// separately) and between the 2λ+1 components of one part (taken as independent and equal, which keeps the error
// bar rotation-invariant); the λ>0 parts borrow the λ=0 leverage instead of their own posterior, which would need
// the λ>0 features that prediction never forms (docs/learning-engine.md, "Error bars").
import type { Order } from './kernels.ts';

export interface PartCalibration {
  order: Order;
  /** c: calibrated variance of every component of the part = c × leverage (units of the learnt target²). */
  varianceScale: number;
  /** RMS of the held-out z-scores of the model's raw posterior (λ=0 part only; null for other parts). */
  rmsZRaw: number | null;
  /** Fraction of the held-out |z| ≤ 1 and ≤ 2 after calibration (≈ 0.68 and 0.95 for Gaussian errors). */
  within1: number;
  within2: number;
  /** Number of held-out values (frames × components). */
  values: number;
}

export interface Calibration {
  /** How the factors were obtained, in words. */
  rule: string;
  folds: number;
  frames: number;
  parts: PartCalibration[];
}

/** Held-out figures of one part: errors per row, leverage per row, raw noise variance (λ=0) or null. */
export function calibratePart(order: Order, errors: ArrayLike<number>, leverage: ArrayLike<number>, rawNoise: number | null): PartCalibration | null {
  let sum = 0;
  let rawSum = 0;
  let n = 0;
  for (let r = 0; r < errors.length; r++) {
    const e = errors[r];
    const h = leverage[r];
    if (!Number.isFinite(e) || !(h > 0)) continue;
    sum += (e * e) / h;
    if (rawNoise !== null && rawNoise > 0) rawSum += (e * e) / (rawNoise * h);
    n++;
  }
  if (n === 0 || !(sum > 0)) return null;
  const c = sum / n;
  let w1 = 0;
  let w2 = 0;
  for (let r = 0; r < errors.length; r++) {
    const h = leverage[r];
    if (!Number.isFinite(errors[r]) || !(h > 0)) continue;
    const z = Math.abs(errors[r]) / Math.sqrt(c * h);
    if (z <= 1) w1++;
    if (z <= 2) w2++;
  }
  return { order, varianceScale: c, rmsZRaw: rawNoise !== null && rawNoise > 0 ? Math.sqrt(rawSum / n) : null, within1: w1 / n, within2: w2 / n, values: n };
}

/** Figures of z-scores: RMS, fraction within 1 and 2. */
export interface ZFigures {
  rmsZ: number;
  within1: number;
  within2: number;
  count: number;
}

export function zFigures(z: ArrayLike<number>): ZFigures {
  let s = 0;
  let w1 = 0;
  let w2 = 0;
  let n = 0;
  for (let i = 0; i < z.length; i++) {
    const v = z[i];
    if (!Number.isFinite(v)) continue;
    s += v * v;
    if (Math.abs(v) <= 1) w1++;
    if (Math.abs(v) <= 2) w2++;
    n++;
  }
  return { rmsZ: n ? Math.sqrt(s / n) : NaN, within1: n ? w1 / n : NaN, within2: n ? w2 / n : NaN, count: n };
}

/**
 * How well the error bars held on frames the models never saw (outer cross-validation of `validate`): z-scores
 * of each part of the learnt target (λ=0; λ=2 per component, or λ=1 for a vector), and of ε_iso after the
 * propagation through Clausius–Mossotti (tensors). RMS z near 1 and about 68 % within |z| ≤ 1 mean calibrated.
 */
export interface ErrorBarCheck {
  parts: { order: Order; z: ZFigures }[];
  epsIso: ZFigures | null;
  /** Held-out frames whose model had no calibration (fewer than 3 training frames): not counted. */
  uncalibrated: number;
}

/** Collects held-out z-scores part by part (the irreducible layout of the learnt target). */
export class ZCollector {
  private readonly z = new Map<Order, number[]>();
  private readonly eps: number[] = [];
  private missing = 0;
  constructor(private readonly layout: { order: Order; offset: number }[]) {}
  add(reference: ArrayLike<number>, predicted: ArrayLike<number>, sd: ArrayLike<number> | null, eps?: { reference: number; predicted: number; sd: number }): void {
    if (!sd) {
      this.missing++;
      return;
    }
    for (const { order, offset } of this.layout) {
      const list = this.z.get(order) ?? [];
      for (let mu = 0; mu < 2 * order + 1; mu++) list.push((predicted[offset + mu] - reference[offset + mu]) / sd[offset + mu]);
      this.z.set(order, list);
    }
    if (eps) this.eps.push((eps.predicted - eps.reference) / eps.sd);
  }
  result(): ErrorBarCheck | null {
    if (this.z.size === 0) return null;
    return {
      parts: this.layout.map(({ order }) => ({ order, z: zFigures(this.z.get(order) ?? []) })),
      epsIso: this.eps.length ? zFigures(this.eps) : null,
      uncalibrated: this.missing,
    };
  }
}
