// The bounded nearest-representative search (core/learning/nearest-search.ts) against the plain scan it replaces
// (sparse.ts nearestDistance), one query at a time and batched (searchNearestAll): the distances must be the very
// same numbers (toBe), on random, clustered and degenerate sets of unit-norm rows. The plain scan is the reference; no outside values are involved.
// The batched entry runs twice: through the WebAssembly kernel (core/wasm/prediction-kernels.ts) and its
// JavaScript path (kernels switched off); both must give the plain scan's numbers. Beside the invented rows: the
// real DFT water frames of test/fixtures (water-dft-sample.extxyz, from /work/shared/data) featurised at the default
// settings, and adversarial sets where the bounds are tight or tied and distances tie exactly or to the last bit.
import fc from 'fast-check';
import { afterEach, describe, expect, it } from 'vitest';
import { makeRng, type Rng } from '../../../src-main/core/numerics/random.ts';
import { nearestDistance } from '../../../src-main/core/learning/sparse.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';
import { predictKernels } from '../../../src-main/core/wasm/prediction-kernels.ts';
import { arenaRestarts, setArenaLimit } from '../../../src-main/core/wasm/arena.ts';
import { linearScalarPass, linearDesignRows, localContributions } from '../../../src-main/core/learning/kernels.ts';
import { computeFeatures } from '../../../src-main/core/descriptors/features.ts';
import type { FeatureSettings } from '../../../src-main/core/descriptors/feature-types.ts';
import { DEFAULT_SETTINGS } from '../../../src-main/core/settings-table.ts';
import { jitteredTrajectory, waterFrames } from '../../helpers/trajectory.ts';
import { cachedNearestSearch, nearestAllOf, plainQueriesBeforePreparing, prepareNearestSearch, searchNearest, searchNearestAll, SEARCH_BASIS, type SearchCounter } from '../../../src-main/core/learning/nearest-search.ts';

/** Scales row k of `rows` (length n0) to unit norm (a zero row becomes the first unit vector). */
function normaliseRow(rows: Float64Array, k: number, n0: number): void {
  let s = 0;
  for (let f = 0; f < n0; f++) s += rows[k * n0 + f] ** 2;
  if (s === 0) {
    rows[k * n0] = 1;
    return;
  }
  const inv = 1 / Math.sqrt(s);
  for (let f = 0; f < n0; f++) rows[k * n0 + f] *= inv;
}

interface Case {
  n0: number;
  reps: Float64Array;
  species: Int32Array;
  queries: Float64Array;
  queryCount: number;
}

/**
 * Representatives of `speciesCount` species (species `speciesCount` itself has none), either spread at random or
 * in a few tight clusters around random centres (features with a decaying scale, like a power spectrum), with
 * some exact duplicates; queries: fresh rows, noisy copies and exact copies of representatives.
 */
function makeCase(rng: Rng, n0: number, count: number, speciesCount: number, clustered: boolean, spread: number, duplicates: number): Case {
  const scale = Float64Array.from({ length: n0 }, (_, f) => Math.exp(-f / Math.max(1, n0 / 4)));
  const centres = Array.from({ length: 3 }, () => Float64Array.from(scale, (s) => s * (1 + rng.normal())));
  const reps = new Float64Array(count * n0);
  const species = new Int32Array(count);
  for (let k = 0; k < count; k++) {
    species[k] = rng.int(speciesCount);
    const c = centres[rng.int(centres.length)];
    for (let f = 0; f < n0; f++) reps[k * n0 + f] = clustered ? c[f] + spread * scale[f] * rng.normal() : rng.normal();
    normaliseRow(reps, k, n0);
  }
  for (let t = 0; t < duplicates && count > 1; t++) {
    const from = rng.int(count);
    const to = rng.int(count);
    reps.copyWithin(to * n0, from * n0, from * n0 + n0);
    species[to] = species[from];
  }
  const queryCount = 12;
  const queries = new Float64Array(queryCount * n0);
  for (let q = 0; q < queryCount; q++) {
    const kind = q % 3;
    const from = count > 0 ? rng.int(count) : -1;
    for (let f = 0; f < n0; f++) {
      if (kind === 0 || from < 0) queries[q * n0 + f] = clustered ? centres[0][f] + spread * scale[f] * rng.normal() : rng.normal();
      else if (kind === 1) queries[q * n0 + f] = reps[from * n0 + f] + 0.05 * spread * rng.normal();
      else queries[q * n0 + f] = reps[from * n0 + f]; // an exact copy: distance 0 to its source
    }
    if (kind !== 2 || from < 0) normaliseRow(queries, q, n0);
  }
  return { n0, reps, species, queries, queryCount };
}

/** Every query against every species (including one without representatives): the same number as the plain scan. */
function expectSameAsPlain(c: Case, basis: number, steps: number): void {
  const search = prepareNearestSearch(c.reps, c.species, c.n0, { basis, steps });
  const speciesIds = new Set([...c.species, Math.max(-1, ...c.species) + 1]);
  for (let q = 0; q < c.queryCount; q++) {
    for (const s of speciesIds) {
      const plain = nearestDistance(c.queries, q, c.reps, c.species, s, c.n0);
      expect(searchNearest(search, c.queries, q, s)).toBe(plain);
    }
  }
  // the batched entry (four queries of a species per projection pass): species assigned in turn, so groups of
  // every size 1…4 occur, one species has no representatives, and a shorter count leaves rows unread
  const ids = [...speciesIds];
  for (const kernels of [true, false]) {
    setWebAssemblyKernels(kernels);
    for (const count of [c.queryCount, 7]) {
      const species = Int32Array.from({ length: count }, (_, q) => ids[(q * 5 + 1) % ids.length]);
      const out = new Float64Array(count).fill(-1);
      searchNearestAll(search, c.queries, count, species, out);
      for (let q = 0; q < count; q++) expect(out[q]).toBe(nearestDistance(c.queries, q, c.reps, c.species, species[q], c.n0));
    }
  }
  setWebAssemblyKernels(true);
}

/** Every query row (species `species[q]`) through searchNearestAll with the kernels on and off, against the plain scan. */
function expectBatchSameAsPlain(reps: Float64Array, repSpecies: Int32Array, n0: number, queries: Float64Array, species: Int32Array, basis = SEARCH_BASIS): SearchCounter[] {
  const search = prepareNearestSearch(reps, repSpecies, n0, { basis });
  return [true, false].map((kernels) => {
    setWebAssemblyKernels(kernels);
    const out = new Float64Array(species.length).fill(-1);
    const counter: SearchCounter = { queries: 0, screened: 0, exact: 0, summed: 0 };
    searchNearestAll(search, queries, species.length, species, out, counter);
    for (let q = 0; q < species.length; q++) {
      const plain = nearestDistance(queries, q, reps, repSpecies, species[q], n0);
      if (!Object.is(out[q], plain)) expect({ kernels, q, got: out[q] }).toEqual({ kernels, q, got: plain });
    }
    setWebAssemblyKernels(true);
    return counter;
  });
}

describe('bounded nearest-representative search', () => {
  afterEach(() => setWebAssemblyKernels(true));

  it('gives the plain scan’s numbers on the real DFT water frames (default settings; jittered frames, exact copies and a squeezed frame as queries)', () => {
    const s = DEFAULT_SETTINGS;
    const fs: FeatureSettings = { cutoff: s.cutoffRadius, cutoffWidth: s.switchWidth, sigma: s.densityWidth, nmax: s.radialFunctions, lmax: s.angularOrder, species: ['O', 'H'], centres: ['O', 'H'] };
    const features = (frames: ReturnType<typeof waterFrames>) => {
      const all = frames.map((f) => computeFeatures(f, fs, []));
      const n0 = all[0].n0;
      const count = all.reduce((n, f) => n + f.count, 0);
      const rows = new Float64Array(count * n0);
      const species = new Int32Array(count);
      let at = 0;
      for (const f of all) {
        rows.set(f.scalar.subarray(0, f.count * n0), at * n0);
        species.set(f.centreSpecies.subarray(0, f.count), at);
        at += f.count;
      }
      return { n0, rows, species, count };
    };
    const reps = features(waterFrames().slice(0, 6));
    // queries: the two frames left out, the frames with every atom moved by 0.05 Å, every representative itself
    // (distance 0, often among near-duplicates) and a frame squeezed by 10 % (far from everything)
    const held = waterFrames().slice(6);
    const squeezed = waterFrames().slice(0, 1).map((f) => ({ ...f, positions: f.positions.map((x) => 0.9 * x), cell: f.cell?.map((x) => 0.9 * x) ?? null }));
    const q = features([...held, ...jitteredTrajectory(4, 0.05, 3), ...squeezed]);
    const queries = new Float64Array((q.count + reps.count) * reps.n0);
    queries.set(q.rows);
    queries.set(reps.rows, q.rows.length);
    const species = new Int32Array(q.count + reps.count);
    species.set(q.species);
    species.set(reps.species, q.count);
    expect(reps.n0).toBe(q.n0);
    for (const basis of [0, 4, SEARCH_BASIS]) {
      const [wasm, js] = expectBatchSameAsPlain(reps.rows, reps.species, reps.n0, queries, species, basis);
      expect(wasm.exact).toBe(js.exact);
      expect(wasm.screened).toBe(js.screened);
    }
    // a frame whose atoms are permuted: every distance moves with its atom, the same numbers (kernels on and off)
    const rng = makeRng(8);
    const perm = Int32Array.from({ length: q.count }, (_, i) => i);
    for (let i = q.count - 1; i > 0; i--) {
      const j = rng.int(i + 1);
      [perm[i], perm[j]] = [perm[j], perm[i]];
    }
    const permuted = new Float64Array(q.count * q.n0);
    const permutedSpecies = new Int32Array(q.count);
    perm.forEach((from, to) => {
      permuted.set(q.rows.subarray(from * q.n0, from * q.n0 + q.n0), to * q.n0);
      permutedSpecies[to] = q.species[from];
    });
    const search = prepareNearestSearch(reps.rows, reps.species, reps.n0);
    const straight = new Float64Array(q.count);
    searchNearestAll(search, q.rows, q.count, q.species, straight);
    for (let e = 0; e < q.count; e++) expect(straight[e]).toBe(nearestDistance(q.rows, e, reps.rows, reps.species, q.species[e], reps.n0));
    for (const kernels of [true, false]) {
      setWebAssemblyKernels(kernels);
      const out = new Float64Array(q.count).fill(-1);
      searchNearestAll(search, permuted, q.count, permutedSpecies, out);
      perm.forEach((from, to) => expect(Object.is(out[to], straight[from])).toBe(true));
    }
    setWebAssemblyKernels(true);
  });

  it('gives the plain scan’s numbers with far outliers among the representatives and the queries', () => {
    const rng = makeRng(61);
    for (const n0 of [24, 97]) {
      const c = makeCase(rng, n0, 120, 1, true, 0.05, 4);
      // three representatives far out along a few features each: they dominate those features' spread, the basis
      // and the screening order
      for (const k of [5, 40, 77]) {
        for (let f = 0; f < n0; f++) if (f % 11 === k % 11) c.reps[k * n0 + f] = 30 * (1 + rng.uniform());
      }
      const count = 40;
      const queries = new Float64Array(count * n0);
      for (let i = 0; i < count; i++) {
        for (let f = 0; f < n0; f++) {
          const kind = i % 4;
          if (kind === 0) queries[i * n0 + f] = 50 * rng.normal(); // far from everything
          else if (kind === 1) queries[i * n0 + f] = c.reps[40 * n0 + f] + 1e-3 * rng.normal(); // next to an outlier
          else if (kind === 2) queries[i * n0 + f] = c.reps[40 * n0 + f]; // an outlier itself
          else queries[i * n0 + f] = c.queries[(i % c.queryCount) * n0 + f];
        }
      }
      expectBatchSameAsPlain(c.reps, c.species, n0, queries, new Int32Array(count));
    }
  });

  it('gives the plain scan’s numbers where the bounds are tight or tied and distances tie exactly or differ in the last bits (adversarial)', () => {
    const rng = makeRng(77);
    for (const n0 of [5, 16, 37, 64]) {
      const rank = Math.min(3, n0);
      const m = 48;
      const u = Array.from({ length: rank }, () => Float64Array.from({ length: n0 }, () => rng.normal()));
      const centre = Float64Array.from({ length: n0 }, () => rng.normal());
      const reps = new Float64Array(m * n0);
      const queries = new Float64Array(m * n0);
      const qSpecies = new Int32Array(m);
      // 1. representatives in a 3-dimensional affine subspace (inside the basis: residual 0, bound = distance up to
      //    round-off), placed in mirror pairs around a query (the same terms: an exact tie), pairs that differ by
      //    one unit in the last place, and pairs whose distances differ by 1e-15 relative
      for (let k = 0; k < m; k += 2) {
        const c = u.map(() => rng.normal());
        const eps = k % 6 === 0 ? 0 : k % 6 === 2 ? Number.EPSILON : 1e-15;
        for (let f = 0; f < n0; f++) {
          let v = 0;
          for (let r = 0; r < rank; r++) v += c[r] * u[r][f];
          reps[k * n0 + f] = centre[f] + v;
          reps[(k + 1) * n0 + f] = centre[f] - v * (1 + eps);
        }
      }
      for (let i = 0; i < m; i++) {
        const kind = i % 4;
        for (let f = 0; f < n0; f++) {
          if (kind === 0) queries[i * n0 + f] = centre[f]; // the centre of every mirror pair: ties everywhere
          else if (kind === 1) queries[i * n0 + f] = reps[i * n0 + f]; // a representative itself
          else if (kind === 2) queries[i * n0 + f] = centre[f] + 1e-13 * rng.normal(); // next to the centre
          else queries[i * n0 + f] = 0.5 * (reps[i * n0 + f] + reps[((i + 2) % m) * n0 + f]); // halfway between two
        }
      }
      expectBatchSameAsPlain(reps, new Int32Array(m), n0, queries, qSpecies);
      // 2. tied bounds, different distances: every representative has the same coordinates in the basis and the
      //    same residual norm (one direction scaled, another turned), so every bound is the same number and only the
      //    screening and the exact sums tell them apart; a few are closer by 1e-14 relative
      const tied = new Float64Array(m * n0);
      for (let k = 0; k < m; k++) {
        for (let f = 0; f < n0; f++) tied[k * n0 + f] = centre[f];
        const a = k % n0;
        const b = (k + 1 + (k >> 3)) % n0;
        const angle = (2 * Math.PI * k) / m;
        const scale = k % 7 === 3 ? 1 - 1e-14 : 1;
        tied[k * n0 + a] += scale * Math.cos(angle);
        if (b !== a) tied[k * n0 + b] += scale * Math.sin(angle);
      }
      const near = new Float64Array(m * n0);
      for (let i = 0; i < m; i++) for (let f = 0; f < n0; f++) near[i * n0 + f] = centre[f] + (i % 2 ? 0 : 1e-3 * rng.normal());
      expectBatchSameAsPlain(tied, new Int32Array(m), n0, near, qSpecies);
      expectBatchSameAsPlain(tied, new Int32Array(m), n0, near, qSpecies, 0);
      // 3. near-duplicate groups: copies of one row with a few features moved by a unit or two in the last place,
      //    and queries close to them, so that the distances differ by less than the round-off of their sums and
      //    the screening's summation order may rank them otherwise than the exact sums do
      const dup = new Float64Array(m * n0);
      const dupQueries = new Float64Array(m * n0);
      for (let k = 0; k < m; k++) {
        const base = (k >> 3) * 8; // groups of eight
        for (let f = 0; f < n0; f++) dup[k * n0 + f] = k === base ? rng.normal() : dup[base * n0 + f];
        if (k !== base) for (let t = 0; t < 3; t++) {
          const f = rng.int(n0);
          const v = dup[k * n0 + f];
          dup[k * n0 + f] = v + (rng.int(2) ? 1 : -1) * (1 + rng.int(2)) * Number.EPSILON * Math.abs(v);
        }
      }
      for (let i = 0; i < m; i++) for (let f = 0; f < n0; f++) dupQueries[i * n0 + f] = dup[(i >> 3) * 8 * n0 + f] + (i % 2 ? 1 : 1e-3) * rng.normal();
      expectBatchSameAsPlain(dup, new Int32Array(m), n0, dupQueries, qSpecies);
    }
  });

  it('shares one copy of a frame’s rows between the linear part and the search (one key per frame), also when the arena starts again between them', () => {
    const rng = makeRng(31);
    const n0 = 45;
    const c = makeCase(rng, n0, 120, 2, true, 0.1, 2);
    const search = prepareNearestSearch(c.reps, c.species, n0);
    const same = (x: Float64Array, y: Float64Array) => x.length === y.length && x.every((v, i) => Object.is(v, y[i]));
    for (const restart of [false, true]) {
      // two frames of 300 rows written one after the other into the same array (as prediction reuses its buffers)
      const rows = new Float64Array(300 * n0);
      for (const frame of [0, 1]) {
        for (let e = 0; e < 300; e++) for (let f = 0; f < n0; f++) rows[e * n0 + f] = c.reps[((e * 7 + frame) % 120) * n0 + f] + (e % 3 ? 0.01 * rng.normal() : 0);
        const species = Int32Array.from({ length: 300 }, (_, e) => (e + frame) % 2);
        const fe = { count: 300, centre: new Int32Array(300), centreSpecies: species, frame: new Int32Array(300), n0, scalar: rows, tensor: {} };
        const weights = Float64Array.from({ length: 2 * n0 }, () => rng.normal());
        const key = {};
        const pass = linearScalarPass(fe, weights, 2, key);
        expect(same(pass.contributions, localContributions(fe, 0, { linear: weights }))).toBe(true);
        expect(same(pass.sums, linearDesignRows(fe, 0, 2))).toBe(true);
        const before = arenaRestarts();
        if (restart) {
          // a region of nearly the whole (lowered) limit, asked for between the two: the arena starts again, and
          // again for the search, which must copy the rows anew
          setArenaLimit(4 * 2 ** 20);
          predictKernels()!.arena.acquire([{ name: 'test-filler', key: {}, bytes: 4 * 2 ** 20 - 64 }]);
        }
        const out = new Float64Array(300).fill(-1);
        searchNearestAll(search, rows, 300, species, out, undefined, key);
        setArenaLimit(null);
        if (restart) expect(arenaRestarts()).toBeGreaterThanOrEqual(before + 2);
        for (let e = 0; e < 300; e++) expect(out[e]).toBe(nearestDistance(rows, e, c.reps, c.species, species[e], n0));
        // the plain scan of a fresh owner through the same key
        const scanned = new Float64Array(300).fill(-1);
        nearestAllOf({ n0, species: c.species, p: c.reps }, rows, 300, species, scanned, key);
        for (let e = 0; e < 300; e++) expect(scanned[e]).toBe(out[e]);
      }
    }
  });

  it('gives the plain scan’s numbers with non-finite and huge features (NaN and overflow rule nothing out and never win)', () => {
    const rng = makeRng(90);
    const n0 = 33;
    const m = 40;
    const reps = Float64Array.from({ length: m * n0 }, () => rng.normal());
    for (let f = 0; f < n0; f++) reps[3 * n0 + f] = reps[4 * n0 + f] * 1e200; // its squared distances overflow
    reps[7 * n0 + 5] = NaN; // one representative with a NaN feature
    const queries = new Float64Array(6 * n0);
    for (let f = 0; f < n0; f++) {
      queries[f] = reps[7 * n0 + f]; // the NaN representative itself
      queries[n0 + f] = rng.normal();
      queries[2 * n0 + f] = f === 2 ? NaN : rng.normal(); // a NaN query: NaN to every representative
      queries[3 * n0 + f] = 1e200 * rng.normal(); // overflows against every representative
      queries[4 * n0 + f] = reps[3 * n0 + f]; // the huge representative itself
      queries[5 * n0 + f] = reps[9 * n0 + f];
    }
    expectBatchSameAsPlain(reps, new Int32Array(m), n0, queries, new Int32Array(6));
  });

  it('gives the plain scan’s numbers where the float32 screening cannot tell rows apart or falls back (ties below float32 resolution, tiny and large scales, non-finite queries)', () => {
    const rng = makeRng(93);
    // n0 around the screening's blocks of 16 and 32 (57: its last features added one by one)
    for (const n0 of [5, 16, 31, 32, 48, 57]) expectFloat32Cases(rng, n0);
  });

  /** The float32 screening's cases for row length n0 (see the test above). */
  function expectFloat32Cases(rng: Rng, n0: number): void {
    const perSpecies = 48;
    const reps = new Float64Array(3 * perSpecies * n0);
    const repSpecies = new Int32Array(3 * perSpecies);
    // species 0: unit rows, a third of them near-copies of another row that differ by 1e-9 relative (below float32's
    // 6e-8 resolution: the float32 sums cannot rank them, the exact float64 sums must); species 1: rows of size
    // 1e-25 (their float32 squares underflow to zero); species 2: rows of size 1e12 (large, still within float32)
    const scales = [1, 1e-25, 1e12];
    for (let s = 0; s < 3; s++) {
      for (let k = 0; k < perSpecies; k++) {
        const r = s * perSpecies + k;
        repSpecies[r] = s;
        if (k % 3 === 2) for (let f = 0; f < n0; f++) reps[r * n0 + f] = reps[(r - 1) * n0 + f] * (1 + 1e-9 * rng.normal());
        else {
          for (let f = 0; f < n0; f++) reps[r * n0 + f] = rng.normal();
          normaliseRow(reps, r, n0);
          for (let f = 0; f < n0; f++) reps[r * n0 + f] *= scales[s];
        }
      }
    }
    const rows: number[][] = [];
    const species: number[] = [];
    for (let s = 0; s < 3; s++) {
      for (let i = 0; i < 16; i++) {
        const from = s * perSpecies + 3 * (i % 16) + 1; // the first of a near-tied pair
        // a copy of it, or a copy moved by 1e-10 or 1e-3 relative (its twin is then as near to float32 precision)
        const shift = [0, 1e-10, 1e-3, 1e-3][i % 4];
        rows.push(Array.from({ length: n0 }, (_, f) => reps[from * n0 + f] * (1 + shift * rng.normal())));
        species.push(s);
      }
    }
    // queries against species 0 whose float32 screening must not be used or must stay safe: a NaN and an infinite
    // feature, all features 1e20 (|x − μ|² beyond 2^98), and one feature 1e13 (float32 still holds it)
    for (const [f0, v] of [[3, NaN], [5, Infinity], [-1, 1e20], [7, 1e13]] as const) {
      rows.push(Array.from({ length: n0 }, (_, f) => (f0 < 0 ? v * (1 + rng.uniform()) : f === f0 % n0 ? v : reps[n0 + f])));
      species.push(0);
    }
    const queries = Float64Array.from(rows.flat());
    const [wasm, js] = expectBatchSameAsPlain(reps, repSpecies, n0, queries, Int32Array.from(species));
    // the kernel and its JavaScript twin screen in the same float32 operations: the same work
    expect(wasm.screened).toBe(js.screened);
    expect(wasm.exact).toBe(js.exact);
    expect(wasm.summed).toBe(js.summed);
  }

  it('runs through the WebAssembly kernels here, prepared and plain, at the size prediction uses (odd n0, hundreds of rows, more queries than one pass holds)', () => {
    expect(predictKernels()).not.toBeNull();
    const rng = makeRng(41);
    const n0 = 301;
    const c = makeCase(rng, n0, 300, 2, true, 0.1, 4);
    const search = prepareNearestSearch(c.reps, c.species, n0);
    // 600 queries (beyond the kernel's 256 per pass): noisy copies of representatives and fresh rows
    const count = 600;
    const queries = new Float64Array(count * n0);
    for (let q = 0; q < count; q++) {
      const from = rng.int(300);
      for (let f = 0; f < n0; f++) queries[q * n0 + f] = q % 2 ? c.reps[from * n0 + f] + 0.01 * rng.normal() : c.queries[(q % c.queryCount) * n0 + f];
    }
    const species = Int32Array.from({ length: count }, (_, q) => q % 3);
    const counters = [true, false].map((kernels) => {
      setWebAssemblyKernels(kernels);
      const out = new Float64Array(count).fill(-1);
      const counter: SearchCounter = { queries: 0, screened: 0, exact: 0, summed: 0 };
      searchNearestAll(search, queries, count, species, out, counter);
      for (let q = 0; q < count; q++) expect(out[q]).toBe(nearestDistance(queries, q, c.reps, c.species, species[q], n0));
      return counter;
    });
    // the plain scan of a job too small to prepare (a fresh owner: 600 < plainQueriesBeforePreparing() queries),
    // through the kernel and its JavaScript path
    for (const kernels of [true, false]) {
      setWebAssemblyKernels(kernels);
      const out = new Float64Array(count).fill(-1);
      nearestAllOf({ n0, species: c.species, p: c.reps }, queries, count, species, out);
      for (let q = 0; q < count; q++) expect(out[q]).toBe(nearestDistance(queries, q, c.reps, c.species, species[q], n0));
    }
    // both count their work, and the kernel's bound rules out as much as the JavaScript one
    expect(counters[0].queries).toBe(count);
    expect(counters[0].exact).toBeGreaterThan(0);
    expect(Math.abs(counters[0].exact - counters[1].exact)).toBeLessThanOrEqual(0.01 * counters[1].exact);
    expect(Math.abs(counters[0].screened - counters[1].screened)).toBeLessThanOrEqual(0.01 * counters[1].screened);
  });

  it('gives the plain scan’s numbers when the same representatives are grouped by other species (the kernels keep their layout per array)', () => {
    // one array of representatives, first grouped by its species, then by a regrouping of them; the kernels hold
    // the first grouping in their memory, so the second must take the JavaScript path and still be exact
    const c = makeCase(makeRng(46), 19, 80, 2, true, 0.1, 0);
    const regrouped = Int32Array.from(c.species, (s, k) => (k % 4 === 0 ? 1 - s : s));
    const species = Int32Array.from({ length: c.queryCount }, (_, q) => q % 2);
    const run = (grouping: Int32Array) => {
      const search = prepareNearestSearch(c.reps, grouping, c.n0, { basis: 4 });
      const searched = new Float64Array(c.queryCount).fill(-1);
      searchNearestAll(search, c.queries, c.queryCount, species, searched);
      const scanned = new Float64Array(c.queryCount).fill(-1);
      nearestAllOf({ n0: c.n0, species: grouping, p: c.reps }, c.queries, c.queryCount, species, scanned);
      for (let q = 0; q < c.queryCount; q++) {
        const plain = nearestDistance(c.queries, q, c.reps, grouping, species[q], c.n0);
        expect(searched[q]).toBe(plain);
        expect(scanned[q]).toBe(plain);
      }
    };
    run(c.species);
    run(regrouped);
    run(c.species);
  });

  it('prepares the same search bit for bit through the WebAssembly kernel as in JavaScript (basis, coordinates, residual norms)', () => {
    const same = (x: Float64Array, y: Float64Array) => x.length === y.length && x.every((v, i) => Object.is(v, y[i]));
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 2 ** 31 - 1 }),
        fc.integer({ min: 1, max: 41 }),
        fc.integer({ min: 1, max: 70 }),
        fc.integer({ min: 1, max: 3 }),
        fc.boolean(),
        fc.constantFrom(1e-9, 0.01, 1),
        fc.integer({ min: 0, max: 12 }),
        fc.integer({ min: 0, max: 20 }),
        fc.integer({ min: 0, max: 3 }),
        (seed, n0, count, speciesCount, clustered, spread, duplicates, basis, steps) => {
          const c = makeCase(makeRng(seed), n0, count, speciesCount, clustered, spread, duplicates);
          setWebAssemblyKernels(false);
          const js = prepareNearestSearch(c.reps, c.species, n0, { basis, steps });
          setWebAssemblyKernels(true);
          const wasm = prepareNearestSearch(c.reps, c.species, n0, { basis, steps });
          expect([...wasm.species.keys()]).toEqual([...js.species.keys()]);
          for (const [s, a] of js.species) {
            const b = wasm.species.get(s)!;
            expect(b.d).toBe(a.d);
            expect(Array.from(b.rows)).toEqual(Array.from(a.rows));
            for (const key of ['mean', 'basis', 'coordsT', 'residual'] as const) expect(same(a[key], b[key])).toBe(true);
          }
        },
      ),
      { numRuns: 60, seed: 7003, endOnFailure: true },
    );
    // the same representatives grouped by other species (the kernel's resident layout is kept per array): still
    // the JavaScript preparation's numbers
    const shared = makeCase(makeRng(45), 17, 60, 2, true, 0.1, 0);
    const regrouped = Int32Array.from(shared.species, (s, k) => (k % 5 === 0 ? 1 - s : s));
    prepareNearestSearch(shared.reps, shared.species, 17);
    setWebAssemblyKernels(false);
    const want = prepareNearestSearch(shared.reps, regrouped, 17);
    setWebAssemblyKernels(true);
    const got = prepareNearestSearch(shared.reps, regrouped, 17);
    for (const [s, a] of want.species) {
      const b = got.species.get(s)!;
      expect(Array.from(b.rows)).toEqual(Array.from(a.rows));
      for (const key of ['mean', 'basis', 'coordsT', 'residual'] as const) expect(same(a[key], b[key])).toBe(true);
    }
    // the size prediction uses: hundreds of rows per species, n0 not a multiple of four, the full basis
    const c = makeCase(makeRng(44), 303, 400, 2, true, 0.1, 3);
    setWebAssemblyKernels(false);
    const js = prepareNearestSearch(c.reps, c.species, 303);
    setWebAssemblyKernels(true);
    const wasm = prepareNearestSearch(c.reps, c.species, 303);
    for (const [s, a] of js.species) {
      const b = wasm.species.get(s)!;
      expect(b.d).toBe(SEARCH_BASIS);
      for (const key of ['mean', 'basis', 'coordsT', 'residual'] as const) expect(same(a[key], b[key])).toBe(true);
    }
  });

  it('returns exactly the plain scan distance on random and clustered unit rows (property)', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 2 ** 31 - 1 }),
        fc.integer({ min: 1, max: 48 }),
        fc.integer({ min: 0, max: 60 }),
        fc.integer({ min: 1, max: 3 }),
        fc.boolean(),
        fc.constantFrom(1e-9, 1e-4, 0.01, 0.1, 1),
        fc.integer({ min: 0, max: 10 }),
        fc.integer({ min: 0, max: 24 }),
        fc.integer({ min: 0, max: 3 }),
        (seed, n0, count, speciesCount, clustered, spread, duplicates, basis, steps) => {
          const c = makeCase(makeRng(seed), n0, count, speciesCount, clustered, spread, duplicates);
          expectSameAsPlain(c, basis, steps);
        },
      ),
      { numRuns: 150, seed: 20241, endOnFailure: true },
    );
  });

  it('finds distance 0 for a query equal to a representative, also among duplicates', () => {
    const rng = makeRng(5);
    const c = makeCase(rng, 40, 50, 1, true, 0.01, 20);
    const search = prepareNearestSearch(c.reps, c.species, c.n0);
    for (let k = 0; k < 50; k++) {
      expect(searchNearest(search, c.reps, k, c.species[k])).toBe(0);
      expect(nearestDistance(c.reps, k, c.reps, c.species, c.species[k], c.n0)).toBe(0);
    }
  });

  it('handles a single representative, all-identical representatives and n0 smaller than the basis', () => {
    const rng = makeRng(11);
    // one representative
    expectSameAsPlain(makeCase(rng, 30, 1, 1, false, 1, 0), SEARCH_BASIS, 2);
    // n0 = 3 < basis size: the basis stops at the rank
    const small = makeCase(rng, 3, 40, 2, false, 1, 0);
    const search = prepareNearestSearch(small.reps, small.species, 3, { basis: 16, steps: 2 });
    for (const sp of search.species.values()) expect(sp.d).toBeLessThanOrEqual(3);
    expectSameAsPlain(small, 16, 2);
    // forty copies of one row: rank 0 after centring, so no basis at all
    const one = makeCase(rng, 20, 1, 1, false, 1, 0);
    const reps = new Float64Array(40 * 20);
    for (let k = 0; k < 40; k++) reps.set(one.reps, k * 20);
    const same: Case = { ...one, reps, species: new Int32Array(40) };
    expect(prepareNearestSearch(reps, same.species, 20).species.get(0)!.d).toBe(0);
    expectSameAsPlain(same, SEARCH_BASIS, 2);
  });

  it('gives Infinity for a species without representatives, and for an empty set', () => {
    const rng = makeRng(3);
    const c = makeCase(rng, 10, 20, 1, false, 1, 0);
    const search = prepareNearestSearch(c.reps, c.species, c.n0);
    expect(searchNearest(search, c.queries, 0, 1)).toBe(Infinity);
    const empty = prepareNearestSearch(new Float64Array(0), new Int32Array(0), c.n0);
    expect(searchNearest(empty, c.queries, 0, 0)).toBe(Infinity);
    expect(nearestDistance(c.queries, 0, new Float64Array(0), new Int32Array(0), 0, c.n0)).toBe(Infinity);
  });

  it('keeps an orthonormal basis and skips most representatives on clustered rows', () => {
    const rng = makeRng(17);
    const n0 = 120;
    const c = makeCase(rng, n0, 256, 1, true, 0.2, 0);
    const search = prepareNearestSearch(c.reps, c.species, n0);
    const sp = search.species.get(0)!;
    expect(sp.d).toBe(SEARCH_BASIS);
    for (let i = 0; i < sp.d; i++) {
      for (let j = 0; j < sp.d; j++) {
        let dot = 0;
        for (let f = 0; f < sp.width; f++) dot += sp.basis[i * sp.width + f] * sp.basis[j * sp.width + f];
        expect(Math.abs(dot - (i === j ? 1 : 0))).toBeLessThan(1e-13); // round-off of two-pass Gram–Schmidt
      }
    }
    const counter: SearchCounter = { queries: 0, screened: 0, exact: 0, summed: 0 };
    for (let q = 0; q < c.queryCount; q++) {
      expect(searchNearest(search, c.queries, q, 0, counter)).toBe(nearestDistance(c.queries, q, c.reps, c.species, 0, n0));
    }
    // the point of the bound: far fewer representatives screened than there are (measured ≈ 10–30 of 256), and
    // the screening leaves few exact distances
    expect(counter.screened / counter.queries).toBeLessThan(128);
    expect(counter.exact / counter.queries).toBeLessThan(8);
  });

  it('answers a small job by the plain scan and a longer one through the prepared search, with the same numbers throughout', () => {
    const rng = makeRng(29);
    const c = makeCase(rng, 40, 60, 2, true, 0.1, 3);
    const species = Int32Array.from({ length: c.queryCount }, (_, q) => q % 3); // species 2 has no representatives
    const want = Array.from(species, (s, q) => nearestDistance(c.queries, q, c.reps, c.species, s, c.n0));
    // with the kernels on and off (each has its own switch), the calls cross the switch to the prepared search
    for (const kernels of [true, false]) {
      setWebAssemblyKernels(kernels);
      const owner = { n0: c.n0, species: c.species, p: c.reps };
      const calls = Math.ceil(plainQueriesBeforePreparing() / c.queryCount) + 2;
      for (let k = 0; k < calls; k++) {
        const out = new Float64Array(c.queryCount).fill(-1);
        nearestAllOf(owner, c.queries, c.queryCount, species, out);
        expect(Array.from(out)).toEqual(want);
        for (let q = 0; q < c.queryCount; q++) expect(Object.is(out[q], want[q])).toBe(true);
      }
    }
  });

  it('prepares once per owner object and again for a structured clone, with the same results', () => {
    const rng = makeRng(23);
    const c = makeCase(rng, 25, 30, 2, true, 0.1, 2);
    const owner = { n0: c.n0, species: c.species, p: c.reps };
    const s1 = cachedNearestSearch(owner);
    expect(cachedNearestSearch(owner)).toBe(s1);
    const clone = structuredClone(owner);
    const s2 = cachedNearestSearch(clone);
    expect(s2).not.toBe(s1);
    for (let q = 0; q < c.queryCount; q++) {
      for (const s of [0, 1]) expect(searchNearest(s2, c.queries, q, s)).toBe(searchNearest(s1, c.queries, q, s));
    }
  });
});
