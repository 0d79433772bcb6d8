import { CholeskyDecomposition, Matrix, solve } from 'ml-matrix';
import { afterEach, describe, expect, it } from 'vitest';
import { backSubstitute, choleskyInPlace, choleskySolve, choleskyWithJitter, forwardSubstitute, forwardSubstituteRows, gramOfColumns, gramOfRows } from '../../../src-main/core/numerics/cholesky.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { referenceBackSubstitute, referenceForwardSubstitute } from '../../helpers/reference-kernels.ts';
import { denseKernels } from '../../../src-main/core/wasm/dense.ts';
import { setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';

describe('Cholesky on Float64Array', () => {
  it('factors the textbook 3×3 example', () => {
    // A = [[4,12,-16],[12,37,-43],[-16,-43,98]] has L = [[2,0,0],[6,1,0],[-8,5,3]]
    // (a common worked example of the Cholesky factorisation; from memory, checked by multiplying out L Lᵀ).
    const a = Float64Array.of(4, 12, -16, 12, 37, -43, -16, -43, 98);
    expect(choleskyInPlace(a, 3)).toBe(true);
    const lower = [a[0], a[3], a[4], a[6], a[7], a[8]];
    expect(lower).toEqual([2, 6, 1, -8, 5, 3]);
  });

  it('solves a random SPD system to round-off', () => {
    const rng = makeRng(3);
    const n = 40;
    const m = new Float64Array(n * 60);
    for (let i = 0; i < m.length; i++) m[i] = rng.normal();
    const a = gramOfRows(m, n, 60); // M Mᵀ, full rank
    const x = Float64Array.from({ length: n }, () => rng.normal());
    const b = new Float64Array(n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) b[i] += a[i * n + j] * x[j];
    const { factor, jitter } = choleskyWithJitter(a, n);
    expect(jitter).toBe(0);
    const sol = choleskySolve(factor, n, b);
    for (let i = 0; i < n; i++) expect(sol[i]).toBeCloseTo(x[i], 8);
  });

  it('rejects an indefinite matrix and regularises a singular one with a jitter', () => {
    expect(choleskyInPlace(Float64Array.of(1, 2, 2, 1), 2)).toBe(false);
    const singular = Float64Array.of(1, 1, 1, 1);
    const { jitter } = choleskyWithJitter(singular, 2);
    expect(jitter).toBeGreaterThan(0);
    expect(() => choleskyWithJitter(Float64Array.of(-1, 0, 0, -1), 2)).toThrow(/not positive definite/);
  });


  it('a shifted system (shift, into) is the factor of the shifted copy, bit for bit, with or without a jitter, and leaves A alone', () => {
    const rng = makeRng(12);
    const into = new Float64Array(300 * 300);
    for (const [n, rank] of [[200, 220], [150, 60]]) {
      // rank 60 < 150: semi-definite, so a tiny shift needs a jitter
      const x = Float64Array.from({ length: n * rank }, () => rng.normal());
      const a = gramOfRows(x, n, rank);
      const kept = a.slice();
      for (const shift of [1e-3, 1e-14]) {
        const m = a.slice();
        for (let i = 0; i < n; i++) m[i * n + i] += shift;
        const plain = choleskyWithJitter(m, n);
        const shifted = choleskyWithJitter(a, n, { shift, into });
        expect(shifted.jitter).toBe(plain.jitter);
        expect(shifted.factor.length).toBe(n * n);
        expect(shifted.factor.buffer).toBe(into.buffer);
        for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) expect(Object.is(shifted.factor[i * n + j], plain.factor[i * n + j])).toBe(true);
        if (rank < n && shift < 1e-10) expect(plain.jitter).toBeGreaterThan(0);
      }
      expect(a).toEqual(kept);
    }
  });
  it('gram of rows: every entry the same bits as its own dot product (even and odd columns apart), whatever the rows around it', () => {
    const rng = makeRng(17);
    for (const [rows, f] of [[7, 13], [8, 12], [1, 5], [5, 1]]) {
      const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
      const k = gramOfRows(phi, rows, f);
      for (let i = 0; i < rows; i++) {
        for (let j = 0; j < rows; j++) {
          let s0 = 0;
          let s1 = 0;
          for (let c = 0; c < f; c++) {
            if (c % 2 === 0) s0 += phi[i * f + c] * phi[j * f + c];
            else s1 += phi[i * f + c] * phi[j * f + c];
          }
          expect(k[i * rows + j]).toBe(s0 + s1);
        }
      }
    }
  });

  it('gram of columns and of rows agree with explicit products', () => {
    const phi = Float64Array.of(1, 2, 3, 4, 5, 6); // 2×3
    expect([...gramOfRows(phi, 2, 3)]).toEqual([14, 32, 32, 77]);
    expect([...gramOfColumns(phi, 2, 3)]).toEqual([17, 22, 27, 22, 29, 36, 27, 36, 45]);
  });

  it('agrees with ml-matrix (the reference library) on the factor, both triangular solves and the solve', () => {
    const rng = makeRng(11);
    const n = 75;
    const m = new Float64Array(n * 90);
    for (let i = 0; i < m.length; i++) m[i] = rng.normal();
    const a = gramOfRows(m, n, 90);
    const b = Float64Array.from({ length: n }, () => rng.normal());
    const rows = Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, i * n + n)));
    const ref = new CholeskyDecomposition(new Matrix(rows));
    expect(ref.isPositiveDefinite()).toBe(true);
    const L = ref.lowerTriangularMatrix;
    const own = Float64Array.from(a);
    expect(choleskyInPlace(own, n)).toBe(true);
    let scale = 0;
    for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) scale = Math.max(scale, Math.abs(L.get(i, j)));
    for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) expect(Math.abs(own[i * n + j] - L.get(i, j))).toBeLessThan(1e-12 * scale);
    const close = (x: ArrayLike<number>, y: ArrayLike<number>) => {
      let s2 = 0;
      for (let i = 0; i < n; i++) s2 = Math.max(s2, Math.abs(y[i]));
      for (let i = 0; i < n; i++) expect(Math.abs(x[i] - y[i])).toBeLessThan(1e-10 * s2);
    };
    // L z = b and Lᵀ x = z, each against ml-matrix's general solver on the reference factor
    const z = forwardSubstitute(own, n, Float64Array.from(b));
    close(z, solve(L, Matrix.columnVector(Array.from(b))).getColumn(0));
    const x = backSubstitute(own, n, Float64Array.from(z));
    close(x, solve(L.transpose(), Matrix.columnVector(Array.from(z))).getColumn(0));
    close(choleskySolve(own, n, b), ref.solve(Matrix.columnVector(Array.from(b))).getColumn(0));
  });

  it('blocked factor of a matrix spanning several blocks (with a ragged last block and rows) agrees with ml-matrix and leaves the upper triangle alone', () => {
    const rng = makeRng(21);
    for (const n of [130, 203]) {
      const m = Float64Array.from({ length: n * (n + 7) }, () => rng.normal());
      const a = gramOfRows(m, n, n + 7);
      const rows = Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, i * n + n)));
      const L = new CholeskyDecomposition(new Matrix(rows)).lowerTriangularMatrix;
      const own = Float64Array.from(a);
      expect(choleskyInPlace(own, n)).toBe(true);
      let scale = 0;
      for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) scale = Math.max(scale, Math.abs(L.get(i, j)));
      let worst = 0;
      for (let i = 0; i < n; i++) {
        for (let j = 0; j <= i; j++) worst = Math.max(worst, Math.abs(own[i * n + j] - L.get(i, j)));
        for (let j = i + 1; j < n; j++) expect(own[i * n + j]).toBe(a[i * n + j]);
      }
      expect(worst).toBeLessThan(1e-11 * scale);
    }
  });

  it('finds a matrix not positive definite when the failing pivot lies in a later block', () => {
    const rng = makeRng(4);
    const n = 150;
    const m = Float64Array.from({ length: n * (n + 5) }, () => rng.normal());
    const a = gramOfRows(m, n, n + 5);
    // make row/column 140 a copy of row/column 3 (singular), then push its diagonal below: indefinite
    for (let j = 0; j < n; j++) {
      a[140 * n + j] = a[3 * n + j];
      a[j * n + 140] = a[j * n + 3];
    }
    a[140 * n + 140] = a[3 * n + 3] - 1;
    expect(choleskyInPlace(Float64Array.from(a), n)).toBe(false);
  });

  it('solves many right-hand sides at once with the bits of one solve each', () => {
    const rng = makeRng(9);
    const n = 37;
    const m = Float64Array.from({ length: n * 50 }, () => rng.normal());
    const { factor } = choleskyWithJitter(gramOfRows(m, n, 50), n);
    const rows = 7;
    const b = Float64Array.from({ length: rows * n }, () => rng.normal());
    const all = forwardSubstituteRows(factor, n, Float64Array.from(b), rows);
    for (let r = 0; r < rows; r++) expect(Array.from(all.subarray(r * n, (r + 1) * n))).toEqual(Array.from(forwardSubstitute(factor, n, b.slice(r * n, (r + 1) * n))));
  });

  it('both triangular solves, four and two rows at a time, give the bits of one row at a time (the plain loops kept as references)', () => {
    const rng = makeRng(51);
    for (const n of [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 13, 64, 201]) {
      const l = Float64Array.from({ length: n * n }, (_, i) => (i % (n + 1) === 0 ? 0.5 + rng.uniform() : rng.normal()));
      const b = Float64Array.from({ length: n }, () => rng.normal());
      expect(Array.from(forwardSubstitute(l, n, Float64Array.from(b)))).toEqual(Array.from(referenceForwardSubstitute(l, n, Float64Array.from(b))));
      expect(Array.from(backSubstitute(l, n, Float64Array.from(b)))).toEqual(Array.from(referenceBackSubstitute(l, n, Float64Array.from(b))));
    }
  });

  describe('WebAssembly kernels against the JavaScript path', () => {
    afterEach(() => setWebAssemblyKernels(true));

    /** Run f with the kernels off (the JavaScript path), then on; the module's memory is checked by the caller. */
    const bothPaths = <T>(f: () => T): { js: T; wasm: T } => {
      setWebAssemblyKernels(false);
      const js = f();
      setWebAssemblyKernels(true);
      return { js, wasm: f() };
    };

    it('the blocked factor is the same bits on both paths, for every count of rows left over past the tiles of four', () => {
      const rng = makeRng(31);
      const k = denseKernels();
      expect(k).not.toBeNull();
      for (const n of [128, 129, 194, 259, 300]) {
        const m = Float64Array.from({ length: n * (n + 9) }, () => rng.normal());
        const a = gramOfRows(m, n, n + 9);
        const { js, wasm } = bothPaths(() => {
          const f = Float64Array.from(a);
          expect(choleskyInPlace(f, n)).toBe(true);
          return f;
        });
        // the kernels did the work: the factor's lower triangle is what the module's memory holds at its heap base
        const held = k!.module.f64(k!.module.heapBase, n * n);
        const lower = (v: Float64Array) => Array.from(v).filter((_, i) => i % n <= Math.floor(i / n));
        expect(lower(held)).toEqual(lower(wasm));
        expect(Array.from(wasm)).toEqual(Array.from(js));
      }
    });

    it('gram of rows: the same bits on both paths, each entry its own dot product of even and odd columns apart', () => {
      const rng = makeRng(41);
      const k = denseKernels();
      for (const [rows, f] of [[16, 1], [17, 2], [18, 13], [19, 64], [33, 27]] as const) {
        const phi = Float64Array.from({ length: rows * f }, () => rng.normal());
        const { js, wasm } = bothPaths(() => gramOfRows(phi, rows, f));
        // the kernel ran: K is what the module holds after Φ
        expect(Array.from(k!.module.f64(k!.module.heapBase + 8 * rows * f, rows * rows))).toEqual(Array.from(wasm));
        expect(Array.from(wasm)).toEqual(Array.from(js));
        for (let i = 0; i < rows; i++) {
          for (let j = 0; j < rows; j++) {
            let s0 = 0;
            let s1 = 0;
            for (let c = 0; c < f; c++) {
              if (c % 2 === 0) s0 += phi[i * f + c] * phi[j * f + c];
              else s1 += phi[i * f + c] * phi[j * f + c];
            }
            expect(wasm[i * rows + j]).toBe(s0 + s1);
          }
        }
      }
    });

    it('gram of columns: the same bits on both paths (zeros in Φ, strips of rows, ragged column groups), and a non-finite Φ as the JavaScript loop has it', () => {
      const rng = makeRng(43);
      const k = denseKernels();
      for (const [rows, f] of [[1, 32], [5, 33], [40, 35], [600, 70]] as const) {
        const phi = Float64Array.from({ length: rows * f }, () => (rng.uniform() < 0.2 ? 0 : rng.normal()));
        const { js, wasm } = bothPaths(() => gramOfColumns(phi, rows, f));
        expect(Array.from(wasm)).toEqual(Array.from(js));
        // the kernel ran: G's lower triangle is what the module holds (row stride f rounded up to four)
        const f4 = Math.ceil(f / 4) * 4;
        const held = k!.module.f64(k!.module.heapBase, f4 * f4);
        for (let i = 0; i < f; i++) for (let j = 0; j <= i; j++) expect(held[i * f4 + j]).toBe(wasm[i * f + j]);
      }
      // an infinite number beside a zero: the JavaScript loop skips 0·∞; the kernels are not asked
      const phi = Float64Array.from({ length: 3 * 40 }, (_, i) => (i === 41 ? Infinity : i === 42 ? 0 : Math.sin(i)));
      const { js, wasm } = bothPaths(() => gramOfColumns(phi, 3, 40));
      expect(Array.from(wasm)).toEqual(Array.from(js));
    });

    it('a matrix not positive definite fails at the same pivot on both paths, leaving the same numbers', () => {
      const rng = makeRng(8);
      const n = 200;
      const a = gramOfRows(Float64Array.from({ length: n * (n + 5) }, () => rng.normal()), n, n + 5);
      for (let j = 0; j < n; j++) {
        a[170 * n + j] = a[3 * n + j];
        a[j * n + 170] = a[j * n + 3];
      }
      a[170 * n + 170] = a[3 * n + 3] - 1;
      const { js, wasm } = bothPaths(() => {
        const f = Float64Array.from(a);
        expect(choleskyInPlace(f, n)).toBe(false);
        return f;
      });
      expect(Array.from(wasm)).toEqual(Array.from(js));
    });

    it('many right-hand sides at once, more than one kernel call holds too: the bits of one JavaScript solve each, and ml-matrix to round-off', () => {
      const rng = makeRng(12);
      const k = denseKernels();
      for (const [n, rows] of [[64, 8], [101, 9], [150, 14], [70, 300]] as const) {
        const { factor } = choleskyWithJitter(gramOfRows(Float64Array.from({ length: n * (n + 4) }, () => rng.normal()), n, n + 4), n);
        const b = Float64Array.from({ length: rows * n }, () => rng.normal());
        const all = forwardSubstituteRows(factor, n, Float64Array.from(b), rows);
        // the kernel ran: L's lower triangle sits at the module's heap base
        const held = k!.module.f64(k!.module.heapBase, n * n);
        for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) expect(held[i * n + j]).toBe(factor[i * n + j]);
        setWebAssemblyKernels(false);
        const L = new Matrix(Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (j <= i ? factor[i * n + j] : 0))));
        for (let r = 0; r < rows; r++) {
          const one = forwardSubstitute(factor, n, b.slice(r * n, (r + 1) * n));
          expect(Array.from(all.subarray(r * n, (r + 1) * n))).toEqual(Array.from(one));
          const ref = solve(L, Matrix.columnVector(Array.from(b.subarray(r * n, (r + 1) * n)))).getColumn(0);
          const scale = Math.max(...ref.map(Math.abs));
          for (let i = 0; i < n; i++) expect(Math.abs(all[r * n + i] - ref[i])).toBeLessThan(1e-10 * scale);
        }
        setWebAssemblyKernels(true);
      }
    });
  });
});
