// Tests of core/dielectric/ewald.ts through the periodic dipole model: erfc against CPython's math.erfc, the Lorentz
// local field of cubic lattices (exact textbook result), agreement of the conducting and spherical boundaries
// through the Clausius–Mossotti relation, independence of the splitting parameter, the vacuum-padded cell
// against the open cluster, supercell extensivity and rotation covariance.
import { describe, expect, it } from 'vitest';
import { erfc } from '../../../src-main/core/numerics/erfc.ts';
import { ewaldParameters, reciprocalSum } from '../../../src-main/core/dielectric/ewald.ts';
import { cellPolarisability, referenceTensors, type DipoleModel } from '../../../src-main/core/dielectric/dipole-model.ts';
import { convertTensor } from '../../../src-main/core/dielectric/clausius-mossotti.ts';
import { cellVolume, supercell } from '../../../src-main/core/geometry/cell.ts';
import { makeFrame, type Frame } from '../../../src-main/core/geometry/frame.ts';
import { makeRng } from '../../../src-main/core/numerics/random.ts';
import { rotateTensor } from '../../../src-main/core/dielectric/tensor.ts';
import { randomRotation } from '../../../src-main/core/descriptors/wigner.ts';

function relClose(actual: ArrayLike<number>, expected: ArrayLike<number>, rel: number, what = ''): void {
  let scale = 0;
  for (let k = 0; k < expected.length; k++) scale = Math.max(scale, Math.abs(expected[k]));
  for (let k = 0; k < expected.length; k++) {
    expect(Math.abs(actual[k] - expected[k]), `${what} component ${k}: ${actual[k]} vs ${expected[k]}`).toBeLessThanOrEqual(rel * scale);
  }
}

/** The demo molecule's sites and the invented polarisabilities (any damped molecular solid will do here). */
const model: DipoleModel = { polarisabilities: { B: 1.1, N: 1.05, Cl: 2.3 }, thole: 0.45 };
const MOLECULE = [0, 0, 0, 1.32, 0, 0, -0.9065, 1.5086, 0, -0.9065, -1.5086, 0];

/** Two molecules in a skewed triclinic cell. */
function molecularCrystal(): Frame {
  const cell = [6.1, 0.3, 0.2, -0.8, 5.6, 0.1, 0.6, -0.4, 5.2];
  const second = [2.9, 3.1, 2.4];
  const pos: number[] = [...MOLECULE];
  // second molecule turned by 90° about x and shifted
  for (let s = 0; s < 4; s++) pos.push(MOLECULE[3 * s] + second[0], -MOLECULE[3 * s + 2] + second[1], MOLECULE[3 * s + 1] + second[2]);
  return makeFrame(['B', 'N', 'Cl', 'Cl', 'B', 'N', 'Cl', 'Cl'], pos, cell);
}

describe('erfc', () => {
  it('matches CPython math.erfc (C library) to 1e-13 relative', () => {
    // Values printed by /usr/bin/python3 -c "import math; print(repr(math.erfc(x)))".
    const ref: [number, number][] = [
      [0.1, 0.8875370839817152], [0.5, 0.4795001221869535], [1, 0.15729920705028513], [1.5, 0.033894853524689274],
      [2, 0.004677734981047265], [2.5, 0.0004069520174449589], [3, 2.2090496998585438e-5], [4, 1.541725790028002e-8],
      [5, 1.5374597944280351e-12], [6, 2.1519736712498916e-17], [-1, 1.842700792949715],
    ];
    for (const [x, v] of ref) expect(Math.abs(erfc(x) - v) / v, `erfc(${x})`).toBeLessThan(1e-13);
  });
});

describe('Ewald parameters', () => {
  it('reject a split whose real-space tail exceeds the accuracy', () => {
    const cell = Float64Array.of(5, 0, 0, 0, 5, 0, 0, 0, 5);
    expect(() => ewaldParameters(cell, { accuracy: 1e-10, cutoff: 4, beta: 0.2 })).toThrow(/raise β/);
    const p = ewaldParameters(cell, { accuracy: 1e-10, cutoff: 6 });
    expect(p.beta * p.cutoff).toBeCloseTo(Math.sqrt(-Math.log(1e-10)), 12);
  });

  it('keep one of each ±k pair, all within k_max', () => {
    const cell = Float64Array.of(4, 0, 0, 1, 5, 0, 0.5, 0.3, 6);
    const s = reciprocalSum(cell, 0.6, 3.5);
    const seen = new Set<string>();
    for (let q = 0; q < s.count; q++) {
      const k = [s.k[3 * q], s.k[3 * q + 1], s.k[3 * q + 2]];
      expect(Math.hypot(k[0], k[1], k[2])).toBeLessThanOrEqual(3.5 + 1e-12);
      const key = k.map((v) => v.toFixed(8)).join(',');
      const neg = k.map((v) => (-v).toFixed(8)).join(',');
      expect(seen.has(neg)).toBe(false);
      seen.add(key);
    }
    expect(s.count).toBeGreaterThan(10);
  });
});

describe('cubic lattices of undamped point dipoles (Lorentz local field)', () => {
  // Textbook result (e.g. Kittel, Introduction to Solid State Physics, ch. "Dielectrics"; Ashcroft & Mermin ch. 27):
  // for a lattice with cubic symmetry the dipole sum over a sphere vanishes, so the spherical-sample polarisability
  // is exactly the sum of the point polarisabilities, and ε obeys the Clausius–Mossotti relation exactly.
  const undamped: DipoleModel = { polarisabilities: { X: 1.3 }, thole: null };
  const lattices: [string, number[], number[]][] = [
    ['simple cubic', [0, 0, 0], [3.2, 0, 0, 0, 3.2, 0, 0, 0, 3.2]],
    ['body-centred cubic', [0, 0, 0, 1.9, 1.9, 1.9], [3.8, 0, 0, 0, 3.8, 0, 0, 0, 3.8]],
    ['face-centred cubic (primitive cell)', [0, 0, 0], [0, 2.4, 2.4, 2.4, 0, 2.4, 2.4, 2.4, 0]],
  ];
  for (const [name, pos, cell] of lattices) {
    it(`${name}: α_CM = Σ α_i and α_c = α_CM/(1 − 4πα_CM/3V)`, () => {
      const n = pos.length / 3;
      const f = makeFrame(Array(n).fill('X'), pos, cell);
      const V = cellVolume(f.cell!);
      const sph = cellPolarisability(f, undamped, { boundary: 'sphere', accuracy: 1e-12, tolerance: 1e-13 });
      const cond = cellPolarisability(f, undamped, { boundary: 'conducting', accuracy: 1e-12, tolerance: 1e-13 });
      const a = 1.3 * n;
      relClose(sph.alpha, [a, 0, 0, 0, a, 0, 0, 0, a], 1e-9, 'sphere');
      const ac = a / (1 - (4 * Math.PI * a) / (3 * V));
      relClose(cond.alpha, [ac, 0, 0, 0, ac, 0, 0, 0, ac], 1e-9, 'conducting');
    });
  }
});

describe('periodic damped molecular crystal', () => {
  const crystal = molecularCrystal();
  const V = cellVolume(crystal.cell!);
  const tight = { accuracy: 1e-13, tolerance: 1e-13 };

  it('conducting and spherical boundaries agree through the Clausius–Mossotti relation to 1e-6', () => {
    const cond = cellPolarisability(crystal, model, { ...tight, boundary: 'conducting' });
    const sph = cellPolarisability(crystal, model, { ...tight, boundary: 'sphere' });
    relClose(convertTensor(cond.alpha, 'alpha-c', 'alpha-cm', V), sph.alpha, 1e-6);
    relClose(convertTensor(sph.alpha, 'alpha-cm', 'alpha-c', V), cond.alpha, 1e-6);
    // The two are genuinely different numbers (the boundary matters), so the check can fail.
    expect(Math.abs(cond.alpha[0] - sph.alpha[0]) / sph.alpha[0]).toBeGreaterThan(0.05);
    const ref = referenceTensors(crystal, model, { ...tight, independent: true });
    relClose(ref.alphaCM, sph.alpha, 1e-10);
    relClose(ref.eps, convertTensor(sph.alpha, 'alpha-cm', 'eps', V), 1e-6);
  });

  it('does not depend on the splitting parameter or cutoffs (1e-8 relative)', () => {
    const base = cellPolarisability(crystal, model, { ...tight, cutoff: 8 }).alpha;
    for (const [cutoff, beta] of [[8, 0.9], [10, 0.56], [12, 0.6], [7, undefined]] as const) {
      const other = cellPolarisability(crystal, model, { ...tight, cutoff, beta }).alpha;
      relClose(other, base, 1e-8, `cutoff ${cutoff} beta ${beta}`);
    }
    // A loose accuracy gives a visibly different answer: the parameters are really in use.
    const loose = cellPolarisability(crystal, model, { accuracy: 1e-2, cutoff: 7, tolerance: 1e-13 }).alpha;
    let diff = 0;
    for (let k = 0; k < 9; k++) diff = Math.max(diff, Math.abs(loose[k] - base[k]));
    expect(diff / base[0]).toBeGreaterThan(1e-6);
  });

  it('a 2×2×2 supercell gives the same ε and 8× the cell polarisability', () => {
    const one = referenceTensors(crystal, model, tight);
    const big = referenceTensors(supercell(crystal, [2, 2, 2]), model, tight);
    relClose(big.eps, one.eps, 1e-8, 'eps');
    relClose(big.alphaC, one.alphaC.map((v) => 8 * v), 1e-8, 'alpha_c');
    relClose(big.alphaCM, one.alphaCM.map((v) => 8 * v), 1e-8, 'alpha_cm');
  });

  it('is rotation covariant: rotating cell and atoms rotates ε', () => {
    const base = referenceTensors(crystal, model, tight);
    const rng = makeRng(5);
    const R = randomRotation(rng);
    const rot = (v: ArrayLike<number>): number[] => {
      const out: number[] = [];
      for (let i = 0; i < v.length / 3; i++) for (let a = 0; a < 3; a++) out.push(R[3 * a] * v[3 * i] + R[3 * a + 1] * v[3 * i + 1] + R[3 * a + 2] * v[3 * i + 2]);
      return out;
    };
    const turned = makeFrame(crystal.species, rot(crystal.positions), rot(crystal.cell!));
    const r = referenceTensors(turned, model, tight);
    relClose(r.eps, rotateTensor(base.eps, R), 1e-9);
  });

  it('a molecule in a large vacuum-padded box approaches the isolated molecule (spherical boundary)', () => {
    const species = ['B', 'N', 'Cl', 'Cl'];
    const open = cellPolarisability(makeFrame(species, MOLECULE, null), model, { tolerance: 1e-13 }).alpha;
    const errorAt = (L: number): number => {
      const f = makeFrame(species, MOLECULE, [L, 0, 0, 0, L, 0, 0, 0, L]);
      const a = cellPolarisability(f, model, { boundary: 'sphere', accuracy: 1e-12, tolerance: 1e-13, cutoff: 14 }).alpha;
      let e = 0;
      for (let k = 0; k < 9; k++) e = Math.max(e, Math.abs(a[k] - open[k]));
      return e / open[0];
    };
    const e20 = errorAt(20);
    const e40 = errorAt(40);
    // The lattice of copies has cubic symmetry, so the dipole (1/L³) coupling cancels exactly and the first
    // surviving term comes from the molecule's extent through the rank-4 cubic lattice sum: error ∝ L⁻⁵
    // (multipole expansion; common practice, no source). Doubling L must cut the error about 32-fold.
    expect(e40).toBeLessThan(2e-5);
    expect(e20 / e40).toBeGreaterThan(25);
    expect(e20 / e40).toBeLessThan(40);
    // With the conducting boundary the padded box does NOT give the isolated value (depolarisation missing).
    const f = makeFrame(species, MOLECULE, [20, 0, 0, 0, 20, 0, 0, 0, 20]);
    const c = cellPolarisability(f, model, { boundary: 'conducting', accuracy: 1e-10 }).alpha;
    expect(c[0] - open[0]).toBeGreaterThan(1e-4 * open[0]);
  });
});
