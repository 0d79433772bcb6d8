// The complementary error function erfc(x) to near machine precision, for the real-space part of Ewald sums.
// Small |x|: the Maclaurin series of erf (Abramowitz & Stegun 7.1.5); large x: the continued fraction
// (A&S 7.1.14), evaluated by the modified Lentz method. erfc(−x) = 2 − erfc(x).

const TWO_OVER_SQRT_PI = 2 / Math.sqrt(Math.PI);

export function erfc(x: number): number {
  if (Number.isNaN(x)) return NaN;
  if (x < 0) return 2 - erfc(-x);
  if (x < 2) return 1 - erfSeries(x);
  if (x > 27) return 0; // below the smallest double
  return erfcContinuedFraction(x);
}

export function erf(x: number): number {
  if (Math.abs(x) < 0.5) return erfSeries(x);
  return 1 - erfc(x);
}

/** erf(x) = 2/√π Σ (−1)ⁿ x^(2n+1) / (n! (2n+1)). */
function erfSeries(x: number): number {
  const x2 = x * x;
  let term = x; // (−1)ⁿ x^(2n+1)/n!
  let sum = x;
  for (let n = 1; n < 200; n++) {
    term *= -x2 / n;
    const add = term / (2 * n + 1);
    sum += add;
    if (Math.abs(add) < 1e-17 * Math.abs(sum)) break;
  }
  return TWO_OVER_SQRT_PI * sum;
}

/** erfc(x) = e^(−x²)/√π · 1/(x + (1/2)/(x + 1/(x + (3/2)/(x + 2/(x + …))))), modified Lentz. */
function erfcContinuedFraction(x: number): number {
  const tiny = 1e-300;
  let f = x;
  let c = x;
  let d = 0;
  for (let n = 1; n < 500; n++) {
    const an = n / 2;
    d = x + an * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = x + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const delta = c * d;
    f *= delta;
    if (Math.abs(delta - 1) < 1e-16) break;
  }
  return Math.exp(-x * x) / (Math.sqrt(Math.PI) * f);
}
