// The orthonormal radial basis R_n(r), n = 0…nmax−1, on [0, r_c] of the density expansion (science notes §4).
//
// Choice: Gram–Schmidt orthonormalisation, in the r² dr inner product on [0, r_c], of the polynomials
// (r_c − r)^(n+2). With u = (r_c − r)/r_c the span of {u^(n+2)} is u²·{polynomials of degree < nmax}, and
// ∫ r² f g dr = r_c³ ∫ (1−u)² f g du, so Gram–Schmidt (in the order n = 0, 1, …, leading coefficient positive)
// gives exactly
//     R_n(r) = r_c^(−3/2) · u² · P_n^(2,4)(2u − 1) / √N_n,
// with P_n^(α,β) the Jacobi polynomials (orthogonal for the weight (1−t)^α (1+t)^β on [−1, 1]) and
//     N_n = (n+2)! (n+4)! / ((2n+7) (n+6)! n!)        (the Jacobi norm, DLMF 18.3, mapped to [0, 1]).
// The three-term recurrence (DLMF 18.9.1) is well conditioned, unlike a Löwdin or Gram–Schmidt step on the
// (Hilbert-like) overlap matrix of the raw powers, which loses ~10 digits at nmax = 8. Every R_n vanishes with
// zero slope at r_c (factor u²), and the first k functions span the same space for any nmax ≥ k, so a smaller
// radial set is a true subset (used for the tensor features).

const ALPHA = 2;
const BETA = 4;

function logFactorial(n: number): number {
  let s = 0;
  for (let k = 2; k <= n; k++) s += Math.log(k);
  return s;
}

/** 1/√N_n for n = 0…nmax−1, times r_c^(−3/2). */
function normalisers(nmax: number, cutoff: number): Float64Array {
  const out = new Float64Array(nmax);
  for (let n = 0; n < nmax; n++) {
    const logN = logFactorial(n + 2) + logFactorial(n + 4) - Math.log(2 * n + 7) - logFactorial(n + 6) - logFactorial(n);
    out[n] = Math.exp(-0.5 * logN) * Math.pow(cutoff, -1.5);
  }
  return out;
}

export interface RadialBasis {
  nmax: number;
  cutoff: number;
  /** Writes R_0(r)…R_{nmax−1}(r) into out (zero for r ≥ r_c or r < 0). */
  evaluate(r: number, out: Float64Array): void;
}

/** The orthonormal basis described in the header, for nmax functions on [0, cutoff]. */
export function radialBasis(nmax: number, cutoff: number): RadialBasis {
  if (!Number.isInteger(nmax) || nmax < 1) throw new RangeError(`radialBasis: nmax must be a positive integer, got ${nmax}`);
  if (!(cutoff > 0) || !Number.isFinite(cutoff)) throw new RangeError(`radialBasis: cutoff must be positive, got ${cutoff}`);
  const norm = normalisers(nmax, cutoff);
  const a = ALPHA;
  const b = BETA;
  return {
    nmax,
    cutoff,
    evaluate(r: number, out: Float64Array): void {
      if (!(r >= 0) || r >= cutoff) {
        out.fill(0, 0, nmax);
        return;
      }
      const u = (cutoff - r) / cutoff;
      const t = 2 * u - 1;
      const u2 = u * u;
      let pPrev = 1;
      out[0] = u2 * norm[0];
      if (nmax === 1) return;
      let p = a + 1 + ((a + b + 2) * (t - 1)) / 2;
      out[1] = u2 * p * norm[1];
      for (let n = 2; n < nmax; n++) {
        const s = 2 * n + a + b;
        const next = ((s - 1) * (s * (s - 2) * t + a * a - b * b) * p - 2 * (n + a - 1) * (n + b - 1) * s * pPrev) / (2 * n * (n + a + b) * (s - 2));
        pPrev = p;
        p = next;
        out[n] = u2 * p * norm[n];
      }
    },
  };
}
