// Kept reference versions of the hot kernels of featurisation and prediction, as they were before they were
// register-blocked or restructured for speed (issue 16): plain loops, one number at a time. The tests check the
// fast kernels against these (bit for bit where the summation order is kept, to 1e-12 relative where it had to
// change), and `npm run bench -- kernels` times both side by side on the same inputs. Do not optimise this file.
import { normalise, type Plan, type TensorPlan } from '../../src-main/core/descriptors/features.ts';
import type { ReadoutScratch } from '../../src-main/core/learning/tensor-readout.ts';

/** The read-out of one environment (tensor-readout.ts readOne) with the plain loops of its first version. */
export function referenceReadOne(P: Plan, T: TensorPlan, c: Float64Array, W: Float64Array, S: ReadoutScratch, y: Float64Array, at: number): void {
  const tch = P.tch;
  const nM = 2 * T.lambda + 1;
  for (let l = 0; l < S.ct.length; l++) {
    const w = 2 * l + 1;
    const ct = S.ct[l];
    const base = P.tensorBase[l];
    for (let k = 0; k < tch; k++) {
      const o = base[k];
      for (let m = 0; m < w; m++) ct[m * tch + k] = c[o + m];
    }
    const g = S.gram[l];
    for (let m = 0; m < w; m++) {
      for (let n = m; n < w; n++) {
        let s = 0;
        for (let k = 0; k < tch; k++) s += ct[m * tch + k] * ct[n * tch + k];
        g[m * w + n] = s;
        g[n * w + m] = s;
      }
    }
  }
  for (let mu = 0; mu < nM; mu++) y[at + mu] = 0;
  let norm2 = 0;
  const { left, both } = S;
  for (let b = 0; b < T.blocks.length; b++) {
    const blk = T.blocks[b];
    const w1 = 2 * blk.l + 1, w2 = 2 * blk.l2 + 1;
    const a = S.ct[blk.l], bt = S.ct[blk.l2];
    const wb = b * tch * tch;
    const upper = blk.l === blk.l2;
    left.fill(0, 0, w1 * tch);
    for (let m = 0; m < w1; m++) {
      const lo = m * tch;
      for (let c1 = 0; c1 < tch; c1++) {
        const x = a[lo + c1];
        if (x === 0) continue;
        const wo = wb + c1 * tch;
        for (let c2 = upper ? c1 : 0; c2 < tch; c2++) left[lo + c2] += x * W[wo + c2];
      }
    }
    for (let m = 0; m < w1; m++) {
      for (let m2 = 0; m2 < w2; m2++) {
        let s = 0;
        for (let k = 0; k < tch; k++) s += left[m * tch + k] * bt[m2 * tch + k];
        both[m * w2 + m2] = s;
      }
    }
    const { muStart, e1, e2, ev } = blk;
    const ga = S.gram[blk.l], gb = S.gram[blk.l2];
    let blockNorm = 0;
    for (let mu = 0; mu < nM; mu++) {
      let s = 0;
      for (let k = muStart[mu]; k < muStart[mu + 1]; k++) {
        s += ev[k] * both[e1[k] * w2 + e2[k]];
        const ra = e1[k] * w1, rb = e2[k] * w2;
        let t = 0.5 * ev[k] * ga[ra + e1[k]] * gb[rb + e2[k]];
        for (let k2 = muStart[mu]; k2 < k; k2++) t += ev[k2] * ga[ra + e1[k2]] * gb[rb + e2[k2]];
        blockNorm += 2 * ev[k] * t;
      }
      y[at + mu] += s;
    }
    norm2 += blk.l === blk.l2 ? blockNorm : 2 * blockNorm;
  }
  if (norm2 > 0 && Number.isFinite(norm2)) {
    const inv = 1 / Math.sqrt(norm2);
    for (let mu = 0; mu < nM; mu++) y[at + mu] *= inv;
  } else {
    for (let mu = 0; mu < nM; mu++) y[at + mu] = 0;
  }
}

/** The λ = 0 row of one environment (features.ts powerSpectrum), pair by pair with one sum at a time. */
export function referencePowerSpectrum(P: Plan, c: Float64Array, out: Float64Array, at: number): number {
  const { p1, p2, pw, invSqrt, LL } = P;
  const lmax = P.settings.lmax;
  const L1 = lmax + 1;
  let f = at;
  for (let k = 0; k < p1.length; k++) {
    const A = p1[k] * LL, B = p2[k] * LL;
    const w = pw[k];
    for (let l = 0; l <= lmax; l++) {
      const lo = l * l, hi = lo + 2 * l + 1;
      let s = 0;
      for (let m = lo; m < hi; m++) s += c[A + m] * c[B + m];
      out[f + l] = w * invSqrt[l] * s;
    }
    f += L1;
  }
  return normalise(out, at, at + P.n0);
}
