// The invented crystal of the demo molecule: flat molecules in layers normal to c, a herringbone pattern within
// each layer (two molecules per layer cell, their arms turned by ±θ about c) and AB stacking (the second layer
// shifted by half the a edge), 4 molecules per orthorhombic unit cell. The edges a, b, c and the angle θ are
// chosen by minimising the lattice energy (coordinate descent, golden-section line searches) of the rigid
// molecules at zero temperature; thermal motion then comes from Monte Carlo at fixed cell.
import { rotationAboutAxis } from '../core/descriptors/wigner.ts';
import { mul3, totalEnergy, type PairTable, type RigidBody, type RigidSystem } from './rigid-system.ts';

export interface CrystalCell {
  a: number;
  b: number;
  c: number;
  /** Herringbone angle θ (rad): molecules turned by +θ and −θ about c. */
  theta: number;
  /** Extra turn (rad) of the −θ molecules about c: π makes neighbouring rows antiparallel. */
  flip: number;
}

/** Fractional centres and orientation sign (±θ) of the 4 molecules of the unit cell. */
const BASIS: [number, number, number, number][] = [
  [0, 0, 0, 1],
  [0.5, 0.5, 0, -1],
  [0.5, 0, 0.5, 1],
  [0, 0.5, 0.5, -1],
];

/** The crystal (repeats × unit cell) as a rigid system. */
export function crystalSystem(mol: RigidBody, cell: CrystalCell, repeats: readonly [number, number, number]): RigidSystem {
  const [na, nb, nc] = repeats;
  const count = BASIS.length * na * nb * nc;
  const com = new Float64Array(3 * count);
  const rot = new Float64Array(9 * count);
  // The body frame has the molecule in its xy plane: lab z (stacking axis c) is the plane normal.
  const plus = rotationAboutAxis(0, 0, 1, cell.theta);
  const minus = rotationAboutAxis(0, 0, 1, cell.flip - cell.theta);
  let m = 0;
  for (let i = 0; i < na; i++) {
    for (let j = 0; j < nb; j++) {
      for (let k = 0; k < nc; k++) {
        for (const [fx, fy, fz, sign] of BASIS) {
          com[3 * m] = (i + fx) * cell.a;
          com[3 * m + 1] = (j + fy) * cell.b;
          com[3 * m + 2] = (k + fz) * cell.c;
          rot.set(sign > 0 ? plus : minus, 9 * m);
          m++;
        }
      }
    }
  }
  return { mol, box: [na * cell.a, nb * cell.b, nc * cell.c], count, com, rot };
}

/** Repeats of the unit cell so that every box edge is at least twice the cutoff (minimum image holds). */
export function repeatsFor(cell: CrystalCell, cutoff: number): [number, number, number] {
  return [cell.a, cell.b, cell.c].map((e) => Math.ceil((2 * cutoff + 1e-9) / e)) as [number, number, number];
}

/** Lattice energy per molecule (kJ/mol) of the static crystal. */
export function latticeEnergy(mol: RigidBody, table: PairTable, cell: CrystalCell): number {
  const cutoff = Math.sqrt(table.cutoff2);
  const sys = crystalSystem(mol, cell, repeatsFor(cell, cutoff));
  return totalEnergy(table, sys) / sys.count;
}

function golden(f: (x: number) => number, lo: number, hi: number, iterations = 24): number {
  const g = (Math.sqrt(5) - 1) / 2;
  let a = lo, b = hi;
  let x1 = b - g * (b - a), x2 = a + g * (b - a);
  let f1 = f(x1), f2 = f(x2);
  for (let k = 0; k < iterations; k++) {
    if (f1 < f2) { b = x2; x2 = x1; f2 = f1; x1 = b - g * (b - a); f1 = f(x1); }
    else { a = x1; x1 = x2; f1 = f2; x2 = a + g * (b - a); f2 = f(x2); }
  }
  return 0.5 * (a + b);
}

/** Coordinate descent on (a, b, c, θ) from a start cell; returns the relaxed cell and its energy. */
export function relaxCrystal(mol: RigidBody, table: PairTable, start: CrystalCell, passes = 4): { cell: CrystalCell; energy: number } {
  let cell = { ...start };
  for (let p = 0; p < passes; p++) {
    const span = 0.15 / (p + 1);
    for (const key of ['a', 'b', 'c', 'theta'] as const) {
      const x0 = cell[key];
      const lo = key === 'theta' ? x0 - 0.3 / (p + 1) : x0 * (1 - span);
      const hi = key === 'theta' ? x0 + 0.3 / (p + 1) : x0 * (1 + span);
      const best = golden((x) => latticeEnergy(mol, table, { ...cell, [key]: x }), lo, hi);
      cell = { ...cell, [key]: best };
    }
  }
  return { cell, energy: latticeEnergy(mol, table, cell) };
}

/** A liquid start: molecules on a simple cubic grid with random orientations (then melted by Monte Carlo). */
export function latticeStart(mol: RigidBody, count: number, volumePerMolecule: number, randomRot: () => Float64Array): RigidSystem {
  const L = Math.cbrt(count * volumePerMolecule);
  const side = Math.ceil(Math.cbrt(count));
  const com = new Float64Array(3 * count);
  const rot = new Float64Array(9 * count);
  const tmp = new Float64Array(9);
  for (let m = 0; m < count; m++) {
    const i = m % side, j = Math.floor(m / side) % side, k = Math.floor(m / (side * side));
    com.set([(i + 0.5) * (L / side), (j + 0.5) * (L / side), (k + 0.5) * (L / side)], 3 * m);
    mul3(randomRot(), 0, Float64Array.of(1, 0, 0, 0, 1, 0, 0, 0, 1), 0, tmp, 0);
    rot.set(tmp, 9 * m);
  }
  return { mol, box: [L, L, L], count, com, rot };
}
