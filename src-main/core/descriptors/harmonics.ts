// Real spherical harmonics Y_lm(r̂) up to lmax, by the normalised associated-Legendre recurrences in Cartesian
// form (no trigonometric functions of angles). Convention (docs/science-conventions.md): complex Y_l^m with the
// Condon–Shortley phase; real forms m<0: √2(−1)^m Im Y_l^{|m|}, m=0: Y_l^0, m>0: √2(−1)^m Re Y_l^m, so that
// (Y_1,−1, Y_1,0, Y_1,1) = √(3/4π) (y, z, x)/r. Stored flat at index l² + l + m.
//
// With Q_l^m(z) = P̄_l^m(cosθ)/sin^mθ (P̄ without the Condon–Shortley sign) and (x + iy)^m = C_m + i S_m for the
// unit vector, the Condon–Shortley sign cancels against the (−1)^m of the real forms:
//   Y_l,m  = √2 N_lm Q_l^m(z) C_m,   Y_l,−m = √2 N_lm Q_l^m(z) S_m,   Y_l,0 = N_l0 Q_l^0(z).
// The recurrences below carry N_lm·Q_l^m directly (a fully normalised form), which stays well scaled to large l.

interface Coefficients {
  lmax: number;
  /** For l ≥ m+2: a_lm and b_lm of  Ŷ_l^m = a_lm (z Ŷ_{l−1}^m − b_lm Ŷ_{l−2}^m). Indexed by l(l+1)/2 + m. */
  a: Float64Array;
  b: Float64Array;
  /** Ŷ_m^m / Ŷ_{m−1}^{m−1} = √((2m+1)/(2m)). */
  diag: Float64Array;
}

const cache = new Map<number, Coefficients>();

function coefficients(lmax: number): Coefficients {
  const hit = cache.get(lmax);
  if (hit) return hit;
  const size = ((lmax + 1) * (lmax + 2)) / 2;
  const a = new Float64Array(size);
  const b = new Float64Array(size);
  const diag = new Float64Array(lmax + 1);
  for (let m = 1; m <= lmax; m++) diag[m] = Math.sqrt((2 * m + 1) / (2 * m));
  for (let l = 2; l <= lmax; l++) {
    for (let m = 0; m <= l - 2; m++) {
      const k = (l * (l + 1)) / 2 + m;
      a[k] = Math.sqrt((4 * l * l - 1) / (l * l - m * m));
      b[k] = Math.sqrt(((l - 1) * (l - 1) - m * m) / (4 * (l - 1) * (l - 1) - 1));
    }
  }
  const c = { lmax, a, b, diag };
  cache.set(lmax, c);
  return c;
}

const INV_SQRT_4PI = 1 / Math.sqrt(4 * Math.PI);

/** The recurrence tables up to lmax and Y_00, for kernels that evaluate the same recurrences (wasm/assembly/descriptors.ts pairTerms). */
export function harmonicTables(lmax: number): { a: Float64Array; b: Float64Array; diag: Float64Array; y00: number } {
  const { a, b, diag } = coefficients(lmax);
  return { a, b, diag, y00: INV_SQRT_4PI };
}

/** Number of real harmonics up to and including lmax: (lmax+1)². */
export function harmonicCount(lmax: number): number {
  return (lmax + 1) * (lmax + 1);
}

/** Flat index of Y_lm. */
export function harmonicIndex(l: number, m: number): number {
  return l * l + l + m;
}

/**
 * Real spherical harmonics of the direction of (x, y, z) for l = 0…lmax, written to `out` (length ≥ (lmax+1)²,
 * allocated when omitted) at index l² + l + m and returned. The vector need not be unit length.
 * The zero vector has no direction: it gets Y_00 = 1/√(4π) and zeros for every l ≥ 1 (the angular average of
 * each Y_lm), so a neighbour exactly on a centre contributes only to the invariant channel.
 */
export function realSphericalHarmonics(lmax: number, x: number, y: number, z: number, out?: Float64Array): Float64Array {
  if (!Number.isInteger(lmax) || lmax < 0) throw new RangeError(`realSphericalHarmonics: lmax must be a non-negative integer, got ${lmax}`);
  const n = (lmax + 1) * (lmax + 1);
  const Y = out ?? new Float64Array(n);
  if (Y.length < n) throw new RangeError(`realSphericalHarmonics: output holds ${Y.length} values, lmax ${lmax} needs ${n}`);
  harmonicsAt(lmax, x, y, z, Y, 0);
  return Y;
}

/**
 * realSphericalHarmonics into Y[at + l² + l + m] (the caller checks lmax and the room in Y): the same numbers, for
 * the density expansion writing every pair's harmonics side by side.
 */
export function harmonicsAt(lmax: number, x: number, y: number, z: number, Y: Float64Array, at: number): void {
  if (!(Number.isFinite(x) && Number.isFinite(y) && Number.isFinite(z))) {
    throw new RangeError(`realSphericalHarmonics: non-finite direction (${x}, ${y}, ${z})`);
  }
  const n = (lmax + 1) * (lmax + 1);
  const r = Math.hypot(x, y, z);
  Y[at] = INV_SQRT_4PI;
  if (lmax === 0) return;
  if (r === 0) {
    Y.fill(0, at + 1, at + n);
    return;
  }
  const ux = x / r, uy = y / r, uz = z / r;
  const { a, b, diag } = coefficients(lmax);

  // m = 0 column: Ŷ_0^0, Ŷ_1^0 = √3 z Ŷ_0^0, then the three-term recurrence.
  let pmm = INV_SQRT_4PI; // Ŷ_m^m
  let cm = 1, sm = 0; // (ux + i uy)^m
  for (let m = 0; m <= lmax; m++) {
    if (m > 0) {
      pmm *= diag[m];
      const c = cm * ux - sm * uy;
      sm = cm * uy + sm * ux;
      cm = c;
    }
    const scaleC = m === 0 ? 1 : Math.SQRT2 * cm;
    const scaleS = Math.SQRT2 * sm;
    // l = m
    let p2 = pmm; // Ŷ_{l−2}^m
    write(Y, at, m, m, p2, scaleC, scaleS);
    if (m === lmax) break;
    // l = m + 1
    let p1 = Math.sqrt(2 * m + 3) * uz * pmm; // Ŷ_{l−1}^m
    write(Y, at, m + 1, m, p1, scaleC, scaleS);
    for (let l = m + 2; l <= lmax; l++) {
      const k = (l * (l + 1)) / 2 + m;
      const p = a[k] * (uz * p1 - b[k] * p2);
      write(Y, at, l, m, p, scaleC, scaleS);
      p2 = p1;
      p1 = p;
    }
  }
}

function write(Y: Float64Array, at: number, l: number, m: number, p: number, scaleC: number, scaleS: number): void {
  const centre = at + l * l + l;
  if (m === 0) {
    Y[centre] = p;
  } else {
    Y[centre + m] = p * scaleC;
    Y[centre - m] = p * scaleS;
  }
}
