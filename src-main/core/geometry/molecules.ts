// Molecules of a frame: atoms joined by covalent bonds (distance < tolerance × (r_a + r_b), covalent radii of
// core/geometry/elements.ts), periodic through the neighbour list, grouped into connected components. Used to sum the
// per-atom local contributions of a model into per-molecule polarisabilities.
import { covalentRadius } from './elements.ts';
import { InputError } from '../errors.ts';
import type { Frame } from './frame.ts';
import { neighbourList } from './neighbours.ts';

/** Bond when d < BOND_TOLERANCE × (r_a + r_b): a common practice factor (no source), wide enough for
 * stretched bonds in liquids and short of hydrogen bonds (O–H covalent 0.97 Å vs 1.16 Å limit, H-bond ≈ 1.8 Å). */
export const BOND_TOLERANCE = 1.2;

export interface Molecules {
  /** Molecule index of each atom, numbered by first atom. */
  molecule: Int32Array;
  count: number;
  /** Atom indices of each molecule. */
  members: number[][];
}

export function findMolecules(frame: Frame, tolerance = BOND_TOLERANCE): Molecules {
  const n = frame.species.length;
  const radii = frame.species.map((s, i) => {
    let r: number | null;
    try {
      r = covalentRadius(s);
    } catch {
      r = null;
    }
    if (r === null) throw new InputError(`atom ${i + 1} (${s}) has no covalent radius`, { file: frame.source?.file, frame: frame.source?.index }, 'molecules can be found only for elements with tabulated covalent radii');
    return r;
  });
  const maxR = Math.max(0, ...radii);
  // union–find over bonds
  const parent = Int32Array.from({ length: n }, (_, i) => i);
  const find = (i: number): number => {
    while (parent[i] !== i) {
      parent[i] = parent[parent[i]];
      i = parent[i];
    }
    return i;
  };
  if (n > 1 || frame.cell) {
    const nl = neighbourList(frame, 2 * maxR * tolerance + 1e-9);
    for (let i = 0; i < n; i++) {
      for (let p = nl.start[i]; p < nl.start[i + 1]; p++) {
        const j = nl.neighbour[p];
        if (j === i) continue; // an atom bonded to its own image does not change the grouping
        if (nl.distances[p] < tolerance * (radii[i] + radii[j])) {
          const a = find(i);
          const b = find(j);
          if (a !== b) parent[Math.max(a, b)] = Math.min(a, b);
        }
      }
    }
  }
  const molecule = new Int32Array(n);
  const index = new Map<number, number>();
  const members: number[][] = [];
  for (let i = 0; i < n; i++) {
    const root = find(i);
    let m = index.get(root);
    if (m === undefined) {
      m = members.length;
      index.set(root, m);
      members.push([]);
    }
    molecule[i] = m;
    members[m].push(i);
  }
  return { molecule, count: members.length, members };
}

/** Sum per-atom blocks (`width` values per atom) over molecules: count × width. */
export function sumByMolecule(local: Float64Array, width: number, molecules: Molecules): Float64Array {
  const out = new Float64Array(molecules.count * width);
  for (let i = 0; i < molecules.molecule.length; i++) {
    const m = molecules.molecule[i];
    for (let k = 0; k < width; k++) out[m * width + k] += local[i * width + k];
  }
  return out;
}

/** Per-molecule local tensors of a prediction: 9 numbers per molecule (the sum of its atoms' `local`). */
export function moleculeContributions(frame: Frame, local: Float64Array, tolerance = BOND_TOLERANCE): { molecules: Molecules; local: Float64Array } {
  if (local.length !== 9 * frame.species.length) throw new RangeError(`moleculeContributions: ${local.length} values for ${frame.species.length} atoms (need 9 per atom)`);
  const molecules = findMolecules(frame, tolerance);
  return { molecules, local: sumByMolecule(local, 9, molecules) };
}
