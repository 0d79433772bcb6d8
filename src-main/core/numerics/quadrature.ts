// Gauss–Legendre rules and a product quadrature on the unit sphere (Gauss–Legendre in cos θ × uniform φ).
// The sphere rule with n nodes in cos θ and 2n nodes in φ integrates every polynomial of degree ≤ 2n−1 on the
// sphere exactly, so products Y_lm·Y_l'm' with l + l' ≤ 2n−1 come out to round-off. Used to build Wigner
// matrices of the real harmonics and to test orthonormality.

export interface Rule {
  nodes: Float64Array;
  weights: Float64Array;
}

const legendreCache = new Map<number, Rule>();

/** P_n(x) and P_n'(x) by the three-term recurrence (|x| < 1). */
function legendreWithDerivative(n: number, x: number): [number, number] {
  let p0 = 1, p1 = x;
  for (let k = 2; k <= n; k++) {
    const p2 = ((2 * k - 1) * x * p1 - (k - 1) * p0) / k;
    p0 = p1;
    p1 = p2;
  }
  // For n = 1 the loop does not run: P_1 = x, P_0 = 1 are already in (p1, p0).
  return [p1, (n * (x * p1 - p0)) / (x * x - 1)];
}

/** n-point Gauss–Legendre rule on [−1, 1] (Newton iteration on P_n from the Chebyshev-like first guesses). */
export function gaussLegendre(n: number): Rule {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`gaussLegendre: n must be a positive integer, got ${n}`);
  const hit = legendreCache.get(n);
  if (hit) return hit;
  const nodes = new Float64Array(n);
  const weights = new Float64Array(n);
  const half = Math.floor((n + 1) / 2);
  for (let i = 0; i < half; i++) {
    let x = Math.cos((Math.PI * (i + 0.75)) / (n + 0.5));
    for (let iter = 0; iter < 100; iter++) {
      const [pn, dp] = legendreWithDerivative(n, x);
      const dx = pn / dp;
      x -= dx;
      if (Math.abs(dx) < 1e-16) break;
    }
    const dp = legendreWithDerivative(n, x)[1]; // at the converged node, for the weight
    const w = 2 / ((1 - x * x) * dp * dp);
    nodes[i] = -x;
    nodes[n - 1 - i] = x;
    weights[i] = w;
    weights[n - 1 - i] = w;
  }
  if (n % 2 === 1) nodes[(n - 1) / 2] = 0;
  const rule = { nodes, weights };
  legendreCache.set(n, rule);
  return rule;
}

export interface SphereRule {
  /** Unit vectors, 3 per point. */
  points: Float64Array;
  /** Weights summing to 4π. */
  weights: Float64Array;
  count: number;
}

/** Product rule on the sphere exact for polynomials of total degree ≤ `degree`. */
export function sphereProductRule(degree: number): SphereRule {
  if (!Number.isInteger(degree) || degree < 0) throw new RangeError(`sphereProductRule: degree must be a non-negative integer, got ${degree}`);
  const nTheta = Math.floor(degree / 2) + 1; // 2n − 1 ≥ degree
  const nPhi = degree + 1; // uniform φ integrates e^{ikφ} exactly for |k| ≤ degree
  const { nodes, weights } = gaussLegendre(nTheta);
  const count = nTheta * nPhi;
  const points = new Float64Array(3 * count);
  const w = new Float64Array(count);
  let k = 0;
  for (let i = 0; i < nTheta; i++) {
    const z = nodes[i];
    const s = Math.sqrt(Math.max(0, 1 - z * z));
    for (let j = 0; j < nPhi; j++) {
      // Offset φ by half a step so no point lies on the x–z plane (avoids special-case symmetries in tests).
      const phi = (2 * Math.PI * (j + 0.5)) / nPhi;
      points[3 * k] = s * Math.cos(phi);
      points[3 * k + 1] = s * Math.sin(phi);
      points[3 * k + 2] = z;
      w[k] = (weights[i] * 2 * Math.PI) / nPhi;
      k++;
    }
  }
  return { points, weights: w, count };
}
