// Clebsch–Gordan coefficients ⟨j1 m1; j2 m2 | J M⟩ in the complex (Condon–Shortley) basis by Racah's formula,
// evaluated exactly in rational BigInt arithmetic (the square of a coefficient is rational) and rounded once to
// double, and the coupling coefficients of the REAL harmonics of docs/science-conventions.md, built from them
// through the unitary change of basis U of real-basis.ts.
//
// Racah's formula (e.g. Edmonds, Angular Momentum in Quantum Mechanics, 1957, eq. 3.6.11):
//   ⟨j1 m1 j2 m2|J M⟩ = δ(M, m1+m2) √[(2J+1)(J+j1−j2)!(J−j1+j2)!(j1+j2−J)!/(j1+j2+J+1)!]
//     × √[(J+M)!(J−M)!(j1−m1)!(j1+m1)!(j2−m2)!(j2+m2)!]
//     × Σ_k (−1)^k / [k!(j1+j2−J−k)!(j1−m1−k)!(j2+m2−k)!(J−j2+m1+k)!(J−j1−m2+k)!]
import { realBasisTransform } from './real-basis.ts';

const factorials: bigint[] = [1n];
function factorial(n: number): bigint {
  for (let k = factorials.length; k <= n; k++) factorials.push(factorials[k - 1] * BigInt(k));
  return factorials[n];
}

function bitLength(x: bigint): number {
  return x === 0n ? 0 : x.toString(2).length;
}

/** p/q (positive BigInts) to the nearest double, without overflow for huge operands. */
function ratio(p: bigint, q: bigint): number {
  if (p === 0n) return 0;
  const shift = bitLength(q) - bitLength(p) + 80;
  const scaled = shift >= 0 ? (p << BigInt(shift)) / q : p / (q << BigInt(-shift));
  return Number(scaled) * Math.pow(2, -shift);
}

/** Twice a quantum number as an integer, or a RangeError for values that are not multiples of ½. */
function twice(value: number, name: string): number {
  const t = Math.round(2 * value);
  if (!Number.isFinite(value) || Math.abs(t - 2 * value) > 1e-9) {
    throw new RangeError(`clebschGordan: ${name} = ${value} is not an integer or half-integer`);
  }
  return t;
}

const cgCache = new Map<string, number>();

/**
 * ⟨j1 m1; j2 m2 | J M⟩ (complex basis, Condon–Shortley phase). Arguments are integers or half-integers.
 * Returns 0 for forbidden combinations (M ≠ m1+m2, triangle rule broken, |m| > j, j−m not integral).
 */
export function clebschGordan(j1: number, m1: number, j2: number, m2: number, J: number, M: number): number {
  const a = twice(j1, 'j1'), am = twice(m1, 'm1'), b = twice(j2, 'j2'), bm = twice(m2, 'm2');
  const c = twice(J, 'J'), cm = twice(M, 'M');
  if (a < 0 || b < 0 || c < 0) throw new RangeError(`clebschGordan: negative angular momentum (${j1}, ${j2}, ${J})`);
  if (am + bm !== cm) return 0;
  if (Math.abs(am) > a || Math.abs(bm) > b || Math.abs(cm) > c) return 0;
  if ((a - am) % 2 !== 0 || (b - bm) % 2 !== 0 || (c - cm) % 2 !== 0) return 0;
  if (c < Math.abs(a - b) || c > a + b || (a + b + c) % 2 !== 0) return 0;
  const key = `${a},${am},${b},${bm},${c}`;
  const hit = cgCache.get(key);
  if (hit !== undefined) return hit;

  // Integer arguments of the factorials (all halves of even numbers by now).
  const t1 = (c + a - b) / 2, t2 = (c - a + b) / 2, t3 = (a + b - c) / 2, t4 = (a + b + c) / 2 + 1;
  const f = [(c + cm) / 2, (c - cm) / 2, (a - am) / 2, (a + am) / 2, (b - bm) / 2, (b + bm) / 2];
  // Sum over k: each denominator factor is non-negative.
  const p1 = t3, p2 = (a - am) / 2, p3 = (b + bm) / 2; // (x − k)!
  const q1 = (c - b + am) / 2, q2 = (c - a - bm) / 2; // (y + k)!
  const kmin = Math.max(0, -q1, -q2);
  const kmax = Math.min(p1, p2, p3);
  // Common denominator D: every term's denominator divides it factor by factor.
  const D = factorial(kmax) * factorial(p1 - kmin) * factorial(p2 - kmin) * factorial(p3 - kmin) * factorial(q1 + kmax) * factorial(q2 + kmax);
  let N = 0n;
  for (let k = kmin; k <= kmax; k++) {
    const den = factorial(k) * factorial(p1 - k) * factorial(p2 - k) * factorial(p3 - k) * factorial(q1 + k) * factorial(q2 + k);
    const term = D / den;
    N += k % 2 === 0 ? term : -term;
  }
  let value = 0;
  if (N !== 0n) {
    let num = BigInt(c + 1) * factorial(t1) * factorial(t2) * factorial(t3) * N * N;
    for (const x of f) num *= factorial(x);
    const den = factorial(t4) * D * D;
    value = (N > 0n ? 1 : -1) * Math.sqrt(ratio(num, den));
  }
  cgCache.set(key, value);
  return value;
}

/** Wigner 3j symbol (j1 j2 j3; m1 m2 m3) = (−1)^(j1−j2−m3) (2j3+1)^(−½) ⟨j1 m1; j2 m2 | j3 −m3⟩. */
export function wigner3j(j1: number, j2: number, j3: number, m1: number, m2: number, m3: number): number {
  const cg = clebschGordan(j1, m1, j2, m2, j3, -m3);
  if (cg === 0) return 0;
  const phase = Math.round(j1 - j2 - m3);
  return ((phase % 2 === 0 ? 1 : -1) * cg) / Math.sqrt(2 * j3 + 1);
}

export interface RealCouplingOptions {
  /**
   * For l1+l2+L odd the real-basis coefficients are purely imaginary (the coupled quantity is a pseudo-tensor
   * under inversion). By default such a request is refused; with allowOdd the IMAGINARY PART is returned, i.e.
   * the returned real array K satisfies C_real = i·K. Σ K a b then still transforms with D^L under rotations.
   */
  allowOdd?: boolean;
}

const realCache = new Map<string, Float64Array>();

/**
 * Coupling coefficients of real harmonics: for real coefficient vectors a (degree l1) and b (degree l2) that
 * transform like the real harmonics, ξ_M = Σ_{m1,m2} C[m1,m2,M] a_m1 b_m2 transforms like a degree-L real
 * vector. Flat index (m1+l1)(2l2+1)(2L+1) + (m2+l2)(2L+1) + (M+L). Cached per (l1, l2, L): do not modify.
 *
 * Built as C_real[m1,m2,M] = Σ U_L[M,M'] conj(U_l1[m1,m1']) conj(U_l2[m2,m2']) ⟨l1 m1'; l2 m2' | L M'⟩
 * (a_complex = U† a_real, ξ_real = U ξ_complex).
 */
export function realClebschGordan(l1: number, l2: number, L: number, options: RealCouplingOptions = {}): Float64Array {
  for (const [name, v] of [['l1', l1], ['l2', l2], ['L', L]] as const) {
    if (!Number.isInteger(v) || v < 0) throw new RangeError(`realClebschGordan: ${name} must be a non-negative integer, got ${v}`);
  }
  if (L < Math.abs(l1 - l2) || L > l1 + l2) throw new RangeError(`realClebschGordan: (${l1}, ${l2}, ${L}) breaks the triangle rule |l1−l2| ≤ L ≤ l1+l2`);
  const odd = (l1 + l2 + L) % 2 === 1;
  if (odd && !options.allowOdd) {
    throw new RangeError(
      `realClebschGordan: l1+l2+L = ${l1 + l2 + L} is odd; the real-basis coupling is imaginary (a pseudo-tensor). ` +
        'Pass { allowOdd: true } to get its imaginary part.',
    );
  }
  const key = `${l1},${l2},${L}`;
  const hit = realCache.get(key);
  if (hit) return hit;
  const U1 = realBasisTransform(l1), U2 = realBasisTransform(l2), UL = realBasisTransform(L);
  const n1 = 2 * l1 + 1, n2 = 2 * l2 + 1, nL = 2 * L + 1;
  const re = new Float64Array(n1 * n2 * nL);
  const im = new Float64Array(n1 * n2 * nL);
  let scale = 0;
  for (let m1 = -l1; m1 <= l1; m1++) {
    for (let m2 = -l2; m2 <= l2; m2++) {
      for (let M = -L; M <= L; M++) {
        let sr = 0, si = 0;
        // Only columns ±m of each U row are non-zero.
        for (const p1 of m1 === 0 ? [0] : [m1, -m1]) {
          const u1r = U1.re[(m1 + l1) * n1 + p1 + l1], u1i = -U1.im[(m1 + l1) * n1 + p1 + l1]; // conj
          for (const p2 of m2 === 0 ? [0] : [m2, -m2]) {
            const u2r = U2.re[(m2 + l2) * n2 + p2 + l2], u2i = -U2.im[(m2 + l2) * n2 + p2 + l2]; // conj
            const P = p1 + p2;
            if (P !== M && P !== -M) continue;
            const cg = clebschGordan(l1, p1, l2, p2, L, P);
            if (cg === 0) continue;
            const ur = UL.re[(M + L) * nL + P + L], ui = UL.im[(M + L) * nL + P + L];
            // (ur + i ui)(u1r + i u1i)(u2r + i u2i) cg
            const ar = u1r * u2r - u1i * u2i, ai = u1r * u2i + u1i * u2r;
            sr += cg * (ur * ar - ui * ai);
            si += cg * (ur * ai + ui * ar);
          }
        }
        const k = (m1 + l1) * n2 * nL + (m2 + l2) * nL + (M + L);
        re[k] = sr;
        im[k] = si;
        scale = Math.max(scale, Math.abs(sr), Math.abs(si));
      }
    }
  }
  // One of the two parts must vanish identically (parity); anything else is a bug in the basis change.
  const wrong = odd ? re : im;
  for (let k = 0; k < wrong.length; k++) {
    if (Math.abs(wrong[k]) > 1e-12 * Math.max(scale, 1)) {
      throw new Error(`realClebschGordan: internal error, ${odd ? 'real' : 'imaginary'} part ${wrong[k]} does not vanish for (${l1}, ${l2}, ${L})`);
    }
  }
  const result = odd ? im : re;
  realCache.set(key, result);
  return result;
}

/** The non-zero entries of realClebschGordan(l1, l2, L) as parallel arrays of (m1+l1, m2+l2, M+L, value). */
export interface SparseCoupling {
  i1: Int32Array;
  i2: Int32Array;
  iL: Int32Array;
  value: Float64Array;
}

const sparseCache = new Map<string, SparseCoupling>();

export function realClebschGordanSparse(l1: number, l2: number, L: number, options: RealCouplingOptions = {}): SparseCoupling {
  const dense = realClebschGordan(l1, l2, L, options);
  const key = `${l1},${l2},${L}`;
  const hit = sparseCache.get(key);
  if (hit) return hit;
  const n2 = 2 * l2 + 1, nL = 2 * L + 1;
  const i1: number[] = [], i2: number[] = [], iL: number[] = [], value: number[] = [];
  for (let k = 0; k < dense.length; k++) {
    if (Math.abs(dense[k]) < 1e-15) continue;
    i1.push(Math.floor(k / (n2 * nL)));
    i2.push(Math.floor(k / nL) % n2);
    iL.push(k % nL);
    value.push(dense[k]);
  }
  const s = { i1: Int32Array.from(i1), i2: Int32Array.from(i2), iL: Int32Array.from(iL), value: Float64Array.from(value) };
  sparseCache.set(key, s);
  return s;
}

/** ξ_M = Σ C[m1,m2,M] a_m1 b_m2 for real degree-l1 and degree-l2 vectors (length 2l+1 each). */
export function coupleReal(l1: number, l2: number, L: number, a: ArrayLike<number>, b: ArrayLike<number>, out?: Float64Array, options: RealCouplingOptions = {}): Float64Array {
  if (a.length !== 2 * l1 + 1 || b.length !== 2 * l2 + 1) {
    throw new RangeError(`coupleReal: vectors of length ${a.length} and ${b.length} do not match l1 = ${l1}, l2 = ${l2}`);
  }
  const s = realClebschGordanSparse(l1, l2, L, options);
  const xi = out ?? new Float64Array(2 * L + 1);
  xi.fill(0, 0, 2 * L + 1);
  for (let k = 0; k < s.value.length; k++) xi[s.iL[k]] += s.value[k] * a[s.i1[k]] * b[s.i2[k]];
  return xi;
}
