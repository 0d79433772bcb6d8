import { describe, expect, it } from 'vitest';
import { gaussLegendre, sphereProductRule } from '../../../src-main/core/numerics/quadrature.ts';

describe('gaussLegendre', () => {
  it('reproduces the 3-point rule (textbook: nodes 0, ±√(3/5); weights 8/9, 5/9)', () => {
    const { nodes, weights } = gaussLegendre(3);
    expect(nodes[0]).toBeCloseTo(-Math.sqrt(3 / 5), 15);
    expect(nodes[1]).toBe(0);
    expect(nodes[2]).toBeCloseTo(Math.sqrt(3 / 5), 15);
    expect(weights[0]).toBeCloseTo(5 / 9, 15);
    expect(weights[1]).toBeCloseTo(8 / 9, 15);
  });

  it('integrates x^k exactly for k ≤ 2n−1 and not beyond', () => {
    for (const n of [1, 2, 5, 12, 30]) {
      const { nodes, weights } = gaussLegendre(n);
      for (let k = 0; k <= 2 * n - 1; k++) {
        let s = 0;
        for (let i = 0; i < n; i++) s += weights[i] * nodes[i] ** k;
        expect(s).toBeCloseTo(k % 2 === 0 ? 2 / (k + 1) : 0, 13);
      }
      let s = 0;
      for (let i = 0; i < n; i++) s += weights[i] * nodes[i] ** (2 * n);
      if (n <= 5) expect(Math.abs(s - 2 / (2 * n + 1))).toBeGreaterThan(1e-6);
    }
  });
});

describe('sphereProductRule', () => {
  it('has weights summing to 4π and unit points, and integrates z² and x²y² (= 4π/3, 4π/15)', () => {
    const rule = sphereProductRule(6);
    let w = 0, z2 = 0, x2y2 = 0;
    for (let k = 0; k < rule.count; k++) {
      const [x, y, z] = [rule.points[3 * k], rule.points[3 * k + 1], rule.points[3 * k + 2]];
      expect(Math.hypot(x, y, z)).toBeCloseTo(1, 15);
      w += rule.weights[k];
      z2 += rule.weights[k] * z * z;
      x2y2 += rule.weights[k] * x * x * y * y;
    }
    expect(w).toBeCloseTo(4 * Math.PI, 13);
    expect(z2).toBeCloseTo((4 * Math.PI) / 3, 13);
    expect(x2y2).toBeCloseTo((4 * Math.PI) / 15, 13);
  });
});
