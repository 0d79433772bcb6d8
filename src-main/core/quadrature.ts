// Gauss–Legendre quadrature: nodes and weights on [-1, 1] and a panelled integral on [a, b]. Used to build the
// radial tables of the density expansion and to test the radial basis (exact for polynomials of degree 2n−1).

const cache = new Map<number, { nodes: Float64Array; weights: Float64Array }>();

/** Nodes (ascending) and weights of the n-point Gauss–Legendre rule on [-1, 1]; Newton on P_n, tol 1e-15. */
export function gaussLegendre(n: number): { nodes: Float64Array; weights: Float64Array } {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`gaussLegendre: n must be a positive integer, got ${n}`);
  const hit = cache.get(n);
  if (hit) return hit;
  const nodes = new Float64Array(n);
  const weights = new Float64Array(n);
  for (let i = 0; i < Math.ceil(n / 2); i++) {
    // Initial guess: the asymptotic position of the i-th root (largest first).
    let x = Math.cos((Math.PI * (i + 0.75)) / (n + 0.5));
    let dp = 0;
    for (let it = 0; it < 100; it++) {
      // P_n(x) and P_n'(x) by the three-term recurrence.
      let p0 = 1;
      let p1 = x;
      for (let k = 2; k <= n; k++) {
        const p2 = ((2 * k - 1) * x * p1 - (k - 1) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      const pn = n === 1 ? x : p1;
      const pm = n === 1 ? 1 : p0;
      dp = (n * (x * pn - pm)) / (x * x - 1);
      const dx = pn / dp;
      x -= dx;
      if (Math.abs(dx) < 1e-16) break;
    }
    // Recompute the derivative at the converged root for the weight.
    let p0 = 1;
    let p1 = x;
    for (let k = 2; k <= n; k++) {
      const p2 = ((2 * k - 1) * x * p1 - (k - 1) * p0) / k;
      p0 = p1;
      p1 = p2;
    }
    dp = n === 1 ? 1 : (n * (x * p1 - p0)) / (x * x - 1);
    const w = 2 / ((1 - x * x) * dp * dp);
    nodes[i] = -x;
    nodes[n - 1 - i] = x;
    weights[i] = w;
    weights[n - 1 - i] = w;
  }
  if (n % 2 === 1) nodes[(n - 1) / 2] = 0;
  const rule = { nodes, weights };
  cache.set(n, rule);
  return rule;
}

/**
 * Nodes and weights for ∫_a^b f dr split into `panels` equal panels with an `order`-point rule each.
 * Returned arrays have panels·order entries.
 */
export function panelRule(a: number, b: number, panels: number, order: number): { nodes: Float64Array; weights: Float64Array } {
  const { nodes: x, weights: w } = gaussLegendre(order);
  const nodes = new Float64Array(panels * order);
  const weights = new Float64Array(panels * order);
  const width = (b - a) / panels;
  for (let p = 0; p < panels; p++) {
    const mid = a + (p + 0.5) * width;
    for (let k = 0; k < order; k++) {
      nodes[p * order + k] = mid + 0.5 * width * x[k];
      weights[p * order + k] = 0.5 * width * w[k];
    }
  }
  return { nodes, weights };
}
