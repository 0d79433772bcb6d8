// Ridge regression on a design that is either explicit (rows × F features: the ζ = 1 linear model or the
// projected-process features of the sparse model) or a precomputed structure kernel (rows × rows: exact kernel
// ridge). The explicit form is solved in whichever space is smaller: primal (ΦᵀΦ + λI) w = Φᵀy (F×F) or dual
// (ΦΦᵀ + λI) c = y (rows×rows), which give the same weights w = Φᵀc. The regulariser is relative to the mean
// diagonal of the structure kernel and chosen by k-fold cross-validation over whole frames.
import { backSubstitute, choleskySolve, choleskyWithJitter, forwardSubstitute, gramOfColumns, gramOfRows } from '../numerics/cholesky.ts';
import { CancelledError } from '../errors.ts';
import { designLeverageKernel } from './kernels.ts';

export interface Design {
  /** Target rows (frames × (2λ+1)). */
  rows: number;
  /** Frame (group) of each row: cross-validation folds never split a frame. */
  group: Int32Array;
  y: Float64Array;
  /** Explicit design, row-major rows × features. */
  phi?: Float64Array;
  features?: number;
  /** Or the structure kernel, rows × rows. */
  gram?: Float64Array;
}

/** What is needed for the predictive variance of new rows (GP posterior of the fitted model). */
export type Posterior =
  /** Latent variance = noise · |L⁻¹ φ|², with L L ᵀ = ΦᵀΦ + λI (size × size). */
  | { form: 'primal'; size: number; factor: Float64Array; noise: number; lambda: number }
  /** Latent variance = (noise/λ)(k** − |L⁻¹ k*|²), with L Lᵀ = K + λI and k* the kernel to the training rows. */
  | { form: 'dual'; size: number; factor: Float64Array; noise: number; lambda: number }
  /**
   * An explicit design with fewer rows than features, kept as the design itself: latent variance =
   * noise · designLeverage (the same number as the primal form's, from rows × size + rows² numbers instead of
   * size²). `design` is Φ (rows × size), `factor` the Cholesky factor of ΦΦᵀ + λI (rows × rows), `lambda` the
   * λ of that system.
   */
  | { form: 'design'; size: number; rows: number; design: Float64Array; factor: Float64Array; noise: number; lambda: number };

export interface RidgeFit {
  /** 'primal': `weights` are w (length F); 'dual': `weights` are c (length rows). */
  form: 'primal' | 'dual';
  weights: Float64Array;
  /** Relative regulariser chosen (or given) and its absolute value λ = relative × scale. */
  relative: number;
  lambda: number;
  scale: number;
  /** Cross-validated mean squared error per row at the chosen regulariser (NaN-free; 0 when no CV ran). */
  cvError: number;
  /** CV error for every grid value tried (empty when the regulariser was given). */
  grid: { relative: number; error: number }[];
  /** Present when asked for (the λ=0 part): explicit designs always get the primal form. */
  posterior?: Posterior;
}

/** Mean diagonal of the structure kernel: the scale the relative regulariser multiplies. */
export function designScale(d: Design): number {
  let s = 0;
  if (d.gram) {
    for (let r = 0; r < d.rows; r++) s += d.gram[r * d.rows + r];
  } else {
    const f = featureCount(d);
    const phi = d.phi as Float64Array;
    for (let i = 0; i < d.rows * f; i++) s += phi[i] * phi[i];
  }
  const mean = d.rows > 0 ? s / d.rows : 0;
  return mean > 0 ? mean : 1;
}

function featureCount(d: Design): number {
  if (!d.phi || d.features === undefined) throw new RangeError('design needs phi and features, or gram');
  return d.features;
}

/**
 * K = ΦΦᵀ of an explicit design's rows, computed once per design and shared by the cross-validation, the fit and
 * the held-out folds (every entry depends only on its two rows, so a fold's K is a selection of it, the same bits
 * as computing it from the fold's rows).
 */
const rowGrams = new WeakMap<Design, Float64Array>();
function rowGram(d: Design): Float64Array {
  let k = rowGrams.get(d);
  if (!k) {
    k = gramOfRows(d.phi as Float64Array, d.rows, featureCount(d));
    rowGrams.set(d, k);
  }
  return k;
}

/** The rows × rows selection K[rows, rows] of a design's row Gram (a new array). */
function selectGram(d: Design, rows: Int32Array): Float64Array {
  return selectRows(rowGram(d), d.rows, rows);
}

/** The selection K[rows, rows] of an n × n matrix (a new array). */
function selectRows(all: Float64Array, n: number, rows: Int32Array): Float64Array {
  const m = rows.length;
  const k = new Float64Array(m * m);
  for (let a = 0; a < m; a++) {
    const ra = rows[a] * n;
    for (let b = 0; b < m; b++) k[a * m + b] = all[ra + rows[b]];
  }
  return k;
}

/** Default grid of relative regularisers (log-spaced). */
export const DEFAULT_REGULARISATION_GRID = [1e-9, 1e-8, 1e-7, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2, 1e-1, 1];

/**
 * When cross-validation picks the smallest or largest regulariser tried, the search is widened on that side by
 * WIDEN_DECADES decades (one value per decade), at most MAX_WIDENINGS times in one fit: from 1e-9…1 to at most
 * 1e-13…1e4 (common practice, no source: a few decades past the edge show whether the optimum lies there; far
 * beyond it the solves only meet rounding (small) or the baseline alone (large)).
 */
export const WIDEN_DECADES = 2;
export const MAX_WIDENINGS = 2;

/**
 * Fit on the rows in `train` and predict the rows in `test`, once per λ (absolute) in `lambdas`.
 * Returns predictions[lambdaIndex][testRow].
 */
export function ridgeFitPredict(d: Design, train: Int32Array, test: Int32Array, lambdas: number[]): Float64Array[] {
  const out = lambdas.map(() => new Float64Array(test.length));
  const nt = train.length;
  // one array for the factors of this training set's systems (written over by each)
  let factor: Float64Array | undefined;
  const solve = (k: Float64Array, lam: number, y: Float64Array) => solveShifted(k, nt, lam, y, (factor ??= new Float64Array(nt * nt)));
  const gram = d.gram;
  if (gram) {
    const n = d.rows;
    let k: Float64Array | undefined;
    const y = Float64Array.from(train, (r) => d.y[r]);
    lambdas.forEach((lam, li) => {
      const c = memoSolve(gram, d.y, train, lam, () => solve((k ??= selectRows(gram, n, train)), lam, y));
      const o = out[li];
      for (let t = 0; t < test.length; t++) {
        let s = 0;
        const rt = test[t] * n;
        for (let a = 0; a < nt; a++) s += gram[rt + train[a]] * c[a];
        o[t] = s;
      }
    });
    return out;
  }
  const f = featureCount(d);
  const phi = d.phi as Float64Array;
  const sub = new Float64Array(nt * f);
  for (let a = 0; a < nt; a++) sub.set(phi.subarray(train[a] * f, train[a] * f + f), a * f);
  const y = Float64Array.from(train, (r) => d.y[r]);
  if (f <= nt) {
    const g = gramOfColumns(sub, nt, f);
    const b = new Float64Array(f);
    for (let a = 0; a < nt; a++) for (let i = 0; i < f; i++) b[i] += sub[a * f + i] * y[a];
    let into: Float64Array | undefined;
    lambdas.forEach((lam, li) => {
      const w = solveShifted(g, f, lam, b, (into ??= new Float64Array(f * f)));
      for (let t = 0; t < test.length; t++) out[li][t] = dotRow(phi, test[t] * f, w, f);
    });
  } else {
    let k: Float64Array | undefined;
    lambdas.forEach((lam, li) => {
      const c = memoSolve(rowGram(d), d.y, train, lam, () => solve((k ??= selectGram(d, train)), lam, y));
      const w = new Float64Array(f);
      for (let a = 0; a < nt; a++) {
        const ca = c[a];
        for (let i = 0; i < f; i++) w[i] += sub[a * f + i] * ca;
      }
      for (let t = 0; t < test.length; t++) out[li][t] = dotRow(phi, test[t] * f, w, f);
    });
  }
  return out;
}

function dotRow(phi: Float64Array, base: number, w: Float64Array, f: number): number {
  let s = 0;
  for (let i = 0; i < f; i++) s += phi[base + i] * w[i];
  return s;
}

/**
 * The dual solutions c = (K[train, train] + λI)⁻¹ y[train] computed so far, per row kernel K and targets y: the
 * cross-validation solves every fold at every regulariser of its grid, and the held-out folds of the error-bar
 * calibration (heldOutRows) solve the same systems again at the chosen one. Every number of such a system comes from
 * K, y, the training rows and λ alone (an explicit design's K is its row Gram, shared: rowGram), so a solution kept
 * here is the one a new solve would give, bit for bit. A few hundred numbers per solve; kept while K is.
 */
const dualSolutions = new WeakMap<Float64Array, WeakMap<Float64Array, Map<string, Float64Array>>>();
function memoSolve(gram: Float64Array, y: Float64Array, train: Int32Array, lambda: number, solve: () => Float64Array): Float64Array {
  let byY = dualSolutions.get(gram);
  if (!byY) dualSolutions.set(gram, (byY = new WeakMap()));
  let solutions = byY.get(y);
  if (!solutions) byY.set(y, (solutions = new Map()));
  const key = `${lambda}|${train.join(',')}`;
  let c = solutions.get(key);
  if (!c) solutions.set(key, (c = solve()));
  return c;
}

/** Solve (A + λI) x = b for symmetric A (not modified); `into`: an n × n array for the factor, written over. */
function solveShifted(a: Float64Array, n: number, lambda: number, b: Float64Array, into?: Float64Array): Float64Array {
  const { factor } = choleskyWithJitter(a, n, { shift: lambda, into });
  return choleskySolve(factor, n, b);
}

/**
 * Assign frames (groups 0…nGroups−1) to k folds: `order` is a permutation of the groups (seeded by the
 * caller); consecutive runs of it form the folds, so fold sizes differ by at most one.
 */
export function foldsOf(order: ArrayLike<number>, k: number): Int32Array {
  const n = order.length;
  const fold = new Int32Array(n);
  for (let p = 0; p < n; p++) fold[order[p]] = Math.floor((p * k) / n);
  return fold;
}

export interface CrossValidationOptions {
  /** Fold of each group (frame). */
  fold: Int32Array;
  folds: number;
  grid?: number[];
  signal?: AbortSignal;
}

/** Cross-validated mean squared error per row for every relative regulariser of the grid. */
export function crossValidateRegularisation(d: Design, opts: CrossValidationOptions): { relative: number; error: number }[] {
  const grid = opts.grid ?? DEFAULT_REGULARISATION_GRID;
  const scale = designScale(d);
  const lambdas = grid.map((g) => g * scale);
  const sse = new Float64Array(grid.length);
  let counted = 0;
  const splits: { train: Int32Array; test: Int32Array }[] = [];
  for (let k = 0; k < opts.folds; k++) {
    const train: number[] = [];
    const test: number[] = [];
    for (let r = 0; r < d.rows; r++) (opts.fold[d.group[r]] === k ? test : train).push(r);
    if (test.length && train.length) splits.push({ train: Int32Array.from(train), test: Int32Array.from(test) });
  }
  // When the folds solve in dual form, build the kernel of all rows once instead of once per fold.
  let work = d;
  if (!d.gram && splits.length && featureCount(d) > Math.min(...splits.map((s) => s.train.length))) {
    work = { rows: d.rows, group: d.group, y: d.y, gram: rowGram(d) };
  }
  for (const { train, test } of splits) {
    if (opts.signal?.aborted) throw new CancelledError();
    const pred = ridgeFitPredict(work, train, test, lambdas);
    pred.forEach((p, li) => {
      for (let t = 0; t < test.length; t++) sse[li] += (p[t] - d.y[test[t]]) ** 2;
    });
    counted += test.length;
  }
  if (counted === 0) throw new RangeError('cross-validation needs at least two frames');
  return grid.map((relative, i) => ({ relative, error: sse[i] / counted }));
}

/**
 * Fit the ridge model on every row. With `relative` null the regulariser is chosen by cross-validation
 * (smallest CV error; ties go to the larger, smoother regulariser).
 */
export function fitRidge(d: Design, relative: number | null, cv: CrossValidationOptions | null, wantPosterior = false): RidgeFit {
  const scale = designScale(d);
  let grid: { relative: number; error: number }[] = [];
  let chosen = relative;
  let cvError = 0;
  if (chosen === null) {
    if (!cv) throw new RangeError('fitRidge: no regulariser given and no cross-validation folds');
    if (cv.grid) grid = crossValidateRegularisation(d, cv);
    else {
      // coarse grid every second decade, then the two decades beside the best: 7 solves per fold, not 10
      const coarse = DEFAULT_REGULARISATION_GRID.filter((_, i) => i % 2 === 0);
      grid = crossValidateRegularisation(d, { ...cv, grid: coarse });
      const at = DEFAULT_REGULARISATION_GRID.indexOf(bestOf(grid).relative);
      const extra = [at - 1, at + 1].filter((i) => i >= 0 && i < DEFAULT_REGULARISATION_GRID.length).map((i) => DEFAULT_REGULARISATION_GRID[i]);
      grid = [...grid, ...crossValidateRegularisation(d, { ...cv, grid: extra })].sort((a, b) => a.relative - b.relative);
      grid = widenAtEdge(d, cv, grid);
    }
    const best = bestOf(grid);
    chosen = best.relative;
    cvError = best.error;
  } else if (cv) {
    grid = crossValidateRegularisation(d, { ...cv, grid: [chosen] });
    cvError = grid[0].error;
  }
  const lambda = chosen * scale;
  const all = Int32Array.from({ length: d.rows }, (_, i) => i);
  // Noise variance for the posterior: the CV error when there is one, else the training residual.
  if (d.gram) {
    const n = d.rows;
    const { factor } = choleskyWithJitter(d.gram, n, { shift: lambda });
    const c = choleskySolve(factor, n, d.y);
    const noise = !wantPosterior ? 0 : cvError > 0 ? cvError : residualNoise(d, all, lambda);
    const posterior: Posterior | undefined = wantPosterior ? { form: 'dual', size: n, factor, noise, lambda } : undefined;
    return { form: 'dual', weights: c, relative: chosen, lambda, scale, cvError, grid, posterior };
  }
  const f = featureCount(d);
  const phi = d.phi as Float64Array;
  const noise = !wantPosterior ? 0 : cvError > 0 ? cvError : residualNoise(d, all, lambda);
  const primalFactor = (): Float64Array => {
    return choleskyWithJitter(gramOfColumns(phi, d.rows, f), f, { shift: lambda }).factor;
  };
  if (f <= d.rows) {
    const factor = primalFactor();
    const b = new Float64Array(f);
    for (let r = 0; r < d.rows; r++) for (let i = 0; i < f; i++) b[i] += phi[r * f + i] * d.y[r];
    const w = choleskySolve(factor, f, b);
    const posterior: Posterior | undefined = wantPosterior ? { form: 'primal', size: f, factor, noise, lambda } : undefined;
    return { form: 'primal', weights: w, relative: chosen, lambda, scale, cvError, grid, posterior };
  }
  const { factor, jitter } = choleskyWithJitter(rowGram(d), d.rows, { shift: lambda });
  const c = choleskySolve(factor, d.rows, d.y);
  let posterior: Posterior | undefined;
  if (wantPosterior) {
    // the smaller of the two: the design and its rows × rows factor, or the size × size primal factor
    const designSmaller = d.rows * f + d.rows * d.rows < f * f;
    posterior = designSmaller ? { form: 'design', size: f, rows: d.rows, design: phi, factor, noise, lambda: lambda + jitter } : { form: 'primal', size: f, factor: primalFactor(), noise, lambda };
  }
  return { form: 'dual', weights: c, relative: chosen, lambda, scale, cvError, grid, posterior };
}

/**
 * The grid, widened while its best value is its smallest or largest (at most MAX_WIDENINGS times, WIDEN_DECADES
 * decades each, on the side of the edge). A best value still at the edge afterwards is left to the caller to report.
 */
export function widenAtEdge(d: Design, cv: CrossValidationOptions, grid: { relative: number; error: number }[]): { relative: number; error: number }[] {
  let out = grid;
  for (let k = 0; k < MAX_WIDENINGS; k++) {
    const best = bestOf(out);
    const lo = out[0].relative;
    const hi = out[out.length - 1].relative;
    const step = best.relative <= lo ? 0.1 : best.relative >= hi ? 10 : 0;
    if (step === 0) break;
    const extra = Array.from({ length: WIDEN_DECADES }, (_, i) => Number((best.relative * step ** (i + 1)).toPrecision(12)));
    out = [...out, ...crossValidateRegularisation(d, { ...cv, grid: extra })].sort((a, b) => a.relative - b.relative);
  }
  return out;
}

/** Smallest CV error; ties go to the larger (smoother) regulariser. */
function bestOf(grid: { relative: number; error: number }[]): { relative: number; error: number } {
  let best = grid[0];
  for (const g of grid) if (g.error < best.error * (1 - 1e-9) || (g.error <= best.error * (1 + 1e-9) && g.relative > best.relative)) best = g;
  return best;
}

function residualNoise(d: Design, all: Int32Array, lambda: number): number {
  const [p] = ridgeFitPredict(d, all, all, [lambda]);
  let s = 0;
  for (let r = 0; r < d.rows; r++) s += (p[r] - d.y[r]) ** 2;
  return d.rows > 0 ? s / d.rows : 0;
}

/** w = Φᵀ c for a dual fit of an explicit design. */
export function primalWeights(d: Design, fit: RidgeFit): Float64Array {
  if (fit.form === 'primal') return fit.weights;
  const f = featureCount(d);
  const phi = d.phi as Float64Array;
  const w = new Float64Array(f);
  for (let r = 0; r < d.rows; r++) {
    const c = fit.weights[r];
    for (let i = 0; i < f; i++) w[i] += phi[r * f + i] * c;
  }
  return w;
}

/**
 * Latent predictive variance of one new row. Primal: pass φ. Dual: pass k* (kernel to each training row) and
 * k** (the row's kernel with itself). A design form's design is taken as long-lived (a model's posterior): it is
 * kept in the WebAssembly kernels' memory for its passes, and must not change in place afterwards.
 */
export function posteriorVariance(post: Posterior, phiOrKStar: Float64Array, kStarStar = 0): number {
  if (post.form === 'design') return post.noise * designLeverage(post.design, post.rows, post.size, post.factor, post.lambda, phiOrKStar, true);
  const z = forwardSubstitute(post.factor, post.size, Float64Array.from(phiOrKStar));
  let q = 0;
  for (let i = 0; i < post.size; i++) q += z[i] * z[i];
  if (post.form === 'primal') return post.noise * q;
  return Math.max(0, (post.noise / post.lambda) * (kStarStar - q));
}

/**
 * Leverage φᵀ(ΦᵀΦ + λI)⁻¹φ of a row φ against an explicit design Φ (rows × f, row-major) through the rows × rows
 * system: c = (ΦΦᵀ + λI)⁻¹Φφ, then |c|² + |φ − Φᵀc|²/λ. The same number as the primal form (ΦᵀΦ + λI = its
 * Cholesky factor squared), but a sum of squares: the textbook (φᵀφ − (Φφ)ᵀc)/λ loses about as many digits as
 * φᵀφ/λ exceeds the leverage (9 of them for a frame like the training frames), and the primal factor of
 * ΦᵀΦ + λI loses them as well (its condition number is ‖Φ‖²/λ). `factor` is the Cholesky factor of ΦΦᵀ + λI.
 */
export function designLeverage(design: Float64Array, rows: number, f: number, factor: Float64Array, lambda: number, phi: ArrayLike<number>, resident = false): number {
  // a long-lived design (a model's, `resident`): the two passes over it through the WebAssembly kernels where they
  // are on, the design copied into their memory once (kernels.ts designLeverageKernel: the same bits)
  const done = resident
    ? designLeverageKernel(design, rows, f, phi, (c) => {
        forwardSubstitute(factor, rows, c);
        backSubstitute(factor, rows, c);
      })
    : null;
  if (done) {
    let cc = 0;
    for (let a = 0; a < rows; a++) cc += done.c[a] * done.c[a];
    return cc + done.rr / lambda;
  }
  const c = new Float64Array(rows);
  for (let a = 0; a < rows; a++) {
    const base = a * f;
    let s0 = 0;
    let s1 = 0;
    let j = 0;
    for (; j + 1 < f; j += 2) {
      s0 += design[base + j] * phi[j];
      s1 += design[base + j + 1] * phi[j + 1];
    }
    if (j < f) s0 += design[base + j] * phi[j];
    c[a] = s0 + s1;
  }
  forwardSubstitute(factor, rows, c);
  backSubstitute(factor, rows, c);
  let cc = 0;
  for (let a = 0; a < rows; a++) cc += c[a] * c[a];
  const r = Float64Array.from(phi);
  for (let a = 0; a < rows; a++) {
    const ca = c[a];
    const base = a * f;
    for (let j = 0; j < f; j++) r[j] -= design[base + j] * ca;
  }
  let rr = 0;
  for (let j = 0; j < f; j++) rr += r[j] * r[j];
  return cc + rr / lambda;
}

/** Held-out predictions and leverages of every row, from the k folds of a cross-validation at one λ. */
export interface HeldOut {
  /** Prediction of each row by the model fitted without its fold. */
  predicted: Float64Array;
  /** Leverage h = φᵀ(Φ_trainᵀΦ_train + λI)⁻¹φ of each row against its fold's training rows (latent variance / noise). */
  leverage: Float64Array;
}

/**
 * Refits the ridge model once per fold at the absolute regulariser λ and returns every row's held-out prediction
 * and its leverage — the latent posterior variance of that row divided by the noise variance (the quantity
 * posteriorVariance scales). Explicit designs use the smaller of the primal (F×F) and dual (rows×rows) systems
 * (the dual through designLeverage); a structure kernel uses h = (k** − k*ᵀ(K + λI)⁻¹k*)/λ. Rows of folds with no training rows get NaN,
 * and every row NaN leverage when `withLeverage` is false (only the predictions are wanted).
 */
export function heldOutRows(d: Design, opts: CrossValidationOptions, lambda: number, withLeverage = true): HeldOut {
  const predicted = new Float64Array(d.rows).fill(NaN);
  const leverage = new Float64Array(d.rows).fill(NaN);
  for (let k = 0; k < opts.folds; k++) {
    if (opts.signal?.aborted) throw new CancelledError();
    const train: number[] = [];
    const test: number[] = [];
    for (let r = 0; r < d.rows; r++) (opts.fold[d.group[r]] === k ? test : train).push(r);
    if (!test.length || !train.length) continue;
    const tr = Int32Array.from(train);
    const te = Int32Array.from(test);
    const [p] = ridgeFitPredict(d, tr, te, [lambda]);
    const h = withLeverage ? foldLeverage(d, tr, te, lambda) : null;
    te.forEach((r, t) => {
      predicted[r] = p[t];
      if (h) leverage[r] = h[t];
    });
  }
  return { predicted, leverage };
}

function foldLeverage(d: Design, train: Int32Array, test: Int32Array, lambda: number): Float64Array {
  const nt = train.length;
  const out = new Float64Array(test.length);
  if (d.gram) {
    // a structure kernel has no explicit rows: h = (k** − k*ᵀ(K + λI)⁻¹k*)/λ
    const n = d.rows;
    const g = d.gram;
    const { factor } = choleskyWithJitter(selectRows(g, n, train), nt, { shift: lambda });
    const ks = new Float64Array(nt);
    for (let t = 0; t < test.length; t++) {
      for (let a = 0; a < nt; a++) ks[a] = g[test[t] * n + train[a]];
      const z = forwardSubstitute(factor, nt, ks);
      let q = 0;
      for (let a = 0; a < nt; a++) q += z[a] * z[a];
      out[t] = Math.max(0, (g[test[t] * n + test[t]] - q) / lambda);
    }
    return out;
  }
  const f = featureCount(d);
  const phi = d.phi as Float64Array;
  const sub = new Float64Array(nt * f);
  for (let a = 0; a < nt; a++) sub.set(phi.subarray(train[a] * f, train[a] * f + f), a * f);
  if (f <= nt) {
    const { factor } = choleskyWithJitter(gramOfColumns(sub, nt, f), f, { shift: lambda });
    for (let t = 0; t < test.length; t++) {
      const z = forwardSubstitute(factor, f, phi.slice(test[t] * f, test[t] * f + f));
      let q = 0;
      for (let i = 0; i < f; i++) q += z[i] * z[i];
      out[t] = q;
    }
    return out;
  }
  const { factor, jitter } = choleskyWithJitter(selectGram(d, train), nt, { shift: lambda });
  for (let t = 0; t < test.length; t++) out[t] = designLeverage(sub, nt, f, factor, lambda + jitter, phi.subarray(test[t] * f, test[t] * f + f));
  return out;
}
