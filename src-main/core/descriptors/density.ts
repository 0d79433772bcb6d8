// The neighbour-density expansion c^a_nlm(i) of science notes §4:
//     c^a_nlm(i) = 4π Σ_{j ∈ a} f_c(r_ij) Y_lm(r̂_ij) I_nl(r_ij),
//     I_nl(d)   = ∫_0^{r_c} r² R_n(r) e^{−(r−d)²/2σ²} [e^{−x} i_l(x)] dr,   x = r d / σ²,
// i.e. the projection of Σ_j f_c(r_ij) exp(−|r − r_ij|²/2σ²) on R_n(r) Y_lm(r̂) (the plane-wave-like expansion
// of exp(x cos θ) in i_l and Y_lm, DLMF 10.60.7, scaled by e^{−x}).
//
// Choices (docs/learning-engine.md):
// - f_c: cosine switch, 1 below r_c − w, ½(1 + cos(π (r − r_c + w)/w)) on [r_c − w, r_c], 0 beyond: value and
//   first derivative continuous everywhere, so features are C¹ as an atom crosses r_c.
// - The centre's own Gaussian IS included, in its species' channel (only l = 0 at d = 0). An atom with no
//   neighbours then still has a non-zero invariant feature, so isolated atoms and molecules are comparable.
// - I_nl(d) is computed once per (nmax, lmax, r_c, σ) by Gauss–Legendre quadrature with its exact derivative in
//   d, on a uniform grid of spacing ≤ σ/32, and stored as cubic Hermite pieces; the hot loop only evaluates
//   cubics. Hermite error ~ h⁴ f⁗/384 ≈ 1e-9 relative at that spacing.
import { gaussLegendre } from '../numerics/quadrature.ts';
import { radialBasis, type RadialBasis } from './radial-basis.ts';
import { scaledSphericalBesselI } from './spherical-bessel.ts';
import { harmonicTables, realSphericalHarmonics } from './harmonics.ts';
import { descriptorKernels, type DescriptorKernels } from '../wasm/descriptors.ts';

/** Smooth cutoff f_c(r): 1 below cutoff − width, cosine switch to 0 at cutoff. */
export function cutoffFunction(r: number, cutoff: number, width: number): number {
  if (r >= cutoff) return 0;
  const inner = cutoff - width;
  if (r <= inner) return 1;
  return 0.5 * (1 + Math.cos((Math.PI * (r - inner)) / width));
}

/** Nodes and weights of `panels` equal panels of an `order`-point Gauss–Legendre rule on [a, b]. */
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

export interface RadialSettings {
  nmax: number;
  lmax: number;
  cutoff: number;
  sigma: number;
}

/**
 * I_nl(d) (and dI_nl/dd when `derivative` is given) for n < nmax, l ≤ lmax at one distance d, by quadrature:
 * panels of width ≤ σ with 20 Gauss–Legendre points over [d − 9σ, d + 9σ] ∩ [0, r_c] (the Gaussian is below
 * 3e-18 of its peak outside). Output index n·(lmax+1) + l. Slow; used to build the table and in tests.
 */
export function radialIntegral(s: RadialSettings, d: number, value: Float64Array, derivative?: Float64Array): void {
  const { nmax, lmax, cutoff, sigma } = s;
  const L1 = lmax + 1;
  value.fill(0, 0, nmax * L1);
  derivative?.fill(0, 0, nmax * L1);
  const lo = Math.max(0, d - 9 * sigma);
  const hi = Math.min(cutoff, d + 9 * sigma);
  if (!(hi > lo)) return;
  const panels = Math.max(1, Math.ceil((hi - lo) / sigma));
  const { nodes, weights } = panelRule(lo, hi, panels, 20);
  const basis = basisFor(nmax, cutoff);
  const R = new Float64Array(nmax);
  const sb = new Float64Array(lmax + 2);
  // the factor of the derivative that depends on l only (the same expression per (n, l) as before, computed once per l)
  const dl = new Float64Array(L1);
  const inv2s2 = 1 / (2 * sigma * sigma);
  const invs2 = 1 / (sigma * sigma);
  for (let k = 0; k < nodes.length; k++) {
    const r = nodes[k];
    basis.evaluate(r, R);
    const g = weights[k] * r * r * Math.exp(-(r - d) * (r - d) * inv2s2);
    if (g === 0) continue;
    scaledSphericalBesselI(lmax + 1, r * d * invs2, sb);
    if (derivative) {
      // d/dd [e^{−(r²+d²)/2σ²} i_l(x)] = e^{−(r²+d²)/2σ²} [−(d/σ²) i_l + (r/σ²) i_l'(x)],
      // i_l' = (l i_{l−1} + (l+1) i_{l+1})/(2l+1)  (DLMF 10.51.5); i_0' = i_1.
      for (let l = 0; l <= lmax; l++) {
        const ds = l === 0 ? sb[1] : (l * sb[l - 1] + (l + 1) * sb[l + 1]) / (2 * l + 1);
        dl[l] = -d * invs2 * sb[l] + r * invs2 * ds;
      }
    }
    for (let n = 0; n < nmax; n++) {
      const gr = g * R[n];
      const o = n * L1;
      for (let l = 0; l <= lmax; l++) value[o + l] += gr * sb[l];
      if (derivative) for (let l = 0; l <= lmax; l++) derivative[o + l] += gr * dl[l];
    }
  }
}

let lastBasis: RadialBasis | null = null;
/** radialBasis(nmax, cutoff), kept from the previous call (a table asks for the same basis at every grid point). */
function basisFor(nmax: number, cutoff: number): RadialBasis {
  if (lastBasis?.nmax !== nmax || lastBasis.cutoff !== cutoff) lastBasis = radialBasis(nmax, cutoff);
  return lastBasis;
}

/** Cubic Hermite pieces of I_nl(d) on [0, r_c]: coefficients[(k·4 + p)·NL + nl] of t^p on interval k. */
export interface RadialTable {
  settings: RadialSettings;
  /** Grid spacing (Å) and number of intervals. */
  spacing: number;
  intervals: number;
  coefficients: Float64Array;
}

const tableCache = new Map<string, RadialTable>();
/** Tables kept (about 0.5 MB each at nmax 8, lmax 6); the oldest is dropped beyond this. */
const TABLE_CACHE_SIZE = 12;

/**
 * Where tables built by earlier runs are kept (a cache folder, set by the host: io/radial-table-store.ts); none by
 * default. Building a table takes 0.1–0.2 s, a good share of predicting one frame. A stored table is used only when
 * it has the expected length and a few of its pieces, rebuilt here, match it bit for bit (storedTableFits),
 * or the store knows that this very program saw it so (knownToFit); otherwise the table is built and stored again.
 */
export interface RadialTableStore {
  load(key: string, length: number): Float64Array | null;
  save(key: string, coefficients: Float64Array): void;
  /**
   * Optional: whether this very program (the same code on the same engine) built the table `load` just gave, or saw
   * it pass storedTableFits, before; the check would pass again, so it is skipped. `fitted` is told when it passed.
   */
  knownToFit?(key: string, coefficients: Float64Array): boolean;
  fitted?(key: string, coefficients: Float64Array): void;
}
let tableStore: RadialTableStore | null = null;
export function useRadialTableStore(store: RadialTableStore | null): void {
  tableStore = store;
}

/** Hermite pieces k of the table: coefficients[(k·4 + p)·NL + q] from the integrals at grid points k and k+1. */
function hermitePieces(values: Float64Array, slopes: Float64Array, k: number, NL: number, h: number, coefficients: Float64Array): void {
  for (let q = 0; q < NL; q++) {
    const y0 = values[k * NL + q];
    const y1 = values[(k + 1) * NL + q];
    const m0 = h * slopes[k * NL + q];
    const m1 = h * slopes[(k + 1) * NL + q];
    const base = k * 4 * NL + q;
    coefficients[base] = y0;
    coefficients[base + NL] = m0;
    coefficients[base + 2 * NL] = 3 * (y1 - y0) - 2 * m0 - m1;
    coefficients[base + 3 * NL] = 2 * (y0 - y1) + m0 + m1;
  }
}

/**
 * Whether a stored table is the one radialTable builds for `s`: its first and last pieces rebuilt here (4 of the
 * table's integrals; at the usual settings between them every branch of the Bessel function: x = 0, the series,
 * both recurrences)
 * equal it bit for bit. Catches a table of other code (a changed integral, basis or Bessel function changes these
 * pieces); the store checks the bytes themselves (a checksum). The inner pieces are left out: at a cold start
 * (code not yet compiled) each costs about 10 ms, a good share of what the store saves.
 */
export function storedTableFits(s: RadialSettings, intervals: number, coefficients: Float64Array): boolean {
  const NL = s.nmax * (s.lmax + 1);
  if (coefficients.length !== intervals * 4 * NL) return false;
  const h = s.cutoff / intervals;
  const values = new Float64Array((intervals + 1) * NL);
  const slopes = new Float64Array((intervals + 1) * NL);
  const v = new Float64Array(NL);
  const dv = new Float64Array(NL);
  const rebuilt = new Float64Array(coefficients.length);
  for (const k of new Set([0, intervals - 1])) {
    for (const g of [k, k + 1]) {
      radialIntegral(s, g * h, v, dv);
      values.set(v, g * NL);
      slopes.set(dv, g * NL);
    }
    hermitePieces(values, slopes, k, NL, h, rebuilt);
    for (let i = k * 4 * NL; i < (k + 1) * 4 * NL; i++) if (!Object.is(rebuilt[i], coefficients[i])) return false;
  }
  return true;
}

/** Intervals of the table grid for these settings (spacing ≤ σ/32, at least 64). */
function tableIntervals(s: RadialSettings): number {
  return Math.max(64, Math.ceil(s.cutoff / (s.sigma / 32)));
}

/** The tabulated radial integrals for these settings (built once, then cached by value of the settings). */
export function radialTable(s: RadialSettings): RadialTable {
  const key = `${s.nmax}|${s.lmax}|${s.cutoff}|${s.sigma}`;
  const hit = tableCache.get(key);
  if (hit) return hit;
  const NL = s.nmax * (s.lmax + 1);
  const intervals = tableIntervals(s);
  const h = s.cutoff / intervals;
  const stored = tableStore?.load(key, intervals * 4 * NL) ?? null;
  let fits = stored !== null && tableStore?.knownToFit?.(key, stored) === true;
  if (stored && !fits && storedTableFits(s, intervals, stored)) {
    fits = true;
    tableStore?.fitted?.(key, stored);
  }
  const table = stored && fits ? { settings: { ...s }, spacing: h, intervals, coefficients: stored } : buildTable(s, key);
  if (tableCache.size >= TABLE_CACHE_SIZE) tableCache.delete(tableCache.keys().next().value as string);
  tableCache.set(key, table);
  return table;
}

function buildTable(s: RadialSettings, key: string): RadialTable {
  const NL = s.nmax * (s.lmax + 1);
  const intervals = tableIntervals(s);
  const h = s.cutoff / intervals;
  const values = new Float64Array((intervals + 1) * NL);
  const slopes = new Float64Array((intervals + 1) * NL);
  const v = new Float64Array(NL);
  const dv = new Float64Array(NL);
  for (let k = 0; k <= intervals; k++) {
    radialIntegral(s, k * h, v, dv);
    values.set(v, k * NL);
    slopes.set(dv, k * NL);
  }
  const coefficients = new Float64Array(intervals * 4 * NL);
  for (let k = 0; k < intervals; k++) hermitePieces(values, slopes, k, NL, h, coefficients);
  tableStore?.save(key, coefficients);
  return { settings: { ...s }, spacing: h, intervals, coefficients };
}

/** Interpolated I_nl(d) for all (n, l) into out[n·(lmax+1) + l]; zero at and beyond r_c. */
export function interpolateRadial(table: RadialTable, d: number, out: Float64Array): void {
  const NL = table.settings.nmax * (table.settings.lmax + 1);
  if (!(d < table.settings.cutoff)) {
    out.fill(0, 0, NL);
    return;
  }
  const u = d / table.spacing;
  let k = Math.floor(u);
  if (k >= table.intervals) k = table.intervals - 1;
  const t = u - k;
  const c = table.coefficients;
  const b0 = k * 4 * NL;
  const b1 = b0 + NL;
  const b2 = b1 + NL;
  const b3 = b2 + NL;
  for (let q = 0; q < NL; q++) out[q] = c[b0 + q] + t * (c[b1 + q] + t * (c[b2 + q] + t * c[b3 + q]));
}

/** Pairs of one centre, in the CSR layout of core/geometry/neighbours.ts (structurally compatible with NeighbourList). */
export interface NeighbourPairs {
  start: Int32Array;
  neighbour: Int32Array;
  vectors: Float64Array;
  distances: Float64Array;
}

export interface DensitySettings extends RadialSettings {
  cutoffWidth: number;
  /** Number of neighbour species channels. */
  channels: number;
}

/**
 * A reusable expander: owns its scratch buffers (one per expander, none per pair). `expand` writes c^a_nlm(i)
 * for one centre into out[(a·nmax + n)·(lmax+1)² + l² + l + m].
 */
export interface DensityExpander {
  settings: DensitySettings;
  /** Length of one centre's coefficient block. */
  size: number;
  expand(pairs: NeighbourPairs, centre: number, centreChannel: number, channelOf: Int32Array, out: Float64Array, slot?: number): void;
  /**
   * expand, except that where the kernels ran the coefficients are left in the kernels' memory only (`out` is not
   * written: coefficientsAt(slot), copyCoefficients); returns whether `out` holds them (the JavaScript path).
   */
  expandLeaving(pairs: NeighbourPairs, centre: number, centreChannel: number, channelOf: Int32Array, out: Float64Array, slot: number): boolean;
  /**
   * Copies what the last expansion into `slot` left in the kernels' memory into `out`, when it is still there
   * (coefficientsAt(slot) ≥ 0); returns whether it did.
   */
  copyCoefficients(slot: number, out: Float64Array): boolean;
  /**
   * Where the last `expand` left its coefficients transposed in the descriptor kernels' memory (byte address of
   * cT[lm·channels·nmax + a·nmax + n]), while they are still there; −1 when it took
   * the JavaScript path or its region has moved since (features.ts reads the λ = 0 row from them).
   */
  transposedAt(): number;
  /**
   * Where the last `expand` into `slot` (0 when not given; EXPANSION_SLOTS of them) left its coefficients (the layout
   * of `out`, readable two doubles past their end) in the descriptor kernels' memory, while they are still there
   * (nothing placed since, and the region not placed anew by a later expansion with more pairs than any before);
   * −1 otherwise, as for transposedAt.
   */
  coefficientsAt(slot?: number): number;
}

/** Coefficient slots of an expander in the kernels' memory (expand's `slot`): a group of environments side by side. */
export const EXPANSION_SLOTS = 8;

const expanderCache = new Map<string, DensityExpander>();

/**
 * The expander of these settings, made once and shared (by every feature plan with the same density settings,
 * e.g. the λ = 0 and the λ = 0 + 2 plans of one model). One expander per settings is also one closure of the
 * hot loop: V8 compiles a closure that is the only one made from its code with its captured sizes as constants,
 * and measured the loop about 2× slower once a second expander of the same code existed (bench/kernels.bench.ts
 * conditions). Not re-entrant, like every expander (scratch of its own); prediction and training are
 * single-threaded per worker.
 */
export function densityExpander(s: DensitySettings): DensityExpander {
  const key = `${s.nmax}|${s.lmax}|${s.cutoff}|${s.sigma}|${s.cutoffWidth}|${s.channels}`;
  let e = expanderCache.get(key);
  if (!e) {
    e = makeDensityExpander(s);
    if (expanderCache.size >= TABLE_CACHE_SIZE) expanderCache.delete(expanderCache.keys().next().value as string);
    expanderCache.set(key, e);
  }
  return e;
}

export function makeDensityExpander(s: DensitySettings): DensityExpander {
  const { nmax, lmax, cutoff, cutoffWidth, channels } = s;
  const table = radialTable(s);
  const L1 = lmax + 1;
  const LL = L1 * L1;
  const NL = nmax * L1;
  const size = channels * nmax * LL;
  const Y = new Float64Array(LL);
  const FOUR_PI = 4 * Math.PI;
  // The centre's own Gaussian: f_c(0) Y_00 I_n0(0) in the l = 0 slot of its channel.
  const self = new Float64Array(NL);
  interpolateRadial(table, 0, self);
  const selfTerm = new Float64Array(nmax);
  for (let n = 0; n < nmax; n++) selfTerm[n] = (FOUR_PI / Math.sqrt(4 * Math.PI)) * self[n * L1];
  const inner = cutoff - cutoffWidth;
  const switchScale = Math.PI / cutoffWidth;
  // The table's coefficients reordered for the loop below: within interval k, entry (l·nmax + n)·4 + power, so the
  // four coefficients of one cubic sit side by side and one interval is read front to back (the table, ≈ 0.6 MB
  // at nmax 8, lmax 6, is too large for the first-level cache; the layout of the table itself reads four rows
  // NL apart). The same numbers in the same operations: the integrals are bit-identical. Made on the first
  // expansion through this JavaScript loop: where the kernels run, only their own order (pairedTable) is made,
  // straight from the table (a cold start spent ≈ 8 ms making both, one from the other).
  let byDegree: Float64Array | null = null;
  const radial = new Float64Array(NL);
  const work = new Float64Array(size);
  const intervals = table.intervals;
  const invSpacing = 1 / table.spacing;

  // The WebAssembly path (core/wasm/assembly/descriptors.ts pairTerms and expandAccumulate): here each pair's
  // channel, cutoff weight (Math.cos) and table interval as below; there |vector| (by Math.hypot's operations), the pairs sorted by
  // channel (keeping their order), their harmonics (the recurrences of harmonics.ts, two pairs per vector) and
  // radial integrals (two per vector) with the same operations, then each sum in pair order: the same bits. Its
  // region: the harmonics' tables, the radial table (in pairs of integrals: byPairs), self term, the channels'
  // first positions, then room for `room` pairs (parameters, harmonics, radial integrals, channel and position).
  const owner = {};
  const tables = harmonicTables(lmax);
  let room = 0;
  type Placement = { at: number; generation: number; kernels: DescriptorKernels; par: Float64Array; chan: Int32Array; outs: Float64Array[] };
  let placed: Placement | null = null;
  /** Whether the last expand went through the kernels (and left cT); the arena's epoch when `placed` was checked. */
  let lastByKernel = false;
  let placedEpoch = -1;
  const align = (doubles: number) => 2 * Math.ceil(doubles / 2);
  const NLp = align(NL);
  let byPairs: Float64Array | null = null;
  const aAt = 0;
  const bAt = aAt + align(tables.a.length);
  const diagAt = bAt + align(tables.b.length);
  const coefAt = diagAt + align(tables.diag.length);
  const selfAt = coefAt + intervals * NLp * 4;
  const startAt = selfAt + align(nmax);
  const outAt = startAt + align(Math.ceil((channels + 1) / 2));
  // the coefficients transposed, cT[lm·channels·nmax + a·nmax + n] (powerSpectrumRow's layout, which reads one
  // double past their end)
  const cTAt = outAt + EXPANSION_SLOTS * align(size);
  const fixedDoubles = cTAt + align(size + 1);
  const perPair = 8 + LL + NLp + 1;
  const place = (K: DescriptorKernels, count: number) => {
    if (placed && placed.kernels === K && count <= room && placed.par.length !== 0) {
      if (K.epoch() === placedEpoch) return placed;
      const r = K.region(owner, (fixedDoubles + room * perPair) * 8);
      if (r && r.at === placed.at && r.generation === placed.generation) {
        placedEpoch = K.epoch();
        return placed;
      }
    }
    room = Math.max(room, count, 64);
    const r = K.region(owner, (fixedDoubles + room * perPair) * 8);
    if (r === null) return null;
    const at = r.at;
    byPairs ??= pairedTable(table.coefficients, intervals, nmax, lmax);
    K.module.f64(at + aAt * 8, tables.a.length).set(tables.a);
    K.module.f64(at + bAt * 8, tables.b.length).set(tables.b);
    K.module.f64(at + diagAt * 8, tables.diag.length).set(tables.diag);
    K.module.f64(at + coefAt * 8, byPairs.length).set(byPairs);
    K.module.f64(at + selfAt * 8, nmax).set(selfTerm);
    const parAt = at + fixedDoubles * 8;
    const chanAt = parAt + room * (8 + LL + NLp) * 8;
    placed = {
      at,
      generation: r.generation,
      kernels: K,
      par: K.module.f64(parAt, room * 8),
      chan: new Int32Array(K.module.f64(0, 0).buffer, chanAt, room),
      outs: Array.from({ length: EXPANSION_SLOTS }, (_, slot) => K.module.f64(at + (outAt + slot * align(size)) * 8, size)),
    };
    placedEpoch = K.epoch();
    return placed;
  };
  /**
   * The placement of the region each slot's last expansion was written in (null: it took the JavaScript path). A
   * region that grew since (a centre with more pairs than any before) is placed anew elsewhere, without the slots'
   * contents: those slots are gone.
   */
  const slotPlacement: (Placement | null)[] = [];
  /** Byte address of the region's part at `doubles` while nothing was placed since it was checked, else −1. */
  const placedAt = (doubles: number): number => {
    // nothing placed since this expander's region was checked: it is where it was, and so are the coefficients
    if (placed === null) return -1;
    const K = descriptorKernels();
    return K === placed.kernels && K.epoch() === placedEpoch ? placed.at + doubles * 8 : -1;
  };
  /** The expansion through the kernels into `slot` of the region, left there (coefficientsAt); false when the region cannot hold the pairs. */
  const expandKernel = (K: DescriptorKernels, pairs: NeighbourPairs, centre: number, centreChannel: number, channelOf: Int32Array, slot: number): boolean => {
    const { start, neighbour, vectors, distances } = pairs;
    const from = start[centre];
    const count = start[centre + 1] - from;
    const at = place(K, count);
    if (at === null) return false;
    const { par, chan } = at;
    const cut = cutoff, inn = inner, sw = switchScale, inv = invSpacing, last = intervals;
    for (let q = 0; q < count; q++) {
      const p = from + q;
      const d = distances[p];
      chan[q] = -1;
      if (!(d < cut)) continue;
      const a = channelOf[neighbour[p]];
      if (a < 0) continue;
      chan[q] = a;
      const x = vectors[3 * p], y = vectors[3 * p + 1], z = vectors[3 * p + 2];
      if (!(Number.isFinite(x) && Number.isFinite(y) && Number.isFinite(z))) realSphericalHarmonics(lmax, x, y, z, Y); // throws as the JavaScript path does
      const o = 8 * q;
      par[o] = x;
      par[o + 1] = y;
      par[o + 2] = z;
      par[o + 4] = d <= inn ? FOUR_PI : FOUR_PI * 0.5 * (1 + Math.cos(sw * (d - inn)));
      const u = d * inv;
      let k = Math.floor(u);
      if (k >= last) k = last - 1;
      par[o + 5] = k;
      par[o + 6] = u - k;
    }
    const parAt = at.at + fixedDoubles * 8;
    const yAt = parAt + room * 8 * 8;
    const rAt = yAt + room * LL * 8;
    const chanAt = rAt + room * NLp * 8;
    const orderAt = chanAt + room * 4;
    const base = at.at;
    const startsAt = base + startAt * 8;
    K.pairTerms(parAt, chanAt, count, channels, lmax, NLp, base + aAt * 8, base + bAt * 8, base + diagAt * 8, tables.y00, base + coefAt * 8, yAt, rAt, orderAt, startsAt);
    K.expandAccumulate(yAt, rAt, startsAt, NLp, nmax, lmax, channels, base + (outAt + slot * align(size)) * 8, base + selfAt * 8, centreChannel, base + cTAt * 8);
    return true;
  };
  const checkSlot = (slot: number) => {
    if (!(Number.isInteger(slot) && slot >= 0 && slot < EXPANSION_SLOTS)) throw new RangeError(`expand: slot ${slot} is not in 0…${EXPANSION_SLOTS - 1}`);
  };

  /** The expansion in JavaScript: the fallback where the kernels are off or cannot hold the pairs, and their oracle. */
  const expandPlain = (pairs: NeighbourPairs, centre: number, centreChannel: number, channelOf: Int32Array, out: Float64Array): void => {
    // Locals, not closure slots, in the loop (V8 keeps them in registers).
    byDegree ??= degreeTable(table.coefficients, intervals, nmax, lmax);
    const coef = byDegree, Yl = Y, rl = radial, acc = work, cut = cutoff, inn = inner, sw = switchScale, inv = invSpacing, last = intervals;
    acc.fill(0);
    const { start, neighbour, vectors, distances } = pairs;
    const end = start[centre + 1];
    for (let p = start[centre]; p < end; p++) {
      const d = distances[p];
      if (!(d < cut)) continue;
      const a = channelOf[neighbour[p]];
      if (a < 0) continue;
      realSphericalHarmonics(lmax, vectors[3 * p], vectors[3 * p + 1], vectors[3 * p + 2], Yl);
      const w = d <= inn ? FOUR_PI : FOUR_PI * 0.5 * (1 + Math.cos(sw * (d - inn)));
      // Radial integrals by the cubic pieces of interval k, ordered l·nmax + n.
      const u = d * inv;
      let k = Math.floor(u);
      if (k >= last) k = last - 1;
      const t = u - k;
      const t2 = t * t, t3 = t2 * t;
      const q0 = k * 4 * NL;
      for (let j = 0; j < NL; j++) {
        const o = q0 + 4 * j;
        rl[j] = w * (coef[o] + t * coef[o + 1] + t2 * coef[o + 2] + t3 * coef[o + 3]);
      }
      // Accumulate in the work layout (a·LL + lm)·nmax + n: the inner loop runs over n, contiguous.
      const base = a * LL * nmax;
      for (let l = 0; l <= lmax; l++) {
        const rb = l * nmax;
        const hi = (l + 1) * (l + 1);
        for (let lm = l * l; lm < hi; lm++) {
          const y = Yl[lm];
          const ob = base + lm * nmax;
          for (let n = 0; n < nmax; n++) acc[ob + n] += y * rl[rb + n];
        }
      }
    }
    // Back to the public layout (a·nmax + n)·LL + lm, plus the centre's own Gaussian.
    for (let a = 0; a < channels; a++) {
      for (let lm = 0; lm < LL; lm++) {
        const src = (a * LL + lm) * nmax;
        for (let n = 0; n < nmax; n++) out[(a * nmax + n) * LL + lm] = acc[src + n];
      }
    }
    if (centreChannel >= 0) for (let n = 0; n < nmax; n++) out[(centreChannel * nmax + n) * LL] += selfTerm[n];
  };

  const expandLeaving: DensityExpander['expandLeaving'] = (pairs, centre, centreChannel, channelOf, out, slot) => {
    checkSlot(slot);
    const K = descriptorKernels();
    lastByKernel = K !== null && expandKernel(K, pairs, centre, centreChannel, channelOf, slot);
    slotPlacement[slot] = lastByKernel ? placed : null;
    if (lastByKernel) return false;
    expandPlain(pairs, centre, centreChannel, channelOf, out);
    return true;
  };
  const coefficientsAt = (slot = 0): number => {
    const p = slotPlacement[slot];
    return p != null && p === placed ? placedAt(outAt + slot * align(size)) : -1;
  };

  return {
    settings: { ...s },
    size,
    expandLeaving,
    copyCoefficients(slot, out) {
      if (coefficientsAt(slot) < 0) return false;
      out.set((placed as Placement).outs[slot]);
      return true;
    },
    expand(pairs, centre, centreChannel, channelOf, out, slot = 0) {
      // where the kernels ran, the coefficients just written into the slot, copied out
      if (!expandLeaving(pairs, centre, centreChannel, channelOf, out, slot)) out.set((placed as Placement).outs[slot]);
    },
    transposedAt() {
      return lastByKernel ? placedAt(cTAt) : -1;
    },
    coefficientsAt,
  };
}

/**
 * The radial table (interval k, power, then n·(lmax+1) + l) reordered for the JavaScript loop of the expander:
 * interval k, entry j·4 + power, j = l·nmax + n. The same numbers, moved.
 */
function degreeTable(coefficients: Float64Array, intervals: number, nmax: number, lmax: number): Float64Array {
  const L1 = lmax + 1;
  const NL = nmax * L1;
  const out = new Float64Array(coefficients.length);
  for (let k = 0; k < intervals; k++) {
    for (let power = 0; power < 4; power++) {
      const from = (k * 4 + power) * NL;
      for (let n = 0; n < nmax; n++) for (let l = 0; l <= lmax; l++) out[k * 4 * NL + (l * nmax + n) * 4 + power] = coefficients[from + n * L1 + l];
    }
  }
  return out;
}

/**
 * The radial table (interval k, power, then n·(lmax+1) + l) reordered for the kernel, two integrals side by side
 * (j = l·nmax + n): interval k, pair j/2, then power, then j mod 2 — k·NLp·4 + (j/2)·8 + power·2 + (j mod 2),
 * NLp = NL rounded up to even (a missing last integral has zero coefficients). The same numbers, moved; straight
 * from the table, one interval row (NL values of one power) at a time.
 */
function pairedTable(coefficients: Float64Array, intervals: number, nmax: number, lmax: number): Float64Array {
  const L1 = lmax + 1;
  const NL = nmax * L1;
  const NLp = 2 * Math.ceil(NL / 2);
  const out = new Float64Array(intervals * NLp * 4);
  // where entry n·L1 + l of a row goes, relative to its interval and power: (j/2)·8 + (j mod 2), j = l·nmax + n
  const to = new Int32Array(NL);
  for (let n = 0; n < nmax; n++) {
    for (let l = 0; l <= lmax; l++) {
      const j = l * nmax + n;
      to[n * L1 + l] = (j >> 1) * 8 + (j & 1);
    }
  }
  for (let k = 0; k < intervals; k++) {
    for (let power = 0; power < 4; power++) {
      const from = (k * 4 + power) * NL;
      const base = k * NLp * 4 + power * 2;
      for (let i = 0; i < NL; i++) out[base + to[i]] = coefficients[from + i];
    }
  }
  return out;
}
