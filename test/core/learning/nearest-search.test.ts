// The bounded nearest-representative search (core/learning/nearest-search.ts) against the plain scan it replaces
// (sparse.ts nearestDistance), one query at a time and batched (searchNearestAll): the distances must be the very
// same numbers (toBe), on random, clustered and degenerate sets of unit-norm rows. The plain scan is the reference; no outside values are involved.
// The batched entry runs twice: through the WebAssembly kernel (core/wasm/prediction-kernels.ts) and its
// JavaScript path (kernels switched off); both must give the plain scan's numbers.
import fc from 'fast-check';
import { afterEach, describe, expect, it } from 'vitest';
import { makeRng, type Rng } from '../../../src-main/core/numerics/random.ts';
import { nearestDistance } from '../../../src-main/core/learning/sparse.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';
import { predictKernels } from '../../../src-main/core/wasm/prediction-kernels.ts';
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

describe('bounded nearest-representative search', () => {
  afterEach(() => setWebAssemblyKernels(true));

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
      const counter: SearchCounter = { queries: 0, exact: 0, summed: 0 };
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
        for (let f = 0; f < n0; f++) dot += sp.basis[i * n0 + f] * sp.basis[j * n0 + f];
        expect(Math.abs(dot - (i === j ? 1 : 0))).toBeLessThan(1e-13); // round-off of two-pass Gram–Schmidt
      }
    }
    const counter: SearchCounter = { queries: 0, exact: 0, summed: 0 };
    for (let q = 0; q < c.queryCount; q++) {
      expect(searchNearest(search, c.queries, q, 0, counter)).toBe(nearestDistance(c.queries, q, c.reps, c.species, 0, n0));
    }
    // the point of the bound: far fewer exact distances than representatives (measured ≈ 10–30 of 256)
    expect(counter.exact / counter.queries).toBeLessThan(128);
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
