import { describe, expect, it } from 'vitest';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { crossValidateRegularisation, DEFAULT_REGULARISATION_GRID, designLeverage, designScale, fitRidge, foldsOf, heldOutRows, MAX_WIDENINGS, posteriorVariance, primalWeights, ridgeFitPredict, WIDEN_DECADES, type Design } from '../../../src-main/core/learning/regression.ts';
import { regulariserEdge } from '../../../src-main/core/learning/model.ts';
import { choleskyWithJitter, forwardSubstitute, gramOfColumns } from '../../../src-main/core/numerics/cholesky.ts';

/** A double as an exact fraction [numerator, denominator] of BigInts (every finite double is one). */
function exact(x: number): [bigint, bigint] {
  const view = new DataView(new ArrayBuffer(8));
  view.setFloat64(0, x);
  const bits = view.getBigUint64(0);
  const sign = bits >> 63n ? -1n : 1n;
  const e = Number((bits >> 52n) & 0x7ffn);
  let m = bits & ((1n << 52n) - 1n);
  if (e) m |= 1n << 52n;
  const p = (e || 1) - 1075;
  return p >= 0 ? [sign * m * (1n << BigInt(p)), 1n] : [sign * m, 1n << BigInt(-p)];
}
type Q = [bigint, bigint];
const gcd = (a: bigint, b: bigint): bigint => (b === 0n ? (a < 0n ? -a : a) : gcd(b, a % b));
const norm = ([a, b]: Q): Q => {
  const g = gcd(a, b) || 1n;
  return b < 0n ? [-a / g, -b / g] : [a / g, b / g];
};
const add = (x: Q, y: Q): Q => norm([x[0] * y[1] + y[0] * x[1], x[1] * y[1]]);
const sub = (x: Q, y: Q): Q => add(x, [-y[0], y[1]]);
const mul = (x: Q, y: Q): Q => norm([x[0] * y[0], x[1] * y[1]]);
const div = (x: Q, y: Q): Q => norm([x[0] * y[1], x[1] * y[0]]);
const toNumber = ([a, b]: Q): number => {
  // scale so the quotient keeps 60 bits before converting
  const shift = BigInt(Math.max(0, 60 - (a.toString(2).length - b.toString(2).length)));
  return Number((a << shift) / b) / 2 ** Number(shift);
};

/** φᵀ(ΦᵀΦ + λI)⁻¹φ in exact rational arithmetic, through (φᵀφ − kᵀ(ΦΦᵀ + λI)⁻¹k)/λ with k = Φφ. */
function exactLeverage(phi: Float64Array, rows: number, f: number, lambda: number, x: Float64Array): number {
  const P = Array.from(phi, exact);
  const X = Array.from(x, exact);
  const L = exact(lambda);
  const dot = (a: number, b: Q[] | null): Q => {
    let s: Q = [0n, 1n];
    for (let j = 0; j < f; j++) s = add(s, mul(P[a * f + j], b ? b[j] : P[a * f + j]));
    return s;
  };
  const m: Q[][] = [];
  for (let a = 0; a < rows; a++) {
    const row: Q[] = [];
    for (let b = 0; b < rows; b++) row.push(a === b ? add(dot(a, P.slice(b * f, b * f + f)), L) : dot(a, P.slice(b * f, b * f + f)));
    row.push(dot(a, X));
    m.push(row);
  }
  const k = m.map((r) => r[rows]);
  for (let i = 0; i < rows; i++) {
    for (let r = i + 1; r < rows; r++) {
      const g = div(m[r][i], m[i][i]);
      for (let c = i; c <= rows; c++) m[r][c] = sub(m[r][c], mul(g, m[i][c]));
    }
  }
  const c: Q[] = new Array(rows);
  for (let i = rows - 1; i >= 0; i--) {
    let s = m[i][rows];
    for (let j = i + 1; j < rows; j++) s = sub(s, mul(m[i][j], c[j]));
    c[i] = div(s, m[i][i]);
  }
  let xx: Q = [0n, 1n];
  for (const v of X) xx = add(xx, mul(v, v));
  let kc: Q = [0n, 1n];
  for (let i = 0; i < rows; i++) kc = add(kc, mul(k[i], c[i]));
  return toNumber(div(sub(xx, kc), L));
}

function inverse3(m: number[]): number[] {
  // Cramer's rule, independent of the Cholesky code under test.
  const [a, b, c, d, e, f, g, h, i] = m;
  const A = e * i - f * h, B = -(d * i - f * g), C = d * h - e * g;
  const D = -(b * i - c * h), E = a * i - c * g, F = -(a * h - b * g);
  const G = b * f - c * e, H = -(a * f - c * d), I = a * e - b * d;
  const det = a * A + b * B + c * C;
  return [A, D, G, B, E, H, C, F, I].map((x) => x / det);
}

const groups = (rows: number) => Int32Array.from({ length: rows }, (_, i) => i);

describe('kernel ridge regression', () => {
  it('matches the closed-form solution of a 3×3 kernel problem', () => {
    const K = [2, 1, 0, 1, 2, 1, 0, 1, 2];
    const y = [1, -2, 3];
    // relative 0.5 × mean diagonal 2 → λ = 1
    const d: Design = { rows: 3, group: groups(3), y: Float64Array.from(y), gram: Float64Array.from(K) };
    expect(designScale(d)).toBe(2);
    const fit = fitRidge(d, 0.5, null);
    expect(fit.lambda).toBe(1);
    const inv = inverse3(K.map((v, q) => v + (q % 4 === 0 ? 1 : 0)));
    const c = [0, 1, 2].map((r) => inv[r * 3] * y[0] + inv[r * 3 + 1] * y[1] + inv[r * 3 + 2] * y[2]);
    for (let r = 0; r < 3; r++) expect(fit.weights[r]).toBeCloseTo(c[r], 12);
    // by hand: (K + I) = [[3,1,0],[1,3,1],[0,1,3]], det 21, adjugate [[8,-3,1],[-3,9,-3],[1,-3,8]],
    // so c = (K+I)⁻¹ y = [17, -30, 31]/21
    expect(fit.weights[0]).toBeCloseTo(17 / 21, 12);
    expect(fit.weights[1]).toBeCloseTo(-30 / 21, 12);
    expect(fit.weights[2]).toBeCloseTo(31 / 21, 12);
  });

  it('recovers the weights of a noiseless linear target exactly (primal and dual agree)', () => {
    const rng = makeRng(11);
    for (const [rows, f] of [[60, 12], [12, 30]]) {
      const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
      const w = Float64Array.from({ length: f }, () => rng.normal());
      const y = new Float64Array(rows);
      for (let r = 0; r < rows; r++) for (let i = 0; i < f; i++) y[r] += phi[r * f + i] * w[i];
      const d: Design = { rows, group: groups(rows), y, phi, features: f };
      const fit = fitRidge(d, 1e-12, null);
      expect(fit.form).toBe(f <= rows ? 'primal' : 'dual');
      const got = primalWeights(d, fit);
      const [pred] = ridgeFitPredict(d, groups(rows), groups(rows), [fit.lambda]);
      for (let r = 0; r < rows; r++) expect(pred[r]).toBeCloseTo(y[r], 6);
      if (f <= rows) for (let i = 0; i < f; i++) expect(got[i]).toBeCloseTo(w[i], 8);
      // the same problem through its explicit kernel gives the same predictions
      const gram = new Float64Array(rows * rows);
      for (let a = 0; a < rows; a++) for (let b = 0; b < rows; b++) for (let i = 0; i < f; i++) gram[a * rows + b] += phi[a * f + i] * phi[b * f + i];
      const dk: Design = { rows, group: groups(rows), y, gram };
      const [predK] = ridgeFitPredict(dk, groups(rows), groups(rows), [fit.lambda]);
      for (let r = 0; r < rows; r++) expect(predK[r]).toBeCloseTo(pred[r], 6);
    }
  });

  it('cross-validation prefers a small regulariser on clean data and a large one on noise', () => {
    const rng = makeRng(5);
    const rows = 40;
    const f = 5;
    const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
    const yClean = new Float64Array(rows);
    for (let r = 0; r < rows; r++) for (let i = 0; i < f; i++) yClean[r] += phi[r * f + i] * (i + 1);
    const yNoise = Float64Array.from({ length: rows }, () => rng.normal());
    const fold = foldsOf(Int32Array.from({ length: rows }, (_, i) => i), 5);
    const clean = fitRidge({ rows, group: groups(rows), y: yClean, phi, features: f }, null, { fold, folds: 5 });
    const noise = fitRidge({ rows, group: groups(rows), y: yNoise, phi, features: f }, null, { fold, folds: 5 });
    expect(clean.relative).toBeLessThanOrEqual(1e-6);
    expect(noise.relative).toBeGreaterThanOrEqual(1e-2);
    expect(clean.cvError).toBeLessThan(1e-6);
    // the reported error is the best of the values tried (the range widened above 1 for the noise), and no worse than the usual grid's best
    const tried = crossValidateRegularisation({ rows, group: groups(rows), y: yNoise, phi, features: f }, { fold, folds: 5, grid: noise.grid.map((g) => g.relative) });
    expect(Math.min(...tried.map((g) => g.error))).toBeCloseTo(noise.cvError, 12);
    const grid = crossValidateRegularisation({ rows, group: groups(rows), y: yNoise, phi, features: f }, { fold, folds: 5 });
    expect(Math.min(...grid.map((g) => g.error))).toBeGreaterThanOrEqual(noise.cvError);
  });

  it('folds never split a group and have balanced sizes', () => {
    const fold = foldsOf([4, 2, 0, 1, 3, 6, 5], 3);
    const sizes = [0, 0, 0];
    for (const f of fold) sizes[f]++;
    expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
  });

  it('predictive variance: primal and dual formulas agree and grow away from the data', () => {
    const rng = makeRng(8);
    const rows = 30;
    const f = 4;
    const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
    const y = Float64Array.from({ length: rows }, () => rng.normal());
    const d: Design = { rows, group: groups(rows), y, phi, features: f };
    const fit = fitRidge(d, 1e-3, null, true);
    const post = fit.posterior!;
    expect(post.form).toBe('primal');
    const gram = new Float64Array(rows * rows);
    for (let a = 0; a < rows; a++) for (let b = 0; b < rows; b++) for (let i = 0; i < f; i++) gram[a * rows + b] += phi[a * f + i] * phi[b * f + i];
    const fitK = fitRidge({ rows, group: groups(rows), y, gram }, fit.lambda / designScale({ rows, group: groups(rows), y, gram }), null, true);
    const x = Float64Array.of(0.3, -0.2, 0.5, 0.1);
    const kStar = new Float64Array(rows);
    for (let a = 0; a < rows; a++) for (let i = 0; i < f; i++) kStar[a] += phi[a * f + i] * x[i];
    const kss = x.reduce((s, v) => s + v * v, 0);
    const vp = posteriorVariance(post, x);
    const vd = posteriorVariance({ ...fitK.posterior!, noise: post.noise }, kStar, kss);
    expect(vd).toBeCloseTo(vp, 10);
    const far = posteriorVariance(post, Float64Array.from(x, (v) => 50 * v));
    expect(far).toBeGreaterThan(vp);
  });

  it('keeps a design with fewer rows than features as the design (the smaller form), with the same variance as the primal factor', () => {
    const rng = makeRng(11);
    const rows = 6;
    const f = 40;
    const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
    const y = Float64Array.from({ length: rows }, () => rng.normal());
    const fit = fitRidge({ rows, group: groups(rows), y, phi, features: f }, 1e-2, null, true);
    const post = fit.posterior!;
    expect(post.form).toBe('design');
    if (post.form !== 'design') return;
    expect(post.design.length + post.factor.length).toBeLessThan(f * f);
    // the primal factor of ΦᵀΦ + λI, as models before the design form kept it; well conditioned here, so the two agree closely
    const g = gramOfColumns(phi, rows, f);
    for (let i = 0; i < f; i++) g[i * f + i] += fit.lambda;
    const primal = { form: 'primal' as const, size: f, factor: choleskyWithJitter(g, f).factor, noise: post.noise, lambda: fit.lambda };
    for (const scale of [0.01, 1, 30]) {
      const x = Float64Array.from({ length: f }, () => scale * rng.normal());
      expect(posteriorVariance(post, x)).toBeGreaterThan(0);
      expect(Math.abs(posteriorVariance(post, x) / posteriorVariance(primal, x) - 1)).toBeLessThan(1e-12);
    }
    // more rows than half the features: the primal factor is the smaller and is kept
    const many = 30;
    const big = Float64Array.from({ length: many * f }, () => rng.normal());
    expect(fitRidge({ rows: many, group: groups(many), y: Float64Array.from({ length: many }, () => rng.normal()), phi: big, features: f }, 1e-2, null, true).posterior!.form).toBe('primal');
  });

  it('design leverage matches exact rational arithmetic where frames are alike and the regulariser small (the textbook dual form and the primal factor lose digits there)', () => {
    // rows that nearly share one direction, as the summed features of similar frames do; λ ≈ 1e-9 of the scale
    const rng = makeRng(5);
    const rows = 4;
    const f = 24;
    const common = Float64Array.from({ length: f }, () => 1 + rng.uniform());
    const phi = new Float64Array(rows * f);
    for (let a = 0; a < rows; a++) for (let j = 0; j < f; j++) phi[a * f + j] = 100 * common[j] * (1 + 1e-3 * rng.normal());
    const scale = designScale({ rows, group: groups(rows), y: new Float64Array(rows), phi, features: f });
    const lambda = 1e-9 * scale;
    const kf = new Float64Array(rows * rows);
    for (let a = 0; a < rows; a++) for (let b = 0; b < rows; b++) for (let j = 0; j < f; j++) kf[a * rows + b] += phi[a * f + j] * phi[b * f + j];
    for (let a = 0; a < rows; a++) kf[a * rows + a] += lambda;
    const { factor, jitter } = choleskyWithJitter(kf, rows);
    expect(jitter).toBe(0);
    const g = gramOfColumns(phi, rows, f);
    for (let i = 0; i < f; i++) g[i * f + i] += lambda;
    const primalFactor = choleskyWithJitter(g, f).factor;
    let primalWorst = 0;
    // a training row, a row near the others and one off their span
    const trial = [phi.slice(0, f), Float64Array.from(common, (c, j) => 100 * c * (1 + 1e-3 * Math.sin(j))), Float64Array.from({ length: f }, () => rng.normal())];
    for (const x of trial) {
      const want = exactLeverage(phi, rows, f, lambda, x);
      expect(Math.abs(designLeverage(phi, rows, f, factor, lambda, x) / want - 1)).toBeLessThan(1e-12);
      const z = forwardSubstitute(primalFactor, f, Float64Array.from(x));
      primalWorst = Math.max(primalWorst, Math.abs(z.reduce((s, v) => s + v * v, 0) / want - 1));
    }
    // the condition number is real: the primal factor's answer is measurably further off
    expect(primalWorst).toBeGreaterThan(1e-11);
  });

  it('held-out leverages of a dual fold are the design leverage of the fold', () => {
    const rng = makeRng(3);
    const rows = 6;
    const f = 20;
    const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
    const d: Design = { rows, group: groups(rows), y: Float64Array.from({ length: rows }, () => rng.normal()), phi, features: f };
    const fold = foldsOf([0, 1, 2, 3, 4, 5], 3);
    const lambda = 0.1;
    const h = heldOutRows(d, { fold, folds: 3 }, lambda).leverage;
    // fold 0 holds rows 0 and 1: their leverage against rows 2…5
    const train = phi.slice(2 * f);
    const k = new Float64Array(16);
    for (let a = 0; a < 4; a++) for (let b = 0; b < 4; b++) for (let j = 0; j < f; j++) k[a * 4 + b] += train[a * f + j] * train[b * f + j];
    for (let a = 0; a < 4; a++) k[a * 4 + a] += lambda;
    const { factor } = choleskyWithJitter(k, 4);
    expect(h[0]).toBe(designLeverage(train, 4, f, factor, lambda, phi.subarray(0, f)));
    expect(h[1]).toBe(designLeverage(train, 4, f, factor, lambda, phi.subarray(f, 2 * f)));
  });

  it('held-out rows after a cross-validation (its fold solutions kept) are those of a design never solved, bit for bit', () => {
    const rng = makeRng(8);
    for (const [rows, f] of [[30, 50], [30, 4]]) {
      const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
      const y = Float64Array.from({ length: rows }, () => rng.normal());
      const fold = foldsOf(Int32Array.from({ length: rows }, (_, i) => (i * 7) % rows), 5);
      const solved: Design = { rows, group: groups(rows), y, phi, features: f };
      const fit = fitRidge(solved, null, { fold, folds: 5 });
      for (const lambda of [fit.lambda, fit.lambda * 10, fit.grid[0].relative * fit.scale]) {
        const fresh: Design = { rows, group: groups(rows), y: Float64Array.from(y), phi: Float64Array.from(phi), features: f };
        const a = heldOutRows(solved, { fold, folds: 5 }, lambda);
        const b = heldOutRows(fresh, { fold, folds: 5 }, lambda);
        expect(Array.from(a.predicted, (v, r) => Object.is(v, b.predicted[r])).every(Boolean)).toBe(true);
        expect(Array.from(a.leverage, (v, r) => Object.is(v, b.leverage[r])).every(Boolean)).toBe(true);
      }
    }
    // another target on the same kernel is solved again, not served the first one's solutions
    const rows = 20;
    const phi = Float64Array.from({ length: rows * 8 }, () => rng.normal());
    const gram = new Float64Array(rows * rows);
    for (let a = 0; a < rows; a++) for (let b = 0; b < rows; b++) for (let i = 0; i < 8; i++) gram[a * rows + b] += phi[a * 8 + i] * phi[b * 8 + i];
    const y = Float64Array.from({ length: rows }, () => rng.normal());
    const fold = foldsOf(Int32Array.from({ length: rows }, (_, i) => i), 4);
    const base = heldOutRows({ rows, group: groups(rows), y, gram }, { fold, folds: 4 }, 0.5).predicted;
    const other = heldOutRows({ rows, group: groups(rows), y: Float64Array.from(y, (v) => -2 * v), gram }, { fold, folds: 4 }, 0.5).predicted;
    for (let r = 0; r < rows; r++) expect(other[r]).toBeCloseTo(-2 * base[r], 9);
  });
});

describe('regulariser range widened at its edge', () => {
  const cvOf = (rows: number) => ({ fold: foldsOf(groups(rows), 5), folds: 5 });
  const usualLo = Math.min(...DEFAULT_REGULARISATION_GRID);

  it('goes below the usual range when the optimum lies there, and then no warning is left', () => {
    // y = φ1 + φ2 + noise, φ2 of tiny scale s: shrinking w2 costs (s·w2)² per row, fitting it costs the noise
    // σ² over n s²; the balance lies at λ ≈ σ²/w2² = 1e-10 (absolute; the scale is ≈ 1), below the usual 1e-9
    const rng = makeRng(3);
    const rows = 2000;
    const phi = new Float64Array(rows * 2);
    const y = new Float64Array(rows);
    for (let r = 0; r < rows; r++) {
      phi[2 * r] = rng.normal();
      phi[2 * r + 1] = 2.5e-7 * rng.normal();
      y[r] = phi[2 * r] + phi[2 * r + 1] + 1e-5 * rng.normal();
    }
    const d: Design = { rows, group: groups(rows), y, phi, features: 2 };
    // the usual range alone stops at its edge
    const usual = fitRidge(d, null, { ...cvOf(rows), grid: DEFAULT_REGULARISATION_GRID });
    expect(usual.relative).toBe(usualLo);
    expect(regulariserEdge({ ...usual, chosenBy: 'cross-validation' })).toMatch(/smallest of the range tried/);
    const fit = fitRidge(d, null, cvOf(rows));
    expect(fit.relative).toBeLessThan(usualLo);
    expect(fit.relative).toBeGreaterThan(Math.min(...fit.grid.map((g) => g.relative)));
    expect(regulariserEdge({ ...fit, chosenBy: 'cross-validation' })).toBeNull();
  });

  it('keeps the warning when the best value is still at the edge after the widenings, and widens no further', () => {
    // noise-free: the smaller the regulariser, the better, however far the range goes
    const rng = makeRng(4);
    const rows = 60;
    const f = 4;
    const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
    const y = new Float64Array(rows);
    for (let r = 0; r < rows; r++) for (let i = 0; i < f; i++) y[r] += phi[r * f + i] * (i + 1);
    const fit = fitRidge({ rows, group: groups(rows), y, phi, features: f }, null, cvOf(rows));
    const lowest = usualLo / 10 ** (WIDEN_DECADES * MAX_WIDENINGS);
    expect(Math.min(...fit.grid.map((g) => g.relative))).toBeCloseTo(lowest, 25);
    expect(fit.relative).toBeCloseTo(lowest, 25);
    expect(regulariserEdge({ ...fit, chosenBy: 'cross-validation' })).toMatch(/smallest of the range tried \(1e-13…1e-1, already widened/);
    // pure noise: the largest value tried wins; the range was widened above 1 too
    const noise = fitRidge({ rows, group: groups(rows), y: Float64Array.from({ length: rows }, () => rng.normal()), phi, features: f }, null, cvOf(rows));
    expect(Math.max(...noise.grid.map((g) => g.relative))).toBeGreaterThan(1);
    if (noise.relative >= Math.max(...noise.grid.map((g) => g.relative))) expect(regulariserEdge({ ...noise, chosenBy: 'cross-validation' })).toMatch(/largest of the range tried/);
  });
});
